"""The HTML report, read back with the standard library's html.parser.

One row per claim with its verdict, refuted and open first; one state
picture per check whose diagram holds exactly the codes, recovery depths,
locked sets and worst next codes of the map for the same check; one waveform
per trace; nothing fetched from outside the file.
"""

from __future__ import annotations

import re
from collections import Counter
from html.parser import HTMLParser
from pathlib import Path

import pytest

from checker import api
from checker.report import html as H

from conftest import ROOT, run_cli
from test_recover import tail_counter

CASES = str(ROOT / "cases")


class Page(HTMLParser):
    """Every element as (tag, attributes, classes), the text, and the raw attribute values."""

    def __init__(self, text: str) -> None:
        super().__init__(convert_charrefs=True)
        self.elements: list[tuple[str, dict, set]] = []
        self.text: list[str] = []
        self.feed(text)
        self.close()

    def handle_starttag(self, tag, attrs):
        d = {k: (v if v is not None else "") for k, v in attrs}
        self.elements.append((tag, d, set(d.get("class", "").split())))

    handle_startendtag = handle_starttag

    def handle_data(self, data):
        self.text.append(data)

    def find(self, tag: str | None = None, cls: str | None = None) -> list[dict]:
        return [a for t, a, c in self.elements if (tag is None or t == tag) and (cls is None or cls in c)]


def check_page(paths, radix="dec", **opts):
    run = api.check_files(paths, api.options(**opts))
    return run, run_page(run, radix, **opts)


def run_page(run, radix="dec", **opts):
    import tempfile
    with tempfile.TemporaryDirectory() as d:
        out = Path(d) / "r.html"
        api.write_html_check(run, str(out), api.options(**opts), radix)
        return out.read_text(encoding="utf-8")


@pytest.fixture(scope="module")
def cases_page():
    run, text = check_page([CASES])
    return run, text, Page(text)


def test_one_row_per_claim_with_its_verdict(cases_page):
    run, _, page = cases_page
    rows = page.find("details", "claim")
    assert len(rows) == len(run.results)
    want = Counter((r.file, r.check, str(r.line), r.status) for r in run.results)
    got = Counter((a["data-file"], a["data-check"], a["data-line"], a["data-verdict"]) for a in rows)
    assert got == want
    assert {a["data-verdict"] for a in rows} == {"proved", "refuted"}  # the cases hold both


def test_refuted_and_open_first_and_opened(cases_page):
    _, _, page = cases_page
    verdicts = [a["data-verdict"] for a in page.find("details", "claim")]
    rank = {"refuted": 0, "open": 1, "proved": 2}
    assert verdicts == sorted(verdicts, key=rank.__getitem__)
    for a in page.find("details", "claim"):
        assert ("open" in a) == (a["data-verdict"] != "proved")


def test_verdict_counts(cases_page):
    run, _, page = cases_page
    text = "".join(page.text)
    for status in ("proved", "refuted", "open"):
        n = sum(1 for r in run.results if r.status == status)
        assert f"{n} {status}" in text


def test_one_picture_per_check_and_one_waveform_per_trace(cases_page):
    run, _, page = cases_page
    checks = [c for f in run.files for c in api.load(f).namespace.checks]
    pictures = page.find("section", "picture")
    assert [(a["data-file"], a["data-check"]) for a in pictures] == [(c.pos.file, c.name) for c in checks]
    drawn = len(page.find("svg", "diagram")) + len(page.find("div", "summary-picture"))
    assert drawn == len(checks)
    traced = [r for r in run.results if r.trace]
    waves = page.find("svg", "wave")
    assert len(waves) == len(traced) > 0
    assert sorted(w["data-codes"] for w in waves) == sorted(",".join(str(t.code) for t in r.trace) for r in traced)


def test_nothing_external(cases_page):
    _, text, page = cases_page
    for tag, attrs, _ in page.elements:
        assert tag not in ("link", "iframe", "img", "object", "embed"), tag
        for k in ("href", "src", "action", "xlink:href", "data", "poster"):
            if k in attrs:
                assert attrs[k].startswith("#"), (tag, k, attrs[k])
    assert not re.search(r"(https?:|ftp:|file:|//[a-z0-9.-]+\.[a-z]{2,})", text, re.I)
    assert not re.search(r"@import|url\((?!#)", text)
    assert all(re.match(r"url\(#cs-[a-z-]+\)", m) for m in re.findall(r"url\([^)]*\)", text))


def _diagram(page: Page, key: str):
    nodes = {}
    edges = set()
    in_svg = False
    for tag, a, cls in page.elements:
        if tag == "svg":
            in_svg = a.get("id") == f"{key}-svg"
        elif in_svg and tag == "g" and "node" in cls:
            nodes[int(a["data-code"])] = (a["data-kind"], a.get("data-steps"), a.get("data-set"))
        elif in_svg and tag == "path" and "edge" in cls:
            edges.add((int(a["data-from"]), int(a["data-to"]), a["data-kind"]))
    return nodes, edges


def _picture_key(page: Page, file: str, check: str) -> str:
    return next(a["id"] for a in page.find("section", "picture") if (a["data-file"], a["data-check"]) == (file, check))


@pytest.mark.parametrize("name, check", [("capper_ring.cnl", "turret"), ("washer_jets.cnl", "jets"),
                                         ("washer_jets.cnl", "jets_sc"), ("demo.cnl", "batch"),
                                         ("pallet_tally.cnl", "tally"), ("qc_sampler.cnl", "qc4")])
def test_diagram_equals_the_map(cases_page, tmp_path, name, check):
    _, _, page = cases_page
    path = str(ROOT / "cases" / name)
    chk = api.load(path).find_check(check)
    m = api.map_check(path, check, limit=1 << chk.width)
    doc = m.doc
    for where in ("check", "map"):
        if where == "check":
            key = _picture_key(page, chk.pos.file, check)
            nodes, edges = _diagram(page, key)
        else:
            out = tmp_path / "m.html"
            api.write_html_map(api.map_check(path, check, graph=True), str(out), path)
            nodes, edges = _diagram(Page(out.read_text(encoding="utf-8")), "d0")
        assert set(nodes) == set(range(1 << chk.width))
        unused = {e["code"]: e for e in doc["unused"]}
        assert len(unused) == doc["unused_count"]
        locked_of = {c: i + 1 for i, s in enumerate(doc["locked"]) for c in s}
        for c, (kind, steps, lset) in nodes.items():
            if c not in unused:
                assert kind == "sequence"
                assert (c, chk.sequence.next(c), "count") in edges
                continue
            e = unused[c]
            assert kind == ("locked" if c in locked_of else "unused")
            assert (None if steps is None else int(steps)) == e["steps"]
            assert (None if lset is None else int(lset)) == locked_of.get(c)
            kinds = {k for x, y, k in edges if x == c and y == e["next"]}
            assert kinds, f"no edge {c} -> {e['next']}"
        # every edge inside a locked set is marked so, and no other edge is
        for x, y, k in edges:
            assert (k == "locked") == (x in locked_of and locked_of.get(y) == locked_of[x])


def test_map_page_lists_the_unused_codes(tmp_path):
    path = str(ROOT / "cases" / "capper_ring.cnl")
    out = tmp_path / "m.html"
    assert run_cli("map", path, "turret", "--html", str(out), "--radix", "bin").returncode == 1
    page = Page(out.read_text(encoding="utf-8"))
    assert len(page.find("svg", "diagram")) == 1
    assert not page.find("details", "claim")
    text = "".join(page.text)
    assert "1111 → 1111" in text  # 15 stays on itself (a locked set of one, capper_ring.cnl)
    assert "binary" in text


def test_radix_labels(tmp_path):
    path = str(ROOT / "cases" / "demo.cnl")
    run = api.check_files([path])
    for radix, eleven in (("dec", "11"), ("bin", "1011"), ("hex", "B")):
        page = Page(run_page(run, radix))
        labels = [t.strip() for t in page.text]
        assert eleven in labels, radix
    with pytest.raises(api.InputError):
        run_page(run, "oct")


def test_waveform_outputs_come_from_the_simulator():
    # demo.cnl: in code 11 with en=1 and clr=1 the pusher output `done` is 1 (the refuted always claim)
    path = str(ROOT / "cases" / "demo.cnl")
    run = api.check_files([path])
    r = next(r for r in run.results if r.claim == "always" and r.status == "refuted")
    chk = api.load(path).find_check("batch")
    from checker.tools.pictures import trace_signals
    sig = trace_signals(chk, r)
    assert sig.codes == [11] and sig.outputs == {"done": [1]} and sig.inputs == {"en": [1], "clr": [1]}
    w = H.waveform(sig, "dec", "w0")
    names = [row["name"] for row in w["rows"]]
    assert names == ["clock", "en", "clr", "code", "done"]


def test_equal_trace_draws_both_codes(cases_page):
    _, text, page = cases_page
    # sixpack_t.cnl line 55: equal on unused code 7, sixpack_d goes to 4
    assert "code of sixpack_d" in "".join(page.text)


def test_summary_above_the_draw_limit(write):
    # 9 bits: 512 codes, more than drawn; the bar chart counts every unused code once, by depth
    path = write(tail_counter(9, 300))
    run, text = check_page([path])
    page = Page(text)
    assert not page.find("svg", "diagram")
    assert len(page.find("div", "summary-picture")) == 1
    m = api.map_check(path, "batches", limit=512)
    steps = [e["steps"] for e in m.doc["unused"]]
    bars = [a for a in page.find("rect", "bar")]
    assert bars and sum(int(b["data-count"]) for b in bars) == m.doc["unused_count"] == 512 - 301
    for b in bars:
        lo, hi = int(b["data-lo"]), int(b["data-hi"])
        assert int(b["data-count"]) == sum(1 for s in steps if lo <= s <= hi) > 0


def test_bars_group_many_depths():
    counts = {d: 1 for d in range(1, 1001)}
    counts[None] = 7
    b = H.bars(counts)
    assert len(b["rows"]) == H.MAX_BARS + 1
    assert [(r["lo"], r["hi"], r["count"]) for r in b["rows"][:2]] == [(1, 25, 25), (26, 50, 25)]
    assert b["rows"][-1]["stay"] and b["rows"][-1]["count"] == 7
    assert sum(r["count"] for r in b["rows"]) == 1007
    few = H.bars({1: 3, 2: 5})
    assert [(r["label"], r["count"]) for r in few["rows"]] == [("1 clock", 3), ("2 clocks", 5)]


def test_wide_code_draws_what_the_claims_found(write):
    # 32 bits: beyond the exhaustive map; the picture says why and shows the recover claim's verdict
    path = write(tail_counter(32, 0xFFFFFFFE, "recover within 2"))
    run, text = check_page([path], timeout=60)
    page = Page(text)
    assert [r.status for r in run.results] == ["proved", "proved"]
    assert len(page.find("div", "summary-picture")) == 1
    body = "".join(page.text)
    assert "32 bits wide" in body and "line 12: proved" in body and "1 unused" in body


def test_cli_check_html(tmp_path):
    out = tmp_path / "report.html"
    p = run_cli("check", str(ROOT / "cases" / "demo.cnl"), "--html", str(out), "--radix", "hex")
    assert p.returncode == 1, p.stderr
    page = Page(out.read_text(encoding="utf-8"))
    assert len(page.find("details", "claim")) == 8
    assert run_cli("check", str(ROOT / "cases" / "demo.cnl"), "--html", str(out), "--radix", "oct").returncode == 2


def test_palette_contrast_and_lightness():
    # WCAG 2.x success criterion 1.4.3: text contrast at least 4.5:1
    for fg, bg in H.TEXT_PAIRS:
        assert H.contrast(H.PALETTE[fg], H.PALETTE[bg]) >= 4.5, (fg, bg)
    # the verdicts are told apart by lightness too (greyscale print, any colour vision):
    # proved lightest, open between, refuted darkest
    lum = [H.contrast(H.PALETTE[k], "#000000") for k in ("proved_bg", "open_bg", "refuted_bg")]
    assert lum[0] / lum[1] >= 1.4 and lum[1] / lum[2] >= 1.4
    assert H.contrast("#ffffff", "#000000") == pytest.approx(21.0)


def test_fmt_code():
    assert H.fmt_code(5, 4, "bin") == "0101"
    assert H.fmt_code(255, 9, "hex") == "0FF"
    assert H.fmt_code(None, 4, "dec") == "–"


def test_long_trace_draws_its_last_clocks():
    from checker.tools.pictures import Signals
    n = H.WAVE_LIMIT + 44
    sig = Signals(12, list(range(n)), None, {"run": [1] * (n - 1) + [None]}, {}, {"run": ["run"]}, {})
    w = H.waveform(sig, "hex", "w9")
    assert w["n"] == H.WAVE_LIMIT and w["first"] == 44 and w["codes"][0] == 44 and w["codes"][-1] == n - 1
    assert "clocks 0 to 43 are not drawn" in w["note"]
    run_row = next(r for r in w["rows"] if r["name"] == "run")
    assert run_row["runs"][-1]["v"] is None  # the last entry's inputs are not given


def test_picture_within_the_timeout(write):
    # 23 bits with a long tail: the exhaustive map needs seconds; with a timeout of 0.3 s the
    # picture says it ran out and the page is written all the same
    path = write(tail_counter(23, 5_000_000))
    run, text = check_page([path], timeout=0.3)
    page = Page(text)
    assert len(page.find("details", "claim")) == len(run.results) == 2
    assert "ran out of time (0.3 s)" in "".join(page.text)
    assert len(page.find("div", "summary-picture")) == 1


@pytest.mark.parametrize("filed_on", [0, 1])
def test_settling_events_are_drawn_in_time(filed_on):
    # an asynchronous trace (contract v2: an entry may carry `events`, each {flop, value, code, depth},
    # `code` after the firing): 7 -> 8 on demo.cnl's counter as a ripple would do it, q[0] first.
    # The events may be filed on the clock whose edge starts them or on the clock they lead to.
    from checker.claims.result import Result, TraceEntry
    from checker.tools.pictures import trace_signals
    path = str(ROOT / "cases" / "demo.cnl")
    chk = api.load(path).find_check("batch")
    tr = [TraceEntry(0, 7, {"en": 1, "clr": 0}), TraceEntry(1, 8, {"en": 1, "clr": 0}), TraceEntry(2, 9, None)]
    ripple = [{"flop": "q[0]", "value": 0, "code": 6, "depth": 1}, {"flop": "q[1]", "value": 0, "code": 4, "depth": 2},
              {"flop": "q[2]", "value": 0, "code": 0, "depth": 3}, {"flop": "q[3]", "value": 1, "code": 8, "depth": 4}]
    tr[filed_on].events = ripple
    sig = trace_signals(chk, Result(path, "batch", "settle", 1, "refuted", trace=tr))
    assert list(sig.transients) == [0] and [e["code"] for e in sig.transients[0]] == [6, 4, 0, 8]
    # done = en & q[3] & q[1] & q[0] (demo.cnl), evaluated at each passing code with the clock's inputs
    assert [e["outputs"]["done"] for e in sig.transients[0]] == [0, 0, 0, 0]
    w = H.waveform(sig, "dec", "w0")
    code = next(r for r in w["rows"] if r["name"] == "code")
    assert [(r["x0"], r["v"]) for r in code["runs"]] == [(0.0, 7), (1.0, 6), (1 + H.SETTLE_BAND / 3, 4),
                                                        (1 + 2 * H.SETTLE_BAND / 3, 0), (1 + H.SETTLE_BAND, 8),
                                                        (2.0, 9)]
    en = next(r for r in w["rows"] if r["name"] == "en")
    assert [(r["x0"], r["x1"], r["v"]) for r in en["runs"]] == [(0.0, 2.0, 1), (2.0, 3.0, None)]
    assert w["settle"] == [{"x0": 1, "x1": 1 + H.SETTLE_BAND, "firings": 4}]
    page = Page(H.check_page([Result(path, "batch", "settle", 1, "refuted", trace=tr)], [], {0: w},
                             H.RunFacts([path], ["case_count"], ["batch"], "0", "s", "auto", None, "dec")))
    assert len(page.find("rect", "settle")) == 1


ROTATOR = """
# a nine-station rotary table's position ring: one-hot, rotated every clock, no correction
design rotator
  flop r[8:0] : D (d = {r[7:0], r[8]})
end
check stations of rotator
  code r
  count ring
  recover
end
"""


def test_summary_lists_locked_sets_with_a_cap(write):
    # a bare 9-bit rotation: every necklace of 9 beads in two colours is a cycle, 60 of them
    # (OEIS A000031, a(9) = 60); all but the ring's own are locked sets of unused codes: 59
    path = write(ROTATOR)
    run, text = check_page([path])
    page = Page(text)
    assert [r.status for r in run.results] == ["proved", "refuted"]
    assert len(run.results[1].details["locked"]) == 59
    items = page.find("li", "lockedset")
    assert len(items) == H.SET_LIMIT
    assert f"and {59 - H.SET_LIMIT} more locked sets" in "".join(page.text)


def test_a_one_code_sequence_is_drawn(write):
    # a hopper gate that only ever rests at code 2 of a 2-bit code: the sequence is one code on itself
    path = write("""
design gate
  in go
  flop g[1:0] : D (d = 0b10)
end
check rest of gate
  code g
  count 2
  recover within 1
end
""")
    run, text = check_page([path])
    assert [r.status for r in run.results] == ["proved", "proved"]
    nodes, edges = _diagram(Page(text), "d0")
    assert nodes[2][0] == "sequence" and (2, 2, "count") in edges
    assert {c: int(s) for c, (k, s, _) in nodes.items() if k == "unused"} == {0: 1, 1: 1, 3: 1}
    loop = re.search(r'id="d0-e2-2"[^>]* d="M([\d.]+),([\d.]+) C([\d.]+),([\d.]+)', text)
    assert loop and loop.group(2) != loop.group(4)  # the loop is drawn, not a point


def test_map_page_of_a_wide_code(write, tmp_path):
    # 32 bits: the map comes from the SAT engine and names only its runs; the page is a summary with them
    path = write(tail_counter(32, 0xFFFFFFFE, "recover within 2"))
    out = tmp_path / "m.html"
    p = run_cli("map", path, "batches", "--html", str(out), "--radix", "hex", "--timeout", "60")
    assert p.returncode == 0, p.stderr
    page = Page(out.read_text(encoding="utf-8"))
    assert not page.find("svg", "diagram") and len(page.find("div", "summary-picture")) == 1
    assert "FFFFFFFF → 00000000" in "".join(page.text)


def test_the_page_shows_codes_as_the_text_report_does(tmp_path):
    """Without --radix the page uses the text report's default: binary for a 4-bit code
    (11 = 0b1011, positional notation), not decimal."""
    out = tmp_path / "r.html"
    p = run_cli("check", str(ROOT / "cases" / "demo.cnl"), "--html", str(out))
    assert p.returncode == 1
    labels = " ".join(Page(out.read_text(encoding="utf-8")).text)
    assert "1011" in labels and "binary up to 8 bits" in labels

"""`equal ... after` with an asynchronous design, by the firings miter, against the explicit search and facts.

Source (facts of the trade, worked out by hand for this file): an n-bit ripple
up counter (stage 0 toggles when enabled, stage i on the fall of stage i-1)
with an asynchronous reset on every stage counts exactly as the synchronous
binary counter whose stage i toggles when enabled and stages 0 .. i-1 are
all 1, reset synchronously: after the reset clock both hold 0, and from
equal codes both step to the code plus one (or hold). With stage 2 of the
synchronous one wired to toggle on stage 0 alone, the two first part on the
step from code 1 (2 against 6): outputs differ at clock 3, the reset being
clock 0.

Cross-checks: on random small asynchronous designs given an asynchronous
reset (hypothesis, the generator of tests/test_firings.py), a design against
itself and against a copy with one gate changed: the verdict and the clock
of the first difference agree between the explicit product search and the
firings miter.
"""

from __future__ import annotations

import re

import pytest
from hypothesis import HealthCheck, given, settings, strategies as st

from checker.claims import run_claim
from checker.claims.common import Options
from checker.claims.result import OPEN, PROVED, REFUTED
from checker.elab import load_namespace
from test_firings import designs


def load(tmp_path, text):
    p = tmp_path / "t.cnl"
    p.write_text(text)
    return load_namespace(str(p))


def counters(n: int, miswired: bool = False) -> str:
    """A ripple tally of bags on a conveyor against the synchronous one it replaces."""
    lines = ["# bag tally on a conveyor: the ripple version and the synchronous one it replaces",
             "design ripple", "  in en, rst", "  flop q[0] : T (t = en) clear async rst"]
    lines += [f"  flop q[{i}] : T (t = 1) clock fall q[{i - 1}] clear async rst" for i in range(1, n)]
    lines += [f"  out o[{n - 1}:0] = q", "end", "design steady", "  in en, rst"]
    for i in range(n):
        below = [f"q[{k}]" for k in range(i)]
        if miswired and i == 2:
            below = ["q[0]"]
        lines.append(f"  flop q[{i}] : T (t = {' & '.join(['en'] + below)}) clear rst")
    code = ", ".join(f"q[{i}]" for i in reversed(range(n)))
    lines += [f"  out o[{n - 1}:0] = q", "end", "check tally of ripple", f"  code {{{code}}}",
              f"  count 0 .. {2 ** n - 1}", "  hold when !en", "  equal steady after rst", "end"]
    return "\n".join(lines) + "\n"


@pytest.mark.parametrize("n, engines", [(5, ["explicit", "sat"]), (24, ["auto"]), (32, ["auto"])])
def test_a_ripple_counter_with_a_reset_equals_the_synchronous_counter(tmp_path, n, engines):
    chk = load(tmp_path, counters(n)).checks[0]
    for engine in engines:
        r = run_claim(chk, chk.claims[-1], Options(engine=engine, timeout=300))
        assert r.status == PROVED, (engine, r.summary)
        if engine != "explicit":
            assert r.details["engine"] == "firings miter"
            assert r.details["firings"] == [n, 0]  # the reset is read from an input: each stage fires once


@pytest.mark.parametrize("n, engines", [(5, ["explicit", "sat"]), (24, ["auto"]), (32, ["auto"])])
def test_a_miswired_stage_is_found_at_the_clock_worked_out_by_hand(tmp_path, n, engines):
    chk = load(tmp_path, counters(n, miswired=True)).checks[0]
    for engine in engines:
        r = run_claim(chk, chk.claims[-1], Options(engine=engine, timeout=300))
        assert r.status == REFUTED, (engine, r.summary)
        assert r.trace[-1].clock == 3, r.summary
        assert [t.code for t in r.trace[1:]] == [0, 1, 2]
        assert all(t.events is not None for t in r.trace[:-1])


def test_a_reset_that_leaves_a_flop_free_is_refuted_by_both_engines(tmp_path):
    text = counters(5).replace("  flop q[3] : T (t = 1) clock fall q[2] clear async rst",
                               "  flop q[3] : T (t = 1) clock fall q[2]")
    chk = load(tmp_path, text).checks[0]
    for engine in ["explicit", "sat"]:
        r = run_claim(chk, chk.claims[-1], Options(engine=engine, timeout=120))
        assert r.status == REFUTED and "does not settle every flop" in r.summary, (engine, r.summary)
        assert "q[3]" in r.details["undetermined"]["ripple"]


# --- cross-checks against the explicit engine on random small designs -------------------------

def with_reset(text: str, name: str) -> str:
    """The random design renamed, given an input rst that clears every flop asynchronously."""
    out = []
    for line in text.replace("design mix", f"design {name}").replace("  in go", "  in go, rst").splitlines():
        if line.lstrip().startswith("flop"):
            if " clear async " in line:
                line = line.replace(" clear async ", " clear async rst | ")
            elif " preset async " in line:
                line = line.replace(" preset async ", " clear async rst preset async ")
            else:
                line += " clear async rst"
        out.append(line)
    return "\n".join(out) + "\n"


def mutate(text: str, k: int) -> str:
    """``text`` with its k-th (mod their number) two-input gate operator in a flop's pins changed."""
    spots = [m.start() for m in re.finditer(r" [&|^] ", text)]
    if not spots:
        return text
    i = spots[k % len(spots)] + 1
    swap = {"&": "|", "|": "^", "^": "&"}
    return text[:i] + swap[text[i]] + text[i + 1:]


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(designs(), st.integers(0, 40), st.booleans())
def test_equal_after_verdicts_agree_between_engines(tmp_path, spec, k, same):
    n, text = spec
    a = with_reset(text, "mix")
    b = with_reset(text if same else mutate(text, k), "other")
    code = ", ".join(f"q[{i}]" for i in reversed(range(n)))
    full = a + b + f"check c of mix\n  code {{{code}}}\n  count 0 .. {2 ** n - 1}\n  equal other after rst\nend\n"
    chk = load(tmp_path, full).checks[0]
    claim = chk.claims[-1]
    ex = run_claim(chk, claim, Options(engine="explicit", timeout=120))
    sat = run_claim(chk, claim, Options(engine="sat", timeout=120))
    if OPEN in (ex.status, sat.status):
        return
    assert ex.status == sat.status, (full, ex.summary, sat.summary)
    if ex.status == REFUTED and "differ" in ex.summary:
        # both searches find a shortest run to a difference
        assert "differ" in sat.summary and ex.trace[-1].clock == sat.trace[-1].clock, (full, ex.summary, sat.summary)


@pytest.mark.parametrize("n, engines", [(5, ["explicit", "sat"]), (24, ["auto"]), (32, ["auto"])])
@pytest.mark.parametrize("form", ["", " on sequence"])
def test_paired_forms_on_wide_designs(tmp_path, n, engines, form):
    for miswired in (False, True):
        chk = load(tmp_path, counters(n, miswired).replace("equal steady after rst", "equal steady" + form)).checks[0]
        for engine in engines:
            r = run_claim(chk, chk.claims[-1], Options(engine=engine, timeout=300))
            assert r.status == (REFUTED if miswired else PROVED), (engine, r.summary)
            if engine != "explicit":
                assert r.details["engine"] == "firings miter"
            if miswired:
                assert r.trace[0].events is not None and r.trace[1].code != r.trace[1].other_code


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(designs(), st.integers(0, 40), st.booleans(), st.booleans(), st.integers(0, 14))
def test_paired_equal_verdicts_agree_between_engines(tmp_path, spec, k, same, on_seq, last):
    n, text = spec
    a = text
    b = (text if same else mutate(text, k)).replace("design mix", "design other")
    code = ", ".join(f"q[{i}]" for i in reversed(range(n)))
    form = " on sequence" if on_seq else ""
    full = a + b + (f"check c of mix\n  code {{{code}}}\n  count 0 .. {min(last, 2 ** n - 1)}\n"
                    f"  equal other{form}\nend\n")
    chk = load(tmp_path, full).checks[0]
    claim = chk.claims[-1]
    ex = run_claim(chk, claim, Options(engine="explicit", timeout=120))
    sat = run_claim(chk, claim, Options(engine="sat", timeout=120))
    if OPEN in (ex.status, sat.status):
        return
    assert ex.status == sat.status, (full, ex.summary, sat.summary)

"""The event model, settle and glitchfree, checked against facts of the trade and brute force.

Sources:
* Ripple up counter: on the step from 2^(n-1) - 1 to 2^(n-1) every stage
  toggles in turn, each clocked by the fall of the one before, so the counter
  passes through n transient codes and settles at depth n (a fact of the
  trade: the ripple delay of an n-stage counter is n flop delays).
* Reflected binary Gray code: successive codes differ in one bit (the
  published definition, i ^ (i >> 1)), so a decoder of a synchronous Gray
  counter sees one changing input per step and has no function hazard.
* A synchronous Johnson counter changes one bit per step and is decoded by
  two-input gates without glitches (a fact of the trade).
* A decoder of a synchronous binary counter glitches where several bits change
  at once, for example on 0111 -> 1000 (a fact of the trade).
Cross-checks: the memoised explorer against a brute-force walk over every
firing order written here from the contract's text, and the SAT glitchfree
question against the explicit engine.
"""

from __future__ import annotations

import itertools

import pytest
from hypothesis import HealthCheck, given, settings, strategies as st

from checker.claims import glitchfree, run_claim
from checker.claims.common import Options
from checker.claims.result import PROVED, REFUTED
from checker.elab import load_namespace
from checker.engines.budget import Budget
from checker.engines.cascade import Exploration
from checker.model.aig import evaluate
from checker.model.events import EventModel, unit_delay


def load(tmp_path, text):
    p = tmp_path / "t.cnl"
    p.write_text(text)
    return load_namespace(str(p))


def ripple(n: int, extra: str = "") -> str:
    lines = ["design ripple", "  in en", "  flop q[0] : T (t = en)"]
    lines += [f"  flop q[{i}] : T (t = 1) clock fall q[{i - 1}]" for i in range(1, n)]
    lines += [extra, "end"]
    return "\n".join(lines) + "\n"


def state_int(model, values: dict) -> int:
    return sum((values[s] & 1) << i for i, s in enumerate(model.states))


def code_from(model, state: int, n: int) -> int:
    return sum(((state >> model.states.index(f"q[{k}]")) & 1) << k for k in range(n))


@pytest.mark.parametrize("n", [2, 3, 4, 6, 8])
def test_ripple_counter_passes_n_transient_codes_and_settles_at_depth_n(tmp_path, n):
    m = load(tmp_path, ripple(n)).designs["ripple"].model
    em = EventModel(m, {"en": 1})
    start = {f"q[{k}]": 1 if k < n - 1 else 0 for k in range(n)}  # 2^(n-1) - 1
    ex = Exploration(em)
    root, out = ex.explore(state_int(m, start))
    assert [code_from(m, s, n) for s in out.settled] == [1 << (n - 1)]
    assert out.depth == n and not out.never
    # a ripple has exactly one order: n firings, n transient codes
    code, times, settled = unit_delay(em, state_int(m, start))
    assert settled and code_from(m, code, n) == 1 << (n - 1)
    assert [len(t) for t in times] == [1] * n


def test_ripple_counter_claims(tmp_path):
    text = ripple(4, "  out full = and(q[3], q[2], q[1], q[0])") + """
check tally of ripple
  code {q[3], q[2], q[1], q[0]}
  count 0 .. 15
  hold when !en
  settle within 4
  glitchfree full
end
check too_fast of ripple
  code {q[3], q[2], q[1], q[0]}
  count 0 .. 15
  hold when !en
  settle within 3
end
"""
    ns = load(tmp_path, text)
    res = {(c.name, cl.kind): run_claim(c, cl, Options()) for c in ns.checks for cl in c.claims}
    assert res[("tally", "count")].status == PROVED
    assert res[("tally", "settle")].status == PROVED and res[("tally", "settle")].details["depth"] == 4
    assert res[("tally", "glitchfree")].status == PROVED
    r = res[("too_fast", "settle")]
    assert r.status == REFUTED and r.details["depth"] == 4
    ev = r.to_json()["trace"][0]["events"]
    assert r.trace[0].code == 7 and [e["depth"] for e in ev] == [1, 2, 3, 4]
    assert [e["code"] for e in ev] == [6, 4, 0, 8]  # the transient codes of 7 -> 8


DECADE = """
design decade
  in en
  flop q[0] : T (t = en) clear async ten
  flop q[1] : T (t = 1) clock fall q[0] clear async ten
  flop q[2] : T (t = 1) clock fall q[1] clear async ten
  flop q[3] : T (t = 1) clock fall q[2] clear async ten
  node ten = q[3] & q[1]
end
check tens of decade
  code {q[3], q[2], q[1], q[0]}
  count 0 .. 9
  hold when !en
end
"""


def test_self_clearing_decade_can_skip_to_4_with_a_short_pulse(tmp_path):
    # the field failure the issue names: 9 -> 10 decodes ten and clears, but the clear drops
    # as soon as q[3] or q[1] is cleared; the other flop's clear is then a short pulse
    chk = load(tmp_path, DECADE).checks[0]
    r = run_claim(chk, chk.claims[0], Options())
    assert r.status == REFUTED and r.trace[0].code == 9
    assert r.details["expected"] == 0 and r.details["actual"] in (2, 4, 8)
    assert any("short pulse" in w for w in r.details["warnings"])
    assert 0 in r.details["settled"]  # the order the designer hoped for exists too


def decoder_design(family: str, n: int) -> str:
    if family == "binary":
        nxt = "{" + ", ".join(f"q[{i}] ^ and({', '.join(f'q[{j}]' for j in range(i))})" if i > 1 else
                              (f"q[1] ^ q[0]" if i == 1 else "!q[0]") for i in reversed(range(n))) + "}"
        count = f"0 .. {2 ** n - 1}"
    elif family == "gray":
        # a Gray counter kept as binary b with q = b ^ (b >> 1): the flops hold the Gray code itself
        return gray_design(n)
    else:
        nxt = "{" + ", ".join(f"q[{i - 1}]" for i in reversed(range(1, n))) + f", !q[{n - 1}]}}"
        count = "johnson"
    outs = "\n".join(f"  out d{c} = and({', '.join(('' if (c >> i) & 1 else '!') + f'q[{i}]' for i in reversed(range(n)))})"
                     for c in range(min(2 ** n, 16)))
    return f"""design ctr
  in go
  flop q[{n - 1}:0] : D (d = mux(go, q, {nxt}))
{outs}
end
check c of ctr
  code q
  count {count}
  hold when !go
  glitchfree {', '.join(f'd{c}' for c in range(min(2 ** n, 16)))}
end
"""


def gray_design(n: int) -> str:
    # next Gray code, computed from the binary value b (b[i] = xor of q[n-1..i])
    lines = ["design ctr", "  in go"]
    for i in reversed(range(n)):
        lines.append(f"  node b{i} = " + (f"q[{n - 1}]" if i == n - 1 else f"b{i + 1} ^ q[{i}]"))
    lines.append("  node c0 = 1")
    for i in range(1, n + 1):
        lines.append(f"  node c{i} = c{i - 1} & b{i - 1}")
    for i in range(n):
        lines.append(f"  node nb{i} = b{i} ^ c{i}")
    for i in range(n):
        hi = f"nb{i + 1}" if i + 1 < n else "0"
        lines.append(f"  node ng{i} = nb{i} ^ {hi}")
    lines.append(f"  flop q[{n - 1}:0] : D (d = mux(go, q, {{{', '.join(f'ng{i}' for i in reversed(range(n)))}}}))")
    outs = min(2 ** n, 16)
    for c in range(outs):
        lines.append(f"  out d{c} = and({', '.join(('' if (c >> i) & 1 else '!') + f'q[{i}]' for i in reversed(range(n)))})")
    lines += ["end", "check c of ctr", "  code q", "  count gray", "  hold when !go",
              "  glitchfree " + ", ".join(f"d{c}" for c in range(outs)), "end"]
    return "\n".join(lines) + "\n"


@pytest.mark.parametrize("family, n, verdict", [
    ("binary", 4, REFUTED), ("gray", 4, PROVED), ("johnson", 4, PROVED), ("gray", 3, PROVED), ("binary", 3, REFUTED),
])
def test_synchronous_decoders(tmp_path, family, n, verdict):
    chk = load(tmp_path, decoder_design(family, n)).checks[0]
    count = next(cl for cl in chk.claims if cl.kind == "count")
    assert run_claim(chk, count, Options()).status == PROVED  # the counter is what it claims to be
    claim = next(cl for cl in chk.claims if cl.kind == "glitchfree")
    sat = glitchfree.prove(chk, claim, Options(), Budget())
    explicit = glitchfree.prove(chk, claim, Options(engine="explicit"), Budget())
    assert sat.status == explicit.status == verdict
    if verdict == REFUTED:
        vals = sat.details["values"]
        assert sum(a != b for a, b in zip(vals, vals[1:])) >= 2


def test_binary_decoder_glitches_on_0111_to_1000(tmp_path):
    # On 0111 -> 1000 all four flops change, so every 4-bit code lies on some order: each
    # decoded output d_c with c not 7 or 8 can pulse (0, then 1 at c, then 0). d7 and d8 change
    # exactly once on every order: an order never comes back to 0111 or leaves 1000 early.
    chk = load(tmp_path, decoder_design("binary", 4)).checks[0]
    m = chk.design.model
    watch = tuple(m.signals[f"d{c}"] for c in range(16))
    ex = Exploration(EventModel(m, {"go": 1}), watch)
    start = sum(((0b0111 >> k) & 1) << m.states.index(f"q[{k}]") for k in range(4))
    _, out = ex.explore(start)
    assert out.glitch == 0xFFFF & ~(1 << 7) & ~(1 << 8)
    claim = next(cl for cl in chk.claims if cl.kind == "glitchfree")
    for engine in ("auto", "explicit"):
        r = run_claim(chk, claim, Options(engine=engine))
        assert r.status == REFUTED, engine
        vals = r.details["values"]
        assert vals[0] == vals[-1] or sum(a != b for a, b in zip(vals, vals[1:])) >= 3


def binary_counter(n: int) -> str:
    """A synchronous binary counter in T flops with a decoded top quarter (`top`), glitchfree claimed."""
    return f"""design ctr
  in go
  flop q[{n - 1}:0] : T (t = c & go)
  node c[{n - 1}:0] = {{c[{n - 2}:0] & q[{n - 2}:0], 1}}
  out top = q[{n - 1}] & !q[{n - 2}]
end
check c of ctr
  code q
  count 0 .. {2 ** n - 1}
  hold when !go
  glitchfree top
end
"""


def test_wide_synchronous_glitch_questions(tmp_path):
    # the SAT question: a 64-bit binary counter's decoded top quarter glitches
    chk = load(tmp_path, binary_counter(64)).checks[0]
    r = run_claim(chk, chk.claims[1], Options())
    assert r.status == REFUTED and r.details["engine"] == "sat"


# --- brute force from the contract's text ------------------------------------------------

def brute(model, inputs, start, watch):
    """Every order of one clock by plain recursion, the rules re-read from the contract:
    (settled codes, greatest depth, never settles, watched signals that change twice)."""
    n = len(model.states)

    def ev(code, lits):
        lv = {l >> 1: (code >> i) & 1 for i, l in enumerate(model.state_lits)}
        lv.update({l >> 1: inputs[x] for x, l in zip(model.inputs, model.input_lits)})
        return evaluate(model.aig, lv, lits, 1)

    def nxt(code):
        return ev(code, model.next_lits)

    def clr(code):
        return ev(code, [model.async_clear[i] for i in range(n)]) if model.async_clear else [0] * n

    def pre(code):
        return ev(code, [model.async_preset[i] for i in range(n)]) if model.async_preset else [0] * n

    clocks = model.clocks or [None] * n
    c0, p0 = clr(start), pre(start)
    pend = {}
    for g in range(n):
        q = (start >> g) & 1
        if c0[g] or p0[g]:
            t = 0 if c0[g] else 1
            if q != t:
                pend[g] = (t, 1, "a")
        elif clocks[g] is None and nxt(start)[g] != q:
            pend[g] = (nxt(start)[g], 1, "c")
    results = {"settled": set(), "depth": 0, "never": False, "glitch": 0}

    def walk(code, pend, seen, changed, vals):
        if not pend:
            results["settled"].add(code)
            return
        key = (code, tuple(sorted((g, v) for g, (v, _, _) in pend.items())))
        if key in seen:
            results["never"] = True
            return
        if len(seen) > 60:
            results["never"] = True
            return
        for f, (v, d, why) in list(pend.items()):
            results["depth"] = max(results["depth"], d)
            after = (code & ~(1 << f)) | (v << f)
            p2 = {g: x for g, x in pend.items() if g != f}
            nb, cb, pb = nxt(code), clr(code), pre(code)
            edge = "rise" if v else "fall"
            for g in range(n):
                if clocks[g] is not None and clocks[g] == (edge, f) and not (cb[g] or pb[g]):
                    q = (after >> g) & 1
                    if nb[g] != q:
                        p2[g] = (nb[g], d + 1, "c")
                    else:
                        p2.pop(g, None)
            ca, pa = clr(after), pre(after)
            for g in range(n):
                if ca[g] or pa[g]:
                    t = 0 if ca[g] else 1
                    q = (after >> g) & 1
                    old = p2.get(g)
                    if q != t:
                        if old is None or old[2] == "c" or old[0] != t:
                            p2[g] = (t, d + 1, "a")
                    elif old is not None and (old[2] == "c" or old[0] != t):
                        del p2[g]
            v2 = ev(after, watch) if watch else []
            diff = sum((a != b) << k for k, (a, b) in enumerate(zip(vals, v2)))
            results["glitch"] |= diff & changed
            walk(after, p2, seen | {key}, changed | diff, v2)

    walk(start, pend, frozenset(), 0, ev(start, watch) if watch else [])
    return results


@st.composite
def small_async(draw):
    n = draw(st.integers(2, 4))
    lines = ["design a", "  in x"]
    kinds = []
    for i in range(n):
        src = draw(st.sampled_from(["sys"] + [f"q{j}" for j in range(n) if j != i]))
        edge = draw(st.sampled_from(["rise", "fall"]))
        pin = draw(st.sampled_from(["x", "1", f"q{(i + 1) % n}", f"!q{(i + n - 1) % n}", f"q{(i + 1) % n} ^ x"]))
        kind = draw(st.sampled_from(["T", "D"]))
        clock = "" if src == "sys" else f" clock {edge} {src}"
        clr = draw(st.sampled_from(["", f" clear async q{(i + 1) % n} & q{(i + 2) % n} & x", " preset async !x & q0"]))
        pinname = "t" if kind == "T" else "d"
        lines.append(f"  flop q{i} : {kind} ({pinname} = {pin}){clock}{clr}")
        kinds.append(kind)
    lines.append(f"  out y = {draw(st.sampled_from(['q0 & q1', 'q0 ^ q1', 'q0 | q1 & x']))}")
    lines.append("end")
    return "\n".join(lines) + "\n"


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(text=small_async())
def test_explorer_agrees_with_brute_force(tmp_path, text):
    m = load(tmp_path, text).designs["a"].model
    watch = (m.signals["y"],)
    for x in (0, 1):
        em = EventModel(m, {"x": x})
        for start in range(1 << len(m.states)):
            b = brute(m, {"x": x}, start, list(watch))
            ex = Exploration(em, watch)
            _, out = ex.explore(start)
            assert out.never == b["never"], (text, x, start)
            if not b["never"]:
                assert set(out.settled) == b["settled"], (text, x, start)
                assert out.depth == b["depth"], (text, x, start)
                assert out.glitch == b["glitch"], (text, x, start)


@st.composite
def small_sync(draw):
    n = draw(st.integers(2, 5))
    lines = ["design s", "  in go"]
    terms = [f"q[{i}]" for i in range(n)] + ["go"]
    d = []
    for i in range(n):
        a, b = draw(st.sampled_from(terms)), draw(st.sampled_from(terms))
        op = draw(st.sampled_from(["&", "|", "^"]))
        neg = draw(st.booleans())
        d.append(f"{'!' if neg else ''}({a} {op} {b})")
    lines.append(f"  flop q[{n - 1}:0] : D (d = {{{', '.join(d)}}})")
    outs = []
    for k in range(3):
        a, b, c = (draw(st.sampled_from(terms[:-1])) for _ in range(3))
        outs.append(f"  out o{k} = {draw(st.sampled_from(['and', 'or', 'xor', 'nand']))}({a}, {b}, {c})")
    lines += outs + ["end", "check c of s", "  code q", f"  count 0 .. {2 ** n - 1}",
                     "  glitchfree o0, o1, o2", "end"]
    return "\n".join(lines) + "\n"


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(text=small_sync())
def test_sat_glitch_question_agrees_with_explicit(tmp_path, text):
    chk = load(tmp_path, text).checks[0]
    claim = next(cl for cl in chk.claims if cl.kind == "glitchfree")
    a = glitchfree.prove(chk, claim, Options(), Budget())
    b = glitchfree.prove(chk, claim, Options(engine="explicit"), Budget())
    assert a.status == b.status, text


def test_brute_force_sees_a_known_glitch(tmp_path):
    # the brute force must not be blind: 01 -> 10 on a synchronous pair, watched xor stays 1 at both
    # ends but passes 00 or 11 in between
    text = "design a\n  in x\n  flop q0 : D (d = !q0)\n  flop q1 : D (d = !q1)\n  out y = q0 ^ q1\nend\n"
    m = load(tmp_path, text).designs["a"].model
    b = brute(m, {"x": 0}, 0b01, [m.signals["y"]])
    assert b["glitch"] == 1 and b["settled"] == {0b10} and b["depth"] == 1
    assert list(itertools.islice(iter(b["settled"]), 1)) == [2]


def test_wide_gray_decoder_is_glitch_free(tmp_path):
    # 64-bit Gray counter: one bit changes per step, so no decoded output can pulse
    chk = load(tmp_path, gray_design(64)).checks[0]
    res = {cl.kind: run_claim(chk, cl, Options()) for cl in chk.claims}
    assert res["count"].status == PROVED
    assert res["glitchfree"].status == PROVED and res["glitchfree"].details["engine"] == "sat"


def test_recover_reads_settled_codes_of_every_order(tmp_path):
    # the self-clearing decade: from 13 a late clear is a fall that clocks the next stage,
    # so a clock can settle in 12, which steps back to 13: {12, 13} is a lock
    text = DECADE.replace("  hold when !en\nend", "  hold when !en\n  recover\nend")
    chk = load(tmp_path, text).checks[0]
    r = run_claim(chk, chk.claims[-1], Options())
    assert r.status == REFUTED and r.details["locked"] == [[12, 13]]
    assert all(t.events is not None for t in r.trace[:-1])  # each step shows an order that settles there


def test_map_marks_codes_where_an_asynchronous_clear_holds(tmp_path):
    # ten = q[3] & q[1] holds in 1010, 1011, 1110 and 1111: those codes are not stable
    from checker import api

    p = tmp_path / "d.cnl"
    p.write_text(DECADE)
    m = api.map_check(str(p), "tens")
    assert {e["code"] for e in m.doc["unused"] if e.get("unstable")} == {10, 11, 14, 15}
    assert m.doc["locked"] == [[12, 13]]

"""The firings engine (every order of one clock as one SAT problem) against the explicit one and facts.

Sources:
* Ripple up counter: on the step from 2^(n-1) - 1 to 2^(n-1) every stage
  toggles in turn, each clocked by the fall of the one before, so the counter
  passes through n transient codes and settles at depth n (a fact of the
  trade: the ripple delay of an n-stage counter is n flop delays).
* A ripple counter that clears itself asynchronously on a decoded code can
  land elsewhere when the clear drops before every flop it drives has
  changed (a fact of the trade, the reason such dividers are built with a
  latch or synchronously); the logic model completes the short pulse and
  names it.
Cross-checks: on random small asynchronous designs (hypothesis), the set of
settled codes, the deepest depth and the glitches that the firings engine
finds for a fixed start and input equal those of the memoised explicit
walk (:mod:`checker.engines.cascade`), and every claim's verdict agrees
between the two engines.
"""

from __future__ import annotations

import pytest
from hypothesis import HealthCheck, given, settings, strategies as st

from checker.claims import run_claim
from checker.claims.common import Options
from checker.claims.result import OPEN, PROVED, REFUTED
from checker.elab import load_namespace
from checker.engines.cascade import CascadeLimit, Exploration
from checker.engines.firings import Firings, settle_bound, structural_bound
from checker.model.events import EventModel


def load(tmp_path, text):
    p = tmp_path / "t.cnl"
    p.write_text(text)
    return load_namespace(str(p))


def ripple(n: int, clear: bool = False, extra_checks: str = "") -> str:
    """A ripple up counter of n toggle stages (the first with an enable); with ``clear``, every
    stage is cleared asynchronously on the code 2^(n-1) + 2 (a divider by 2^(n-1) + 2)."""
    c = " clear async term" if clear else ""
    lines = ["# sack counter on a mill's filling spout: one pulse per sack, divided down",
             "design spout", "  in en", "  flop q[0] : T (t = en)" + c]
    lines += [f"  flop q[{i}] : T (t = 1) clock fall q[{i - 1}]" + c for i in range(1, n)]
    if clear:
        lines.append(f"  node term = q[{n - 1}] & q[1]")
    lines.append("  out full = and(" + ", ".join(f"q[{i}]" for i in range(n - 1)) + ")")
    lines.append("  out low = nor(q[1], q[0])")
    code = ", ".join(f"q[{i}]" for i in reversed(range(n)))
    last = 2 ** (n - 1) + 1 if clear else 2 ** n - 1
    lines += ["end", "check bags of spout", f"  code {{{code}}}", f"  count 0 .. {last}", "  hold when !en",
              extra_checks, "end"]
    return "\n".join(lines) + "\n"


def verdicts(check, engine: str) -> list[str]:
    return [run_claim(check, c, Options(engine=engine, timeout=120)).status for c in check.claims]


def fix_start(fir: Firings, code: int, inputs: dict[str, int]) -> list[int]:
    """Literals of ``fir.g`` that pin the start code and the inputs."""
    lits = [l if (code >> i) & 1 else l ^ 1 for i, l in enumerate(fir.q0)]
    lits += [l if inputs[n] else l ^ 1 for n, l in zip(fir.model.inputs, fir.ins)]
    return lits


def settled_by_sat(fir: Firings, start: list[int], steps: int) -> set[int]:
    """Every settled code the firings engine admits from a pinned start, by blocking each found."""
    final = fir.frames[steps].q
    done = fir.pending_at(steps) ^ 1
    for l in final:
        fir.lit(l)  # encoded before the solve, so that the model gives their values
    found: set[int] = set()
    block = []
    while fir.solve(start + [done] + block):
        code = sum(fir.value(l) << i for i, l in enumerate(final))
        found.add(code)
        g = fir.g
        block.append(g.or_all(l ^ 1 if (code >> i) & 1 else l for i, l in enumerate(final)))
        assert len(found) <= 1 << len(final)
    return found


# --- facts of the trade -------------------------------------------------------------------------

@pytest.mark.parametrize("n", [4, 24, 32, 64])
def test_ripple_step_to_the_top_half_passes_n_transient_codes_at_depth_n(tmp_path, n):
    m = load(tmp_path, ripple(n)).designs["spout"].model
    fir = Firings(m, depth_cap=n + 1)
    bound = settle_bound(fir, [])
    assert bound.steps == n and bound.how == "structure"  # every flop fires at most once
    start_code = sum(1 << m.states.index(f"q[{k}]") for k in range(n - 1))  # 2^(n-1) - 1
    start = fix_start(fir, start_code, {"en": 1})
    top = 1 << m.states.index(f"q[{n - 1}]")
    assert settled_by_sat(fir, start, n) == {top}
    assert fir.solve(start + [fir.deep(n)]) and not fir.solve(start + [fir.deep(n + 1)])
    # the one order: n firings, each through a transient code, q[0] first and q[n-1] last
    assert fir.solve(start)
    order = fir.order()
    assert order == [m.states.index(f"q[{k}]") for k in range(n)]
    fir.close()


@pytest.mark.parametrize("n", [24, 32])
def test_wide_ripple_claims(tmp_path, n):
    chk = load(tmp_path, ripple(n, extra_checks=f"  settle within {n}\n  settle within {n - 1}\n"
                                                 f"  glitchfree full\n  glitchfree low")).checks[0]
    rs = [run_claim(chk, c, Options(timeout=120)) for c in chk.claims]
    assert [r.status for r in rs] == [PROVED, PROVED, REFUTED, PROVED, REFUTED]
    assert all(r.details["engine"] == "firings" for r in rs)
    assert rs[1].details["depth"] == n
    assert f"depth {n} (more than {n - 1})" in rs[2].summary
    # the glitch of nor(q[1], q[0]): 01 -> 00 -> 10 between the edge and settling
    assert rs[4].details["values"][:3] == [0, 1, 0]


@pytest.mark.parametrize("n", [24, 32])
def test_wide_ripple_with_a_decoded_asynchronous_clear(tmp_path, n):
    chk = load(tmp_path, ripple(n, clear=True, extra_checks=f"  settle within {n}\n  glitchfree full")).checks[0]
    rs = [run_claim(chk, c, Options(timeout=120, radix="hex")) for c in chk.claims]
    assert [r.status for r in rs] == [REFUTED, PROVED, PROVED]
    count = rs[0]
    # the short pulse: from 2^(n-1) + 1 the clear of the top bit and q[1] races the ripple into q[2]
    assert count.details["expected"] == 0 and count.details["actual"] != 0
    assert any("short pulse" in w for w in count.details["warnings"])
    assert "0x" in count.summary and any(line.lstrip().startswith("start  0x") for line in count.evidence)
    assert rs[1].details["bound"] == "sat"


# --- cross-checks against the explicit engine on random small designs -------------------------

@st.composite
def designs(draw):
    """A random asynchronous design of 2 to 4 flops: each T, D or SR, on the system clock or an edge of
    another flop (clock loops allowed), pins a random gate of two flop bits or the input, and now
    and then an asynchronous clear or preset decoded from two flop bits; at least one system flop."""
    n = draw(st.integers(2, 4))
    atoms = [f"q[{i}]" for i in range(n)] + ["go", "!go"] + [f"!q[{i}]" for i in range(n)]
    lines = ["design mix", "  in go"]
    for i in reversed(range(n)):
        kind = draw(st.sampled_from(["T", "D", "T", "D", "SR"]))
        a, b = draw(st.sampled_from(atoms)), draw(st.sampled_from(atoms))
        op = draw(st.sampled_from(["&", "|", "^"]))
        if kind == "SR":  # s = r = 1 is an SR fault, which the asynchronous count claim refutes
            text = f"  flop q[{i}] : SR (s = {a}, r = {b})"
        else:
            pin = "t" if kind == "T" else "d"
            text = f"  flop q[{i}] : {kind} ({pin} = {a} {op} {b})"
        if i > 0 and draw(st.booleans()):
            src = draw(st.sampled_from([j for j in range(n) if j != i]))
            text += f" clock {draw(st.sampled_from(['rise', 'fall']))} q[{src}]"
        if draw(st.integers(0, 3)) == 0:
            x, y = draw(st.sampled_from(atoms[:n])), draw(st.sampled_from(atoms[:n]))
            text += f" {draw(st.sampled_from(['clear', 'preset']))} async {x} & {y}"
        lines.append(text)
    lines.append("  out w = " + draw(st.sampled_from(atoms[:n])) + " ^ " + draw(st.sampled_from(atoms[:n])))
    lines.append("end")
    return n, "\n".join(lines) + "\n"


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(designs(), st.integers(0, 15), st.integers(0, 1))
def test_firings_engine_matches_the_explicit_walk(tmp_path, spec, start_bits, go):
    n, text = spec
    m = load(tmp_path, text).designs["mix"].model
    em = EventModel(m, {"go": go})
    code = start_bits & ((1 << n) - 1)
    ex = Exploration(em, (m.signals["w"],))
    try:
        root, out = ex.explore(code)
    except CascadeLimit:
        return
    fir = Firings(m, depth_cap=2 * n + 3, watch=[m.signals["w"]])
    start = fix_start(fir, code, {"go": go})
    bound = settle_bound(fir, start)
    if out.never:
        assert bound.steps is None  # never a proof; an order that never settles or no bound
        if bound.never is not None:
            c, inputs, flops = bound.never
            assert (c, inputs) == (code, {"go": go})
        return
    assert bound.never is None and bound.steps is not None
    if structural_bound(m) is not None:
        assert bound.steps == structural_bound(m)
    assert settled_by_sat(fir, start, bound.steps) == set(out.settled)
    deepest = max(k for k in range(0, 2 * n + 3) if k == 0 or fir.solve(start + [fir.deep(k)]))
    assert deepest == out.depth
    assert fir.solve(start + [fir.glitch(0)]) == bool(out.glitch & 1)
    fir.close()


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(designs(), st.integers(0, 3))
def test_claim_verdicts_agree_between_engines(tmp_path, spec, within):
    n, text = spec
    code = ", ".join(f"q[{i}]" for i in reversed(range(n)))
    text += (f"check c of mix\n  code {{{code}}}\n  count 0 .. {2 ** n - 1}\n  hold when !go\n"
             f"  settle within {within}\n  glitchfree w when go\nend\n")
    chk = load(tmp_path, text).checks[0]
    a, b = verdicts(chk, "explicit"), verdicts(chk, "sat")
    for x, y in zip(a, b):
        assert x == y or OPEN in (x, y), (text, a, b)


# --- SR faults on asynchronous count --------------------------------------------------------------

SR_RIPPLE = """
# tray turner on a seed-tray line: a ripple stage built from an SR flop
design turner
  in go, jam
  flop a : T (t = go)
  flop b : SR (s = a & !b, r = a & (b | jam)) clock fall a
end
check turns of turner
  code {b, a}
  count 0 .. 3
  hold when !go
end
"""

SR_EDGE = """
# vent flap on a greenhouse: an SR flop on the system clock drives a ripple stage
design flap
  in go, shut
  flop a : SR (s = go & !a, r = go & (a | shut))
  flop b : T (t = 1) clock fall a
end
check vents of flap
  code {b, a}
  count 0 .. 3
  hold when !go
end
"""


@pytest.mark.parametrize("text, flop", [(SR_RIPPLE, "b"), (SR_EDGE, "a")])
@pytest.mark.parametrize("engine", ["explicit", "sat"])
def test_async_count_refutes_an_sr_fault(tmp_path, text, flop, engine):
    chk = load(tmp_path, text).checks[0]
    r = run_claim(chk, chk.claims[0], Options(engine=engine, timeout=60))
    assert r.status == REFUTED and r.details.get("fault") == flop, (r.summary, r.details)
    assert "SR fault" in r.summary


def test_async_count_without_the_fault_input_is_proved(tmp_path):
    text = SR_RIPPLE.replace("r = a & (b | jam)", "r = a & b")
    chk = load(tmp_path, text).checks[0]
    assert verdicts(chk, "explicit") == verdicts(chk, "sat") == [PROVED]


# --- radix of settle, glitchfree and count evidence -------------------------------------------

# each code written by hand as the report must show it: 7 and 15 start the deepest orders (to 8 and 0)
SHOWN = {"hex": {7: "0x7", 15: "0xF (15)", 6: "0x6", 14: "0xE (14)"},
         "bin": {7: "0b0111 (7)", 15: "0b1111 (15)", 6: "0b0110 (6)", 14: "0b1110 (14)"},
         "dec": {7: "7", 15: "15", 6: "6", 14: "14"}}


@pytest.mark.parametrize("engine", ["explicit", "sat"])
@pytest.mark.parametrize("radix", ["hex", "bin", "dec"])
def test_settle_and_glitchfree_evidence_follow_the_radix(tmp_path, engine, radix):
    chk = load(tmp_path, ripple(4, extra_checks="  settle within 3\n  glitchfree low")).checks[0]
    rs = [run_claim(chk, c, Options(engine=engine, timeout=60, radix=radix)) for c in chk.claims]
    settle, glitch = rs[1], rs[2]
    assert settle.status == glitch.status == REFUTED
    start = settle.trace[0].code
    assert start in (7, 15)
    shown = SHOWN[radix]
    assert settle.summary.startswith(f"from code {shown[start]} an order")
    assert any(line.strip() == f"start  {shown[start]}" for line in settle.evidence)
    assert any(line.strip() == f"q[0] -> 0  {shown[start - 1]}  depth 1" for line in settle.evidence)
    prefix = {"hex": "0x", "bin": "0b", "dec": ""}[radix]
    after = glitch.summary.split("from code ")[1]
    assert after.startswith(prefix) and after[len(prefix)].isdigit() or after[len(prefix)] in "ABCDEF"


# --- honest verdicts: open, never proved, when the firings engine cannot finish --------------

def test_no_bound_on_firings_leaves_the_claim_open(tmp_path, monkeypatch):
    import checker.engines.firings as firings
    chk = load(tmp_path, ripple(8, clear=True, extra_checks="  settle within 8\n  glitchfree full")).checks[0]
    m = chk.design.model
    fir = Firings(m)
    bound = settle_bound(fir, [], max_firings=2)  # orders of 2 firings exist and never repeat a cascade
    assert bound.steps is None and bound.never is None and bound.tried == 2
    fir.close()
    monkeypatch.setattr(firings, "MAX_FIRINGS_FACTOR", 0)  # the search may try 1 firing only
    rs = [run_claim(chk, c, Options(engine="sat", timeout=60)) for c in chk.claims]
    assert [r.status for r in rs] == [OPEN, OPEN, OPEN]
    assert all("firings" in r.summary for r in rs)


def test_out_of_time_is_open(tmp_path):
    chk = load(tmp_path, ripple(64, clear=True, extra_checks="  settle within 64")).checks[0]
    rs = [run_claim(chk, c, Options(timeout=0.05)) for c in chk.claims]
    assert [r.status for r in rs] == [OPEN, OPEN]


BUZZER = """
# a fault on the brewhouse's alarm buzzer: q's clear and preset chase each other while go holds
design buzz
  in go
  flop a : T (t = go)
  flop q : T (t = 0) clear async go & q preset async go & !q
  out w = a & q
end
check c of buzz
  code {q, a}
  count 0 .. 3
  settle within 3
  glitchfree w when !go
  glitchfree w
end
"""


@pytest.mark.parametrize("engine", ["explicit", "sat"])
def test_a_clock_that_never_settles_refutes_every_claim_about_it(tmp_path, engine):
    # the contract: a cascade that can revisit a code with the same changes pending never settles,
    # and that refutes every claim about that clock; under !go the clock settles
    chk = load(tmp_path, BUZZER).checks[0]
    rs = [run_claim(chk, c, Options(engine=engine, timeout=60)) for c in chk.claims]
    assert [r.status for r in rs] == [REFUTED, REFUTED, PROVED, REFUTED]
    assert "never settles" in rs[1].summary and "never settles" in rs[3].summary
    assert rs[3].trace[0].inputs["go"] == 1


def test_auto_walks_explicitly_when_the_firings_engine_finds_no_bound(tmp_path, monkeypatch):
    import checker.claims.wide as wide
    import checker.engines.firings as firings
    chk = load(tmp_path, ripple(4, clear=True, extra_checks="  settle within 4\n  glitchfree full")).checks[0]
    monkeypatch.setattr(wide, "AUTO_EXPLICIT_STARTS", 0)  # auto: the firings engine first, at any size
    rs = [run_claim(chk, c, Options(timeout=60)) for c in chk.claims]
    assert {r.details["engine"] for r in rs} == {"firings"}
    monkeypatch.setattr(firings, "MAX_FIRINGS_FACTOR", 0)  # ... which now finds no bound
    again = [run_claim(chk, c, Options(timeout=60)) for c in chk.claims]
    assert {r.details["engine"] for r in again} == {"explicit"}
    assert [r.status for r in again] == [r.status for r in rs] == [REFUTED, PROVED, PROVED]

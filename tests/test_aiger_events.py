"""Claims about the orders of one clock, and claims on asynchronous designs, written as AIGER.

`countersign export --claim` writes `settle`, `glitchfree`, and `count` and
`recover` on asynchronous designs through the event encoding of
checker/tools/event_aiger.py (one AIGER step per edge or firing). The check
here is the one issue 10 asks for: a search written in the test (the
breadth-first search and the strongly connected sets of
tests/test_aiger_claims.py, reading only the AIGER file) finds the bad state
reachable, or the justice property satisfiable, exactly when countersign
refutes the claim. The explicit cascade engine (checker/engines/cascade.py)
gives countersign's verdicts; the encoding shares no code with it, only the
contract's text. Scenarios are our own; random asynchronous designs come from
hypothesis.
"""

from __future__ import annotations

from pathlib import Path

import pytest
from hypothesis import HealthCheck, assume, given, settings, strategies as st

from checker.claims import run_check, run_claim
from checker.claims.common import Options
from checker.elab import load_namespace
from checker.errors import InputError
from checker.lang.aiger import parse_aiger
from checker.tools.export import export_aiger
from test_aiger_claims import Brute, py_aiger_reads

ROOT = Path(__file__).resolve().parent.parent
EVENT_KINDS = ("count", "settle", "glitchfree", "recover", "always")
MAX_INPUTS = 9  # AIGER inputs of a written claim that the search enumerates at every state
MAX_FLOPS = 8  # flops of a case design the search can afford (its latches grow about fourfold)


def _written(claim, model) -> bool:
    return claim.kind in ("settle", "glitchfree") or (not model.synchronous and claim.kind in EVENT_KINDS)


def _search(tmp_path, check, claim) -> bool:
    """Whether the search over the written file finds the claim refuted (both AIGER forms agree)."""
    out = tmp_path / f"{check.name}_{claim.pos.line}.aag"
    export_aiger(check, claim, str(out))
    text = out.read_text()
    assert f"claim at {claim.pos.file}:{claim.pos.line}" in text  # which claim, file and line
    d = parse_aiger(str(out), out.read_bytes())
    assert len(d.inputs) <= MAX_INPUTS, "too wide for the search; pick a smaller design"
    bad, fair = Brute(d).search()
    binary = tmp_path / f"{check.name}_{claim.pos.line}.aig"
    export_aiger(check, claim, str(binary))
    db = parse_aiger(str(binary), binary.read_bytes())
    assert db.ands == d.ands and db.latches == d.latches  # one numbering, two forms
    assert Brute(db).search() == (bad, fair)
    if d.bad and not d.justice:
        py_aiger_reads(text)
    return bad or fair


def _claims_of(path: Path):
    ns = load_namespace(str(path))
    out = []
    for chk in ns.checks:
        verdicts = {r.line: r.status for r in run_check(chk, Options())}
        for cl in chk.claims:
            if _written(cl, chk.design.model):
                out.append((chk, cl, verdicts[cl.pos.line]))
    return out


def case_claims():
    out = []
    for f in sorted((ROOT / "cases").glob("*.cnl")):
        ns = load_namespace(str(f))
        for chk in ns.checks:
            if len(chk.design.model.states) > MAX_FLOPS:
                continue  # wide cases (a 32-bit ripple divider) are beyond an explicit search of the file
            for cl in chk.claims:
                if _written(cl, chk.design.model):
                    out.append((f.name, chk.name, cl.pos.line))
    return out


@pytest.mark.parametrize("case,check,line", case_claims())
def test_case_claims_through_the_event_encoding(tmp_path, case, check, line):
    path = ROOT / "cases" / case
    chk, cl, verdict = next((c, cl, v) for c, cl, v in _claims_of(path) if c.name == check and cl.pos.line == line)
    assert verdict != "open"
    assert _search(tmp_path, chk, cl) == (verdict == "refuted"), f"countersign says {verdict}"


OWN = """\
# Greenhouse vent sequencer (a scenario of our own). Three builds of the vent stage counter:
# a ripple stage chain with an asynchronous clear at code 6 (a short pulse, and a decode that
# glitches), a latch pair whose asynchronous clear and preset chase each other while `run`
# is 1 (an oscillator: no clock from those codes ever settles), and a synchronous Gray stepper.
design vents
  in tick
  flop v[0] : T (t = tick) clear async six
  flop v[1] : T (t = 1) clock fall v[0] clear async six
  flop v[2] : T (t = 1) clock fall v[1] clear async six
  node six = v[2] & v[1]
  out wide = v[2] & v[1]
end
design chase
  in run
  flop a : D (d = a) clear async b & run preset async !b & run
  flop b : D (d = b) clear async !a & run preset async a & run
  flop m : T (t = run) clock rise a preset async !run
  out both = a & b
end
design gray3
  in go
  flop g[2:0] : D (d = mux(go, g, {g[1] & !g[0] | g[2] & g[0], !g[2] & g[0] | g[1] & !g[0], !(g[2] ^ g[1])}))
  out mid = g[1] & !g[0]
end
check vent of vents
  code v
  count 0 .. 5
  hold when !tick
  settle within 4
  settle within 3
  glitchfree wide
  glitchfree wide when !tick
  glitchfree six
  recover within 1
  recover within 0
  recover
  always !six | v[1]
  always wide
end
check lock of chase
  code {a, b, m}
  count 0 1
  hold when !run
  settle within 9
  glitchfree both when !run
  recover
  recover within 2
end
check idle of chase
  code {a, b, m}
  count 1 3
  hold when !run
  recover when !run
end
check steps of gray3
  code g
  count gray
  hold when !go
  settle within 1
  settle within 0
  glitchfree mid
end
"""


def own_claims(tmp_path: Path):
    p = tmp_path / "vents.cnl"
    p.write_text(OWN)
    return _claims_of(p)


def test_own_claims_through_the_event_encoding(tmp_path):
    claims = own_claims(tmp_path)
    seen: dict[str, set] = {}
    for chk, cl, verdict in claims:
        assert verdict != "open", (chk.name, cl.pos.line)
        got = _search(tmp_path, chk, cl)
        assert got == (verdict == "refuted"), f"{chk.name} line {cl.pos.line} ({cl.text}): countersign says {verdict}"
        seen.setdefault(cl.kind, set()).add(verdict)
    # the scenario reaches both verdicts of every kind the encoding writes
    for kind in ("settle", "glitchfree", "recover", "always"):
        assert seen[kind] == {"proved", "refuted"}, kind
    assert "refuted" in seen["count"]


def test_an_order_that_never_settles_is_found_by_the_loop_latches(tmp_path):
    p = tmp_path / "vents.cnl"
    p.write_text(OWN)
    chk = next(c for c in load_namespace(str(p)).checks if c.name == "lock")
    res = {r.line: r for r in run_check(chk, Options())}
    settle = next(cl for cl in chk.claims if cl.kind == "settle")
    assert res[settle.pos.line].status == "refuted" and "never settles" in res[settle.pos.line].summary
    assert _search(tmp_path, chk, settle)


# --- random asynchronous designs -------------------------------------------------------------
PINS = {"D": ("d",), "T": ("t",), "JK": ("j", "k")}


@st.composite
def async_design(draw):
    n = draw(st.integers(2, 3))
    leaves = ["go"] + [f"q[{i}]" for i in range(n)]

    def expr(depth):
        if depth == 0 or draw(st.booleans()):
            e = draw(st.sampled_from(leaves + ["1"]))
            return "!" + e if e != "1" and draw(st.booleans()) else e
        op = draw(st.sampled_from(["&", "|", "^"]))
        return f"({expr(depth - 1)} {op} {expr(depth - 1)})"

    lines = ["design rnd", "  in go"]
    for i in reversed(range(n)):
        kind = draw(st.sampled_from(sorted(PINS)))
        text = f"  flop q[{i}] : {kind} (" + ", ".join(f"{p} = {expr(1)}" for p in PINS[kind]) + ")"
        src = draw(st.sampled_from([None] + [j for j in range(n) if j != i]))
        if src is not None:
            text += f" clock {draw(st.sampled_from(['rise', 'fall']))} q[{src}]"
        if draw(st.integers(0, 2)) == 0:
            text += f" clear async {expr(1)} & {draw(st.sampled_from(leaves))}"
        if draw(st.integers(0, 3)) == 0:
            text += f" preset async {expr(1)} & {draw(st.sampled_from(leaves))}"
        lines.append(text)
    lines.append(f"  out y = {expr(2)}")
    lines.append("end")
    codes = draw(st.lists(st.integers(0, (1 << n) - 1), min_size=2, max_size=(1 << n) - 1, unique=True))
    k = draw(st.integers(0, 4))
    lines += ["check c of rnd", "  code q", "  count " + " ".join(map(str, codes)), "  hold when !go",
              f"  settle within {k}", "  glitchfree y", f"  glitchfree y when go", f"  recover within {k % 3}",
              "  recover", "end"]
    return "\n".join(lines) + "\n"


@settings(max_examples=30, deadline=None,
          suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture])
@given(text=async_design())
def test_random_asynchronous_claims_agree_with_the_search(tmp_path_factory, text):
    d = tmp_path_factory.mktemp("rnd")
    p = d / "rnd.cnl"
    p.write_text(text)
    try:
        ns = load_namespace(str(p))
    except InputError:
        assume(False)
        return
    chk = ns.checks[0]
    assume(not chk.design.model.synchronous)
    for cl in chk.claims:
        v = run_claim(chk, cl, Options()).status
        if v == "open":
            continue
        assert _search(d, chk, cl) == (v == "refuted"), f"line {cl.pos.line} ({cl.text}): countersign says {v}\n{text}"


def test_equal_on_an_asynchronous_design_is_refused_with_a_reason(tmp_path):
    from checker import api
    p = tmp_path / "vents.cnl"
    p.write_text(OWN.replace("  recover\n  always", "  recover\n  equal vents\n  always", 1))
    try:
        ns = load_namespace(str(p))
    except InputError as e:  # the claim itself is refused when the design is read
        assert "asynchronous" in e.message
        return
    chk = next(c for c in ns.checks if c.name == "vent")
    claim = next(cl for cl in chk.claims if cl.kind == "equal")
    with pytest.raises(InputError) as e:
        api.export_claim(str(p), "vent", claim.pos.line, str(tmp_path / "x.aag"))
    assert "asynchronous" in e.value.message


def test_cli_writes_a_settle_claim_of_a_ripple_counter(tmp_path):
    import json

    from conftest import run_cli
    out = tmp_path / "settle.aig"
    r = run_cli("export", str(ROOT / "cases" / "bottle_ripple.cnl"), "tray", "--claim", "45", "-o", str(out), "--json")
    assert r.returncode == 0, r.stderr
    doc = json.loads(r.stdout)
    assert doc["claim"] == "settle" and doc["property"] == "a bad-state output" and doc["format"] == "aiger"
    d = parse_aiger(str(out), out.read_bytes())
    assert any("bottle_ripple.cnl:45" in c for c in d.comments)
    assert Brute(d).search()[0]  # settle within 3 of a 4-stage ripple counter is refuted (depth 4)

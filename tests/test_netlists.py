"""Standard netlists in and out: AIGER, BLIF and structural Verilog readers and writers.

Evidence from outside the project:
- the AIGER format description's own small examples (Biere, "The AIGER
  And-Inverter Graph (AIG) Format", the AND gate, the toggle flip-flop and the
  half adder; written here from memory) read and simulated;
- py-aiger (a general-purpose AIGER library, test-only) parses every AIGER
  file we write, and its own evaluation agrees with our model on random
  states and inputs;
and inside: every design of cases/ written to each format and read back is
proved equal to the original, flops paired by name, by the SAT miter.
"""

from __future__ import annotations

import random
from pathlib import Path

import pytest

from checker.elab import load_namespace
from checker.engines.miter import paired_miter
from checker.engines.sat import DEFAULT_SOLVER
from checker.errors import InputError
from checker.lang.aiger import parse_aiger
from checker.tools.netlists import FORMATS, write_design

ROOT = Path(__file__).resolve().parent.parent
CASES = sorted((ROOT / "cases").glob("*.cnl"))


def case_designs():
    out = []
    for f in CASES:
        ns = load_namespace(str(f))
        for name, d in ns.designs.items():
            if d.model.synchronous:  # asynchronous ones: tests/test_netlists_async.py
                out.append((f.name, name))
    return out


DESIGNS = case_designs()


def assert_same_circuit(a, b) -> None:
    """Same input, flop and output names, and no state and input where a next-state
    bit or an output differs (the flop-paired SAT miter says UNSAT)."""
    ma, mb = a.model, b.model
    assert sorted(ma.inputs) == sorted(mb.inputs)
    assert sorted(ma.states) == sorted(mb.states)
    assert sorted(ma.outputs) == sorted(mb.outputs)
    m = paired_miter(ma, mb, DEFAULT_SOLVER)
    with m.sat:
        assert not m.sat.solve([m.differ]), "the written design differs from the original"


@pytest.mark.parametrize("case,design", DESIGNS)
@pytest.mark.parametrize("ext", FORMATS)
def test_round_trip_every_case_design(tmp_path, case, design, ext):
    original = load_namespace(str(ROOT / "cases" / case)).designs[design]
    out = tmp_path / f"{design}{ext}"
    stats = write_design(original, str(out))
    assert stats["flops"] == len(original.model.states)
    back = load_namespace(str(out)).designs[design]
    assert_same_circuit(original, back)
    again = tmp_path / "again" / f"{design}{ext}"  # and what was read, written again, too
    again.parent.mkdir()
    write_design(back, str(again))
    assert_same_circuit(original, load_namespace(str(again)).designs[design])


# --- the AIGER format description's examples (from memory) -----------------------------
AND_GATE = "aag 3 2 0 1 1\n2\n4\n6\n6 2 4\n"
TOGGLE = "aag 1 0 1 2 0\n2 3\n2\n3\n"
HALF_ADDER = ("aag 7 2 0 2 3\n2\n4\n6\n12\n6 13 15\n12 2 4\n14 3 5\n"
              "i0 x\ni1 y\no0 s\no1 c\nc\nhalf adder\n")


def _load_text(tmp_path, text, name):
    p = tmp_path / name
    p.write_bytes(text.encode("ascii") if isinstance(text, str) else text)
    ns = load_namespace(str(p))
    return next(iter(ns.designs.values()))


def test_aiger_and_gate(tmp_path):
    d = _load_text(tmp_path, AND_GATE, "andgate.aag")
    for x in (0, 1):
        for y in (0, 1):
            _, outs, _ = d.model.step({}, {"i0": x, "i1": y})
            assert outs == {"o0": x & y}


def test_aiger_toggle_flip_flop(tmp_path):
    d = _load_text(tmp_path, TOGGLE, "toggle.aag")
    state = {"l0": 0}
    seen = []
    for _ in range(4):
        nxt, outs, _ = d.model.step(state, {})
        seen.append((state["l0"], outs["o0"], outs["o1"]))
        state = nxt
    assert seen == [(0, 0, 1), (1, 1, 0), (0, 0, 1), (1, 1, 0)]
    assert d.source[d.name].inits == {"l0": 0}


def test_aiger_half_adder_with_symbols_and_comment(tmp_path):
    d = _load_text(tmp_path, HALF_ADDER, "half.aag")
    for x in (0, 1):
        for y in (0, 1):
            _, outs, _ = d.model.step({}, {"x": x, "y": y})
            assert outs == {"s": x ^ y, "c": x & y}
    assert parse_aiger("half.aag", HALF_ADDER.encode()).comments == ["half adder"]


def test_binary_aiger_of_the_half_adder_reads_the_same(tmp_path):
    # the binary form by hand: inputs 1, 2 implicit, ANDs 3 = 1&2 (lits 6 4 2: deltas 2, 2),
    # 4 = !1&!2 (8 5 3: deltas 3, 2), 5 = !3&!4 (10 9 7: deltas 1, 2); s = 10, c = 6
    data = b"aig 5 2 0 2 3\n10\n6\n" + bytes([2, 2, 3, 2, 1, 2]) + b"i0 x\ni1 y\no0 s\no1 c\n"
    d = _load_text(tmp_path, data, "half_bin.aig")
    for x in (0, 1):
        for y in (0, 1):
            assert d.model.step({}, {"x": x, "y": y})[1] == {"s": x ^ y, "c": x & y}


@pytest.mark.parametrize("text,line,what", [
    ("aag 4 2 0 1 1\n2\n4\n6\n6 2 9\n", 5, "never defined"),
    ("aag 1 0 1 0 0\n2 3 7\n", 2, "reset"),
    ("aag 1 1 0 1 0\n2\n2\nb0 x\n", 4, "symbol"),
    ("aag 2 1 0 0 0\n3\n", 2, "even"),
    ("agg 1 0 0 0 0\n", 1, "starts with"),
    ("aag 3 2 0 1 1 1\n2\n4\n6\n6\n6 2 4\n", 1, "bad-state"),
])
def test_aiger_errors_have_their_line(tmp_path, text, line, what):
    p = tmp_path / "bad.aag"
    p.write_text(text)
    with pytest.raises(InputError) as e:
        load_namespace(str(p))
    assert e.value.pos.line == line and what in e.value.message


# --- py-aiger reads what we write ---------------------------------------------------------
@pytest.mark.parametrize("case,design", DESIGNS)
@pytest.mark.parametrize("ext", [".aag", ".aig"])
def test_py_aiger_reads_and_agrees(tmp_path, case, design, ext):
    aiger = pytest.importorskip("aiger")
    d = load_namespace(str(ROOT / "cases" / case)).designs[design]
    out = tmp_path / f"{design}{ext}"
    write_design(d, str(out))
    circ = aiger.load(str(out))
    m = d.model
    assert set(circ.inputs) == set(m.inputs) and set(circ.latches) == set(m.states)
    assert set(circ.outputs) == set(m.outputs)
    rng = random.Random(7)
    for _ in range(40):
        state = {n: rng.randint(0, 1) for n in m.states}
        inputs = {n: rng.randint(0, 1) for n in m.inputs}
        nxt, outs, _ = m.step(state, inputs)
        p_outs, p_next = circ(inputs={k: bool(v) for k, v in inputs.items()},
                              latches={k: bool(v) for k, v in state.items()})
        assert {k: int(v) for k, v in p_outs.items()} == outs
        assert {k: int(v) for k, v in p_next.items()} == nxt


# --- BLIF ------------------------------------------------------------------------------
COUNTER_BLIF = """\
# two-bit tally with enable (a scenario of our own: a bin-lid counter)
.model lids
.inputs clk en
.outputs q[1] q[0] wrap
.latch n1 q[1] re clk 0
.latch n0 q[0] re clk 2
.names en q[0] n0
10 1
01 1
.names en q[0] q[1] n1
0-1 1
101 1
110 1
.names en q[0] q[1] wrap
0-- 0
-0- 0
--0 0
.end
"""


def test_blif_counter_reads_as_a_design(tmp_path):
    d = _load_text(tmp_path, COUNTER_BLIF, "lids.blif")
    m = d.model
    assert m.inputs == ["en"] and sorted(m.states) == ["q[0]", "q[1]"]
    assert d.input_vectors == {"en": ["en"]} and d.output_vectors["q"] == ["q[1]", "q[0]"]
    state = {"q[1]": 0, "q[0]": 0}
    codes = []
    for _ in range(5):
        codes.append(2 * state["q[1]"] + state["q[0]"])
        state, outs, _ = m.step(state, {"en": 1})
    assert codes == [0, 1, 2, 3, 0]
    assert m.step({"q[1]": 1, "q[0]": 1}, {"en": 1})[1]["wrap"] == 1  # an off-set cover
    assert d.source["lids"].inits == {"q[1]": 0, "q[0]": None}


@pytest.mark.parametrize("text,line,col,what", [
    (".model a\n.inputs x\n.outputs y\n.gate and2 A=x Y=y\n.end\n", 4, 1, "library gates"),
    (".model a\n.inputs c d\n.outputs q\n.latch d q ah c 0\n.end\n", 4, 12, "level-sensitive"),
    (".model a\n.inputs x\n.outputs y\n.names x y\n1 1\n0 0\n.end\n", 5, 1, "mixes"),
    (".model a\n.inputs x\n.outputs y\n.names x y\n12 1\n.end\n", 5, 1, "column"),
    (".model a\n.inputs x\n.outputs y\n.subckt nothere p=x\n.end\n", 4, 9, "unknown model"),
    (".model a\n.inputs x\n.outputs y\n.names x y\n1 1\n.names x y\n0 1\n.end\n", 6, 10, "driven twice"),
])
def test_blif_errors_name_the_construct(tmp_path, text, line, col, what):
    p = tmp_path / "bad.blif"
    p.write_text(text)
    with pytest.raises(InputError) as e:
        load_namespace(str(p))
    assert (e.value.pos.line, e.value.pos.col) == (line, col) and what in e.value.message


def test_blif_subcircuits_become_parts(tmp_path):
    text = """.model top
.inputs clk a b
.outputs s q
.subckt half x=a y=b s=s c=cy
.latch cy q re clk 0
.end
.model half
.inputs x y
.outputs s c
.names x y s
10 1
01 1
.names x y c
11 1
.end
"""
    d = _load_text(tmp_path, text, "adder.blif")
    d = load_namespace(str(tmp_path / "adder.blif")).designs["top"]
    assert sorted(d.model.inputs) == ["a", "b"]
    nxt, outs, _ = d.model.step({"q": 0}, {"a": 1, "b": 1})
    assert outs["s"] == 0 and nxt["q"] == 1


def test_netlist_designs_in_cnl_checks_and_parts(tmp_path):
    (tmp_path / "lids.blif").write_text(COUNTER_BLIF)
    (tmp_path / "top.cnl").write_text("""use "lids.blif"
design lid_pair
  in go
  part a : lids (en = go)
  part b : lids (en = a.wrap)
  out full = a.wrap & b.wrap
end
design lids_ref
  in en
  flop q[1:0] : T (t = {en & q[0], en})
  out q[1:0] = q
  out wrap = en & q[1] & q[0]
end
check cnt of lids
  code q
  count 0 .. 3
  hold when !en
  equal lids_ref
end
check pair of lid_pair
  code {b.q, a.q}
  count 0 .. 15
  hold when !go
end
""")
    from checker.claims import run_check
    from checker.claims.common import Options
    ns = load_namespace(str(tmp_path / "top.cnl"))
    verdicts = [r.status for c in ns.checks for r in run_check(c, Options())]
    assert verdicts == ["proved", "proved", "proved"]


# --- random designs through every format ----------------------------------------------------
from hypothesis import HealthCheck, given, settings, strategies as st  # noqa: E402

PINS = {"D": ("d",), "T": ("t",), "JK": ("j", "k"), "SR": ("s", "r")}


@st.composite
def random_design(draw):
    n_in = draw(st.integers(1, 3))
    n_q = draw(st.integers(1, 4))
    leaves = [f"x{i}" for i in range(n_in)] + [f"q[{i}]" for i in range(n_q)] + ["0", "1"]

    def expr(depth):
        if depth == 0 or draw(st.booleans()):
            e = draw(st.sampled_from(leaves))
            return ("!" + e) if draw(st.booleans()) and e not in ("0", "1") else e
        op = draw(st.sampled_from(["&", "|", "^"]))
        return f"({expr(depth - 1)} {op} {expr(depth - 1)})"

    lines = ["design rnd", "  in " + ", ".join(f"x{i}" for i in range(n_in))]
    for i in reversed(range(n_q)):
        kind = draw(st.sampled_from(sorted(PINS)))
        pins = ", ".join(f"{p} = {expr(2)}" for p in PINS[kind])
        extra = (f" clear {draw(st.sampled_from(leaves[:n_in]))}" if draw(st.booleans()) else "")
        extra += (f" preset {expr(1)}" if draw(st.booleans()) else "")
        lines.append(f"  flop q[{i}] : {kind} ({pins}){extra}")
    lines.append(f"  node m = {expr(2)}")
    for k in range(draw(st.integers(1, 3))):
        lines.append(f"  out y{k} = {expr(2)} ^ m")
    if draw(st.booleans()):
        lines.append(f"  out q[{n_q - 1}:0] = q")
    lines.append("end")
    return "\n".join(lines) + "\n"


@settings(max_examples=40, suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture])
@given(text=random_design())
def test_random_designs_round_trip_through_every_format(tmp_path_factory, text):
    d = tmp_path_factory.mktemp("rnd")
    (d / "rnd.cnl").write_text(text)
    original = load_namespace(str(d / "rnd.cnl")).designs["rnd"]
    for ext in FORMATS:
        out = d / "out" / f"rnd{ext}"
        out.parent.mkdir(exist_ok=True)
        write_design(original, str(out))
        assert_same_circuit(original, load_namespace(str(out)).designs["rnd"])


# --- the command line and the API across formats ----------------------------------------------
def test_cli_exports_a_verilog_design_and_compare_sees_the_same(tmp_path):
    import json

    from conftest import run_cli
    src = ROOT / "cases" / "sixpack_rtl.v"
    for ext in (".blif", ".aag", ".cnl"):
        out = tmp_path / f"sixpack_v{ext}"
        r = run_cli("export", str(src), "sixpack_v", "-o", str(out), "--json")
        assert r.returncode == 0, r.stderr
        doc = json.loads(r.stdout)
        assert doc["design"] == "sixpack_v" and doc["flops"] == 3 and doc["inputs"] == 2
    from checker import api
    doc = api.compare_files(str(src), str(tmp_path / "sixpack_v.blif"))
    assert doc["differs"] is False
    r = run_cli("export", str(src), "sixpack_v", "-o", str(tmp_path / "x.txt"))
    assert r.returncode == 2 and "<command line>:1:1:" in r.stderr


def test_cli_exports_a_claim_as_aiger(tmp_path):
    import json

    from conftest import run_cli
    out = tmp_path / "claim.aig"
    r = run_cli("export", str(ROOT / "cases" / "sixpack_rtl.cnl"), "pack_v", "--claim", "43", "-o", str(out),
                "--json")
    assert r.returncode == 0, r.stderr
    doc = json.loads(r.stdout)
    assert doc["format"] == "aiger" and doc["claim"] == "recover" and doc["property"] == "a bad-state output"
    d = parse_aiger(str(out), out.read_bytes())
    assert len(d.bad) == 1 and any("sixpack_rtl.cnl:43" in c for c in d.comments)


def test_initial_values_survive_export(tmp_path):
    (tmp_path / "lids.blif").write_text(COUNTER_BLIF)
    d = load_namespace(str(tmp_path / "lids.blif")).designs["lids"]
    for ext in (".aag", ".aig", ".blif"):
        out = tmp_path / "out" / f"lids{ext}"
        out.parent.mkdir(exist_ok=True)
        write_design(d, str(out))
        back = load_namespace(str(out)).designs["lids"]
        assert back.source["lids"].inits == {"q[1]": 0, "q[0]": None}, ext
    p = tmp_path / "init.v"
    p.write_text("module init (input clk, input a, output y);\n  reg [1:0] r = 2'b10;\n"
                 "  always @(posedge clk) r <= {r[0], a};\n  assign y = r[1];\nendmodule\n")
    d = load_namespace(str(p)).designs["init"]
    assert d.source["init"].inits == {"r[1]": 1, "r[0]": 0}
    write_design(d, str(tmp_path / "init2.v"))
    assert load_namespace(str(tmp_path / "init2.v")).designs["init"].source["init"].inits == {"r[1]": 1, "r[0]": 0}


def test_blif_ripple_stage_reaches_the_elaborator(tmp_path):
    # A latch controlled by another latch's output is clocked by that flop: a ripple stage
    # for the event model.
    from checker.lang.blif import blif_file
    text = (".model rip\n.inputs clk\n.outputs q0 q1\n.latch n0 q0 re clk 0\n.latch n1 q1 fe q0 0\n"
            ".names q0 n0\n0 1\n.names q1 n1\n0 1\n.end\n")
    (tmp_path / "rip.blif").write_text(text)
    f = blif_file(str(tmp_path / "rip.blif"), text.encode())
    flops = [s for s in f.designs[0].stmts if type(s).__name__ == "FlopDecl"]
    assert flops[0].clock is None and flops[1].clock.edge == "fall" and flops[1].clock.signal.path == ["q0"]
    m = load_namespace(str(tmp_path / "rip.blif")).designs["rip"].model
    assert not m.synchronous and m.clocks[m.states.index("q1")] == ("fall", m.states.index("q0"))
    from checker.model.simulate import run
    codes = [(s.state["q1"], s.state["q0"]) for s in run(m, {"q0": 0, "q1": 0}, [{}], 4)]
    assert codes == [(0, 0), (0, 1), (1, 0), (1, 1), (0, 0)]  # a 2-bit ripple up counter


def test_blif_clock_passed_down_to_subcircuits(tmp_path):
    text = """.model pair
.inputs clk go
.outputs a b
.subckt bit clk=clk d=go q=a
.subckt bit clk=clk d=a q=b
.end
.model bit
.inputs clk d
.outputs q
.latch d q re clk 0
.end
"""
    (tmp_path / "pair.blif").write_text(text)
    d = load_namespace(str(tmp_path / "pair.blif")).designs["pair"]
    assert d.model.inputs == ["go"] and len(d.model.states) == 2
    nxt, outs, _ = d.model.step({s: 0 for s in d.model.states}, {"go": 1})
    assert sorted(nxt.values()) == [0, 1]

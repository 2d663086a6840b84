"""The syntax-tree reference evaluator: flop tables, agreement with the graph, replay catching a bad graph."""

from __future__ import annotations

import itertools
import random

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from checker.lang import parse as P
from checker.claims import run_check
from checker.claims.common import Options, ReplayError, reference_of, replay
from checker.elab import load_namespace
from checker.elab.reference import Reference
from checker.model.simulate import code_value, run
from checker.claims.result import TraceEntry

ROOT = __import__("pathlib").Path(__file__).resolve().parent.parent


def _reference(text: str, top: str) -> Reference:
    f = P.parse_text("t.cnl", text)
    return Reference({d.name: d for d in f.designs}, top)


# --- (1) flop characteristic tables ------------------------------------------
# Rows of the next-state table of each kind. Sources: the "Flops" table of the
# language contract (v2, "Flops": D d; T q ^ t; JK j & !q | !k & q;
# SR s | !r & q; synchronous clear wins over preset), which is the standard
# characteristic table of each flip-flop kind, a fact of the trade. Each row is
# (pins..., q, q+) with the pins in the order of the kind's pin list.
D_ROWS = [  # d q q+
    (0, 0, 0), (0, 1, 0),
    (1, 0, 1), (1, 1, 1),
]
T_ROWS = [  # t q q+
    (0, 0, 0), (0, 1, 1),  # hold
    (1, 0, 1), (1, 1, 0),  # toggle
]
JK_ROWS = [  # j k q q+
    (0, 0, 0, 0), (0, 0, 1, 1),  # hold
    (0, 1, 0, 0), (0, 1, 1, 0),  # reset
    (1, 0, 0, 1), (1, 0, 1, 1),  # set
    (1, 1, 0, 1), (1, 1, 1, 0),  # toggle
]
SR_ROWS = [  # s r q q+ fault
    (0, 0, 0, 0, 0), (0, 0, 1, 1, 0),  # hold
    (0, 1, 0, 0, 0), (0, 1, 1, 0, 0),  # reset
    (1, 0, 0, 1, 0), (1, 0, 1, 1, 0),  # set
    (1, 1, 0, 1, 1), (1, 1, 1, 1, 1),  # s = r = 1: a fault (the value is s | !r & q = 1)
]

TABLE_BENCH = """\
design table_bench
  in a, b, c, p
  flop qd : D (d = a) clear c preset p
  flop qt : T (t = a) clear c preset p
  flop qjk : JK (j = a, k = b) clear c preset p
  flop qsr : SR (s = a, r = b) clear c preset p
end
"""


def test_flop_tables_row_by_row():
    ref = _reference(TABLE_BENCH, "table_bench")
    assert ref.states == ["qd", "qt", "qjk", "qsr"] and ref.inputs == ["a", "b", "c", "p"]
    rows = [("qd", r[:1], r[1], r[2], 0) for r in D_ROWS] + [("qt", r[:1], r[1], r[2], 0) for r in T_ROWS]
    rows += [("qjk", r[:2], r[2], r[3], 0) for r in JK_ROWS] + [("qsr", r[:2], r[2], r[3], r[4]) for r in SR_ROWS]
    assert len(rows) == 4 + 4 + 8 + 8
    for flop, pins, q, want, fault in rows:
        a, b = (pins + (0,))[:2]
        state = {s: 0 for s in ref.states} | {flop: q}
        nxt, outs, faults = ref.step(state, {"a": a, "b": b, "c": 0, "p": 0})
        assert nxt[flop] == want, (flop, pins, q)
        assert outs == {}
        if flop == "qsr":
            assert faults == (["qsr"] if fault else []), (pins, q)


@pytest.mark.parametrize("c, p, want", [(1, 0, 0), (0, 1, 1), (1, 1, 0)])  # clear wins over preset
def test_clear_and_preset_override_every_kind(c, p, want):
    ref = _reference(TABLE_BENCH, "table_bench")
    for q, a, b in itertools.product((0, 1), repeat=3):
        nxt, _, faults = ref.step({s: q for s in ref.states}, {"a": a, "b": b, "c": c, "p": p})
        assert set(nxt.values()) == {want}
        assert faults == []  # s = r = 1 is no fault while clear or preset holds


def test_reference_agrees_with_graph_on_the_table_bench(write):
    d = load_namespace(write(TABLE_BENCH)).designs["table_bench"]
    ref = Reference(d.source, "table_bench")
    for bits in itertools.product((0, 1), repeat=8):
        state = dict(zip(ref.states, bits[:4]))
        inputs = dict(zip(ref.inputs, bits[4:]))
        assert ref.step(state, inputs) == d.model.step(state, inputs)


def test_names_vectors_pieces_and_parts():
    text = """\
design stage
  in en, v[1:0]
  flop h[1:0] : D (d = v & en)
  out y = h[1] ^ h[0]
  out w[1:0] = h
end
design rack
  in go, sel[0:2]
  node k[2:0] = {k[1] & go, k[0] & sel[0], sel[2]}
  flop q[3] : T (t = k[2])
  flop q[2:1] : JK (j = {go, 1}, k = 0b01) clear 1
  part u1 : stage (en = go, v[1] = sel[1], v[0] = q[3])
  flop q[0] : SR (s = u1.y, r = !u1.w[0])
  out carry = q[3] & u1.y
  out tap[0:1] = u1.w
end
"""
    ref = _reference(text, "rack")
    assert ref.states == ["q[3]", "q[2]", "q[1]", "u1.h[1]", "u1.h[0]", "q[0]"]
    assert ref.inputs == ["go", "sel[0]", "sel[1]", "sel[2]"]
    assert ref.outputs == ["carry", "tap[0]", "tap[1]"]
    state = {"q[3]": 1, "q[2]": 1, "q[1]": 1, "u1.h[1]": 1, "u1.h[0]": 0, "q[0]": 0}
    nxt, outs, faults = ref.step(state, {"go": 1, "sel[0]": 1, "sel[1]": 0, "sel[2]": 1})
    # k = {k[1] & go, k[0] & sel[0], sel[2]} = {1, 1, 1}: q[3] toggles to 0
    # q[2:1] has `clear 1`: both bits clear (the single bit applies to the whole piece)
    # u1: v = {sel[1], q[3]} = 01, en = 1: h+ = 01; y = 1 ^ 0 = 1, w = 10
    # q[0]: s = y = 1, r = !w[0] = 1: a fault, q+ = 1
    assert nxt == {"q[3]": 0, "q[2]": 0, "q[1]": 0, "u1.h[1]": 0, "u1.h[0]": 1, "q[0]": 1}
    assert outs == {"carry": 1, "tap[0]": 1, "tap[1]": 0}  # tap[0:1] reads u1.w msb first: w[1], w[0]
    assert faults == ["q[0]"]


def test_numbers_fill_only_a_known_vector_width():
    text = """\
design widths
  in a
  node n[3:0] = a & 5
  node m[3:0] = !0
  node b[3:0] = a & 0b1
  node c[3:0] = {0b10, 1, a}
  out o[15:0] = {n, m, b, c}
end
"""
    ref = _reference(text, "widths")
    _, outs, _ = ref.step({}, {"a": 1})
    got = "".join(str(outs[f"o[{i}]"]) for i in range(15, -1, -1))
    assert got == "0101" + "1111" + "1111" + "1011"


# --- (2) random designs: the reference equals the graph ----------------------
BIT_CONSTS = ["0", "1", "0b1", "0b0", "0x1", "0x0", "!0", "~1", "!1"]
BINOPS = ["&", "|", "^"]
GATES = ["and", "or", "nand", "nor", "xor", "xnor"]


class _Gen:
    """Text of random expressions over the signals a statement may read."""

    def __init__(self, draw, sigs):
        self.draw = draw
        self.sigs = sigs  # list of (text, msb, lsb); msb None for a single bit

    def pick(self, xs):
        return self.draw(st.sampled_from(xs))

    def ref_bit(self):
        name, msb, lsb = self.pick(self.sigs)
        if msb is None:
            return name
        lo, hi = min(msb, lsb), max(msb, lsb)
        return f"{name}[{self.draw(st.integers(lo, hi))}]"

    def bit(self, depth):
        if depth <= 0:
            return self.ref_bit() if self.draw(st.integers(0, 3)) else self.pick(BIT_CONSTS)
        k = self.draw(st.integers(0, 7))
        if k <= 1:
            return self.bit(0)
        if k == 2:
            return "!" + self.bit(depth - 1)
        if k == 3:
            return f"({self.bit(depth - 1)} {self.pick(BINOPS)} {self.bit(depth - 1)})"
        if k == 4:
            n = self.draw(st.integers(2, 3))
            return f"{self.pick(GATES)}({', '.join(self.bit(depth - 1) for _ in range(n))})"
        if k == 5:
            return f"{self.pick(['not', 'buf'])}({self.bit(depth - 1)})"
        if k == 6:
            return f"mux({self.bit(depth - 1)}, {self.bit(depth - 1)}, {self.bit(depth - 1)})"
        return "{" + self.bit(depth - 1) + "}"

    def ref_vec(self, n):
        """A slice or whole vector of width n, or None."""
        cands = [s for s in self.sigs if s[1] is not None and abs(s[1] - s[2]) + 1 >= n]
        if not cands:
            return None
        name, msb, lsb = self.pick(cands)
        lo, hi = min(msb, lsb), max(msb, lsb)
        if hi - lo + 1 == n and self.draw(st.booleans()):
            return name
        start = self.draw(st.integers(lo, hi - n + 1))
        a, b = start + n - 1, start
        if self.draw(st.booleans()):
            a, b = b, a  # a slice may run either way
        return f"{name}[{a}:{b}]"

    def number(self, n, known):
        if not known or self.draw(st.booleans()):
            return "0b" + "".join(self.pick("01") for _ in range(n))
        v = self.draw(st.integers(0, 2 ** n - 1))
        return hex(v) if self.draw(st.booleans()) else str(v)

    def cat(self, n, depth):
        items, left = [], n
        while left:
            w = self.draw(st.integers(1, left))
            items.append(self.bit(depth - 1) if w == 1 else self.vec(w, depth - 1, known=False))
            left -= w
        return "{" + ", ".join(items) + "}"

    def vec(self, n, depth, known=True):
        """An n-bit VEC; ``known``: the position drives a known width (decimal numbers fill it)."""
        if n == 1:
            return self.bit(depth)
        k = self.draw(st.integers(0, 8 if depth > 0 else 2))
        if k == 0:
            r = self.ref_vec(n)
            if r is not None:
                return r
        if k <= 1:
            return self.number(n, known)
        if k == 2:
            return self.cat(n, max(depth, 1))
        sub = lambda: self.vec(n, depth - 1, known)  # noqa: E731
        either = lambda: sub() if self.draw(st.booleans()) else self.bit(depth - 1)  # noqa: E731
        if k == 3:
            return "!" + sub()
        if k == 4:
            a, b = (sub(), either()) if self.draw(st.booleans()) else (either(), sub())
            return f"({a} {self.pick(BINOPS)} {b})"
        if k == 5:
            return f"{self.pick(GATES)}({sub()}, {either()}, {either()})"
        if k == 6:
            return f"mux({either()}, {sub()}, {either()})"
        if k == 7:
            return f"{self.pick(['not', 'buf'])}({sub()})"
        return self.cat(n, depth)


KINDS = {"D": ("d",), "T": ("t",), "JK": ("j", "k"), "SR": ("s", "r")}


@st.composite
def _design(draw, name, children):
    """Text of one random design and its interface (inputs, outputs as (name, msb, lsb))."""
    ints = st.integers
    ins = [("i0", None, None)]
    for k in range(1, draw(ints(1, 3))):
        if draw(st.booleans()):
            ins.append((f"i{k}", None, None))
        else:
            lo = draw(ints(0, 2))
            w = draw(ints(2, 3))
            ins.append((f"i{k}",) + ((lo + w - 1, lo) if draw(st.booleans()) else (lo, lo + w - 1)))
    flops = []  # (name, msb, lsb, pieces: list of (msb, lsb, bit))
    for k in range(draw(ints(1, 3))):
        w = draw(ints(1, 4))
        if w == 1 and draw(st.booleans()):
            flops.append((f"f{k}", None, None, [(None, None, False)]))
            continue
        cuts = sorted(draw(st.sets(ints(1, w - 1), max_size=w - 1))) if w > 1 else []
        bounds = [0] + cuts + [w]
        pieces = [(hi - 1, lo, hi - 1 == lo and draw(st.booleans())) for lo, hi in zip(bounds, bounds[1:])]
        pieces = draw(st.permutations(pieces))
        flops.append((f"f{k}", w - 1, 0, pieces))
    parts = []
    for k in range(draw(ints(0, len(children) and 2))):
        parts.append((f"u{k}", draw(st.sampled_from(children))))
    leaves = [s for s in ins] + [(f, m, l) for f, m, l, _ in flops]
    pre = [(f"p{k}", draw(st.sampled_from([None, 1, 2]))) for k in range(draw(ints(0, 2)))]
    post = [(f"n{k}", draw(st.sampled_from([None, 1, 2]))) for k in range(draw(ints(0, 2)))]

    def decl(nm, msb):
        return nm if msb is None else f"{nm}[{msb}:0]"

    def sig(nm, msb):
        return (nm, msb, None if msb is None else 0)

    stmts = []
    depth = 2
    for j, (nm, msb) in enumerate(pre):
        g = _Gen(draw, leaves + [sig(*p) for p in pre[:j]])
        stmts.append(f"node {decl(nm, msb)} = {g.vec(1 if msb is None else msb + 1, depth)}")
    part_outs = []
    for pn, (child, (cins, couts)) in parts:
        g = _Gen(draw, leaves + [sig(*p) for p in pre])
        conns = []
        for cn, cm, cl in cins:
            if cm is None:
                conns.append(f"{cn} = {g.bit(depth)}")
            elif draw(st.booleans()):
                conns.append(f"{cn} = {g.vec(abs(cm - cl) + 1, depth)}")
            else:
                conns += [f"{cn}[{i}] = {g.bit(depth)}" for i in range(min(cm, cl), max(cm, cl) + 1)]
        conns = draw(st.permutations(conns))
        stmts.append(f"part {pn} : {child} ({', '.join(conns)})")
        part_outs += [(f"{pn}.{on}", om, ol) for on, om, ol in couts]
    for j, (nm, msb) in enumerate(post):
        g = _Gen(draw, leaves + [sig(*p) for p in pre] + part_outs + [sig(*p) for p in post[:j]])
        stmts.append(f"node {decl(nm, msb)} = {g.vec(1 if msb is None else msb + 1, depth)}")
    everything = leaves + [sig(*p) for p in pre + post] + part_outs
    g = _Gen(draw, everything)
    for fname, _, _, pieces in flops:
        for pm, pl, bit in pieces:
            kind = draw(st.sampled_from(sorted(KINDS)))
            w = 1 if pm is None else pm - pl + 1
            pins = ", ".join(f"{p} = {g.vec(w, depth)}" for p in KINDS[kind])
            d = fname if pm is None else (f"{fname}[{pm}]" if bit else f"{fname}[{pm}:{pl}]")
            extra = ""
            if draw(st.integers(0, 2)) == 0:
                extra += f" clear {g.bit(1)}"
            if draw(st.integers(0, 2)) == 0:
                extra += f" preset {g.bit(1)}"
            stmts.append(f"flop {d} : {kind} ({pins}){extra}")
    outs = []
    for k in range(draw(ints(1, 2))):
        msb = draw(st.sampled_from([None, 1, 2]))
        outs.append((f"o{k}", msb, None if msb is None else 0))
        stmts.append(f"out {decl(f'o{k}', msb)} = {g.vec(1 if msb is None else msb + 1, depth)}")
    in_line = "in " + ", ".join(n if m is None else f"{n}[{m}:{l}]" for n, m, l in ins)
    body = [in_line] + draw(st.permutations(stmts))  # statements may come in any order
    text = f"design {name}\n" + "".join(f"  {s}\n" for s in body) + "end\n"
    return text, (ins, outs)


@st.composite
def _designs(draw):
    leaf_text, leaf_if = draw(_design("cell", []))
    sub_text, sub_if = draw(_design("stage", [("cell", leaf_if)]))
    top_text, _ = draw(_design("board", [("cell", leaf_if), ("stage", sub_if)]))
    return leaf_text + sub_text + top_text


@settings(max_examples=120, deadline=None, suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])
@given(text=_designs(), seed=st.integers(0, 2 ** 32 - 1))
def test_random_designs_reference_equals_graph(tmp_path_factory, text, seed):
    path = tmp_path_factory.mktemp("ref") / "r.cnl"
    path.write_text(text, encoding="utf-8")
    ns = load_namespace(str(path))
    rng = random.Random(seed)
    for name, design in ns.designs.items():
        m = design.model
        ref = Reference(design.source, name)
        assert ref.states == m.states and ref.inputs == m.inputs and ref.outputs == m.outputs
        for _ in range(24):
            state = {s: rng.randint(0, 1) for s in m.states}
            inputs = {i: rng.randint(0, 1) for i in m.inputs}
            assert ref.step(state, inputs) == m.step(state, inputs), (name, state, inputs, text)


# --- (3) a wrong flop equation in the graph is caught by replay --------------
def _sixpack():
    ns = load_namespace(str(ROOT / "cases" / "sixpack_t.cnl"))
    check = next(c for c in ns.checks if c.name == "pack_t")
    return ns, check


def _trace_of(model, check, start_code, inputs, clocks):
    """A trace that ``model`` itself produces: ``clocks`` steps from ``start_code`` under ``inputs``."""
    steps = run(model, check.state_of(start_code), [inputs], clocks)
    return [TraceEntry(s.clock, code_value(model, check.code, s.state), dict(inputs)) for s in steps]


def test_replay_passes_on_the_unbroken_graph():
    _, check = _sixpack()
    trace = _trace_of(check.design.model, check, 0, {"en": 1, "clr": 0}, 7)
    assert [t.code for t in trace] == [0, 1, 2, 3, 4, 5, 0, 1]
    replay(check.design, check, trace)
    assert reference_of(check.design) is reference_of(check.design)  # built once per design


def test_replay_catches_a_negated_next_state_in_the_graph():
    _, check = _sixpack()
    m = check.design.model
    i = m.states.index("q[1]")
    m.next_lits[i] ^= 1
    # the broken graph replays its own trace without complaint; only the
    # syntax tree can tell that q[1]'s equation is wrong
    trace = _trace_of(m, check, 0, {"en": 1, "clr": 0}, 3)
    with pytest.raises(ReplayError, match=r"clock 0 .*next state bit q\[1\] is 1 in the graph, 0 from the syntax tree"):
        replay(check.design, check, trace)


def test_claims_on_a_broken_graph_raise_instead_of_reporting():
    _, check = _sixpack()
    m = check.design.model
    i = m.states.index("q[2]")
    m.next_lits[i] ^= 1
    with pytest.raises(ReplayError, match=r"next state bit q\[2\]"):
        run_check(check, Options())


def test_a_wrong_output_is_caught_too():
    _, check = _sixpack()
    m = check.design.model
    m.output_lits[m.outputs.index("full")] ^= 1
    trace = _trace_of(m, check, 4, {"en": 1, "clr": 0}, 2)
    with pytest.raises(ReplayError, match=r"clock 0 .*output full"):
        replay(check.design, check, trace)


# --- (4) constants in single-bit positions mean a tied-high bit --------------
TIED = """\
design hold_cell
  in en, x
  flop m : D (d = x & en)
  out y = m | en
end
design tied
  in hi, c, p, a, b
  flop q[3:0] : T (t = {a, b, a ^ b, ONE}) clear c & ONE preset and(p, ONE)
  flop r[2:0] : D (d = {q[1:0], a}) clear ONE
  flop w[2:0] : JK (j = q[2:0], k = {b, a, 0}) preset ONE
  flop s[1] : JK (j = ONE, k = mux(a, ONE, b)) preset p
  flop s[0] : SR (s = a & ONE, r = !ONE) clear c
  flop t : D (d = ONE ^ a) preset !ONE
  node n = ONE ^ a
  part u1 : hold_cell (en = ONE, x = n)
  out o = n | ONE & b
  out z = u1.y
  out v[1:0] = {ONE, b}
end
"""
ONES = ["1", "0b1", "0x1", "!0", "~0", "not(0)", "(0 | 1)", "and(1, 0x1)", "mux(1, 0, 1)",
        "mux(0b1, 0, 0x1)", "mux(0, 0x1, 0b0)", "xor(1, 0)", "and(hi, 1)", "mux(hi, 0, 1)", "or(0b0, hi)", "buf(!0)"]


@pytest.mark.parametrize("one", ONES)
def test_constants_in_single_bit_positions_equal_a_tied_high_input(write, one):
    tied = load_namespace(write(TIED.replace("ONE", "hi"), "hi.cnl")).designs["tied"]
    const = load_namespace(write(TIED.replace("ONE", one), "one.cnl")).designs["tied"]
    assert const.model.states == tied.model.states and const.model.inputs == tied.model.inputs
    ref = Reference(const.source, "tied")
    rng = random.Random(7)
    for _ in range(300):
        state = {s: rng.randint(0, 1) for s in tied.model.states}
        inputs = {i: rng.randint(0, 1) for i in tied.model.inputs} | {"hi": 1}
        want = tied.model.step(state, inputs)
        assert const.model.step(state, inputs) == want, (one, state, inputs)
        assert ref.step(state, inputs) == want, (one, state, inputs)
        nxt = want[0]
        # `clear ONE` on the vector r clears every bit, `preset ONE` sets every bit of w
        assert [nxt[f"r[{i}]"] for i in range(3)] == [0, 0, 0]
        assert [nxt[f"w[{i}]"] for i in range(3)] == [1, 1, 1]


# --- (5) asynchronous designs: sample() and clock_sources() against the graph --
# The contract (v2, "Clocks"): a clock is a flop bit, or a node, output or part
# input that is a plain copy of one; bit i of a vector flop's clock clocks bit i;
# `clear async` / `preset async` are level-sensitive. "The event model of an
# asynchronous design": at an edge of its clock a flop loads what its pins and
# synchronous clear/preset say, which is what EventModel.eval reads from the graph.
from checker.claims.clocking import code_of, events_json, state_of  # noqa: E402
from checker.errors import InputError  # noqa: E402
from checker.model.events import EventModel, unit_delay  # noqa: E402


@st.composite
def _async_designs(draw):
    """Text of a random asynchronous design ``ripple`` with a clocked part ``cell`` (part only)."""
    ints = st.integers
    cell_kind = draw(st.sampled_from(sorted(KINDS)))
    cg = _Gen(draw, [("x", None, None), ("tick", None, None), ("c", None, None), ("y", None, None)])
    cell_pins = ", ".join(f"{p} = {cg.bit(1)}" for p in KINDS[cell_kind])
    cell_clock = draw(st.sampled_from(["tick", "tk"]))  # directly, or through a node that copies it
    extra = ""
    if draw(st.booleans()):
        extra += f" clear {'async ' if draw(st.booleans()) else ''}{cg.bit(1)}"
    if draw(st.booleans()):
        extra += f" preset {'async ' if draw(st.booleans()) else ''}{cg.bit(1)}"
    # `out c = c` makes the flop the output; `out y` is a plain copy of the flop
    cell = ("design cell\n  in tick, x\n  node tk = tick\n"
            f"  flop c : {cell_kind} ({cell_pins}) clock {draw(st.sampled_from(['rise', 'fall']))} {cell_clock}{extra}\n"
            "  out c = c\n  out y = c\nend\n")
    ins = [("i0", None, None), ("i1", None, None)]
    flops = [("f0", None if draw(st.booleans()) else draw(ints(1, 2)))]
    for k in range(1, draw(ints(2, 4))):
        flops.append((f"f{k}", None if draw(st.booleans()) else draw(ints(1, 2))))
    bits = []  # every flop bit, as text
    for nm, msb in flops:
        bits += [nm] if msb is None else [f"{nm}[{i}]" for i in range(msb + 1)]
    copies = [(f"k{j}", draw(st.sampled_from(bits))) for j in range(draw(ints(0, 2)))]
    n_parts = draw(ints(0, 2))
    stmts = [f"node {c} = {b}" for c, b in copies]
    clockable = bits + [c for c, _ in copies]
    leaves = ins + [(nm, msb, None if msb is None else 0) for nm, msb in flops] + [(c, None, None) for c, _ in copies]
    part_outs = []
    for p in range(n_parts):
        g = _Gen(draw, leaves)
        tick = draw(st.sampled_from(clockable + [f"u{q}.{o}" for q in range(p) for o in ("c", "y")]))
        stmts.append(f"part u{p} : cell (tick = {tick}, x = {g.bit(1)})")
        part_outs += [(f"u{p}.c", None, None), (f"u{p}.y", None, None)]
    clockable += [o for o, _, _ in part_outs]
    g = _Gen(draw, leaves + part_outs)
    for k, (nm, msb) in enumerate(flops):
        kind = draw(st.sampled_from(sorted(KINDS)))
        w = 1 if msb is None else msb + 1
        pins = ", ".join(f"{p} = {g.vec(w, 2)}" for p in KINDS[kind])
        extra = ""
        if k and draw(ints(0, 3)):
            src = [draw(st.sampled_from(clockable)) for _ in range(w)]
            sig = src[0] if w == 1 else "{" + ", ".join(src) + "}"
            extra += f" clock {draw(st.sampled_from(['rise', 'fall']))} {sig}"
        for what in ("clear", "preset"):
            r = draw(ints(0, 3))
            if r == 1:
                extra += f" {what} {g.bit(1)}"
            elif r >= 2:  # a decode of flop bits, or any bit
                dec = f"and({', '.join(draw(st.lists(st.sampled_from(bits), min_size=2, max_size=3)))})"
                extra += f" {what} async {dec if r == 2 else g.bit(1)}"
        stmts.append(f"flop {nm if msb is None else f'{nm}[{msb}:0]'} : {kind} ({pins}){extra}")
    stmts.append(f"out o = {g.bit(2)}")
    body = ["in i0, i1"] + draw(st.permutations(stmts))
    top = "design ripple\n" + "".join(f"  {s}\n" for s in body) + "end\n"
    return cell + top


def _graph_clocks(m):
    return {n: None if c is None else (c[0], m.states[c[1]]) for n, c in zip(m.states, m.clocks or [None] * len(m.states))}


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])
@given(text=_async_designs(), seed=st.integers(0, 2 ** 32 - 1))
def test_random_asynchronous_designs_sample_equals_graph(tmp_path_factory, text, seed):
    path = tmp_path_factory.mktemp("aref") / "a.cnl"
    path.write_text(text, encoding="utf-8")
    design = load_namespace(str(path)).designs["ripple"]
    m = design.model
    ref = Reference(design.source, "ripple")
    assert ref.states == m.states and ref.inputs == m.inputs and ref.outputs == m.outputs
    assert ref.synchronous == m.synchronous
    assert ref.clock_sources() == _graph_clocks(m), text
    rng = random.Random(seed)
    for _ in range(16):
        inputs = {i: rng.randint(0, 1) for i in m.inputs}
        em = EventModel(m, inputs)
        code = rng.randrange(1 << len(m.states))
        nxt, clr, pre = em.eval(code)
        r_nxt, r_clr, r_pre = ref.sample({s: (code >> i) & 1 for i, s in enumerate(m.states)}, inputs)
        assert [r_nxt[s] for s in m.states] == list(nxt), (text, code, inputs)
        assert [r_clr[s] for s in m.states] == list(clr), (text, code, inputs)
        assert [r_pre[s] for s in m.states] == list(pre), (text, code, inputs)
        if m.synchronous:
            assert ref.step({s: (code >> i) & 1 for i, s in enumerate(m.states)}, inputs)[0] == r_nxt


PLAIN = """\
design cell
  in tick
  node tk = tick
  flop c : T (t = 1) clock fall tk
  out c = c
end
design plain
  in en, z
  flop a[1:0] : JK (j = {en, 1}, k = 0b01) clear z preset async a[0] & z
  flop b[1:0] : D (d = !b) clock rise {a[0], u1.c} clear async and(a[1], b[0])
  node cp = b[1]
  part u1 : cell (tick = cp)
  out w = u1.c
end
"""


def test_sample_and_clock_sources_of_a_hand_design():
    ref = _reference(PLAIN, "plain")
    assert not ref.synchronous
    assert ref.clock_sources() == {"a[1]": None, "a[0]": None, "b[1]": ("rise", "a[0]"),
                                   "b[0]": ("rise", "u1.c"), "u1.c": ("fall", "b[1]")}
    state = {"a[1]": 1, "a[0]": 1, "b[1]": 0, "b[0]": 1, "u1.c": 0}
    nxt, clr, pre = ref.sample(state, {"en": 0, "z": 0})
    # a: j = {0, 1}, k = {0, 1}: a[1] holds 1, a[0] resets; b loads !b; u1.c toggles
    assert nxt == {"a[1]": 1, "a[0]": 0, "b[1]": 1, "b[0]": 0, "u1.c": 1}
    assert clr == {"a[1]": 0, "a[0]": 0, "b[1]": 1, "b[0]": 1, "u1.c": 0}  # a[1] & b[0]
    assert pre == {"a[1]": 0, "a[0]": 0, "b[1]": 0, "b[0]": 0, "u1.c": 0}
    nxt, clr, pre = ref.sample(state, {"en": 1, "z": 1})
    assert nxt["a[1]"] == 0 and nxt["a[0]"] == 0  # the synchronous clear is in what a loads
    assert pre["a[1]"] == 1 and pre["a[0]"] == 1  # the asynchronous preset a[0] & z
    with pytest.raises(NotImplementedError, match="asynchronous"):
        ref.step(state, {"en": 0, "z": 0})


@pytest.mark.parametrize("clock, why", [("!p", "gate"), ("p & 1", "gate"), ("0", "gate"), ("x", "input x"),
                                        ("n", "input x")])
def test_a_clock_that_is_no_plain_copy_of_a_flop_bit_is_refused(clock, why):
    ref = _reference(f"design a\n  in x\n  node n = x\n  flop p : T (t = x)\n  flop q : T (t = 1) clock fall {clock}\nend\n", "a")
    with pytest.raises(InputError, match=why):
        ref.clock_sources()


# --- (6) a wrong literal of an asynchronous graph is caught by replay ----------
def _dock():
    ns = load_namespace(str(ROOT / "cases" / "dock_decade_fault.cnl"))
    return next(c for c in ns.checks if c.name == "turns")


def _async_trace(check, code, inputs):
    """One clock that the (possibly broken) model itself runs: the unit-delay order from ``code``."""
    em = EventModel(check.design.model, inputs)
    settled, times, done = unit_delay(em, state_of(check, code))
    assert done
    firings = [f for t in times for f in t]
    return [TraceEntry(0, code, dict(inputs), events=events_json(check, firings)),
            TraceEntry(1, code_of(check, settled))]


def test_the_unbroken_decade_replays_through_the_reference():
    check = _dock()
    for code in range(16):
        for en in (0, 1):
            replay(check.design, check, _async_trace(check, code, {"en": en}))
    assert reference_of(check.design) is not None


def test_replay_catches_a_dropped_async_clear_in_the_graph():
    check = _dock()
    m = check.design.model
    m.async_clear[m.states.index("q[1]")] = 0  # FALSE: q[1] no longer clears on ten
    # 9 -> 10: q[0] falls, q[1] rises to 1010 where ten holds; the broken graph clears only q[3]
    trace = _async_trace(check, 9, {"en": 1})
    with pytest.raises(ReplayError, match=r"clock 0, before firing 2 .*code 10: asynchronous clear of q\[1\] "
                                          r"is 0 in the graph, 1 from the syntax tree"):
        replay(check.design, check, trace)


def test_replay_catches_a_negated_next_literal_of_a_rippled_stage():
    check = _dock()
    m = check.design.model
    m.next_lits[m.states.index("q[2]")] ^= 1  # q[2] holds instead of toggling at its clock
    trace = _async_trace(check, 3, {"en": 1})
    with pytest.raises(ReplayError, match=r"clock 0, before firing 0 .*sampled next value of q\[2\] is 0 in the "
                                          r"graph, 1 from the syntax tree"):
        replay(check.design, check, trace)


def test_replay_catches_a_wrong_clock_in_the_graph():
    check = _dock()
    m = check.design.model
    m.clocks[m.states.index("q[3]")] = ("rise", m.states.index("q[2]"))
    with pytest.raises(ReplayError, match=r"flop q\[3\] is clocked by rise of q\[2\] in the graph, by fall of "
                                          r"q\[2\] from the syntax tree"):
        replay(check.design, check, _async_trace(check, 3, {"en": 1}))


def test_a_wrong_output_literal_of_a_ripple_is_caught_along_a_glitch():
    ns = load_namespace(str(ROOT / "cases" / "bottle_ripple.cnl"))
    check = next(c for c in ns.checks if c.name == "tray")
    claim = next(c for c in check.claims if c.kind == "glitchfree" and dict(c.signals).keys() == {"empty"})
    m = check.design.model
    lit = m.output_lits[m.outputs.index("empty")]
    claim.signals = [("empty", lit ^ 1)]  # the graph's `empty` inverted: it still glitches
    from checker.claims import run_claim
    with pytest.raises(ReplayError, match=r"empty is \d in the graph, \d from the syntax tree"):
        run_claim(check, claim, Options())

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

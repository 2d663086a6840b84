"""The circuit model: flop equations, structural hashing, three evaluators agreeing."""

from __future__ import annotations

import itertools

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st

from checker.elab import load_namespace
from checker.errors import InputError
from checker.model import FALSE, TRUE, Aig
from checker.model.simulate import eval_states, leaf_arrays, run

# Characteristic tables of the four flop kinds, written out row by row as
# printed in digital design handbooks (from memory: M. Morris Mano, "Digital
# Design", the flip-flop characteristic tables). 'q' = keep, '~q' = toggle.
JK_TABLE = {(0, 0): "q", (0, 1): 0, (1, 0): 1, (1, 1): "~q"}
SR_TABLE = {(0, 0): "q", (0, 1): 0, (1, 0): 1}  # s = r = 1 is forbidden
T_TABLE = {(0,): "q", (1,): "~q"}
D_TABLE = {(0,): 0, (1,): 1}

FLOPS = """\
design bench
  in a, b, c, p
  flop fd : D (d = a) clear c preset p
  flop ft : T (t = a) clear c preset p
  flop fjk : JK (j = a, k = b) clear c preset p
  flop fsr : SR (s = a, r = b) clear c preset p
end
"""


def _table_value(entry, q):
    if entry == "q":
        return q
    if entry == "~q":
        return 1 - q
    return entry


def test_flop_characteristic_tables(write):
    m = load_namespace(write(FLOPS)).designs["bench"].model
    tables = {"fd": (D_TABLE, 1), "ft": (T_TABLE, 1), "fjk": (JK_TABLE, 2), "fsr": (SR_TABLE, 2)}
    for q, a, b, c, p in itertools.product((0, 1), repeat=5):
        state = {s: q for s in m.states}
        nxt, _, faults = m.step(state, {"a": a, "b": b, "c": c, "p": p})
        for flop, (table, npins) in tables.items():
            key = (a, b)[:npins]
            if c:  # synchronous clear wins over preset and pins
                want = 0
            elif p:
                want = 1
            elif key not in table:  # SR with s = r = 1: a fault, no defined value
                assert flop == "fsr" and "fsr" in faults
                continue
            else:
                want = _table_value(table[key], q)
            assert nxt[flop] == want, (flop, q, a, b, c, p)
        assert ("fsr" in faults) == (a == 1 and b == 1 and c == 0 and p == 0)


def test_structural_hashing_and_folding():
    g = Aig()
    x, y = g.leaf("x"), g.leaf("y")
    assert g.and_(x, x) == x
    assert g.and_(x, x ^ 1) == FALSE
    assert g.and_(x, TRUE) == x and g.and_(FALSE, y) == FALSE
    n = len(g)
    assert g.and_(x, y) == g.and_(y, x) and len(g) == n + 1
    assert g.xor(x, x) == FALSE and g.xor(x, x ^ 1) == TRUE
    assert g.mux(TRUE, x, y) == y and g.mux(FALSE, x, y) == x


def test_t_flop_ripple_counter_counts_in_binary(write):
    # Fact of the trade (common practice): a synchronous binary counter made of
    # T flops toggles bit i exactly when all lower bits are 1.
    n = 5
    flops = "\n".join(f"  flop q[{i}] : T (t = " + (" & ".join(f"q[{j}]" for j in range(i)) or "1") + ")"
                      for i in reversed(range(n)))
    text = f"design tally\n{flops}\nend\n"
    m = load_namespace(write(text)).designs["tally"].model
    steps = run(m, {s: 0 for s in m.states}, [{}], 2 ** n + 1)
    codes = [int("".join(str(s.state[b]) for b in m.states), 2) for s in steps]
    assert codes == list(range(2 ** n)) + [0, 1]


def test_decade_has_six_unused_codes():
    # Fact of the trade: a decade (BCD) counter uses 10 of the 16 codes of 4 bits.
    from checker.elab.sequence import make_sequence

    seq = make_sequence("bcd", [], 4)
    assert seq.length() == 10
    assert 2 ** 4 - seq.length() == 6
    assert [c for c in range(16) if not seq.contains(c)] == [10, 11, 12, 13, 14, 15]


# --- random expressions: simulator, bit-parallel evaluator and Python agree ----
NAMES = ["a", "b", "c", "d"]


def _leaf():
    return st.sampled_from(NAMES + ["0", "1"]).map(lambda s: (s, s if s in "01" else s))


def _combine(children):
    unary = st.tuples(st.sampled_from(["!", "not", "buf"]), children)
    binary = st.tuples(st.sampled_from(["&", "|", "^", "and", "or", "nand", "nor", "xor", "xnor"]),
                       st.lists(children, min_size=2, max_size=3))
    mux = st.tuples(st.just("mux"), st.tuples(children, children, children))
    return st.one_of(unary, binary, mux).map(_render)


def _render(node):
    op, arg = node
    if op == "!":
        return (f"!{arg[0]}", f"(1 - {arg[1]})")
    if op in ("not", "buf"):
        return (f"{op}({arg[0]})", f"(1 - {arg[1]})" if op == "not" else arg[1])
    if op == "mux":
        s, a, b = arg
        return (f"mux({s[0]}, {a[0]}, {b[0]})", f"({b[1]} if {s[1]} else {a[1]})")
    texts = [x[0] for x in arg]
    pys = [x[1] for x in arg]
    if op in "&|^":
        py = {"&": " & ", "|": " | ", "^": " ^ "}[op].join(pys)
        return ("(" + f" {op} ".join(texts) + ")", f"({py})")
    base = {"and": " & ", "nand": " & ", "or": " | ", "nor": " | ", "xor": " ^ ", "xnor": " ^ "}[op]
    py = f"({base.join(pys)})"
    if op in ("nand", "nor", "xnor"):
        py = f"(1 - {py})"
    return (f"{op}({', '.join(texts)})", py)


EXPRS = st.recursive(_leaf(), _combine, max_leaves=12)


@settings(max_examples=150, deadline=None)
@given(EXPRS)
def test_three_evaluators_agree(tmp_path_factory, expr):
    text, py = expr
    path = tmp_path_factory.mktemp("e") / "e.cnl"
    path.write_text(f"design probe\n  in a, b, c, d\n  out y = {text}\nend\n", encoding="utf-8")
    m = load_namespace(str(path)).designs["probe"].model
    combos = list(itertools.product((0, 1), repeat=4))
    want = [eval(py, {}, dict(zip(NAMES, v))) & 1 for v in combos]
    # scalar simulator
    got = [m.step({}, dict(zip(NAMES, v)))[1]["y"] for v in combos]
    assert got == want
    # bit-parallel over all 16 input combinations at once
    arr = {n: np.array([v[i] for v in combos], dtype=bool) for i, n in enumerate(NAMES)}
    leaves = leaf_arrays(m, [], np.zeros(16, dtype=np.uint64), arr)
    (vals,) = eval_states(m, m.output_lits, leaves, 16)
    assert [int(x) for x in vals] == want


# --- random designs never crash the parser ------------------------------------
STATEMENTS = st.sampled_from([
    "  in x, y[3:0]", "  flop q[2:0] : D (d = {q[1:0], x})", "  flop r : JK (j = q[0], k = !x) clear x",
    "  flop q[2] : D (d = x)", "  flop q[1:0] : T (t = 0b01)", "  r.j = q[0]", "  flop r : JK (j = q[0],",
    "  k = !x)", "  out o = q[2] & r", "  node n[1:0] = y[3:2] ^ y[1:0]",
    "  part u : helper (a = x)", "  out v = u.z", "  out w = mux(x, q[0], 1)", "  flop q[2:0] : D (d = 0b101)",
    "  out o = (x | ", "  flop q : SR", "  flop q : SR (s = x, s = x)", "  in q", "  node n = n", "}", "end",
    "design", "  out y[0] = x",
])


@settings(max_examples=200, deadline=None)
@given(st.lists(STATEMENTS, max_size=10), st.binary(max_size=8))
def test_random_designs_never_crash(tmp_path_factory, stmts, junk):
    text = "design helper\n  in a\n  out z = !a\nend\ndesign top\n" + "\n".join(stmts) + "\nend\n"
    path = tmp_path_factory.mktemp("r") / "r.cnl"
    data = text.encode()
    if junk:
        cut = len(data) * (junk[0] % 7) // 7
        data = data[:cut] + junk[1:] + data[cut:]
    path.write_bytes(data)
    try:
        ns = load_namespace(str(path))
    except InputError as e:
        assert e.pos.line >= 1 and e.pos.col >= 1 and e.message
    else:
        # Junk put in after "design top" cannot take away either design; with
        # no junk the file declares exactly these two.
        head = len(b"design helper\n  in a\n  out z = !a\nend\ndesign top\n")
        if len(junk) <= 1 or len(text.encode()) * (junk[0] % 7) // 7 >= head:
            assert {"helper", "top"} <= set(ns.designs)
            helper = ns.designs["helper"].model
            assert (helper.inputs, helper.outputs, helper.states) == (["a"], ["z"], [])
            assert [helper.step({}, {"a": a})[1] for a in (0, 1)] == [{"z": 1}, {"z": 0}]
        if len(junk) <= 1:
            assert set(ns.designs) == {"helper", "top"}

"""Parser round trips: parse -> unparse -> parse gives the same tree and the same circuits.

Three layers of evidence:
1. every shipped case: the tree survives a round trip, the unparser is
   idempotent, and the elaborated designs and checks of the original and of the
   round-tripped files compute the same functions (exhaustive simulation);
2. hypothesis: random expression trees and random statement lists round-trip
   exactly, including names that are keywords only elsewhere (`s`, `and`, `gray`);
3. hypothesis: random one-bit formulas written fully parenthesised and written by
   the unparser (minimal parentheses) elaborate to the same truth table, which
   also equals Python's own evaluation of the formula.
"""

from __future__ import annotations

import dataclasses
import itertools
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings, strategies as st

from checker.lang import parse as P
from checker.elab import load_namespace
from checker.errors import InputError, Pos
from checker.model.simulate import eval_states
from checker.lang.unparse import unparse_expr, unparse_file

ROOT = Path(__file__).resolve().parent.parent
CASES = sorted((ROOT / "cases").glob("*.cnl"))
POS_FIELDS = frozenset({"pos", "kind_pos", "design_pos"})
EXHAUSTIVE_BITS = 16  # state + input bits up to which the model comparison is exhaustive


# --- tree comparison -------------------------------------------------------
def strip_positions(x):
    """A comparable copy of a syntax tree with every source position left out.

    Dataclasses become (class name, ((field, value), ...)) without the fields in
    POS_FIELDS; lists and tuples lose any Pos items (the (value, Pos) pairs of
    CountStmt.items), so two trees of the same text at different places compare equal.
    """
    if isinstance(x, Pos):
        return None
    if dataclasses.is_dataclass(x) and not isinstance(x, type):
        return (type(x).__name__, tuple((f.name, strip_positions(getattr(x, f.name)))
                                        for f in dataclasses.fields(x) if f.name not in POS_FIELDS))
    if isinstance(x, (list, tuple)):
        items = tuple(strip_positions(v) for v in x if not isinstance(v, Pos))
        return items[0] if isinstance(x, tuple) and len(items) == 1 else items
    return x


def same_tree(a, b) -> bool:
    """True when two syntax trees are equal ignoring positions."""
    return strip_positions(a) == strip_positions(b)


def test_same_tree_sees_differences():
    # The helper must not be blind: change one detail at a time and it must notice.
    base = P.parse_expr("t", "a & (b | q[3]) ^ 0b01")
    moved = P.parse_expr("t", "  a  &  ( b|q[3] )^0b01")
    assert same_tree(base, moved)
    for other in ("a & (b | q[2]) ^ 0b01", "a & (b | q[3]) ^ 0b1", "a | (b & q[3]) ^ 0b01",
                  "a & (b | q[3:3]) ^ 0b01", "a & b | q[3] ^ 0b01"):
        assert not same_tree(base, P.parse_expr("t", other)), other
    c1 = P.parse_text("f", "check c of d\n  count 0 .. 9\nend\n")
    c2 = P.parse_text("f", "check c of d\n\n  count   0 ..   9 # ten\nend\n")
    c3 = P.parse_text("f", "check c of d\n  count 0 .. 8\nend\n")
    assert same_tree(c1, c2) and not same_tree(c1, c3)


# --- layout and precedence, by hand ------------------------------------------
@pytest.mark.parametrize("src, want", [
    # Loosest first ==/!=, |, ^, &, prefix ! (shared/LANGUAGE.md, EXPR and PROP).
    ("a | b & c", "a | b & c"),
    ("(a | b) & c", "(a | b) & c"),
    ("(a & b) | c", "a & b | c"),
    ("a ^ (b ^ c)", "a ^ (b ^ c)"),          # the tree keeps the grouping, so must the text
    ("(a ^ b) ^ c", "(a ^ b) ^ c"),
    ("a ^ b ^ c", "a ^ b ^ c"),
    ("~(a & b)", "!(a & b)"),
    ("!!a", "!!a"),
    ("!(!a)", "!!a"),
    ("((q[2]))", "q[2]"),
    ("u1.level[3:0] != {0b0011, x}", "u1.level[3:0] != {0b0011, x}"),
    ("(a == b) == c", "(a == b) == c"),
    ("a == (b == c)", "a == (b == c)"),
    ("(a == b) & c", "(a == b) & c"),
    ("mux(s,a|b,(c))", "mux(s, a | b, c)"),
    ("0XfF & 0B10 & 12", "0XfF & 0B10 & 12"),  # literals keep their text
])
def test_expression_text(src, want):
    e = P.parse_expr("t", src)
    assert unparse_expr(e) == want
    assert same_tree(P.parse_expr("t", want), e)


def test_file_layout():
    src = ('design vat\n in heat,  lvl[1:0]\n flop f[1:0] : JK (j = lvl,\n    k = {heat,\n 0}) clear !heat preset lvl[0]\n'
           ' flop g[2] : T (t=heat)\n part p : vat (heat = heat, lvl[1:0] = 0b10)\nend\n'
           'use "lib/x.cnl"\n'
           'check warm of vat\n code f\n count lfsr 2 1 from 0x3\n load lvl when heat\n'
           ' recover within 4 when !heat\n equal vat after heat\n equal vat on sequence\nend\n')
    want = ('use "lib/x.cnl"\n\n'
            'design vat\n  in heat, lvl[1:0]\n  flop f[1:0] : JK (j = lvl, k = {heat, 0}) clear !heat preset lvl[0]\n'
            '  flop g[2] : T (t = heat)\n  part p : vat (heat = heat, lvl[1:0] = 0b10)\nend\n\n'
            'check warm of vat\n  code f\n  count lfsr 2 1 from 3\n  load lvl when heat\n'
            '  recover within 4 when !heat\n  equal vat after heat\n  equal vat on sequence\nend\n')
    assert unparse_file(P.parse_text("f.cnl", src)) == want


# --- the shipped cases ---------------------------------------------------------
def _parse_case(path: Path) -> P.File:
    try:
        return P.parse_text(path.name, path.read_text(encoding="utf-8"))
    except InputError as e:  # a case being written may not parse yet; that is not a round-trip fault
        pytest.skip(f"case does not parse: {e}")


@pytest.mark.parametrize("path", CASES, ids=[p.name for p in CASES])
def test_case_tree_round_trip(path):
    tree = _parse_case(path)
    text = unparse_file(tree)
    again = P.parse_text(path.name, text)
    assert strip_positions(again) == strip_positions(tree)
    assert unparse_file(again) == text  # idempotent


@pytest.fixture(scope="module")
def round_tripped(tmp_path_factory):
    """A folder holding every case file rewritten by the unparser (so `use` finds rewritten files)."""
    d = tmp_path_factory.mktemp("rt_cases")
    for p in CASES:
        try:
            tree = P.parse_text(p.name, p.read_text(encoding="utf-8"))
        except InputError:
            continue
        (d / p.name).write_text(unparse_file(tree), encoding="utf-8")
    for p in (ROOT / "cases").iterdir():  # netlists that cases use, as they are
        if p.suffix in (".v", ".blif", ".aag", ".aig"):
            (d / p.name).write_bytes(p.read_bytes())
    return d


def _leaves(model, rng) -> tuple[dict[int, np.ndarray], int]:
    """Values of every leaf (state and input bits) over all rows, or over a random sample."""
    names = model.states + model.inputs
    lits = model.state_lits + model.input_lits
    if len(names) <= EXHAUSTIVE_BITS:
        n = 1 << len(names)
        grid = np.arange(n, dtype=np.uint32)
        cols = [((grid >> k) & 1).astype(bool) for k in range(len(names))]
    else:
        n = 4096
        cols = [rng.integers(0, 2, size=n).astype(bool) for _ in names]
    return {lit >> 1: col for lit, col in zip(lits, cols)}, n


def _values(model, roots, leaves, n):
    return [np.asarray(v, dtype=bool) for v in eval_states(model, roots, leaves, n)]


def _check_lits(check):
    """Literals of a check's rules and claims (those in the check's own design)."""
    lits = []
    for r in check.rules:
        lits.append(r.cond)
        lits += r.load_bits or []
    for c in check.claims:
        lits += [x for x in (c.cond, c.prop) if x is not None]
    return lits


def _check_shape(check):
    rules = [(r.kind, r.load_const, None if r.load_bits is None else len(r.load_bits)) for r in check.rules]
    claims = [(c.kind, c.within, c.mode, c.cond is None, c.prop is None,
               None if c.other is None else c.other.name, c.other_cond is None) for c in check.claims]
    seq = check.sequence  # None in a check without a count line (an `equal ... after` alone)
    return (check.design.name, check.code, seq and seq.length(), seq and seq.first(), rules, claims)


@pytest.mark.parametrize("path", CASES, ids=[p.name for p in CASES])
def test_case_models_agree(path, round_tripped):
    if not (round_tripped / path.name).exists():
        pytest.skip("case does not parse")
    a = load_namespace(str(path))
    b = load_namespace(str(round_tripped / path.name))
    assert sorted(a.designs) == sorted(b.designs)
    rng = np.random.default_rng(7)
    checks_b = {c.name: c for c in b.checks}
    assert [c.name for c in a.checks] == [c.name for c in b.checks]
    for name, da in a.designs.items():
        db = b.designs[name]
        ma, mb = da.model, db.model
        assert (ma.states, ma.inputs, ma.outputs) == (mb.states, mb.inputs, mb.outputs)
        assert [f for f, _ in ma.faults] == [f for f, _ in mb.faults]
        assert sorted(ma.signals) == sorted(mb.signals)
        assert (da.input_vectors, da.output_vectors, da.flop_kinds) == (db.input_vectors, db.output_vectors, db.flop_kinds)
        checks = [(c, checks_b[c.name]) for c in a.checks if c.design.name == name]
        roots_a = ma.next_lits + ma.output_lits + [l for _, l in ma.faults]
        roots_b = mb.next_lits + mb.output_lits + [l for _, l in mb.faults]
        for ca, cb in checks:
            assert _check_shape(ca) == _check_shape(cb)
            if ca.sequence is not None and ca.sequence.length() <= 4096:
                assert list(ca.sequence.codes()) == list(cb.sequence.codes())
            roots_a += _check_lits(ca)
            roots_b += _check_lits(cb)
        assert len(roots_a) == len(roots_b)
        leaves_a, n = _leaves(ma, rng)
        # Same names in the same order (asserted above), so leaf k of one is leaf k of the other.
        lit_map = {la >> 1: lb >> 1 for la, lb in zip(ma.state_lits + ma.input_lits, mb.state_lits + mb.input_lits)}
        leaves_b = {lit_map[k]: v for k, v in leaves_a.items()}
        va, vb = _values(ma, roots_a, leaves_a, n), _values(mb, roots_b, leaves_b, n)
        for k, (x, y) in enumerate(zip(va, vb)):
            assert np.array_equal(x, y), f"design {name}: function {k} differs after the round trip"


# --- hypothesis: random trees ----------------------------------------------------
G = Pos("gen.cnl", 1, 1)
# Names that are keywords only in their own positions are legal names (LANGUAGE.md, lexical rules).
NAMES = ["a", "q", "en", "s", "d", "r", "and", "mux", "gray", "lfsr", "bcd", "from", "at", "D", "JK", "_x9", "Tank2"]
CALLS = ["and", "or", "nand", "nor", "xor", "xnor", "not", "buf", "mux", "at", "chill"]
PATHS = "abcdefghxyz/._- #()é"

names = st.sampled_from(NAMES)
small = st.one_of(st.integers(0, 40), st.integers(0, P.MAX_INDEX))


@st.composite
def nums(draw):
    v = draw(st.integers(0, 2**70))
    style = draw(st.sampled_from(["dec", "0b", "0B", "0x", "0X", "0xU"]))
    if style == "dec":
        text = "0" * draw(st.integers(0, 2)) + str(v)  # leading zeros are allowed in decimal
    elif style in ("0b", "0B"):
        text = style + format(v, "b").zfill(draw(st.integers(1, 6)))
    elif style == "0xU":
        text = "0x" + format(v, "X")
    else:
        text = style + format(v, "x")
    return P.Num(v, text, G)


indexes = st.one_of(st.none(), st.builds(P.Index, small, st.one_of(st.none(), small), st.just(G)))
refs = st.builds(P.Ref, st.lists(names, min_size=1, max_size=3), indexes, st.just(G))


def _extend(children):
    return st.one_of(
        st.builds(P.Not, children, st.just(G)),
        st.builds(P.Op, st.sampled_from("&|^"), st.lists(children, min_size=2, max_size=4), st.just(G)),
        st.builds(P.Call, st.sampled_from(CALLS), st.lists(children, min_size=0, max_size=4), st.just(G)),
        st.builds(P.Cat, st.lists(children, min_size=1, max_size=4), st.just(G)),
        st.builds(P.Cmp, st.sampled_from(["==", "!="]), children, children, st.just(G)),
    )


exprs = st.recursive(st.one_of(nums(), refs), _extend, max_leaves=14)
props = st.builds(P.Cmp, st.sampled_from(["==", "!="]), exprs, exprs, st.just(G)) | exprs
opt_exprs = st.one_of(st.none(), exprs)
decls = st.one_of(st.builds(P.Decl, names, st.none(), st.none(), st.just(G)),
                  st.builds(P.Decl, names, small, small, st.just(G)),
                  small.flatmap(lambda i: st.builds(P.Decl, names, st.just(i), st.just(i), st.just(G), st.just(True))))
# A flop's parenthesis: None when it is left out (an elaboration error, but a tree all the same).
pin_lists = st.one_of(st.none(), st.lists(st.builds(P.Pin, st.sampled_from(["d", "t", "j", "k", "s", "r", "x"]),
                                                    exprs, st.just(G)), max_size=3))
clocks = st.one_of(st.none(), st.builds(P.Clock, st.sampled_from(["rise", "fall"]), exprs, st.just(G)))


@st.composite
def flop_decls(draw):
    clear, preset = draw(opt_exprs), draw(opt_exprs)
    # `async` is written only with its clear or preset
    return P.FlopDecl(draw(decls), draw(st.sampled_from(["D", "T", "JK", "SR", "q"])), G, draw(pin_lists),
                      draw(clocks), clear, preset, G, clear is not None and draw(st.booleans()),
                      preset is not None and draw(st.booleans()))


design_stmts = st.one_of(
    st.builds(P.InDecl, st.lists(decls, min_size=1, max_size=4), st.just(G)),
    st.builds(P.OutDecl, decls, exprs, st.just(G)),
    st.builds(P.NodeDecl, decls, exprs, st.just(G)),
    flop_decls(),
    st.builds(P.PartDecl, names, names, st.just(G),
              st.lists(st.builds(P.Conn, names, indexes, exprs, st.just(G)), max_size=4), st.just(G)),
)
count_items = st.lists(st.one_of(st.integers(0, 2**66), names, st.just("..")).map(lambda v: (v, G)),
                       min_size=1, max_size=6)


@st.composite
def rules(draw):
    kind = draw(st.sampled_from(["hold", "load", "back", "step"]))
    value = draw(exprs) if kind == "load" else None
    return P.RuleStmt(kind, value, draw(exprs), G)


@st.composite
def equals(draw):
    mode = draw(st.sampled_from([None, "sequence", "after"]))
    return P.EqualStmt(draw(names), G, mode, draw(exprs) if mode == "after" else None, G)


check_stmts = st.one_of(
    st.builds(P.CodeStmt, exprs, st.just(G)),
    st.builds(P.CountStmt, count_items, st.just(G)),
    rules(),
    st.builds(P.RecoverStmt, st.one_of(st.none(), st.integers(0, 10**6)), opt_exprs, st.just(G)),
    st.builds(P.AlwaysStmt, props, st.just(G)),
    equals(),
)
files = st.builds(
    P.File, st.just("gen.cnl"),
    st.lists(st.builds(P.UseStmt, st.text(PATHS, max_size=12), st.just(G)), max_size=2),
    st.lists(st.builds(P.DesignBlock, names, st.lists(design_stmts, max_size=6), st.just(G)), max_size=2),
    st.lists(st.builds(P.CheckBlock, names, names, st.just(G), st.lists(check_stmts, max_size=6), st.just(G)), max_size=2),
)


@settings(max_examples=200, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(props)
def test_random_expressions_round_trip(e):
    text = unparse_expr(e)
    back = P.parse_expr("gen", text)
    assert strip_positions(back) == strip_positions(e), text
    assert unparse_expr(back) == text


@settings(max_examples=120, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(files)
def test_random_files_round_trip(f):
    text = unparse_file(f)
    back = P.parse_text("gen.cnl", text)
    assert strip_positions(back) == strip_positions(f), text
    assert unparse_file(back) == text


# --- hypothesis: meaning survives the minimal parentheses -------------------------
BITS = ["a", "b", "c"]
GATE_ARITY = {"and": (2, 3), "or": (2, 3), "nand": (2, 3), "nor": (2, 3), "xor": (2, 3), "xnor": (2, 3),
              "not": (1, 1), "buf": (1, 1), "mux": (3, 3)}


def _bit_extend(children):
    calls = [st.builds(P.Call, st.just(g), st.lists(children, min_size=lo, max_size=hi), st.just(G))
             for g, (lo, hi) in GATE_ARITY.items()]
    return st.one_of(
        st.builds(P.Not, children, st.just(G)),
        st.builds(P.Op, st.sampled_from("&|^"), st.lists(children, min_size=2, max_size=3), st.just(G)),
        *calls,
    )


bit_leaves = st.one_of(st.builds(P.Ref, st.sampled_from(BITS).map(lambda n: [n]), st.none(), st.just(G)),
                       st.sampled_from([P.Num(0, "0", G), P.Num(1, "1", G), P.Num(1, "0b1", G)]))
bit_exprs = st.recursive(bit_leaves, _bit_extend, max_leaves=10)


def py_eval(e, env: dict) -> int:
    """The value of a one-bit formula, by the meanings in shared/LANGUAGE.md (EXPR, gate calls)."""
    if isinstance(e, P.Num):
        return e.value
    if isinstance(e, P.Ref):
        return env[e.path[0]]
    if isinstance(e, P.Not):
        return 1 - py_eval(e.arg, env)
    xs = [py_eval(a, env) for a in e.args]
    if isinstance(e, P.Op):
        return {"&": min, "|": max, "^": lambda v: sum(v) % 2}[e.op](xs)
    if e.name == "mux":  # mux(S, A, B) is A when S is 0 and B when S is 1
        return xs[2] if xs[0] else xs[1]
    base = {"and": min, "nand": min, "or": max, "nor": max, "xor": lambda v: sum(v) % 2,
            "xnor": lambda v: sum(v) % 2, "not": lambda v: v[0], "buf": lambda v: v[0]}[e.name](xs)
    return 1 - base if e.name in ("nand", "nor", "xnor", "not") else base


def full_parens(e) -> str:
    """A deliberately naive printer: every compound sub-expression in parentheses."""
    if isinstance(e, (P.Num, P.Ref)):
        return unparse_expr(e)
    if isinstance(e, P.Not):
        return f"!({full_parens(e.arg)})"
    if isinstance(e, P.Op):
        return "(" + f" {e.op} ".join(f"({full_parens(a)})" for a in e.args) + ")"
    return f"{e.name}(" + ", ".join(f"({full_parens(a)})" for a in e.args) + ")"


def _truth_table(tmp_path, tag: str, expr_text: str) -> list[int]:
    p = tmp_path / f"{tag}.cnl"
    p.write_text(f"design tank\n  in a, b, c\n  out y = {expr_text}\nend\n", encoding="utf-8")
    m = load_namespace(str(p)).designs["tank"].model
    return [m.step({}, dict(zip(BITS, row)))[1]["y"] for row in itertools.product((0, 1), repeat=3)]


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow,
                                                                  HealthCheck.function_scoped_fixture])
@given(bit_exprs)
def test_minimal_parentheses_keep_meaning(tmp_path, e):
    naive = full_parens(e)
    assert same_tree(P.parse_expr("gen", naive), e)
    tight = unparse_expr(P.parse_expr("gen", naive))
    assert same_tree(P.parse_expr("gen", tight), P.parse_expr("gen", naive))
    want = [py_eval(e, dict(zip(BITS, row))) for row in itertools.product((0, 1), repeat=3)]
    assert _truth_table(tmp_path, "naive", naive) == want
    assert _truth_table(tmp_path, "tight", tight) == want

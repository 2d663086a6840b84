"""The fast .cnl reader (checker/lang/cnl_fast.py) reads exactly what the lark route reads, or steps aside.

The lark route (``parse_text_lark``: grammar/cnl.lark, its post-lexer and the
tree-to-dataclass walk) is the reference. For every text here:

* if the fast reader takes the text, the lark route reads it to an equal
  ``File`` -- every dataclass, every name, number and position -- and raises
  nothing (a text with any error must never be taken, or its FILE:LINE:COL
  message would be lost);
* ``parse_text`` (fast reader, else lark) and the lark route end the same way:
  the same ``File`` or an InputError with the very same message.

Texts: every .cnl file and every .cnl text in a test or the README, the large
generated files of the benchmarks (smaller sizes), random programs of the whole
grammar (hypothesis), and those programs damaged by deleting, inserting,
repeating or swapping characters and tokens.
"""

from __future__ import annotations

import ast
import re
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings, strategies as st

from checker.errors import InputError
from checker.lang import parse as P
from checker.lang.cnl_fast import read_fast
from checker.lang.syntax import MAX_DESIGN_BITS, MAX_INDEX, MAX_LITERAL_BITS, MAX_NESTING, RESERVED

ROOT = Path(__file__).resolve().parent.parent
PATH = "t.cnl"


def outcome(read, text: str):
    """('file', File) or ('error', message with its position): how a reader ends on ``text``."""
    try:
        return "file", read(PATH, text)
    except InputError as e:
        return "error", str(e)


def agree(text: str) -> bool:
    """Assert the contract above; returns whether the fast reader took the text."""
    fast = read_fast(PATH, text)
    ref = outcome(P.parse_text_lark, text)
    if fast is not None:
        assert ref == ("file", fast), f"the fast reader took a text the lark route reads otherwise:\n{text}\n{ref}"
    assert outcome(P.parse_text, text) == ref, text
    return fast is not None


# --- every .cnl text of the repository -------------------------------------------------------
def _looks_like_cnl(s: str) -> bool:
    return re.search(r"^\s*(design|check)\s+\w", s, re.M) is not None


def repository_texts() -> list[tuple[str, str]]:
    texts = [(str(p.relative_to(ROOT)), p.read_text(encoding="utf-8"))
             for p in sorted(ROOT.rglob("*.cnl")) if ".git" not in p.parts]
    for p in sorted((ROOT / "tests").rglob("*.py")):
        for node in ast.walk(ast.parse(p.read_text(encoding="utf-8"))):
            if isinstance(node, ast.Constant) and isinstance(node.value, str) and _looks_like_cnl(node.value):
                texts.append((f"{p.relative_to(ROOT)}:{node.lineno}", node.value))
    readme = (ROOT / "README.md").read_text(encoding="utf-8")
    for k, m in enumerate(re.finditer(r"```[^\n]*\n(.*?)```", readme, re.S)):
        if _looks_like_cnl(m.group(1)):
            texts.append((f"README.md block {k}", m.group(1)))
    return texts


REPO = repository_texts()


def test_the_repository_has_texts_to_compare():
    assert len(REPO) > 200
    assert sum(name.endswith(".cnl") for name, _ in REPO) >= 20


@pytest.mark.parametrize("text", [t for _, t in REPO], ids=[n for n, _ in REPO])
def test_every_repository_text_reads_the_same(text):
    agree(text)


def test_every_good_repository_text_is_taken():
    # the fast reader is meant for every well-formed file, not only for the generated ones
    declined = [name for name, text in REPO
                if outcome(P.parse_text_lark, text)[0] == "file" and read_fast(PATH, text) is None]
    assert not declined, declined


def generated_texts() -> list[tuple[str, str]]:
    """The benchmarks' generated netlists, at sizes lark reads in a moment."""
    import sys
    for folder in (str(ROOT / "tests" / "perf"), str(ROOT / "tests")):
        if folder not in sys.path:
            sys.path.insert(0, folder)
    from bench_count import counter_text, lookahead_text
    from bench_equal import tally
    from bench_cnl_read import ripple_counter
    return [("tally 12", tally(12)), ("counter 24", counter_text(24)), ("lookahead 16", lookahead_text(16)),
            ("ripple 40", ripple_counter(40))]


@pytest.mark.parametrize("name, text", generated_texts(), ids=lambda x: x if len(x) < 20 else "")
def test_generated_netlists_are_taken_and_read_the_same(name, text):
    assert agree(text), name


def test_every_keyword_of_the_grammar_is_reserved():
    # a keyword the fast reader took for a name would misread the text: lark's keywords are
    # its string terminals that look like names, and every one must be in RESERVED
    parser = P._parser()
    words = {t.pattern.value for t in parser.terminals
             if t.pattern.type == "str" and re.fullmatch(r"[A-Za-z_][A-Za-z0-9_]*", t.pattern.value)}
    assert words and words <= RESERVED


# --- chosen texts: each rule the fast reader copies -------------------------------------------
D = "design d\n  in a, b[3:0]\n"
TAKEN = [
    "",
    "\n\n",
    "# only a comment",
    "# comment\n\n# more\n",
    D + "  out y = a\nend",
    D + "  out y = a\nend\n\n\n# trailing\n",
    "\n  \n" + D + "  out y = a # note\n\n   # c\n  node n = a\nend\n",
    D.replace("\n", "\r\n") + "  out y = a\r\nend\r\n",
    D + "\tout\ty\t=\ta\f\nend\n",
    D + "  out y = ((a)) & b[0]\nend\n",
    D + "  out y = (a) == b[1]\nend\n",
    D + "  out y = ((a & b[0])) | (!a) ^ ~(b[2])\nend\n",
    D + "  out y = (a | b[0]) & (a ^ b[1]) != !!~a\nend\n",
    D + "  out y[3:0] = {a, (b[2:0])}\nend\n",
    D + "  out y = f(a, g(), h((b[1])))\nend\n",
    D + "  out y = u.v.w[2] & u.v\nend\n",
    D + "  out y = 0b0101 & 0x1F & 007 & 0B1 & 0XaB\nend\n",
    D + "  out y = and(a,\n    b[0],\n  b[1])\nend\n",
    D + "  out y = a & (\n  b[0]\n  |\n  b[1]) # comment after\n\n  node m = (a # inside\n\n  # and more\n  )\nend\n",
    D + "  in c,\n     e,\n\n     f\n  out y = c\nend\n",
    D + "  flop q[1:0] : D (d = {a, b[0]}) clock rise a clear async b[1] preset b[2]\nend\n",
    D + "  flop q : T (t = a,) clear b[0]\n  flop r : JK () preset async !a\n  flop s : D\nend\n",
    D + "  flop q : D (d = a) preset a clear async b[0] clock fall a\nend\n",
    D + "  part u : other (x = a, y[1:0] = b[1:0], z[2] = a,)\n  part v : other ()\nend\n",
    "use \"lib.cnl\"\nuse \"a # b.cnl\"\n" + D + "end\ncheck c of d\nend\n",
    D + "end\ncheck c of d\n  code b\n  count 0 .. 0xF 3 2 idle 0b1\n  load 3 when a\n  hold when !a\n"
        "  back when a\n  step when b[0]\n  recover\n  recover within 4\n  recover when a\n"
        "  recover within 2 when a & b[1]\n  always a | b[0]\n  settle within 3\n  glitchfree a, b[1] when a\n"
        "  glitchfree b\n  equal e\n  equal e on sequence\n  equal e after a == 1\nend\n",
    D + "end\ncheck c of d\n  glitchfree a,\n    b[0],\n    b[1]\nend",
    D + f"  out y = b[{MAX_INDEX}] & b[{MAX_INDEX}:0]\nend\n",
    D + "  out y = 0b" + "1" * MAX_LITERAL_BITS + "\nend\n",
    D + "  out y = " + "(" * (MAX_NESTING - 5) + "a" + ")" * (MAX_NESTING - 5) + "\nend\n",
    D + "  out y = " + "!" * 50 + "a\nend\n",
    "design big\n" + "".join(f"  in v{k}[999:0]\n" for k in range(MAX_DESIGN_BITS // 1000)) + "end\n",
    "design big\n  in w[4096:0], x[4097:0], z[0:00000000000005], v[0:0000000099999]\n  out y = w\nend\n",
]


@pytest.mark.parametrize("text", TAKEN)
def test_well_formed_texts_are_taken(text):
    assert agree(text)


LEFT_TO_LARK = [
    D + "  out y = in\nend\n",                      # a reserved word where a name goes
    D + "  out end = a\nend\n",
    D + "  flop q : clear (d = a)\nend\n",           # lark reads 'clear' as a name here: its tree, its word
    D + "end\ncheck c of d\n  count 0 end 1\nend\n",  # the same in a count
    D + "  out y = a,\n  end\n",                     # a comma-joined line starting with a reserved word
    D + "  in c,\n  out y = c\nend\n",
    D + "  out y = 0b12\nend\n",                     # lark splits a number run into digits or letters
    D + "  out y = 12ab\nend\n",
    D + "  out y = 0x\nend\n",
    D + "  out y = a + b[0]\nend\n",                 # characters outside the grammar
    D + "  out y = é\nend\n",
    D + "  out y = a\x0b\nend\n",
    D + "  out y = 0b1" + "0" * MAX_LITERAL_BITS + "\nend\n",   # limits
    D + f"  out y = b[{MAX_INDEX + 1}]\nend\n",
    D + "  out y = " + "(" * (MAX_NESTING + 1) + "a" + ")" * (MAX_NESTING + 1) + "\nend\n",
    D + "  out y = " + "~" * (MAX_NESTING + 1) + "a\nend\n",
    "design big\n" + "".join(f"  in v{k}[999:0]\n" for k in range(MAX_DESIGN_BITS // 1000)) + "  in w\nend\n",
    D + "  flop q : D (d = a) clear a clear b[0]\nend\n",  # clauses twice, a bad edge
    D + "  flop q : D (d = a) clock rise a clock rise a\nend\n",
    D + "  flop q : D (d = a) clock up a\nend\n",
    D + "  q.d = a\nend\n",                             # the v1 pin statement
    D + "  out y = a == b == a\nend\n",                 # syntax errors
    D + "  out y = (a\nend\n",
    D + "  out y = a)\nend\n",
    D + "  out y = f(a,)\nend\n",
    D + "  out y = {}\nend\n",
    D + "  out y = a..b\nend\n",
    D + "  out y = a\n",
    D + "  out y = a\nend end\n",
    D + "end\ncheck c of d\n  count\nend\n",
    D + "end\ncheck c of d\n  count 0 ... 3\nend\n",
    D + "end\ncheck c of d\n  equal e on\nend\n",
    D + "end\ncheck c of d\n  settle 3\nend\n",
    # where lark's lexer takes no name it splits a keyword off the front of a word ('ofd' is 'of d'):
    # texts lark reads, the fast reader leaves to it
    D + "end\ncheck c ofd\nend\n",
    D + "end\ncheck c of d\n  equal e onsequence\n  recover within3\nend\n",
    D + "  flop q : D (d = a) clockrise a\nend\n",
    "use lib.cnl\n",
    "use \"lib.cnl\n\"\n",
]


@pytest.mark.parametrize("text", LEFT_TO_LARK)
def test_texts_with_errors_or_doubts_go_to_lark(text):
    assert not agree(text)


# --- random programs of the grammar -----------------------------------------------------------
PLAIN_NAMES = ["a", "b", "q", "n_1", "_x", "Tot9", "rise", "fall", "T", "D"]


def expressions(name: st.SearchStrategy, numbers: st.SearchStrategy, gap: st.SearchStrategy) -> st.SearchStrategy:
    """Expressions of the grammar; ``gap`` is the space written inside brackets."""
    sp = st.sampled_from([" ", " ", "  ", "\t"])
    index = st.one_of(st.builds(lambda i: f"[{i}]", numbers), st.builds(lambda i, j: f"[{i}:{j}]", numbers, numbers))
    ref = st.builds(lambda ns, ix: ".".join(ns) + ix, st.lists(name, min_size=1, max_size=3),
                    st.one_of(st.just(""), index))
    leaf = st.one_of(ref, numbers)

    def grow(inner):
        return st.one_of(
            st.builds(lambda xs, op, s: f"{s}{op}{s}".join(xs), st.lists(inner, min_size=2, max_size=4),
                      st.sampled_from(["&", "|", "^"]), sp),
            st.builds(lambda x, op, y: f"{x} {op} {y}", inner, st.sampled_from(["==", "!="]), inner),
            st.builds(lambda o, x: f"{o}{x}", st.sampled_from(["!", "~", "! ", "!~"]), inner),
            st.builds(lambda g, x, h: f"({g}{x}{h})", gap, inner, gap),
            st.builds(lambda xs, g: "{" + ("," + g).join(xs) + "}", st.lists(inner, min_size=1, max_size=3), gap),
            st.builds(lambda f, xs, g: f"{f}(" + ("," + g).join(xs) + ")", name, st.lists(inner, max_size=3), gap),
        )

    return st.recursive(leaf, grow, max_leaves=6)


def programs(names: list[str], numbers: st.SearchStrategy) -> st.SearchStrategy:
    """Texts of the whole grammar; ``names`` and ``numbers`` say how wild they are."""
    name = st.sampled_from(names)
    gap = st.sampled_from([" ", " ", "  ", "\t", " # note\n  ", "\n    ", "\n\n  ", "\r\n "])  # inside brackets
    expr = expressions(name, numbers, gap)
    index = st.one_of(st.builds(lambda i: f"[{i}]", numbers), st.builds(lambda i, j: f"[{i}:{j}]", numbers, numbers))
    decl = st.builds(lambda n, ix: n + ix, name, st.one_of(st.just(""), index))
    pins = st.one_of(st.just(""), st.builds(
        lambda ps, trail, g: " (" + ("," + g).join(f"{p} = {e}" for p, e in ps) + trail + ")",
        st.lists(st.tuples(name, expr), max_size=3), st.sampled_from(["", ","]), gap))
    option = st.one_of(st.builds(lambda k, a, e: f" {k} {a}{e}", st.sampled_from(["clear", "preset"]),
                                 st.sampled_from(["", "async "]), expr),
                       st.builds(lambda edge, e: f" clock {edge} {e}", st.sampled_from(["rise", "fall"]), expr))
    conn = st.builds(lambda n, ix, e: f"{n}{ix} = {e}", name, st.one_of(st.just(""), index), expr)
    dstmt = st.one_of(
        st.builds(lambda ds: "in " + ", ".join(ds), st.lists(decl, min_size=1, max_size=3)),
        st.builds(lambda k, d, e: f"{k} {d} = {e}", st.sampled_from(["out", "node"]), decl, expr),
        st.builds(lambda d, k, p, os: f"flop {d} : {k}{p}{''.join(os)}", decl, name, pins,
                  st.lists(option, max_size=2)),
        st.builds(lambda n, d, cs, trail: f"part {n} : {d} (" + ", ".join(cs) + trail + ")", name, name,
                  st.lists(conn, max_size=3), st.sampled_from(["", ","])),
    )
    item = st.one_of(numbers, name, st.just(".."))
    cstmt = st.one_of(
        st.builds(lambda e: f"code {e}", expr),
        st.builds(lambda xs: "count " + " ".join(xs), st.lists(item, min_size=1, max_size=5)),
        st.builds(lambda k, e: f"{k} when {e}", st.sampled_from(["hold", "back", "step"]), expr),
        st.builds(lambda v, e: f"load {v} when {e}", expr, expr),
        st.builds(lambda w, c: "recover" + w + c, st.one_of(st.just(""), st.builds(lambda i: f" within {i}", numbers)),
                  st.one_of(st.just(""), st.builds(lambda e: f" when {e}", expr))),
        st.builds(lambda e: f"always {e}", expr),
        st.builds(lambda i: f"settle within {i}", numbers),
        st.builds(lambda xs, c: "glitchfree " + ", ".join(xs) + c, st.lists(expr, min_size=1, max_size=3),
                  st.one_of(st.just(""), st.builds(lambda e: f" when {e}", expr))),
        st.builds(lambda n, m: f"equal {n}{m}", name,
                  st.one_of(st.just(""), st.just(" on sequence"), st.builds(lambda e: f" after {e}", expr))),
    )
    brk = st.sampled_from(["\n", "\n", "\n\n", "  # why\n", "\n# note\n\n", "\r\n"])
    body = lambda stmt: st.lists(st.tuples(stmt, brk), max_size=4).map(  # noqa: E731
        lambda xs: "".join(f"  {s}{b}" for s, b in xs))
    block = st.one_of(
        st.builds(lambda n, b1, bd: f"design {n}{b1}{bd}end", name, brk, body(dstmt)),
        st.builds(lambda n, d, b1, bd: f"check {n} of {d}{b1}{bd}end", name, name, brk, body(cstmt)),
        st.builds(lambda p: f'use "{p}"', st.sampled_from(["lib.cnl", "sub/x.v", "a b#c.cnl", ""])),
    )
    return st.builds(lambda lead, bs, tail: lead + "".join(b + k for b, k in bs) + tail,
                     st.sampled_from(["", "\n", "# head\n"]), st.lists(st.tuples(block, brk), max_size=3),
                     st.sampled_from(["", "", "end", "design"]))


CLEAN = programs(PLAIN_NAMES, st.one_of(st.integers(0, 40).map(str), st.sampled_from(["0b101", "0x1f", "007"])))
WILD = programs(PLAIN_NAMES + ["end", "in", "clear", "when", "on", "async", "of", "sequence", "design"],
                st.one_of(st.integers(0, 12).map(str), st.sampled_from(
                    ["0b", "0b12", "0x", "0xG", "1a", str(MAX_INDEX), str(MAX_INDEX + 1), "0b" + "1" * 4097,
                     "0x" + "f" * 1025])))

SETTINGS = settings(max_examples=200, deadline=None, suppress_health_check=[HealthCheck.too_slow])


@SETTINGS
@given(text=CLEAN)
def test_random_programs_read_the_same(text):
    taken = agree(text)
    # a syntactically clean program is taken whenever the lark route reads it
    if outcome(P.parse_text_lark, text)[0] == "file":
        assert taken, text


@SETTINGS
@given(text=WILD)
def test_wild_programs_end_the_same(text):
    agree(text)


DAMAGE = ["(", ")", "[", "]", "{", "}", ",", ",\n", "\n", " ", "#", "!", "~", "=", "==", ":", ".", "..", "&",
          "|", "^", "0", "9", "0b", "a", "_", '"', "end", "in", "\t", "\r", "+", "\\"]


@SETTINGS
@given(text=CLEAN, data=st.data())
def test_damaged_programs_end_the_same(text, data):
    n = len(text)
    how = data.draw(st.sampled_from(["delete", "insert", "repeat", "swap-words"]))
    k = data.draw(st.integers(0, n))
    if how == "delete":
        text = text[:k] + text[k + data.draw(st.integers(1, 3)):]
    elif how == "insert":
        text = text[:k] + data.draw(st.sampled_from(DAMAGE)) + text[k:]
    elif how == "repeat":
        text = text[:k] + text[k:k + data.draw(st.integers(1, 6))] + text[k:]
    else:
        words = re.split(r"(\s+)", text)
        j = data.draw(st.integers(0, max(0, len(words) - 3)))
        if j + 2 < len(words):
            words[j], words[j + 2] = words[j + 2], words[j]
        text = "".join(words)
    agree(text)


def test_a_well_formed_file_is_read_without_lark():
    # lark (its import and its stored tables) is loaded only for a text the fast reader declines
    import subprocess
    import sys
    code = ("import sys; from checker.elab import load_namespace; load_namespace(sys.argv[1]); "
            "print(sorted(m for m in sys.modules if m.split('.')[0] == 'lark'))")
    path = ROOT / "cases" / "sixpack_jk.cnl"
    r = subprocess.run([sys.executable, "-c", code, str(path)], capture_output=True, text=True, cwd=str(ROOT),
                       timeout=120)
    assert r.returncode == 0, r.stderr
    assert r.stdout.strip() == "[]"


@pytest.mark.parametrize("text", [TAKEN[4], LEFT_TO_LARK[0], LEFT_TO_LARK[22], "design d\n  out y = zz\nend\n"])
def test_the_collector_is_paused_only_while_reading(tmp_path, text):
    # read_fast and load_namespace pause the cyclic collector and must leave it as they found it,
    # on success and on every error
    import gc
    from checker.elab import load_namespace
    path = tmp_path / "t.cnl"
    path.write_text(text, encoding="utf-8")
    for enabled in (True, False):
        (gc.enable if enabled else gc.disable)()
        try:
            read_fast(PATH, text)
            assert gc.isenabled() == enabled
            try:
                load_namespace(str(path))
            except InputError:
                pass
            assert gc.isenabled() == enabled
        finally:
            gc.enable()


# --- one expression (a command-line --when or --code) -----------------------------------------
def agree_expr(text: str) -> bool:
    """The contract above for ``parse_expr`` (its nesting and line checks come first, on both routes)."""
    from checker.lang.cnl_fast import read_expr_fast

    def lark_only(where, t):
        P._check_nesting(where, t)
        if "\n" in t:
            return P.parse_expr(where, t)  # the line error, raised before either reader
        return P.parse_expr_lark(where, t)

    ref = outcome(lark_only, text)
    fast = read_expr_fast(PATH, text) if "\n" not in text else None
    if fast is not None:
        assert ref == ("file", fast), text
    assert outcome(P.parse_expr, text) == ref, text
    return fast is not None


ONE_LINE_EXPRS = expressions(st.sampled_from(PLAIN_NAMES + ["at", "end", "in"]),
                             st.one_of(st.integers(0, 20).map(str), st.sampled_from(["0b1", "0x", "1a", "0b" + "1" * 4097])),
                             st.sampled_from(["", " ", "\t", " # c"]))


@SETTINGS
@given(text=ONE_LINE_EXPRS, data=st.data())
def test_one_expression_reads_the_same(text, data):
    agree_expr(text)
    k = data.draw(st.integers(0, len(text)))
    agree_expr(text[:k] + data.draw(st.sampled_from(DAMAGE)) + text[k:])
    agree_expr(text[:k] + text[k + 1:])


@pytest.mark.parametrize("text, taken", [("at(3) & !q[2] | {a, b} == 0b01", True), ("q == 5", True),
                                         ("a,", False), ("(a", False), ("end", False), ("a\nb", False)])
def test_chosen_expressions(text, taken):
    assert agree_expr(text) == taken

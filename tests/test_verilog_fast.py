"""The fast Verilog reader (checker/lang/verilog_fast.py) builds lark's tree exactly, or steps aside.

lark's LALR parser of grammar/verilog.lark is the reference. For every text
here, either the fast reader returns None (lark then parses it and reports any
error) or lark parses the text to the very same tree: rule names, children,
absent optional parts, tokens with their types, and the line and column of
every rule and token. A text lark refuses must never be taken by the fast
reader, or its FILE:LINE:COL error would be lost. Texts: every Verilog file
in the repository, random programs of the grammar (hypothesis), and the same
programs damaged by deleting, duplicating or swapping one token.
"""

from __future__ import annotations

from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings, strategies as st
from lark import Token, Tree
from lark.exceptions import LarkError

from checker.lang.verilog import _parser
from checker.lang.verilog_fast import parse_fast

ROOT = Path(__file__).resolve().parent.parent


def difference(a, b, path: str = "start") -> str | None:
    """Where tree ``a`` (lark's) and ``b`` (the fast reader's) differ, or None."""
    if isinstance(a, Tree) != isinstance(b, Tree):
        return f"{path}: {a!r} against {b!r}"
    if isinstance(a, Tree):
        if a.data != b.data or len(a.children) != len(b.children):
            return f"{path}: {a.data} with {len(a.children)} children against {b.data} with {len(b.children)}"
        if not a.meta.empty and (a.meta.line, a.meta.column) != (b.meta.line, b.meta.column):
            return f"{path}: starts at {a.meta.line}:{a.meta.column} against {b.meta.line}:{b.meta.column}"
        for k, (x, y) in enumerate(zip(a.children, b.children)):
            d = difference(x, y, f"{path}/{a.data}[{k}]")
            if d:
                return d
        return None
    if a is None or b is None:
        return None if a is b else f"{path}: {a!r} against {b!r}"
    assert isinstance(a, Token) and isinstance(b, Token)
    if (str(a), a.type, a.line, a.column) != (str(b), b.type, b.line, b.column):
        return f"{path}: token {a!r} at {a.line}:{a.column} against {b!r} at {b.line}:{b.column}"
    return None


def agree(text: str) -> bool:
    """Assert the contract above; returns whether the fast reader took the text."""
    fast = parse_fast(text)
    try:
        ref = _parser().parse(text)
    except LarkError:
        assert fast is None, f"the fast reader took a text lark refuses:\n{text}"
        return False
    if fast is not None:
        d = difference(ref, fast)
        assert d is None, f"{d}\n{text}"
    return fast is not None


VERILOG_FILES = sorted(p for p in ROOT.rglob("*.v") if ".git" not in p.parts)

HAND = """\
// every construct of the grammar at least once
`timescale 1ns/1ps
module m (input a, output [1:0] y, input wire [3:0] b, output reg r);
  /* a block
     comment */
  wire w = a & ~b[2], v;
  reg [2:0] q, s = 3'b101;
  assign y = {a, w}, z = (a) & b | (c ^ d) ~^ e ^~ f;
  and (x, a, b), g2(z, a);
  nand n1 (x, a); nor (x, a, b); xor (x, a, b); xnor (x, a, b); buf (x, a); not (x, a); or (x, a, b);
  sub u1 (), u2 (.p(a), .q()), u3(a, (b));
  always @(posedge clk or negedge r) if (!r) q <= 1'b0; else begin q <= (a); end
  always @(posedge clk) ;
  always @(negedge q[0], posedge \\esc.name ) q[1] = ~q[1];
  assign a = 1 ? b : c ? d : e, k = {2{b, c}} + -a - 3 'h f;
  assign {a, b[1], c[2:0]} = a <= b == c != (d >= e) < f > g && h || i;
  always @(a, b) begin end
  assign x = !~&|^~^a + +b - ~|c & ~&d, t = 8'd2_5 + 16'hF_f;
endmodule
module n; endmodule
module k(); endmodule
module p(a, b); input a; output reg [2:0] b, c; endmodule
"""


@pytest.mark.parametrize("path", VERILOG_FILES, ids=lambda p: p.name)
def test_every_verilog_file_reads_the_same(path):
    agree(path.read_text())


def test_every_construct_reads_the_same():
    assert agree(HAND)


@pytest.mark.parametrize("text", [
    "module m; wire or; endmodule",             # a keyword as a name: lark decides
    "module m; assign a = b ~& c; endmodule",   # no binary nand: lark's error
    "module m; assign a = (b; endmodule",
    "module m; always @(posedge c) q <= ; endmodule",
    "module m; assign a = b !== c; endmodule",
    "module m; assign a = 4'b10 2; endmodule",
    "module m; endmodule junk",
    "module m; assign a = b # c; endmodule",
    "module m; assign a = {b{c}; endmodule",
    "module m(); input a endmodule",
])
def test_broken_or_unusual_texts_go_to_lark(text):
    agree(text)


# --- random programs of the grammar -------------------------------------------------------
NAMES = st.sampled_from(["a", "b", "q", "n_1", "x$y", "\\odd.name "])


def exprs():
    leaf = st.one_of(NAMES, st.sampled_from(["0", "12", "1'b0", "4'hA", "3 'd 5", "8'b1010_0101"]),
                     st.builds(lambda n, i: f"{n}[{i}]", NAMES, st.integers(0, 9)),
                     st.builds(lambda n, i, j: f"{n}[{i}:{j}]", NAMES, st.integers(0, 9), st.integers(0, 9)))

    def grow(inner):
        binop = st.sampled_from(["||", "&&", "|", "^", "~^", "^~", "&", "==", "!=", "<", "<=", ">", ">=", "+", "-"])
        unop = st.sampled_from(["!", "~", "&", "~&", "|", "~|", "^", "~^", "-", "+"])
        return st.one_of(
            st.builds(lambda x, o, y: f"{x} {o} {y}", inner, binop, inner),
            st.builds(lambda o, x: f"{o}{x}" if o[-1] not in "&|^" else f"{o} {x}", unop, inner),
            st.builds(lambda x: f"({x})", inner),
            st.builds(lambda c, x, y: f"{c} ? {x} : {y}", inner, inner, inner),
            st.builds(lambda xs: "{" + ", ".join(xs) + "}", st.lists(inner, min_size=1, max_size=3)),
            st.builds(lambda n, xs: f"{{{n}{{" + ", ".join(xs) + "}}", inner, st.lists(inner, min_size=1, max_size=2)))
    return st.recursive(leaf, grow, max_leaves=8)


LVALUE = st.one_of(NAMES, st.builds(lambda n, i: f"{n}[{i}]", NAMES, st.integers(0, 5)),
                   st.builds(lambda a, b: "{" + a + ", " + b + "}", NAMES, NAMES))


def stmts():
    base = st.one_of(st.builds(lambda l, e: f"{l} <= {e};", LVALUE, exprs()),
                     st.builds(lambda l, e: f"{l} = {e};", LVALUE, exprs()), st.just(";"))

    def grow(inner):
        return st.one_of(
            st.builds(lambda ss: "begin " + " ".join(ss) + " end", st.lists(inner, max_size=3)),
            st.builds(lambda c, a: f"if ({c}) {a}", exprs(), inner),
            st.builds(lambda c, a, b: f"if ({c}) {a} else {b}", exprs(), inner, inner))
    return st.recursive(base, grow, max_leaves=4)


ITEMS = st.one_of(
    st.builds(lambda d, k, n: f"{d} {k}{n};", st.sampled_from(["input", "output"]),
              st.sampled_from(["", "wire ", "reg ", "[3:0] ", "reg [1:0] "]), NAMES),
    st.builds(lambda k, n, e: f"{k} {n} = {e};", st.sampled_from(["wire", "reg", "wire [2:0]"]), NAMES, exprs()),
    st.builds(lambda l, e: f"assign {l} = {e};", LVALUE, exprs()),
    st.builds(lambda g, xs: f"{g} ({', '.join(xs)});", st.sampled_from(["and", "or", "not", "xnor"]),
              st.lists(exprs(), min_size=1, max_size=3)),
    st.builds(lambda n, c: f"sub {n} ({c});", NAMES, st.sampled_from(["", ".p(a)", ".p(a), .q()", "a, b[1]"])),
    st.builds(lambda ev, s: f"always @({ev}) {s}",
              st.sampled_from(["posedge clk", "negedge clk or posedge r", "a, b", "posedge q[0]"]), stmts()),
)

PROGRAMS = st.builds(lambda ports, items: "module top" + ports + ";\n" + "\n".join(items) + "\nendmodule\n",
                     st.sampled_from(["", "()", "(a, b)", "(input a, output reg [1:0] y)"]),
                     st.lists(ITEMS, max_size=6))

SETTINGS = settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])


@SETTINGS
@given(text=PROGRAMS)
def test_random_programs_read_the_same(text):
    agree(text)


@SETTINGS
@given(text=PROGRAMS, data=st.data())
def test_damaged_programs_are_never_taken_where_lark_refuses(text, data):
    words = text.replace("(", " ( ").replace(")", " ) ").replace(";", " ; ").split(" ")
    k = data.draw(st.integers(0, len(words) - 1))
    how = data.draw(st.sampled_from(["delete", "repeat", "swap"]))
    if how == "delete":
        words = words[:k] + words[k + 1:]
    elif how == "repeat":
        words = words[:k + 1] + words[k:]
    elif k + 1 < len(words):
        words[k], words[k + 1] = words[k + 1], words[k]
    agree(" ".join(words))


@pytest.mark.parametrize("text", [
    "module top();\nwire a = & ( 'd 5);\nendmodule\n",  # found by the damaged-program test above
    "module top();\nwire [3:0] a = \t 'hF;\nendmodule\n",
    "module top();\nwire [3:0] a =\n  'hF;\nendmodule\n",
    "module top();\nwire [3:0] a = 4 'hF;\nendmodule\n",
])
def test_an_unsized_literal_after_spaces_starts_where_lark_starts_it(text):
    # lark's BASED terminal (priority 2) may begin with spaces or tabs, so after them an unsized
    # literal is one token starting at the first space; after a newline white space comes first
    assert agree(text)

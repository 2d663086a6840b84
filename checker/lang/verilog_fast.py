"""A fast reader for well-formed files of grammar/verilog.lark: the same tree, without lark.

Gate-level netlists are long and plain, and lark's LALR parser spends most of
their reading time building one tree node per reduction through the twelve
levels of expression precedence. :func:`parse_fast` is a hand-written
recursive-descent parser (precedence climbing for the binary operators) of
exactly that grammar, building the same ``lark.Tree`` values (rule names,
children, ``None`` for an absent optional part, tokens, and ``meta.line`` /
``meta.column`` of each rule's first token), so that the reader after it
cannot tell the two apart.

It never reports an error: on anything it does not expect (a syntax error, a
keyword used as a name, a character outside the grammar) it returns None and
the caller parses the text with lark, whose error, with its FILE:LINE:COL, is
the one the user sees. It is stricter than lark, never looser: every input it
accepts, lark accepts with the same tree (tests/test_verilog_fast.py compares
them on every Verilog file of the tests and on random and damaged ones).
"""

from __future__ import annotations

import re
from typing import Optional

from lark import Token, Tree
from lark.tree import Meta

KEYWORDS = frozenset("module endmodule input output wire reg assign always posedge negedge or begin end if else "
                     "and nand nor xor xnor buf not".split())
GATES = ("and", "nand", "or", "nor", "xor", "xnor", "buf", "not")

# BASED comes before white space: lark's lexer prefers it (priority 2) where both match, so an
# unsized literal after spaces or tabs (`= 'd5`) is one token starting at the first space.
_TOKEN = re.compile(r"""
  (?P<BASED>(?:[0-9][0-9_]*)?[ \t]*'[bBoOdDhH][ \t]*[0-9a-fA-FxXzZ?_]+)
| (?P<ws>[ \t\f\r\n]+)
| (?P<comment>//[^\n]*|/\*(?:.|\n)*?\*/)
| (?P<directive>`timescale[^\n]*)
| (?P<NUMBER>[0-9][0-9_]*)
| (?P<IDENT>[A-Za-z_][A-Za-z0-9_$]*)
| (?P<ESCAPED>\\[^\s]+)
| (?P<op>~\^|\^~|~&|~\||&&|\|\||==|!=|<=|>=|[()\[\]{};,:.@?=<>!~&|^+\-])
""", re.X)


class _Stop(Exception):
    """Not a file this reader takes: lark reads it."""


def _tokens(text: str) -> list[tuple[str, str, int, int]]:
    """(kind, text, line, column): kind is BASED, NUMBER, IDENT, ESCAPED, KW (a keyword) or OP."""
    out = []
    pos, line, line_start, n = 0, 1, 0, len(text)
    match = _TOKEN.match
    while pos < n:
        m = match(text, pos)
        if m is None:
            raise _Stop
        kind = m.lastgroup
        s = m.group()
        if kind not in ("ws", "comment", "directive"):
            if kind == "op":
                kind = "OP"
            elif kind == "IDENT" and s in KEYWORDS:
                kind = "KW"
            out.append((kind, s, line, pos - line_start + 1))
        nl = s.count("\n")
        if nl:
            line += nl
            line_start = pos + s.rindex("\n") + 1
        pos = m.end()
    out.append(("END", "", line, pos - line_start + 1))
    return out


def _tree(data: str, children: list, line: int, col: int) -> Tree:
    meta = Meta()
    meta.line, meta.column = line, col
    meta.empty = False
    return Tree(data, children, meta)


# binary operators, loosest first: (level, {operator text: rule})
_LEVELS = [
    {"||": "log_or"},
    {"&&": "log_and"},
    {"|": "bit_or"},
    {"^": "bit_xor", "~^": "bit_xnor", "^~": "bit_xnor"},
    {"&": "bit_and"},
    {"==": "eq", "!=": "ne"},
    {"<": "lt", "<=": "le", ">": "gt", ">=": "ge"},
    {"+": "plus", "-": "minus"},
]
_BINARY = {text: (level, rule) for level, ops in enumerate(_LEVELS) for text, rule in ops.items()}
_UNARY = {"!": "log_not", "~": "bit_not", "&": "red_and", "~&": "red_nand", "|": "red_or", "~|": "red_nor",
          "^": "red_xor", "~^": "red_xnor", "^~": "red_xnor", "-": "negate", "+": "unary_plus"}


class _Parser:
    def __init__(self, toks: list[tuple[str, str, int, int]]) -> None:
        self.t = toks
        self.i = 0
        self.paren: dict[int, tuple[int, int]] = {}  # a parenthesised expression's tree -> where its "(" is

    def begin(self, t: Tree) -> tuple[int, int]:
        """Where ``t`` starts as written (lark counts an enclosing "(" as part of it)."""
        return self.paren.get(id(t)) or (t.meta.line, t.meta.column)

    # --- tokens ---------------------------------------------------------------
    def peek(self, k: int = 0) -> tuple[str, str, int, int]:
        return self.t[self.i + k]

    def at(self, s: str) -> bool:
        kind, text, _, _ = self.t[self.i]
        return text == s and kind in ("OP", "KW")

    def take(self, s: str) -> tuple[str, str, int, int]:
        tok = self.t[self.i]
        if tok[1] != s or tok[0] not in ("OP", "KW"):
            raise _Stop
        self.i += 1
        return tok

    def keyword_tree(self, rule: str) -> Tree:
        kind, text, line, col = self.t[self.i]
        self.i += 1
        return _tree(rule, [Token(text.upper(), text, line=line, column=col)], line, col)

    def name(self) -> Tree:
        kind, text, line, col = self.t[self.i]
        if kind not in ("IDENT", "ESCAPED"):
            raise _Stop
        self.i += 1
        return _tree("name", [Token(kind, text, line=line, column=col)], line, col)

    # --- structure ------------------------------------------------------------
    def file(self) -> Tree:
        mods = []
        while self.at("module"):
            mods.append(self.module())
        if self.peek()[0] != "END":
            raise _Stop
        return _tree("start", mods, mods[0].meta.line, mods[0].meta.column) if mods else Tree("start", [])

    def module(self) -> Tree:
        _, _, line, col = self.take("module")
        ch: list = [self.name()]
        ch.append(self.ports() if self.at("(") else None)
        self.take(";")
        while not self.at("endmodule"):
            ch.append(self.item())
        self.take("endmodule")
        return _tree("module", ch, line, col)

    def ports(self) -> Tree:
        _, _, line, col = self.take("(")
        ch: list = []
        if self.at(")"):
            ch.append(None)
        else:
            ch.append(self.port())
            while self.at(","):
                self.i += 1
                ch.append(self.port())
        self.take(")")
        return _tree("ports", ch, line, col)

    def port(self) -> Tree:
        if self.at("input") or self.at("output"):
            _, _, line, col = self.peek()
            ch = [self.keyword_tree("dir")]
            ch.append(self.keyword_tree("kind") if self.at("wire") or self.at("reg") else None)
            ch.append(self.range() if self.at("[") else None)
            ch.append(self.name())
            return _tree("ansi_port", ch, line, col)
        n = self.name()
        return _tree("plain_port", [n], n.meta.line, n.meta.column)

    def range(self) -> Tree:
        _, _, line, col = self.take("[")
        a = self.expr()
        self.take(":")
        b = self.expr()
        self.take("]")
        return _tree("range", [a, b], line, col)

    def item(self) -> Tree:
        kind, text, line, col = self.peek()
        if kind == "KW":
            if text in ("input", "output"):
                ch = [self.keyword_tree("dir")]
                ch.append(self.keyword_tree("kind") if self.at("wire") or self.at("reg") else None)
                ch.append(self.range() if self.at("[") else None)
                ch.append(self.name())
                while self.at(","):
                    self.i += 1
                    ch.append(self.name())
                self.take(";")
                return _tree("port_decl", ch, line, col)
            if text in ("wire", "reg"):
                ch = [self.keyword_tree("kind"), self.range() if self.at("[") else None, self.net_one()]
                while self.at(","):
                    self.i += 1
                    ch.append(self.net_one())
                self.take(";")
                return _tree("net_decl", ch, line, col)
            if text == "assign":
                self.i += 1
                ch = [self.assignment()]
                while self.at(","):
                    self.i += 1
                    ch.append(self.assignment())
                self.take(";")
                return _tree("assign", ch, line, col)
            if text in GATES:
                ch = [self.keyword_tree("gate_name"), self.gate_one()]
                while self.at(","):
                    self.i += 1
                    ch.append(self.gate_one())
                self.take(";")
                return _tree("gate_inst", ch, line, col)
            if text == "always":
                self.i += 1
                self.take("@")
                self.take("(")
                ch = [self.event()]
                while self.at("or") or self.at(","):
                    self.i += 1
                    ch.append(self.event())
                self.take(")")
                ch.append(self.stmt())
                return _tree("always", ch, line, col)
            raise _Stop
        ch = [self.name(), self.mod_one()]
        while self.at(","):
            self.i += 1
            ch.append(self.mod_one())
        self.take(";")
        return _tree("mod_inst", ch, line, col)

    def net_one(self) -> Tree:
        n = self.name()
        e = None
        if self.at("="):
            self.i += 1
            e = self.expr()
        return _tree("net_one", [n, e], n.meta.line, n.meta.column)

    def assignment(self) -> Tree:
        lv = self.lvalue()
        self.take("=")
        return _tree("assignment", [lv, self.expr()], lv.meta.line, lv.meta.column)

    def gate_one(self) -> Tree:
        _, _, line, col = self.peek()
        ch: list = [self.name() if not self.at("(") else None]
        self.take("(")
        ch.append(self.expr())
        while self.at(","):
            self.i += 1
            ch.append(self.expr())
        self.take(")")
        return _tree("gate_one", ch, line, col)

    def mod_one(self) -> Tree:
        n = self.name()
        self.take("(")
        ch: list = [n]
        if self.at(")"):
            ch.append(None)
        else:
            ch.append(self.conn())
            while self.at(","):
                self.i += 1
                ch.append(self.conn())
        self.take(")")
        return _tree("mod_one", ch, n.meta.line, n.meta.column)

    def conn(self) -> Tree:
        if self.at("."):
            _, _, line, col = self.take(".")
            n = self.name()
            self.take("(")
            e = None if self.at(")") else self.expr()
            self.take(")")
            return _tree("named_conn", [n, e], line, col)
        e = self.expr()
        return _tree("ordered_conn", [e], *self.begin(e))

    def event(self) -> Tree:
        if self.at("posedge") or self.at("negedge"):
            _, _, line, col = self.peek()
            edge = self.keyword_tree("edge")
            return _tree("edge_event", [edge, self.expr()], line, col)
        e = self.expr()
        return _tree("level_event", [e], *self.begin(e))

    def stmt(self) -> Tree:
        kind, text, line, col = self.peek()
        if kind in ("OP", "KW"):
            if text == "begin":
                self.i += 1
                ch = []
                while not self.at("end"):
                    ch.append(self.stmt())
                self.i += 1
                return _tree("block", ch, line, col)
            if text == "if":
                self.i += 1
                self.take("(")
                c = self.expr()
                self.take(")")
                then = self.stmt()
                other = None
                if self.at("else"):
                    self.i += 1
                    other = self.stmt()
                return _tree("if_stmt", [c, then, other], line, col)
            if text == ";":
                self.i += 1
                return _tree("empty", [], line, col)
        lv = self.lvalue()
        if self.at("<="):
            rule = "nonblocking"
        elif self.at("="):
            rule = "blocking"
        else:
            raise _Stop
        self.i += 1
        e = self.expr()
        self.take(";")
        return _tree(rule, [lv, e], line, col)

    def lvalue(self) -> Tree:
        _, _, line, col = self.peek()
        if self.at("{"):
            self.i += 1
            ch = [self.lvalue()]
            while self.at(","):
                self.i += 1
                ch.append(self.lvalue())
            self.take("}")
            return _tree("lv_cat", ch, line, col)
        return self.selected(("lv_name", "lv_part", "lv_bit"), line, col)

    def selected(self, rules: tuple[str, str, str], line: int, col: int) -> Tree:
        """A name, a part select ``n[a:b]`` or a bit select ``n[a]``, as the rules named in that order."""
        n = self.name()
        if not self.at("["):
            return _tree(rules[0], [n], line, col)
        self.i += 1
        a = self.expr()
        if self.at(":"):
            self.i += 1
            b = self.expr()
            self.take("]")
            return _tree(rules[1], [n, a, b], line, col)
        self.take("]")
        return _tree(rules[2], [n, a], line, col)

    # --- expressions ----------------------------------------------------------
    def expr(self) -> Tree:
        c = self.binary(0)
        if self.at("?"):
            self.i += 1
            a = self.expr()
            self.take(":")
            b = self.ternary()
            return _tree("cond", [c, a, b], *self.begin(c))
        return c

    def ternary(self) -> Tree:
        return self.expr()  # ?ternary: lor | lor "?" expr ":" ternary -- the same shape as expr

    def binary(self, lowest: int) -> Tree:
        """Precedence climbing (every binary operator of the grammar is left-associative)."""
        left = self.unary()
        toks = self.t
        while True:
            kind, text, _, _ = toks[self.i]
            op = _BINARY.get(text) if kind == "OP" else None
            if op is None or op[0] < lowest:
                return left
            self.i += 1
            right = self.binary(op[0] + 1)
            left = _tree(op[1], [left, right], *self.begin(left))

    def unary(self) -> Tree:
        kind, text, line, col = self.t[self.i]
        if kind == "OP" and text in _UNARY:
            self.i += 1
            return _tree(_UNARY[text], [self.unary()], line, col)
        return self.primary()

    def primary(self) -> Tree:
        kind, text, line, col = self.t[self.i]
        if kind in ("NUMBER", "BASED"):
            self.i += 1
            return _tree(kind.lower(), [Token(kind, text, line=line, column=col)], line, col)
        if kind in ("IDENT", "ESCAPED"):
            return self.selected(("ident", "part_sel", "bit_sel"), line, col)
        if kind == "OP" and text == "(":
            self.i += 1
            e = self.expr()
            self.take(")")
            self.paren[id(e)] = (line, col)
            return e
        if kind == "OP" and text == "{":
            self.i += 1
            first = self.expr()
            if self.at("{"):
                self.i += 1
                ch = [first, self.expr()]
                while self.at(","):
                    self.i += 1
                    ch.append(self.expr())
                self.take("}")
                self.take("}")
                return _tree("repl", ch, line, col)
            ch = [first]
            while self.at(","):
                self.i += 1
                ch.append(self.expr())
            self.take("}")
            return _tree("concat", ch, line, col)
        raise _Stop


def parse_fast(text: str) -> Optional[Tree]:
    """The lark tree of ``text`` under grammar/verilog.lark, or None when this reader does not take
    it (then lark must parse it, and report any error)."""
    try:
        return _Parser(_tokens(text)).file()
    except (_Stop, IndexError, RecursionError):
        return None

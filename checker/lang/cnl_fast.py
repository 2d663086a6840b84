"""A fast reader for well-formed ``.cnl`` files: the same :class:`~checker.lang.syntax.File`, without lark.

Generated netlists are long and plain (a 256-bit tally spells 33,000 AND
terms), and lark's LALR parser with its post-lexer and tree, then the walk that
turns the tree into dataclasses, spend about two seconds on such a file.
:func:`read_fast` is a hand-written tokenizer and recursive-descent parser of
the whole of ``grammar/cnl.lark`` that builds the dataclasses directly, with
the very positions the lark route gives them.

It never reports an error. On anything it is not sure of -- a syntax error, a
reserved word where a name goes, a number too wide or an index too large, a
clause given twice, a design over its bit limit, a line that might nest too
deep -- it returns None and :func:`checker.lang.parse.parse_text` reads the
text with lark, whose FILE:LINE:COL message is the one the user sees. So it is
stricter than the lark route, never looser: every text it takes, the lark route
takes to an equal ``File`` (tests/test_cnl_fast.py compares them on every
``.cnl`` text of the repository and on random and damaged programs).

What it copies from the lark route, rule by rule:

* tokens: lark's terminals (``NAME``, ``INT``, ``STRING``, ``_NL`` with the
  comment and blank lines it swallows); a number run into a letter or digit
  (``0b12``, ``3x``) is left to lark, whose lexer splits it.
* keywords: lark's contextual lexer reads a reserved word as its keyword where
  the grammar takes that keyword and as a NAME elsewhere; here a reserved word
  is taken only where its keyword goes, and anywhere else sends the text to lark.
* line breaks: ``_Continuation`` drops a break inside an open bracket or after
  a comma, and refuses a comma-joined line that starts with a reserved word.
* the design bit limit: ``_DeclCounter``'s count of the bits each design
  declares (every declaration of an ``in``, ``out``, ``node`` or ``flop``).
* the nesting limit: ``_check_nesting`` can only fire on a line holding more
  than MAX_NESTING of ``( { ! ~``; a quick search finds such lines, and the
  exact check runs only then.
* positions: every node starts at its first token, except that a binary
  operation or comparison starts where its first operand's outermost
  parenthesis does (lark's ``propagate_positions`` counts an inlined
  ``( expr )`` as the operand's container).
"""

from __future__ import annotations

import gc
import re
from typing import Callable, Optional

from ..errors import InputError, Pos
from .syntax import (
    MAX_DESIGN_BITS, MAX_INDEX, MAX_LITERAL_BITS, MAX_NESTING, RESERVED, AlwaysStmt, Call, Cat, CheckBlock,
    Clock, Cmp, CodeStmt, Conn, CountStmt, Decl, DesignBlock, EqualStmt, Expr, File, FlopDecl, GlitchStmt,
    InDecl, Index, NodeDecl, Not, Num, Op, OutDecl, PartDecl, Pin, RecoverStmt, Ref, RuleStmt, SettleStmt,
    UseStmt, int_value,
)

# Every piece of one line: whitespace, a comment, a name, a run of name characters that starts with
# a digit (a number, or a number run into a name, which lark would split: that goes to lark), a quoted
# path, punctuation, or any other single character (which goes to lark).
_PIECE = re.compile(r"""[ \t\f\r]+|\#[^\n]*|[A-Za-z_][A-Za-z0-9_]*|[0-9][A-Za-z0-9_]*|"[^"\n]*"|==|!=|\.\.|.""")
_BASED_INT = re.compile(r"0[bB][01]+|0[xX][0-9a-fA-F]+")
_SKIP = frozenset(" \t\f\r#")
_PUNCTUATION = frozenset("== != .. ( ) [ ] { } = : , . & | ^ ! ~".split())
_TAG = {**{p: p for p in _PUNCTUATION}, **{w: w for w in RESERVED}}
_NAME_START = frozenset("ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz_")
_DIGITS = frozenset("0123456789")

_DEEP_LINE = re.compile(r"^(?:[^\n({!~]*[({!~]){%d}" % (MAX_NESTING + 1), re.M)
"""A line with more than MAX_NESTING of the characters the nesting check counts: only such a line can fail it."""

_NL, _END = "\n", ""  # the tags of a line break and of the end of the text
_OPEN, _CLOSE = frozenset("([{"), frozenset(")]}")
_NOTS = frozenset("!~")


class _Stop(Exception):
    """Not a text this reader takes: lark reads it."""


def _tokens(text: str) -> tuple[list[str], list[str], list[int], list[int]]:
    """(tags, texts, lines, columns) of the tokens the parser sees, after ``_Continuation``.

    A tag is the token itself for a keyword or punctuation, ``N`` for a name,
    ``I`` for a number, ``S`` for a quoted path, a line break for ``_NL`` and
    the empty string for the end of the text. Lark's ``_NL`` takes a line break
    with the blank and comment lines after it: one between two lines that hold
    tokens, one before the first such line if the text begins with a blank or
    comment line, and one after the last if a line break follows it.
    """
    tags: list[str] = []
    texts: list[str] = []
    cols: list[int] = []
    lines: list[int] = []
    add_tag, add_text, add_col = tags.append, texts.append, cols.append
    tag_of = _TAG.get
    pieces_of = _PIECE.findall
    depth = 0  # brackets open
    prev = ""  # the tag of the last token kept
    joined = False  # a line break after a comma was just dropped
    pending = False  # a line break is due before the next token
    physical = text.split("\n")
    last = len(physical)
    for ln, line in enumerate(physical, 1):
        col = 1
        for s in pieces_of(line):
            first = s[0]
            if first in _SKIP:
                col += len(s)
                continue
            if pending:
                pending = False
                if depth or prev == ",":
                    joined = not depth
                else:
                    add_tag(_NL)
                    add_text("\n")
                    add_col(0)
                    lines.append(ln)  # only its presence matters
                    prev = _NL
            tag = tag_of(s)
            if tag is None:
                if first in _NAME_START:
                    tag = "N"
                elif first in _DIGITS:
                    if not (s.isdigit() or _BASED_INT.fullmatch(s)):
                        raise _Stop  # a number run into a name: lark splits it
                    tag = "I"
                elif first == '"' and len(s) > 1:
                    tag = "S"
                else:
                    raise _Stop  # a character outside the grammar
            elif joined and first in _NAME_START:
                raise _Stop  # _Continuation's dangling comma: a joined line starts with a reserved word
            elif tag in _OPEN:
                depth += 1
            elif tag in _CLOSE and depth:
                depth -= 1
            joined = False
            add_tag(tag)
            add_text(s)
            add_col(col)
            col += len(s)
            prev = tag
        if len(lines) < len(tags):
            lines.extend([ln] * (len(tags) - len(lines)))
        if ln < last and (ln == 1 or tags):
            pending = True  # a line break follows a line with tokens (or the first line)
    if pending and not (depth or prev == ","):
        tags.append(_NL)
        texts.append("\n")
        cols.append(0)
        lines.append(last)
    tags.append(_END)
    texts.append("")
    lines.append(last)
    cols.append(len(physical[-1]) + 1)
    return tags, texts, lines, cols


class _Reader:
    """Recursive descent over the tokens, one method per rule of grammar/cnl.lark; ``_Stop`` on
    anything the lark route would read otherwise or refuse."""

    def __init__(self, path: str, text: str) -> None:
        self.path = path
        self.tags, self.texts, self.lines, self.cols = _tokens(text)
        self.i = 0
        self.paren: dict[int, Pos] = {}  # id of a parenthesised expression -> its outermost "("
        self.bits = 0  # bits the design being read has declared so far

    # --- tokens ---------------------------------------------------------------
    def pos(self, k: int) -> Pos:
        return Pos(self.path, self.lines[k], self.cols[k])

    def take(self, tag: str) -> int:
        """Step over a token of ``tag``; its index."""
        k = self.i
        if self.tags[k] != tag:
            raise _Stop
        self.i = k + 1
        return k

    def name(self) -> tuple[str, Pos]:
        k = self.take("N")
        return self.texts[k], self.pos(k)

    def number(self, k: int) -> int:
        """The value of number token ``k`` (``int_value``'s); a number too wide is lark's to report."""
        s = self.texts[k]
        if len(s) < 10 and s.isdigit():
            return int(s)  # the common case, and int_value's answer
        try:
            return int_value(s)
        except InputError:
            raise _Stop from None

    def small_int(self) -> int:
        """A bit index: a number up to MAX_INDEX (the lark route's ``small_int``)."""
        v = self.number(self.take("I"))
        if v > MAX_INDEX:
            raise _Stop
        return v

    def end_of_statement(self) -> None:
        if self.tags[self.i] != _NL:
            raise _Stop
        self.i += 1

    # --- file -----------------------------------------------------------------
    def file(self) -> File:
        f = File(self.path)
        tags = self.tags
        if tags[self.i] == _NL:
            self.i += 1
        while tags[self.i] != _END:
            t = tags[self.i]
            if t == "use":
                self.i += 1
                k = self.take("S")
                f.uses.append(UseStmt(self.texts[k][1:-1], self.pos(k)))
            elif t == "design":
                f.designs.append(self.design())
            elif t == "check":
                f.checks.append(self.check())
            else:
                raise _Stop
            if tags[self.i] == _NL:
                self.i += 1
            elif tags[self.i] != _END:
                raise _Stop
        return f

    # --- designs --------------------------------------------------------------
    def design(self) -> DesignBlock:
        at = self.pos(self.take("design"))
        name, _ = self.name()
        self.end_of_statement()
        stmts: list = []
        self.bits = 0
        tags = self.tags
        while True:
            t = tags[self.i]
            if t == "end":
                self.i += 1
                return DesignBlock(name, stmts, at)
            start = self.pos(self.i)
            self.i += 1
            if t == "in":
                decls = [self.decl()]
                while tags[self.i] == ",":
                    self.i += 1
                    decls.append(self.decl())
                stmts.append(InDecl(decls, start))
            elif t == "out" or t == "node":
                d = self.decl()
                self.take("=")
                stmts.append((OutDecl if t == "out" else NodeDecl)(d, self.expr(), start))
            elif t == "flop":
                stmts.append(self.flop(start))
            elif t == "part":
                stmts.append(self.part(start))
            else:
                raise _Stop  # a v1 pin statement, a reserved word, a syntax error: lark's to report
            self.end_of_statement()

    def decl(self) -> Decl:
        """``NAME`` or ``NAME[i]`` or ``NAME[msb:lsb]``, counted against the design's bit limit as
        ``_DeclCounter`` counts it (a width over the vector limit is left to the elaborator)."""
        name, at = self.name()
        if self.tags[self.i] != "[":
            d = Decl(name, None, None, at)
            width = 1
        else:
            self.i += 1
            ka = self.i
            msb = self.small_int()
            if self.tags[self.i] == ":":
                self.i += 1
                kb = self.i
                lsb = self.small_int()
                d = Decl(name, msb, lsb, at)
                width = 1
                if len(self.texts[ka]) <= 12 and len(self.texts[kb]) <= 12:
                    width = abs(msb - lsb) + 1
                    if width > MAX_LITERAL_BITS:
                        width = 0
            else:
                d = Decl(name, msb, msb, at, bit=True)
                width = 1
            self.take("]")
        self.bits += width
        if self.bits > MAX_DESIGN_BITS:
            raise _Stop
        return d

    def index(self) -> Optional[Index]:
        if self.tags[self.i] != "[":
            return None
        at = self.pos(self.i)
        self.i += 1
        first = self.small_int()
        last = None
        if self.tags[self.i] == ":":
            self.i += 1
            last = self.small_int()
        self.take("]")
        return Index(first, last, at)

    def flop(self, start: Pos) -> FlopDecl:
        tags, texts = self.tags, self.texts
        d = self.decl()
        self.take(":")
        kind, kind_pos = self.name()
        pins: Optional[list[Pin]] = None
        if tags[self.i] == "(":
            self.i += 1
            pins = []
            while tags[self.i] != ")":
                pin, at = self.name()
                self.take("=")
                pins.append(Pin(pin, self.expr(), at))
                if tags[self.i] != ",":
                    break
                self.i += 1
            self.take(")")
        f = FlopDecl(d, kind, kind_pos, pins, None, None, None, start)
        while True:
            t = tags[self.i]
            if t == "clock":
                at = self.pos(self.i)
                self.i += 1
                k = self.take("N")
                if f.clock is not None or texts[k] not in ("rise", "fall"):
                    raise _Stop
                f.clock = Clock(texts[k], self.expr(), at)
            elif t == "clear" or t == "preset":
                self.i += 1
                is_async = tags[self.i] == "async"
                if is_async:
                    self.i += 1
                e = self.expr()
                if t == "clear":
                    if f.clear is not None:
                        raise _Stop
                    f.clear, f.clear_async = e, is_async
                else:
                    if f.preset is not None:
                        raise _Stop
                    f.preset, f.preset_async = e, is_async
            else:
                return f

    def part(self, start: Pos) -> PartDecl:
        tags = self.tags
        name, _ = self.name()
        self.take(":")
        design, design_pos = self.name()
        self.take("(")
        conns = []
        while tags[self.i] != ")":
            port, at = self.name()
            ix = self.index()
            self.take("=")
            conns.append(Conn(port, ix, self.expr(), at))
            if tags[self.i] != ",":
                break
            self.i += 1
        self.take(")")
        return PartDecl(name, design, design_pos, conns, start)

    # --- checks ---------------------------------------------------------------
    def check(self) -> CheckBlock:
        at = self.pos(self.take("check"))
        name, _ = self.name()
        self.take("of")
        design, design_pos = self.name()
        self.end_of_statement()
        stmts: list = []
        tags = self.tags
        while True:
            t = tags[self.i]
            if t == "end":
                self.i += 1
                return CheckBlock(name, design, design_pos, stmts, at)
            parse = self.CLAIMS.get(t)
            if parse is None:
                raise _Stop
            start = self.pos(self.i)
            self.i += 1
            stmts.append(parse(self, start))
            self.end_of_statement()

    def c_code(self, start: Pos) -> CodeStmt:
        return CodeStmt(self.expr(), start)

    def c_count(self, start: Pos) -> CountStmt:
        items: list = []
        tags = self.tags
        while True:
            k = self.i
            t = tags[k]
            if t == "I":
                items.append((self.number(k), self.pos(k)))
            elif t == "N" or t == "..":
                items.append((self.texts[k], self.pos(k)))
            else:
                break
            self.i += 1
        if not items:
            raise _Stop
        return CountStmt(items, start)

    def c_rule(self, start: Pos) -> RuleStmt:
        kind = self.texts[self.i - 1]
        value = None
        if kind == "load":
            value = self.expr()
        self.take("when")
        return RuleStmt(kind, value, self.expr(), start)

    def c_recover(self, start: Pos) -> RecoverStmt:
        within = cond = None
        if self.tags[self.i] == "within":
            self.i += 1
            within = self.number(self.take("I"))
        if self.tags[self.i] == "when":
            self.i += 1
            cond = self.expr()
        return RecoverStmt(within, cond, start)

    def c_always(self, start: Pos) -> AlwaysStmt:
        return AlwaysStmt(self.expr(), start)

    def c_settle(self, start: Pos) -> SettleStmt:
        self.take("within")
        return SettleStmt(self.number(self.take("I")), start)

    def c_glitchfree(self, start: Pos) -> GlitchStmt:
        signals = [self.expr()]
        while self.tags[self.i] == ",":
            self.i += 1
            signals.append(self.expr())
        cond = None
        if self.tags[self.i] == "when":
            self.i += 1
            cond = self.expr()
        return GlitchStmt(signals, cond, start)

    def c_equal(self, start: Pos) -> EqualStmt:
        design, design_pos = self.name()
        t = self.tags[self.i]
        if t == "on":
            self.i += 1
            self.take("sequence")
            return EqualStmt(design, design_pos, "sequence", None, start)
        if t == "after":
            self.i += 1
            return EqualStmt(design, design_pos, "after", self.expr(), start)
        return EqualStmt(design, design_pos, None, None, start)

    CLAIMS: dict[str, Callable] = {
        "code": c_code, "count": c_count, "hold": c_rule, "load": c_rule, "back": c_rule, "step": c_rule,
        "recover": c_recover, "always": c_always, "settle": c_settle, "glitchfree": c_glitchfree,
        "equal": c_equal,
    }

    # --- expressions ----------------------------------------------------------
    def start_of(self, e: Expr) -> Pos:
        """Where lark's tree has an operation on ``e`` begin: at the outermost "(" around ``e``, if any."""
        return self.paren.get(id(e)) or e.pos

    def expr(self) -> Expr:
        """``cmp``: one or two ``|``-lists of ``^``-lists of ``&``-lists of operands, each list one
        n-ary :class:`Op` (lark's or_expr, xor_expr, and_expr). Built in a loop, not by descent
        through the levels, so that a parenthesis costs two Python frames (expr, primary)."""
        tags = self.tags
        sides: list[Expr] = []
        while True:
            ors: list[Expr] = []
            xors: list[Expr] = []
            ands = [self.primary() if tags[self.i] not in _NOTS else self.negation()]
            while True:
                t = tags[self.i]
                if t == "&":
                    self.i += 1
                    ands.append(self.primary() if tags[self.i] not in _NOTS else self.negation())
                    continue
                xors.append(ands[0] if len(ands) == 1 else Op("&", ands, self.start_of(ands[0])))
                if t != "^":
                    ors.append(xors[0] if len(xors) == 1 else Op("^", xors, self.start_of(xors[0])))
                    xors = []
                    if t != "|":
                        break
                self.i += 1
                ands = [self.primary() if tags[self.i] not in _NOTS else self.negation()]
            sides.append(ors[0] if len(ors) == 1 else Op("|", ors, self.start_of(ors[0])))
            t = tags[self.i]
            if len(sides) == 2 or (t != "==" and t != "!="):
                break
            op = t
            self.i += 1
        if len(sides) == 1:
            return sides[0]
        return Cmp(op, sides[0], sides[1], self.start_of(sides[0]))

    def negation(self) -> Expr:
        """``! ~ ... primary``: a Not for each sign, the outermost first."""
        signs = []
        tags = self.tags
        while tags[self.i] in _NOTS:
            signs.append(self.pos(self.i))
            self.i += 1
        e = self.primary()
        for at in reversed(signs):
            e = Not(e, at)
        return e

    def primary(self) -> Expr:
        k = self.i
        tags = self.tags
        t = tags[k]
        if t == "N":
            at = Pos(self.path, self.lines[k], self.cols[k])
            name = self.texts[k]
            nt = tags[k + 1]
            if nt == "[" and tags[k + 2] == "I" and tags[k + 3] == "]":  # NAME[i], the commonest of all
                self.i = k + 4
                v = self.number(k + 2)
                if v > MAX_INDEX:
                    raise _Stop
                return Ref([name], Index(v, None, Pos(self.path, self.lines[k + 1], self.cols[k + 1])), at)
            self.i = k + 1
            if nt == "(":
                self.i += 1
                args = []
                if tags[self.i] != ")":
                    args.append(self.expr())
                    while tags[self.i] == ",":
                        self.i += 1
                        args.append(self.expr())
                self.take(")")
                return Call(name, args, at)
            path = [name]
            while tags[self.i] == ".":
                self.i += 1
                path.append(self.texts[self.take("N")])
            return Ref(path, self.index(), at)
        if t == "I":
            self.i = k + 1
            return Num(self.number(k), self.texts[k], self.pos(k))
        if t == "(":
            self.i = k + 1
            e = self.expr()
            self.take(")")
            self.paren[id(e)] = self.pos(k)
            return e
        if t == "{":
            self.i = k + 1
            items = [self.expr()]
            while tags[self.i] == ",":
                self.i += 1
                items.append(self.expr())
            self.take("}")
            return Cat(items, self.pos(k))
        raise _Stop


def read_fast(path: str, text: str) -> Optional[File]:
    """The :class:`File` the lark route reads from ``text``, or None when this reader does not take
    the text (then the lark route must read it, and report any error)."""
    if _DEEP_LINE.search(text):
        return None  # the nesting check may have something to say: the lark route runs it
    # The reader allocates a hundred thousand small objects and no cycles: the collector's full
    # passes over them, triggered by allocation counts alone, would take a third of its time.
    collecting = gc.isenabled()
    gc.disable()
    try:
        return _Reader(path, text).file()
    except (_Stop, IndexError, RecursionError):
        return None
    finally:
        if collecting:
            gc.enable()


def read_expr_fast(where: str, text: str) -> Optional[Expr]:
    """The expression :func:`checker.lang.parse.parse_expr` reads from the one-line ``text`` (its
    nesting already checked), or None when this reader does not take it (then lark must)."""
    try:
        reader = _Reader(where, text)
        e = reader.expr()
        return e if reader.tags[reader.i] == _END else None
    except (_Stop, IndexError, RecursionError):
        return None

"""Text to syntax tree: the lark grammar in ``grammar/`` plus positions.

``parse_text`` turns one file's text into a :class:`File` of plain dataclasses
(:mod:`checker.lang.syntax`, re-exported here), each carrying the :class:`Pos`
of its first character. Every failure is an :class:`InputError` with the file,
line and column; no input raises anything else. A well-formed text is read by
the hand-written reader of :mod:`checker.lang.cnl_fast`; the lark route here
reads whatever that reader declines, and is the reference it is tested against.
"""

from __future__ import annotations

import functools
from pathlib import Path
from typing import TYPE_CHECKING, Optional, Union

from ..errors import InputError, Pos
from .syntax import (  # noqa: F401 - the tree's names, read by the rest of the program as parse.X
    RESERVED, MAX_FILE_BYTES, MAX_NESTING, MAX_INDEX, MAX_LITERAL_BITS, Index, Num, Ref,
    Call, Not, Op, Cat, Cmp, Expr, Decl, InDecl, OutDecl, NodeDecl, Pin, Clock, FlopDecl, Conn,
    PartDecl, DesignBlock, CodeStmt, CountStmt, RuleStmt, RecoverStmt, AlwaysStmt, SettleStmt,
    GlitchStmt, EqualStmt, CheckBlock, UseStmt, File, int_value, MAX_DESIGN_BITS,
)
from .cnl_fast import read_expr_fast, read_fast

if TYPE_CHECKING:  # lark itself is imported when a text first needs it: a well-formed file never does
    from lark import Lark, Token, Tree
    from lark.exceptions import UnexpectedInput


# --- the parser ----------------------------------------------------------
def grammar_path() -> Path:
    """The grammar file: ``grammar/cnl.lark`` beside the package, in a checkout or a wheel."""
    package = Path(__file__).resolve().parent.parent  # checker/
    for cand in (package.parent / "grammar" / "cnl.lark", package / "grammar" / "cnl.lark"):
        if cand.is_file():
            return cand
    raise FileNotFoundError("grammar/cnl.lark is missing from the installation")


_OPENERS = {"LPAR": ")", "LBRACE": "}", "LSQB": "]"}
_CLOSERS = {"RPAR", "RBRACE", "RSQB"}


class _Dangling(Exception):
    """A line ended with a comma, and the next line starts a new statement."""

    def __init__(self, comma: Token, word: Token) -> None:
        self.comma, self.word = comma, word


class _TooManyBits(Exception):
    """A design block declared more than MAX_DESIGN_BITS bits; raised while the file is still being read."""

    def __init__(self, design: Token, at: Token) -> None:
        self.design, self.at = design, at


class _DeclCounter:
    """Counts the bits a design block declares (``in``, ``out``, ``node``, ``flop``) as the
    tokens go by, so that a design over the limit is refused before the rest of the file is
    parsed. Widths beyond the vector limit are left to the elaborator's own message."""

    def __init__(self) -> None:
        self.design: Optional[Token] = None
        self.bits = 0
        self.mode: Optional[str] = None  # 'in': a list of declarations; 'one': a single one
        self.buf: list[Token] = []
        self.depth = 0  # open '[' in the declaration

    def feed(self, tok: Token) -> None:
        t = tok.type
        if t == "DESIGN":
            self.design, self.bits, self.mode = tok, 0, None
            return
        if self.design is None:
            return
        if t == "END":
            self.design, self.mode = None, None
            return
        if self.mode is None:
            if t in ("IN", "OUT", "NODE", "FLOP"):
                self.mode, self.buf, self.depth = ("in" if t == "IN" else "one"), [], 0
            return
        if t == "LSQB":
            self.depth += 1
        elif t == "RSQB":
            self.depth -= 1
        ends = t == "_NL" or (self.depth == 0 and (t in ("EQUAL", "COMMA") or (t == "COLON" and self.buf)))
        if not ends:
            if len(self.buf) < 6:
                self.buf.append(tok)
            return
        self._count()
        if t == "_NL" or self.mode == "one" or t != "COMMA":
            self.mode = None
        self.buf, self.depth = [], 0

    def _count(self) -> None:
        ints = [x for x in self.buf if x.type == "INT"]
        if not self.buf:
            return
        width = 1
        if len(ints) == 2 and max(len(str(i)) for i in ints) <= 12:
            width = abs(int_value(str(ints[0])) - int_value(str(ints[1]))) + 1
        if width > MAX_LITERAL_BITS:
            return  # the elaborator names the vector limit at the declaration
        self.bits += width
        if self.bits > MAX_DESIGN_BITS:
            assert self.design is not None
            raise _TooManyBits(self.design, self.buf[0])


class _Continuation:
    """Post-lexer: a line break inside an open ``( { [`` or after a trailing comma is not a break.

    It also remembers the brackets still open, so that a syntax error met while
    one is open can be reported at the bracket that was never closed.
    """

    always_accept = ("_NL",)

    def __init__(self) -> None:
        self.open: list[Token] = []

    def process(self, stream):
        self.open = []
        counter = _DeclCounter()
        prev = None
        joined = None  # the comma whose line break was dropped
        for tok in stream:
            t = tok.type
            if t == "_NL" and (self.open or (prev is not None and prev.type == "COMMA")):
                if not self.open:
                    joined = prev
                continue
            if joined is not None and str(tok) in RESERVED:
                raise _Dangling(joined, tok)
            joined = None
            if t in _OPENERS:
                self.open.append(tok)
            elif t in _CLOSERS and self.open:
                self.open.pop()
            counter.feed(tok)
            prev = tok
            yield tok


@functools.lru_cache(maxsize=1)
def _parser() -> Lark:
    from .tables import build_lark
    return build_lark(grammar_path().read_text(encoding="utf-8"), start=["start", "expr"],
                      propagate_positions=True, maybe_placeholders=True, postlex=_Continuation())


_READABLE = {"NAME": "a name", "INT": "a number", "STRING": "a quoted path",
             "_NL": "end of line", "$END": "end of file", "CMPOP": "'==' or '!='",
             "NOT": "'!'", "DOTDOT": "'..'"}


def _describe_terminal(name: str) -> str:
    if name in _READABLE:
        return _READABLE[name]
    try:
        term = _parser().get_terminal(name)
    except KeyError:
        return name.lower()
    if term.pattern.type == "str":
        return f"'{term.pattern.value}'"
    return name.lower()


def _expected_text(expected) -> str:
    names = sorted({_describe_terminal(t) for t in expected if t != "COMMENT"})
    if not names:
        return ""
    return "; expected " + (names[0] if len(names) == 1 else "one of " + ", ".join(names))


def _line_col_at(text: str, offset: int) -> tuple[int, int]:
    line = text.count("\n", 0, offset) + 1
    col = offset - (text.rfind("\n", 0, offset) + 1) + 1
    return line, col


def _check_nesting(path: str, text: str) -> None:
    """Reject expressions nesting deeper than MAX_NESTING before lark sees them."""
    depth = 0
    nots = 0
    i, n = 0, len(text)
    while i < n:
        c = text[i]
        if c == "#":
            j = text.find("\n", i)
            i = n if j < 0 else j
            continue
        if c == '"':
            j = text.find('"', i + 1)
            i = n if j < 0 else j + 1
            continue
        if c == "\n":
            depth = nots = 0
        elif c in "({":
            depth += 1
        elif c in ")}":
            depth = max(0, depth - 1)
        elif c in "!~" and text[i + 1:i + 2] != "=":
            nots += 1
        elif not c.isspace():
            nots = 0
        if depth + nots > MAX_NESTING:
            line, col = _line_col_at(text, i)
            raise InputError(Pos(path, line, col),
                             f"expression nests deeper than {MAX_NESTING} levels (the limit)")
        i += 1


def decode_source(path: str, data: bytes) -> str:
    """UTF-8 text of a source file, or an InputError at the first bad byte."""
    if len(data) > MAX_FILE_BYTES:
        raise InputError(Pos(path, 1, 1), f"file is larger than {MAX_FILE_BYTES // (1024 * 1024)} MiB (the limit)")
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError as e:
        prefix = data[:e.start].decode("utf-8", errors="replace")
        line, col = _line_col_at(prefix, len(prefix))
        raise InputError(Pos(path, line, col), f"not UTF-8 text (byte 0x{data[e.start]:02x}); a .cnl file is UTF-8") from None
    if text.startswith("\ufeff"):
        text = text[1:]
    nul = text.find("\x00")
    if nul >= 0:
        line, col = _line_col_at(text, nul)
        raise InputError(Pos(path, line, col), "NUL character; a .cnl file is text")
    return text


def parse_text(path: str, text: str) -> File:
    """Parse one file's text into a :class:`File`; raises InputError on any syntax error.

    The hand-written reader of :mod:`checker.lang.cnl_fast` reads a well-formed
    text to the same ``File`` several times faster; whatever it does not take
    (every text with an error among them) goes the lark route, which gives the message.
    """
    fast = read_fast(path, text)
    if fast is not None:
        return fast
    return parse_text_lark(path, text)


def parse_text_lark(path: str, text: str) -> File:
    """:func:`parse_text` by lark alone: the reference the fast reader is held to, and the
    source of every error message."""
    _check_nesting(path, text)
    from lark.exceptions import UnexpectedInput
    try:
        tree = _parser().parse(text, start="start")
    except UnexpectedInput as e:
        raise _unclosed(path, e) or _syntax_error(path, text, e) from None
    except _TooManyBits as b:
        name = b.design
        raise InputError(Pos(path, b.at.line, b.at.column),
                         f"this declaration takes the design declared at line {name.line} past "
                         f"{MAX_DESIGN_BITS} bits of its own (the limit); the rest of the file was not read") from None
    except _Dangling as d:
        raise InputError(Pos(path, d.comma.line, d.comma.column),
                         f"the line ends with ',' so the statement goes on, but the next line starts "
                         f"with '{d.word}'; remove the trailing comma") from None
    return _Builder(path).file(tree)


def parse_expr(where: str, text: str) -> Expr:
    """Parse one expression (a command-line condition, say); ``where`` names it in errors."""
    _check_nesting(where, text)
    if "\n" in text:
        raise InputError(Pos(where, 1, text.index("\n") + 1), "an expression is one line")
    fast = read_expr_fast(where, text)
    if fast is not None:
        return fast
    return parse_expr_lark(where, text)


def parse_expr_lark(where: str, text: str) -> Expr:
    """:func:`parse_expr` by lark alone, after its nesting and line checks (the fast reader's reference)."""
    from lark.exceptions import UnexpectedInput
    try:
        tree = _parser().parse(text, start="expr")
    except UnexpectedInput as e:
        raise _syntax_error(where, text, e) from None
    return _Builder(where).expr(tree)


def _unclosed(path: str, e: UnexpectedInput) -> Optional[InputError]:
    """The error at a bracket left open, when the parser failed on a later line because of it."""
    from lark.exceptions import UnexpectedEOF
    still_open = _parser().options.postlex.open
    if not still_open:
        return None
    br = still_open[-1]
    line = getattr(e, "line", None)
    if isinstance(line, int) and line > 0 and line <= br.line and not isinstance(e, UnexpectedEOF) \
            and getattr(getattr(e, "token", None), "type", "") != "$END":
        return None
    return InputError(Pos(path, br.line, br.column),
                      f"'{br}' is never closed (a statement continues across lines until its brackets close)")


_BLOCK_STARTS = ("design", "check")


def _unended(path: str, text: str, line: Optional[int], at_eof: bool) -> Optional[InputError]:
    """The error for a block left without its ``end``: the parser failed on a line that starts
    a new block (or at the end of the file) while a ``design`` or ``check`` block was open."""
    lines = text.split("\n")
    stop = len(lines) if at_eof or not isinstance(line, int) else min(line, len(lines))
    open_block: Optional[tuple[int, str, str]] = None  # line, kind, name
    for k in range(stop):
        words = lines[k].split("#", 1)[0].split()
        if not words:
            continue
        first = words[0]
        last_line = k + 1 == stop and not at_eof
        if first in _BLOCK_STARTS + ("use",) and open_block is not None and last_line:
            break
        if first in _BLOCK_STARTS:
            open_block = (k + 1, first, words[1] if len(words) > 1 else "")
        elif first == "end":
            open_block = None
    else:
        if not at_eof:
            return None
    if open_block is None:
        return None
    n, kind, name = open_block
    named = f" {name}" if name and name.isidentifier() else ""
    if at_eof:
        at = Pos(path, *_line_col_at(text, len(text)))
        where = "the end of file comes first"
    else:
        at = Pos(path, stop, len(lines[stop - 1]) - len(lines[stop - 1].lstrip()) + 1)
        where = "this line starts a new block first"
    return InputError(at, f"missing 'end' of the {kind} block{named} that began at line {n} ({where}; "
                          f"every design and check block ends with a line 'end')")


_OPERATOR_HINTS = {"+": "write '|' for or", "*": "write '&' for and"}
"""Characters a designer may write for a logic operator (Boolean algebra's + and *), with the hint."""


def _syntax_error(path: str, text: str, e: UnexpectedInput) -> InputError:
    from lark.exceptions import UnexpectedCharacters, UnexpectedEOF, UnexpectedToken
    line = getattr(e, "line", None)
    col = getattr(e, "column", None)
    tok = getattr(e, "token", None)
    at_eof = isinstance(e, UnexpectedEOF) or getattr(tok, "type", "") == "$END"
    unended = _unended(path, text, line, at_eof)
    if unended is not None:
        return unended
    if isinstance(e, UnexpectedCharacters):
        ch = text[e.pos_in_stream] if e.pos_in_stream is not None and e.pos_in_stream < len(text) else "?"
        msg = f"unexpected character {ch!r}" + _expected_text(e.allowed or ())
        hint = _OPERATOR_HINTS.get(ch, "")
        if hint:
            msg += f" (expressions are logic, not arithmetic: {hint})"
    elif isinstance(e, UnexpectedToken):
        tok = e.token
        if tok.type == "$END":
            msg = "unexpected end of file" + _expected_text(e.expected)
            line, col = _line_col_at(text, len(text))
        elif tok.type == "_NL":
            msg = "unexpected end of line" + _expected_text(e.expected)
        else:
            msg = f"unexpected {str(tok)!r}" + _expected_text(e.expected)
            if tok.type in _parser().terminals and str(tok) in RESERVED:
                msg += f" ('{tok}' is a reserved word)"
    elif isinstance(e, UnexpectedEOF):
        line, col = _line_col_at(text, len(text))
        msg = "unexpected end of file" + _expected_text(e.expected)
    else:  # pragma: no cover - lark has no other kinds today
        msg = "syntax error"
    if not isinstance(line, int) or line < 1:
        line, col = _line_col_at(text, len(text))
    return InputError(Pos(path, line, col if isinstance(col, int) and col > 0 else 1), msg)


def _index_text(ix: Index) -> str:
    return f"[{ix.first}]" if ix.last is None else f"[{ix.first}:{ix.last}]"


class _Builder:
    """Lark tree to dataclasses, checking names and integer sizes on the way."""

    def __init__(self, path: str) -> None:
        self.path = path

    def pos(self, item) -> Pos:
        if isinstance(item, str):  # a Token (a str); else a Tree
            return Pos(self.path, item.line, item.column)
        return Pos(self.path, item.meta.line, item.meta.column)

    def name(self, tok: Token) -> str:
        s = str(tok)
        if s in RESERVED:
            raise InputError(self.pos(tok), f"'{s}' is a reserved word and cannot be a name")
        return s

    def small_int(self, tok: Token) -> int:
        v = int_value(str(tok), self.pos(tok))
        if v > MAX_INDEX:
            raise InputError(self.pos(tok), f"bit index {tok} is too large (limit {MAX_INDEX})")
        return v

    # file level
    def file(self, tree: Tree) -> File:
        f = File(self.path)
        for ch in tree.children:
            if ch is None:
                continue
            if ch.data == "use":
                tok = ch.children[0]
                f.uses.append(UseStmt(str(tok)[1:-1], self.pos(tok)))
            elif ch.data == "design":
                f.designs.append(self.design(ch))
            elif ch.data == "check":
                f.checks.append(self.check(ch))
        return f

    def design(self, t: Tree) -> DesignBlock:
        name_tok, *stmts = t.children
        out = []
        for s in stmts:
            out.append(getattr(self, "d_" + s.data)(s))
        return DesignBlock(self.name(name_tok), out, self.pos(t))

    def decl(self, t: Tree) -> Decl:
        name_tok, idx = t.children
        if idx is None:
            return Decl(self.name(name_tok), None, None, self.pos(t))
        a, b = idx.children
        msb = self.small_int(a)
        if b is None:
            return Decl(self.name(name_tok), msb, msb, self.pos(t), bit=True)
        return Decl(self.name(name_tok), msb, self.small_int(b), self.pos(t))

    def index(self, t: Optional[Tree]) -> Optional[Index]:
        if t is None:
            return None
        a, b = t.children
        return Index(self.small_int(a), None if b is None else self.small_int(b), self.pos(t))

    def d_in_decl(self, t: Tree) -> InDecl:
        return InDecl([self.decl(d) for d in t.children], self.pos(t))

    def d_out_decl(self, t: Tree) -> OutDecl:
        return OutDecl(self.decl(t.children[0]), self.expr(t.children[1]), self.pos(t))

    def d_node_decl(self, t: Tree) -> NodeDecl:
        return NodeDecl(self.decl(t.children[0]), self.expr(t.children[1]), self.pos(t))

    def d_flop_decl(self, t: Tree) -> FlopDecl:
        decl, kind, pins_t, *opts = t.children
        pins = None
        if pins_t is not None:
            pins = [Pin(str(p.children[0]), self.expr(p.children[1]), self.pos(p))
                    for p in pins_t.children if p is not None]
        f = FlopDecl(self.decl(decl), str(kind), self.pos(kind), pins, None, None, None, self.pos(t))
        for o in opts:
            key = o.children[0]
            if key.type == "CLOCK":
                if f.clock is not None:
                    raise InputError(self.pos(key), "clock given twice")
                edge = o.children[1]
                if str(edge) not in ("rise", "fall"):
                    raise InputError(self.pos(edge), f"a clock edge is rise or fall, not '{edge}'")
                f.clock = Clock(str(edge), self.expr(o.children[2]), self.pos(key))
                continue
            is_async = o.children[1] is not None
            e = self.expr(o.children[2])
            if key.type == "CLEAR":
                if f.clear is not None:
                    raise InputError(self.pos(key), "clear given twice")
                f.clear, f.clear_async = e, is_async
            else:
                if f.preset is not None:
                    raise InputError(self.pos(key), "preset given twice")
                f.preset, f.preset_async = e, is_async
        return f

    def d_pin_drive(self, t: Tree):
        flop, idx, pin, e = t.children
        name = str(flop) + ("" if idx is None else _index_text(self.index(idx)))
        raise InputError(self.pos(t), f"'{name}.{pin} = ...' is the old pin statement; pins are named in "
                                      f"the flop's declaration: flop {name} : KIND ({pin} = ...)")

    def d_part_decl(self, t: Tree) -> PartDecl:
        name, design, *conns = t.children
        cs = []
        for c in conns:
            if c is None:
                continue
            port, idx, e = c.children
            cs.append(Conn(self.name(port), self.index(idx), self.expr(e), self.pos(c)))
        return PartDecl(self.name(name), self.name(design), self.pos(design), cs, self.pos(t))

    def check(self, t: Tree) -> CheckBlock:
        name, design, *stmts = t.children
        out = [getattr(self, "c_" + s.data)(s) for s in stmts]
        return CheckBlock(self.name(name), self.name(design), self.pos(design), out, self.pos(t))

    def c_code_stmt(self, t: Tree) -> CodeStmt:
        return CodeStmt(self.expr(t.children[0]), self.pos(t))

    def c_count_stmt(self, t: Tree) -> CountStmt:
        items: list[tuple[Union[int, str], Pos]] = []
        for it in t.children:
            tok = it.children[0]
            if tok.type == "INT":
                items.append((int_value(str(tok), self.pos(tok)), self.pos(tok)))
            else:
                items.append((str(tok), self.pos(tok)))
        return CountStmt(items, self.pos(t))

    def c_rule(self, t: Tree) -> RuleStmt:
        kind = t.children[0]
        if kind.type == "LOAD":
            return RuleStmt("load", self.expr(t.children[1]), self.expr(t.children[2]), self.pos(t))
        return RuleStmt(str(kind), None, self.expr(t.children[1]), self.pos(t))

    def c_recover_stmt(self, t: Tree) -> RecoverStmt:
        within, when = t.children
        n = None if within is None else int_value(str(within.children[0]), self.pos(within.children[0]))
        cond = None if when is None else self.expr(when.children[0])
        return RecoverStmt(n, cond, self.pos(t))

    def c_always_stmt(self, t: Tree) -> AlwaysStmt:
        return AlwaysStmt(self.expr(t.children[0]), self.pos(t))

    def c_settle_stmt(self, t: Tree) -> SettleStmt:
        return SettleStmt(int_value(str(t.children[0]), self.pos(t.children[0])), self.pos(t))

    def c_glitch_stmt(self, t: Tree) -> GlitchStmt:
        *sigs, when = t.children
        cond = None if when is None else self.expr(when.children[0])
        return GlitchStmt([self.expr(x) for x in sigs], cond, self.pos(t))

    def c_equal_stmt(self, t: Tree) -> EqualStmt:
        name, mode = t.children
        if mode is None:
            return EqualStmt(self.name(name), self.pos(name), None, None, self.pos(t))
        if isinstance(mode.children[0], str) and mode.children[0].type == "ON":  # the Token ON
            return EqualStmt(self.name(name), self.pos(name), "sequence", None, self.pos(t))
        return EqualStmt(self.name(name), self.pos(name), "after", self.expr(mode.children[0]), self.pos(t))

    # expressions
    def expr(self, t) -> Expr:
        if isinstance(t, str):  # a Token: a bare NAME cannot reach here; kept for safety
            raise InputError(self.pos(t), f"unexpected {t!s}")
        d = t.data
        if d == "num":
            tok = t.children[0]
            return Num(int_value(str(tok), self.pos(tok)), str(tok), self.pos(tok))
        if d == "ref":
            *names, idx = t.children
            return Ref([self.name(n) for n in names], self.index(idx), self.pos(t))
        if d == "call":
            name, *args = t.children
            args = [a for a in args if a is not None]
            return Call(str(name), [self.expr(a) for a in args], self.pos(t))
        if d == "not_":
            return Not(self.expr(t.children[1]), self.pos(t))
        if d == "cat":
            return Cat([self.expr(a) for a in t.children], self.pos(t))
        if d == "cmp":
            a, op, b = t.children
            return Cmp(str(op), self.expr(a), self.expr(b), self.pos(t))
        op = {"and_expr": "&", "or_expr": "|", "xor_expr": "^"}[d]
        return Op(op, [self.expr(a) for a in t.children], self.pos(t))

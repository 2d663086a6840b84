"""The syntax tree of a ``.cnl`` file: plain dataclasses, each with the :class:`Pos` of its first character.

Both readers build these: the lark route of :mod:`checker.lang.parse` and the
hand-written one of :mod:`checker.lang.cnl_fast`; so do the netlist readers
(Verilog, BLIF, AIGER). The limits every reader checks live here too.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Optional, Union

from ..errors import InputError, Pos

RESERVED = frozenset(
    "use design end in out node flop part check of code count hold load back step "
    "recover within when always equal on sequence after clear preset clock async "
    "settle glitchfree".split()
)
MAX_FILE_BYTES = 32 * 1024 * 1024
MAX_NESTING = 200
MAX_INDEX = 10**9
MAX_LITERAL_BITS = 4096
"""Widest number a literal may write: the widest vector it could fill (``elab.bits.MAX_VECTOR``)."""
_MAX_DIGITS = {2: MAX_LITERAL_BITS, 16: MAX_LITERAL_BITS // 4, 10: len(str(1 << MAX_LITERAL_BITS))}


# --- expressions ---------------------------------------------------------
@dataclass
class Index:
    """``[first]`` or ``[first:last]``."""

    first: int
    last: Optional[int]
    pos: Pos


@dataclass
class Num:
    value: int
    text: str
    pos: Pos

    @property
    def binary_width(self) -> Optional[int]:
        """Digits of a ``0b`` literal (its width in a vector), else None."""
        return len(self.text) - 2 if self.text[:2].lower() == "0b" else None


@dataclass
class Ref:
    path: list[str]
    index: Optional[Index]
    pos: Pos

    @property
    def dotted(self) -> str:
        return ".".join(self.path)


@dataclass
class Call:
    name: str
    args: list["Expr"]
    pos: Pos


@dataclass
class Not:
    arg: "Expr"
    pos: Pos


@dataclass
class Op:
    op: str  # '&', '|', '^'
    args: list["Expr"]
    pos: Pos


@dataclass
class Cat:
    items: list["Expr"]
    pos: Pos


@dataclass
class Cmp:
    op: str  # '==' or '!='
    left: "Expr"
    right: "Expr"
    pos: Pos


Expr = Union[Num, Ref, Call, Not, Op, Cat, Cmp]


# --- design statements ---------------------------------------------------
@dataclass
class Decl:
    """``NAME``, ``NAME[msb:lsb]``, or ``NAME[i]`` (``bit``: one bit of a vector, msb = lsb = i)."""

    name: str
    msb: Optional[int]
    lsb: Optional[int]
    pos: Pos
    bit: bool = False


@dataclass
class InDecl:
    decls: list[Decl]
    pos: Pos


@dataclass
class OutDecl:
    decl: Decl
    expr: Expr
    pos: Pos


@dataclass
class NodeDecl:
    decl: Decl
    expr: Expr
    pos: Pos


@dataclass
class Pin:
    """``PIN = EXPR`` inside a flop's parenthesis."""

    name: str
    expr: Expr
    pos: Pos


@dataclass
class Clock:
    """``clock rise BIT`` / ``clock fall VEC``."""

    edge: str
    signal: Expr
    pos: Pos


@dataclass
class FlopDecl:
    """``flop DECL : KIND (PIN = EXPR, ...) [clock ...] [clear [async] E] [preset [async] E]``.

    ``pins`` is None when the parenthesis is missing (an error the elaborator
    reports with the kind's pins).
    """

    decl: Decl
    kind: str
    kind_pos: Pos
    pins: Optional[list[Pin]]
    clock: Optional[Clock]
    clear: Optional[Expr]
    preset: Optional[Expr]
    pos: Pos
    clear_async: bool = False
    preset_async: bool = False


@dataclass
class Conn:
    port: str
    index: Optional[Index]
    expr: Expr
    pos: Pos


@dataclass
class PartDecl:
    name: str
    design: str
    design_pos: Pos
    conns: list[Conn]
    pos: Pos


@dataclass
class DesignBlock:
    """``design NAME ... end``, or a design read from a netlist (``source`` names its format;
    ``inits`` holds the flop bits' initial values a netlist gave, None for a free one,
    kept for export and ignored by claims)."""

    name: str
    stmts: list
    pos: Pos
    source: str = "cnl"
    inits: dict = field(default_factory=dict)


# --- check statements ----------------------------------------------------
@dataclass
class CodeStmt:
    expr: Expr
    pos: Pos


@dataclass
class CountStmt:
    items: list[tuple[Union[int, str], Pos]]  # ints, names, and '..'
    pos: Pos


@dataclass
class RuleStmt:
    kind: str  # hold, load, back, step
    value: Optional[Expr]  # the CODE of a load
    cond: Expr
    pos: Pos


@dataclass
class RecoverStmt:
    within: Optional[int]
    cond: Optional[Expr]
    pos: Pos


@dataclass
class AlwaysStmt:
    prop: Expr
    pos: Pos


@dataclass
class SettleStmt:
    within: int
    pos: Pos


@dataclass
class GlitchStmt:
    signals: list[Expr]
    cond: Optional[Expr]
    pos: Pos


@dataclass
class EqualStmt:
    design: str
    design_pos: Pos
    mode: Optional[str]  # None, 'sequence', 'after'
    cond: Optional[Expr]
    pos: Pos


@dataclass
class CheckBlock:
    name: str
    design: str
    design_pos: Pos
    stmts: list
    pos: Pos


@dataclass
class UseStmt:
    path: str
    pos: Pos


@dataclass
class File:
    path: str
    uses: list[UseStmt] = field(default_factory=list)
    designs: list[DesignBlock] = field(default_factory=list)
    checks: list[CheckBlock] = field(default_factory=list)


# --- numbers -----------------------------------------------------------
def int_value(text: str, pos: Optional[Pos] = None) -> int:
    """Value of a number token: ``0b..``, ``0x..`` or decimal (leading zeros allowed).

    A number wider than :data:`MAX_LITERAL_BITS` is an InputError at ``pos``:
    its digits are counted before any conversion, so a literal of a million
    digits costs no more than reading it.
    """
    base = {"0b": 2, "0x": 16}.get(text[:2].lower(), 10)
    digits = (text[2:] if base != 10 else text).lstrip("0") or "0"
    if len(digits) > _MAX_DIGITS[base] or int(digits, base) >> MAX_LITERAL_BITS:
        shown = text if len(text) <= 24 else f"{text[:12]}...{text[-6:]} ({len(text)} characters)"
        raise InputError(pos or Pos("<number>", 1, 1),
                         f"number {shown} is wider than {MAX_LITERAL_BITS} bits, the widest vector a number can fill")
    return int(digits, base)


MAX_DESIGN_BITS = 100_000
"""Most bits one design block may declare itself (the flattened-design limit, ``elab.flatten.MAX_BITS``)."""

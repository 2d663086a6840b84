"""What the netlist readers (AIGER, BLIF, Verilog) share: syntax-tree building blocks.

Every reader produces the same :mod:`checker.lang.parse` dataclasses that the
``.cnl`` parser produces, so one elaborator serves every format. Names that a
netlist gives as ``NAME[i]`` (AIGER symbols, BLIF signals) are gathered into
vectors where their indices form one range, so that ``in d[3:0]`` of a ``.cnl``
design and ``d[3] d[2] d[1] d[0]`` of a netlist are the same bits.
"""

from __future__ import annotations

import re
from typing import Iterable, Optional

from ..errors import Pos
from . import parse as P

_BIT = re.compile(r"^(.+)\[(\d+)\]$")
MAX_NETLIST_INDEX = 10**6


def const(v: int, pos: Pos) -> P.Num:
    return P.Num(1 if v else 0, "1" if v else "0", pos)


def neg(e: P.Expr, pos: Pos) -> P.Expr:
    if isinstance(e, P.Num):
        return const(1 - e.value, pos)
    if isinstance(e, P.Not):
        return e.arg
    return P.Not(e, pos)


def and_(args: list[P.Expr], pos: Pos) -> P.Expr:
    if any(isinstance(a, P.Num) and a.value == 0 for a in args):
        return const(0, pos)
    args = [a for a in args if not (isinstance(a, P.Num) and a.value == 1)]
    if not args:
        return const(1, pos)
    return args[0] if len(args) == 1 else P.Op("&", args, pos)


def or_(args: list[P.Expr], pos: Pos) -> P.Expr:
    if any(isinstance(a, P.Num) and a.value == 1 for a in args):
        return const(1, pos)
    args = [a for a in args if not (isinstance(a, P.Num) and a.value == 0)]
    if not args:
        return const(0, pos)
    return args[0] if len(args) == 1 else P.Op("|", args, pos)


def xor(args: list[P.Expr], pos: Pos) -> P.Expr:
    return args[0] if len(args) == 1 else P.Op("^", args, pos)


def split_bit(name: str) -> tuple[str, Optional[int]]:
    """``q[3]`` -> (``q``, 3); any other name -> (name, None)."""
    m = _BIT.match(name)
    if m and int(m.group(2)) <= MAX_NETLIST_INDEX:
        return m.group(1), int(m.group(2))
    return name, None


class Vectors:
    """Bit names gathered into vectors: ``ref(bit)`` is the syntax that reads a bit.

    ``group(names)`` takes names of one kind (inputs, flops or outputs) and
    returns the declarations, each ``(base, msb, lsb, [bit names msb first])``
    (``msb`` None for a single bit); names that cannot form a vector stay single
    bits under their whole name.
    """

    def __init__(self) -> None:
        self.where: dict[str, tuple[str, Optional[int]]] = {}
        self.bases: set[str] = set()
        self.ranges: dict[str, tuple[int, int]] = {}

    def group(self, names: Iterable[str], reuse: Iterable[str] = ()) -> list[tuple[str, Optional[int], Optional[int], list[str]]]:
        """``reuse``: vector names already grouped (flops) that these names (outputs) may
        repeat with the very same bits."""
        names = list(names)
        reuse = set(reuse)
        by_base: dict[str, list[int]] = {}
        order: list[str] = []
        for n in names:
            base, i = split_bit(n)
            if i is not None:
                if base not in by_base:
                    by_base[base] = []
                    order.append(base)
                by_base[base].append(i)
        plain = {n for n in names if split_bit(n)[1] is None}
        good: set[str] = set()
        for base, idx in by_base.items():
            if (base not in plain and len(set(idx)) == len(idx) and max(idx) - min(idx) + 1 == len(idx)
                    and (base not in self.bases or (base in reuse and self.ranges.get(base) == (max(idx), min(idx))))):
                good.add(base)
        out: list[tuple[str, Optional[int], Optional[int], list[str]]] = []
        done: set[str] = set()
        for n in names:
            base, i = split_bit(n)
            if i is not None and base in good:
                if base in done:
                    continue
                done.add(base)
                idx = by_base[base]
                hi, lo = max(idx), min(idx)
                bits = [f"{base}[{k}]" for k in range(hi, lo - 1, -1)]
                for k in range(hi, lo - 1, -1):
                    self.where[f"{base}[{k}]"] = (base, k)
                self.bases.add(base)
                self.ranges[base] = (hi, lo)
                out.append((base, hi, lo, bits))
            else:
                self.where[n] = (n, None)
                self.bases.add(n)
                out.append((n, None, None, [n]))
        return out

    def ref(self, bit: str, pos: Pos) -> P.Ref:
        base, i = self.where.get(bit, (bit, None))
        return P.Ref([base], None if i is None else P.Index(i, None, pos), pos)


def fresh_prefix(taken: Iterable[str], want: str) -> str:
    """A prefix that starts no name in ``taken`` (for the readers' own node names)."""
    taken = list(taken)
    p = want
    while any(n.startswith(p) for n in taken):
        p = "_" + p
    return p


def decl(name: str, msb: Optional[int], lsb: Optional[int], pos: Pos, bit: bool = False) -> P.Decl:
    return P.Decl(name, msb, lsb, pos, bit)

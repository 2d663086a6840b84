"""Expressions as bit vectors: numbers, bitwise operations, gates, and their AIG build.

A bit expression (``BExpr``) is a small tuple tree: ``('c', 0|1)`` a constant,
``('r', bit)`` a named bit, ``('n', x)`` not, ``('&'|'|'|'^', [xs])``, and
``('m', s, a, b)`` a multiplexer. The flattener and the check elaborator turn
syntax into these; :func:`build` turns them into literals of a model's graph.
"""

from __future__ import annotations

from typing import Optional

from ..errors import InputError, Pos
from ..words import count
from ..lang import parse as P
from ..model import FALSE, TRUE, Aig
from .design import Symbol

MAX_VECTOR = 4096
GATES = {"and", "or", "nand", "nor", "xor", "xnor", "not", "buf", "mux"}

BExpr = tuple


def _index_pos(sym: Symbol, i: int, where: Pos, name: str) -> int:
    """Position of index ``i`` in ``sym.bits``."""
    if sym.msb is None:
        raise InputError(where, f"'{name}' is a single bit, not a vector; it takes no index")
    lo, hi = min(sym.msb, sym.lsb), max(sym.msb, sym.lsb)
    if not lo <= i <= hi:
        raise InputError(where, f"index {i} is outside {name}[{sym.msb}:{sym.lsb}]")
    return sym.msb - i if sym.msb >= sym.lsb else i - sym.msb


def select_bits(sym: Symbol, idx: Optional[P.Index], name: str) -> list[str]:
    if idx is None:
        return list(sym.bits)
    if idx.last is None:
        return [sym.bits[_index_pos(sym, idx.first, idx.pos, name)]]
    a = _index_pos(sym, idx.first, idx.pos, name)
    b = _index_pos(sym, idx.last, idx.pos, name)
    step = 1 if b >= a else -1
    return [sym.bits[k] for k in range(a, b + step, step)]


def kind_text(kind: str) -> str:
    return {"in": "an input", "out": "an output", "node": "a node", "flop": "a flop", "part": "a part"}[kind]


def num_bits(e: P.Num, want: Optional[int]) -> list[BExpr]:
    bw = e.binary_width
    if bw is not None:
        if bw > MAX_VECTOR:
            raise InputError(e.pos, f"binary literal has {bw} digits; the limit is {MAX_VECTOR} bits in one vector")
        return [("c", int(ch)) for ch in e.text[2:]]
    if want is None or want == 1:
        if e.value in (0, 1):
            return [("c", e.value)]
        raise InputError(e.pos, f"the number {e.text} has no width here; a bit is 0 or 1, and a binary literal (0b...) gives one bit per digit")
    if e.value >> want:
        raise InputError(e.pos, f"{e.text} does not fit in {count(want, 'bit')}")
    return [("c", (e.value >> (want - 1 - k)) & 1) for k in range(want)]


def bnot(x: BExpr) -> BExpr:
    if x[0] == "c":
        return ("c", 1 - x[1])
    if x[0] == "n":
        return x[1]
    return ("n", x)


def bitwise(op: str, vecs: list[list[BExpr]], e: P.Expr) -> list[BExpr]:
    widths = {len(v) for v in vecs}
    wide = widths - {1}
    if len(wide) > 1:
        raise InputError(e.pos, f"width mismatch: operands of '{op}' are {', '.join(str(len(v)) for v in vecs)} bits wide (a single bit applies to every bit; otherwise widths must be equal)")
    n = max(widths)
    cols = [v * n if len(v) == 1 else v for v in vecs]
    return [(op, [c[k] for c in cols]) for k in range(n)]


def gate(e: P.Call, args: list[list[BExpr]]) -> list[BExpr]:
    name = e.name
    if name not in GATES:
        raise InputError(e.pos, f"unknown gate '{name}'; the gates are {', '.join(sorted(GATES))}")
    if name in ("not", "buf"):
        if len(args) != 1:
            raise InputError(e.pos, f"{name}() takes one argument, not {len(args)}")
        return [bnot(x) for x in args[0]] if name == "not" else args[0]
    if name == "mux":
        if len(args) != 3:
            raise InputError(e.pos, f"mux(S, A, B) takes three arguments, not {len(args)}")
        s, a, b = args
        cols = bitwise("mux", [s, a, b], e)
        return [("m", c[1][0], c[1][1], c[1][2]) for c in cols]
    if len(args) < 2:
        raise InputError(e.pos, f"{name}() takes two or more arguments")
    base = {"and": "&", "nand": "&", "or": "|", "nor": "|", "xor": "^", "xnor": "^"}[name]
    out = bitwise(base, args, e)
    if name in ("nand", "nor", "xnor"):
        out = [bnot(x) for x in out]
    return out


def bit_deps(x: BExpr, out: list[str]) -> None:
    stack = [x]
    while stack:
        y = stack.pop()
        t = y[0]
        if t == "r":
            out.append(y[1])
        elif t == "n":
            stack.append(y[1])
        elif t == "m":
            stack.extend(y[1:])
        elif t != "c":
            stack.extend(y[1])


def shared_deps(x: BExpr, memo: dict[int, tuple[str, ...]]) -> tuple[str, ...]:
    """The named bits ``x`` reads, each once; ``memo`` (by object identity) makes a
    sub-expression shared by many bits (a single bit applied to a whole vector) cost once."""
    t = x[0]
    if t == "r":
        return (x[1],)
    if t == "c":
        return ()
    key = id(x)
    got = memo.get(key)
    if got is None:
        kids = [x[1]] if t == "n" else list(x[1:]) if t == "m" else x[1]
        got = tuple(dict.fromkeys(d for k in kids for d in shared_deps(k, memo)))
        memo[key] = got
    return got


def build(aig: Aig, x: BExpr, lit: dict[str, int], memo: Optional[dict[int, int]] = None) -> int:
    """The literal of ``x``; with ``memo`` (by object identity, for one model build) a shared
    sub-expression is built once, however many bits read it."""
    t = x[0]
    if t == "c":
        return TRUE if x[1] else FALSE
    if t == "r":
        return lit[x[1]]
    if t == "n":
        return build(aig, x[1], lit, memo) ^ 1
    if memo is not None and id(x) in memo:
        return memo[id(x)]
    if t == "m":
        v = aig.mux(build(aig, x[1], lit, memo), build(aig, x[2], lit, memo), build(aig, x[3], lit, memo))
    else:
        args = [build(aig, a, lit, memo) for a in x[1]]
        v = aig.and_all(args) if t == "&" else aig.or_all(args) if t == "|" else aig.xor_all(args)
    if memo is not None:
        memo[id(x)] = v
    return v

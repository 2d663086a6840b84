"""Syntax tree to circuit model: resolve ``use``, flatten parts, expand vectors.

``load_namespace(path)`` reads a file and everything it uses, checks that the
designs are well formed and builds one :class:`checker.model.Model` per design
and one :class:`Check` per check block of the file itself. Every problem is an
:class:`InputError` with a position.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import Optional, Union

from . import parse as P
from .errors import InputError, Pos
from .model import FALSE, TRUE, Aig, Model
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from .sequence import Sequence

MAX_VECTOR = 4096
MAX_BITS = 100_000
MAX_USE_FILES = 1000

FLOP_PINS = {"D": ("d",), "T": ("t",), "JK": ("j", "k"), "SR": ("s", "r")}
GATES = {"and", "or", "nand", "nor", "xor", "xnor", "not", "buf", "mux"}

# A bit expression: ('c', 0|1) | ('r', bit) | ('n', x) | ('&'|'|'|'^', [xs]) | ('m', s, a, b)
BExpr = tuple


# --- results -------------------------------------------------------------
@dataclass
class Design:
    """A flattened design with its circuit model."""

    name: str
    pos: Pos
    model: Model
    input_vectors: dict[str, list[str]]
    output_vectors: dict[str, list[str]]
    flop_kinds: dict[str, str]
    vectors: dict[str, "Symbol"]  # flattened name -> symbol (kind, bits msb first)
    source: dict[str, P.DesignBlock] = field(default_factory=dict)  # the syntax blocks it was built from

    @property
    def file(self) -> str:
        return self.pos.file


@dataclass
class Rule:
    """One rule of a check: ``kind`` in hold, load, back, step; ``cond`` a literal."""

    kind: str
    cond: int
    pos: Pos
    load_const: Optional[int] = None
    load_bits: Optional[list[int]] = None  # literals, most significant first


@dataclass
class Claim:
    """One claim of a check block."""

    kind: str  # count, recover, always, equal
    pos: Pos
    within: Optional[int] = None  # recover within N
    cond: Optional[int] = None  # recover when / equal after: a literal over inputs
    cond_text: Optional[str] = None
    prop: Optional[int] = None  # always
    other: Optional[Design] = None  # equal
    mode: Optional[str] = None  # equal: None, 'sequence', 'after'
    other_cond: Optional[int] = None  # equal after: COND built in the other design too


@dataclass
class Check:
    """An elaborated check block: its design, code bits, sequence, rules, claims."""

    name: str
    pos: Pos
    design: Design
    code: list[int] = field(default_factory=list)  # state indices, most significant first
    code_pos: Optional[Pos] = None
    sequence: Optional["Sequence"] = None
    sequence_pos: Optional[Pos] = None
    rules: list[Rule] = field(default_factory=list)
    claims: list[Claim] = field(default_factory=list)

    @property
    def width(self) -> int:
        return len(self.code)

    def code_lits(self) -> list[int]:
        """State literals of the code, least significant first (for arithmetic)."""
        m = self.design.model
        return [m.state_lits[i] for i in reversed(self.code)]

    def code_of(self, state: dict[str, int]) -> int:
        """The code value of a state given as bit name -> 0/1."""
        names = self.design.model.states
        v = 0
        for i in self.code:
            v = (v << 1) | (state[names[i]] & 1)
        return v

    def state_of(self, code: int) -> dict[str, int]:
        """The state (bit name -> 0/1) whose code is ``code``."""
        names = self.design.model.states
        w = len(self.code)
        return {names[i]: (code >> (w - 1 - k)) & 1 for k, i in enumerate(self.code)}


@dataclass
class Namespace:
    """A command-line file and everything it uses."""

    path: str
    designs: dict[str, Design]
    checks: list[Check]
    files: list[str]


# --- flattening ----------------------------------------------------------
@dataclass
class _FlopBit:
    kind: str
    pos: Pos
    pins: dict[str, tuple[BExpr, Pos]] = field(default_factory=dict)
    clear: Optional[BExpr] = None
    preset: Optional[BExpr] = None


@dataclass
class Symbol:
    """A declared name after flattening: its kind and its bits."""

    kind: str  # in, out, node, flop, part
    bits: list[str]  # flattened bit names, msb first
    pos: Pos
    msb: Optional[int] = None
    lsb: Optional[int] = None
    design: Optional[str] = None  # for parts


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


def _decl_text(d: P.Decl) -> str:
    if d.msb is None:
        return d.name
    return f"{d.name}[{d.msb}]" if d.bit else f"{d.name}[{d.msb}:{d.lsb}]"


def _flop_symbol(group: list[P.FlopDecl], prefix: str) -> Symbol:
    """The whole flop vector that the pieces in ``group`` declare; they must tile one range."""
    first = group[0]
    if len(group) == 1:
        d = first.decl
        return Symbol("flop", _decl_bits(d, prefix), d.pos, d.msb, d.lsb)
    owner: dict[int, P.Decl] = {}
    for s in group:
        d = s.decl
        if d.msb is None:
            other = group[1].decl if s is first else first.decl
            raise InputError(d.pos, f"'{d.name}' is declared whole here and in pieces elsewhere "
                                    f"(line {other.pos.line}); declare it one way")
        _decl_bits(d, prefix)  # the vector limit
        for i in range(min(d.msb, d.lsb), max(d.msb, d.lsb) + 1):
            if i in owner:
                o = owner[i]
                raise InputError(d.pos, f"{_decl_text(d)} overlaps {_decl_text(o)} "
                                        f"(line {o.pos.line}, col {o.pos.col}): bit {d.name}[{i}] is declared twice")
            owner[i] = d
    lo, hi = min(owner), max(owner)
    if hi - lo + 1 > MAX_VECTOR:
        raise InputError(first.decl.pos, f"flop {first.decl.name}[{hi}:{lo}] has {hi - lo + 1} bits; "
                                         f"the limit is {MAX_VECTOR} bits in one vector")
    gaps = [i for i in range(lo, hi + 1) if i not in owner]
    if gaps:
        more = f" and {len(gaps) - 8} more" if len(gaps) > 8 else ""
        raise InputError(first.decl.pos, f"the pieces of flop {first.decl.name} leave "
                                         f"{', '.join(f'{first.decl.name}[{i}]' for i in gaps[:8])}{more} "
                                         f"undeclared; together they must form one range")
    ups = {d.msb < d.lsb for d in (s.decl for s in group) if d.msb != d.lsb}
    if len(ups) > 1:
        raise InputError(first.decl.pos, f"the pieces of flop {first.decl.name} mix ascending and "
                                         f"descending ranges")
    msb, lsb = (lo, hi) if ups == {True} else (hi, lo)
    step = -1 if msb >= lsb else 1
    bits = [f"{prefix}{first.decl.name}[{i}]" for i in range(msb, lsb + step, step)]
    return Symbol("flop", bits, first.decl.pos, msb, lsb)


def _decl_bits(d: P.Decl, prefix: str) -> list[str]:
    if d.msb is None:
        return [prefix + d.name]
    width = abs(d.msb - d.lsb) + 1
    if width > MAX_VECTOR:
        raise InputError(d.pos, f"vector {d.name}[{d.msb}:{d.lsb}] has {width} bits; the limit is {MAX_VECTOR} bits in one vector")
    step = -1 if d.msb >= d.lsb else 1
    return [f"{prefix}{d.name}[{i}]" for i in range(d.msb, d.lsb + step, step)]


class _Flattener:
    """Instantiates a design and its parts into bit-level tables."""

    def __init__(self, blocks: dict[str, P.DesignBlock]) -> None:
        self.blocks = blocks
        self.comb: dict[str, tuple[BExpr, Pos]] = {}
        self.flops: dict[str, _FlopBit] = {}
        self.syms: dict[str, Symbol] = {}  # flattened vector name -> symbol
        self.nbits = 0
        self.stack: list[str] = []

    def count_bits(self, n: int, pos: Pos) -> None:
        self.nbits += n
        if self.nbits > MAX_BITS:
            raise InputError(pos, f"the flattened design has more than {MAX_BITS} bits (the limit)")

    def declare(self, prefix: str, name: str, sym: Symbol) -> None:
        key = prefix + name
        old = self.syms.get(key)
        if old is not None and not (old.pos == sym.pos and old.kind == sym.kind):
            raise InputError(sym.pos, f"'{name}' is defined twice (first at line {old.pos.line}, col {old.pos.col})")
        self.syms[key] = sym

    def interface(self, block: P.DesignBlock) -> tuple[list[P.Decl], list[P.Decl]]:
        ins: list[P.Decl] = []
        outs: list[P.Decl] = []
        for s in block.stmts:
            if isinstance(s, P.InDecl):
                ins.extend(s.decls)
            elif isinstance(s, P.OutDecl):
                outs.append(s.decl)
        return ins, outs

    def instantiate(self, block: P.DesignBlock, prefix: str) -> None:
        """Flatten ``block`` under ``prefix`` (``''`` for the top, ``'u1.'`` for a part)."""
        if block.name in self.stack:
            chain = " -> ".join(self.stack[self.stack.index(block.name):] + [block.name])
            raise InputError(block.pos, f"recursive part: {chain}")
        self.stack.append(block.name)
        # pass 1: names and widths, so statements may come in any order
        pieces: dict[str, list[P.FlopDecl]] = {}
        for s in block.stmts:
            if isinstance(s, P.InDecl):
                for d in s.decls:
                    bits = _decl_bits(d, prefix)
                    self.count_bits(len(bits), d.pos)
                    self.declare(prefix, d.name, Symbol("in", bits, d.pos, d.msb, d.lsb))
            elif isinstance(s, (P.OutDecl, P.NodeDecl)):
                d = s.decl
                kind = "out" if isinstance(s, P.OutDecl) else "node"
                bits = _decl_bits(d, prefix)
                self.count_bits(len(bits), d.pos)
                self.declare(prefix, d.name, Symbol(kind, bits, d.pos, d.msb, d.lsb))
            elif isinstance(s, P.FlopDecl):
                pieces.setdefault(s.decl.name, []).append(s)
            elif isinstance(s, P.PartDecl):
                sub = self.blocks.get(s.design)
                if sub is None:
                    raise InputError(s.design_pos, f"unknown design '{s.design}'")
                if sub.name in self.stack:
                    chain = " -> ".join(self.stack[self.stack.index(sub.name):] + [sub.name])
                    raise InputError(s.pos, f"recursive part: {chain}")
                self.declare(prefix, s.name, Symbol("part", [], s.pos, design=sub.name))
                _, outs = self.interface(sub)
                for d in outs:
                    pre = f"{prefix}{s.name}."
                    self.syms[pre + d.name] = Symbol("out", _decl_bits(d, pre), d.pos, d.msb, d.lsb)
        for name, group in pieces.items():
            sym = _flop_symbol(group, prefix)
            self.count_bits(len(sym.bits), sym.pos)
            self.declare(prefix, name, sym)
        # pass 2: definitions, in statement order (this fixes flop order)
        for s in block.stmts:
            if isinstance(s, (P.OutDecl, P.NodeDecl)):
                sym = self.syms[prefix + s.decl.name]
                vals = self.vec(s.expr, prefix, len(sym.bits))
                self.need_width(vals, len(sym.bits), s.expr, f"'{s.decl.name}'")
                for b, v in zip(sym.bits, vals):
                    self.comb[b] = (v, s.pos)
            elif isinstance(s, P.FlopDecl):
                self.flop_decl(s, prefix)
        # parts after this design's flops, so flop order follows statement order
        self._parts_in_order(block, prefix)
        self.stack.pop()

    def _parts_in_order(self, block: P.DesignBlock, prefix: str) -> None:
        # Flops are recorded in self.flops in insertion order. Flops of this
        # design were inserted by flop_decl; parts must land at their own line.
        # Rebuild the order: walk statements, taking this design's flops and
        # each part's flops where they stand.
        own = {b: self.flops.pop(b) for s in block.stmts if isinstance(s, P.FlopDecl)
               for b in _decl_bits(s.decl, prefix)}
        for s in block.stmts:
            if isinstance(s, P.FlopDecl):
                for b in _decl_bits(s.decl, prefix):
                    self.flops[b] = own[b]
            elif isinstance(s, P.PartDecl):
                self.part(s, prefix)

    def flop_decl(self, s: P.FlopDecl, prefix: str) -> None:
        """One flop declaration (the whole vector or one piece): its pins, clear and preset."""
        kind = s.kind
        if kind not in FLOP_PINS:
            raise InputError(s.kind_pos, f"unknown flop kind '{kind}'; the kinds are D, T, JK, SR")
        want = FLOP_PINS[kind]
        local = _decl_text(s.decl)
        if s.pins is None:
            shown = ", ".join(f"{p} = ..." for p in want)
            raise InputError(s.kind_pos, f"a {kind} flop names its pins in parentheses: flop {local} : {kind} ({shown})")
        if s.clock is not None:
            raise InputError(s.clock.pos, "flops clocked by another flop are not supported yet; "
                                          "every flop samples on the system clock")
        for what, is_async, e in (("clear", s.clear_async, s.clear), ("preset", s.preset_async, s.preset)):
            if is_async:
                raise InputError(e.pos, f"an asynchronous {what} is not supported yet; "
                                        f"'{what} EXPR' without async acts at the clock edge")
        bits = _decl_bits(s.decl, prefix)
        n = len(bits)
        pins: dict[str, list[BExpr]] = {}
        pin_pos: dict[str, Pos] = {}
        for pin in s.pins:
            if pin.name not in want:
                raise InputError(pin.pos, f"a {kind} flop has no pin '{pin.name}' (its pins: {', '.join(want)})")
            if pin.name in pins:
                first = pin_pos[pin.name]
                raise InputError(pin.pos, f"pin {pin.name} is named twice (first at line {first.line}, col {first.col})")
            vals = self.vec(pin.expr, prefix, n)
            self.need_width(vals, n, pin.expr, f"pin {pin.name} of {local}")
            pins[pin.name], pin_pos[pin.name] = vals, pin.pos
        missing = [p for p in want if p not in pins]
        if missing:
            raise InputError(s.pos, f"pin {', '.join(missing)} of {local} is not given; "
                                    f"a {kind} flop names {', '.join(want)}")
        clear = None if s.clear is None else self.bit(s.clear, prefix, "clear")
        preset = None if s.preset is None else self.bit(s.preset, prefix, "preset")
        for k, b in enumerate(bits):
            self.flops[b] = _FlopBit(kind, s.pos, {p: (v[k], pin_pos[p]) for p, v in pins.items()},
                                     clear, preset)

    def bit(self, e: P.Expr, prefix: str, what: str) -> BExpr:
        """A single-bit EXPR: a number in it is a bit, never widened."""
        vals = self.vec(e, prefix, 1)
        if len(vals) != 1:
            raise InputError(e.pos, f"{what} is one bit (it acts on every bit of the flop); "
                                    f"this expression is {len(vals)} bits wide")
        return vals[0]

    def need_width(self, vals: list, n: int, e: P.Expr, what: str) -> None:
        if len(vals) != n:
            raise InputError(e.pos, f"width mismatch: {what} is {n} bit{'s' if n != 1 else ''} wide, the expression gives {len(vals)}")

    def part(self, s: P.PartDecl, prefix: str) -> None:
        sub = self.blocks[s.design]
        pre = f"{prefix}{s.name}."
        ins, _ = self.interface(sub)
        in_decls = {d.name: d for d in ins}
        driven: dict[str, Pos] = {}
        for c in s.conns:
            d = in_decls.get(c.port)
            if d is None:
                _, outs = self.interface(sub)
                if any(o.name == c.port for o in outs):
                    raise InputError(c.pos, f"'{c.port}' is an output of design {sub.name}; a part connects only inputs")
                raise InputError(c.pos, f"design {sub.name} has no input '{c.port}'")
            tmp = Symbol("in", _decl_bits(d, pre), d.pos, d.msb, d.lsb)
            bits = select_bits(tmp, c.index, c.port)
            vals = self.vec(c.expr, prefix, len(bits))
            self.need_width(vals, len(bits), c.expr, f"port {c.port}" if c.index is None else "the connected bits")
            for b, v in zip(bits, vals):
                if b in driven:
                    raise InputError(c.pos, f"input {b[len(pre):]} of part {s.name} is connected twice (first at line {driven[b].line})")
                driven[b] = c.pos
                self.comb[b] = (v, c.pos)
        missing = [b[len(pre):] for d in ins for b in _decl_bits(d, pre) if b not in driven]
        if missing:
            more = f" and {len(missing) - 8} more" if len(missing) > 8 else ""
            raise InputError(s.pos, f"part {s.name} leaves input{'s' if len(missing) > 1 else ''} of {sub.name} unconnected: {', '.join(missing[:8])}{more}")
        # the part's input bits are defined by its connections above
        self.instantiate(sub, pre)


    # --- expressions to bit vectors ---------------------------------------
    def vec(self, e: P.Expr, prefix: str, want: Optional[int] = None) -> list[BExpr]:
        """Bits of ``e`` (msb first) in the design scope ``prefix``."""
        if isinstance(e, P.Num):
            return num_bits(e, want)
        if isinstance(e, P.Ref):
            return [("r", b) for b in self.resolve(e, prefix)]
        if isinstance(e, P.Not):
            return [bnot(x) for x in self.vec(e.arg, prefix, want)]
        if isinstance(e, P.Op):
            return bitwise(e.op, [self.vec(a, prefix, want) for a in e.args], e)
        if isinstance(e, P.Cat):
            out: list[BExpr] = []
            for it in e.items:
                out.extend(self.vec(it, prefix))
            if len(out) > MAX_VECTOR:
                raise InputError(e.pos, f"brace list has {len(out)} bits; the limit is {MAX_VECTOR} bits in one vector")
            return out
        if isinstance(e, P.Call):
            return self.call(e, prefix, want)
        if isinstance(e, P.Cmp):
            raise InputError(e.pos, f"'{e.op}' is allowed only in an always claim")
        raise AssertionError(e)

    def call(self, e: P.Call, prefix: str, want: Optional[int]) -> list[BExpr]:
        if e.name == "at":
            raise InputError(e.pos, "at(N) is allowed only in an always claim")
        return gate(e, [self.vec(a, prefix, want) for a in e.args])

    def resolve(self, r: P.Ref, prefix: str) -> list[str]:
        name = r.dotted
        if len(r.path) == 1:
            sym = self.syms.get(prefix + name)
            if sym is None:
                raise InputError(r.pos, f"undefined name '{name}'")
            if sym.kind == "part":
                raise InputError(r.pos, f"'{name}' is a part; read one of its outputs as {name}.PORT")
            return select_bits(sym, r.index, name)
        if len(r.path) == 2:
            part = self.syms.get(prefix + r.path[0])
            if part is None:
                raise InputError(r.pos, f"undefined name '{r.path[0]}'")
            if part.kind != "part":
                raise InputError(r.pos, f"'{r.path[0]}' is {kind_text(part.kind)}, not a part")
            sym = self.syms.get(prefix + name)
            if sym is None or sym.kind != "out":
                raise InputError(r.pos, f"design {part.design} has no output '{r.path[1]}'")
            return select_bits(sym, r.index, name)
        raise InputError(r.pos, f"'{name}': inside a design, read a part's output as PART.PORT")


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
        raise InputError(e.pos, f"{e.text} does not fit in {want} bits")
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


# --- bit tables to and-inverter graph ------------------------------------
def _deps(x: BExpr, out: list[str]) -> None:
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


def build(aig: Aig, x: BExpr, lit: dict[str, int]) -> int:
    t = x[0]
    if t == "c":
        return TRUE if x[1] else FALSE
    if t == "r":
        return lit[x[1]]
    if t == "n":
        return build(aig, x[1], lit) ^ 1
    if t == "m":
        return aig.mux(build(aig, x[1], lit), build(aig, x[2], lit), build(aig, x[3], lit))
    args = [build(aig, a, lit) for a in x[1]]
    if t == "&":
        return aig.and_all(args)
    if t == "|":
        return aig.or_all(args)
    return aig.xor_all(args)


def _comb_order(fl: _Flattener, leaves: set[str]) -> list[str]:
    """Combinational bits in dependency order; a cycle is an error naming it."""
    deps: dict[str, list[str]] = {}
    for b, (x, _) in fl.comb.items():
        d: list[str] = []
        _deps(x, d)
        deps[b] = [y for y in d if y not in leaves]
    order: list[str] = []
    state: dict[str, int] = {}  # 1 on stack, 2 done
    for root in fl.comb:
        if state.get(root):
            continue
        stack = [(root, 0)]
        path: list[str] = []
        while stack:
            b, i = stack.pop()
            if i == 0:
                state[b] = 1
                path.append(b)
            ds = deps[b]
            if i < len(ds):
                stack.append((b, i + 1))
                c = ds[i]
                st = state.get(c)
                if st == 1:
                    loop = path[path.index(c):] + [c]
                    raise InputError(fl.comb[c][1], "combinational loop: " + " -> ".join(loop))
                if not st:
                    stack.append((c, 0))
            else:
                state[b] = 2
                path.pop()
                order.append(b)
    return order


def _to_model(name: str, fl: _Flattener, inputs: list[str], outputs: list[str]) -> Model:
    m = Model(name)
    aig = m.aig
    lit: dict[str, int] = {}
    for b in inputs:
        lit[b] = aig.leaf(b)
        m.inputs.append(b)
        m.input_lits.append(lit[b])
    for b in fl.flops:
        lit[b] = aig.leaf(b)
        m.states.append(b)
        m.state_lits.append(lit[b])
    for b in _comb_order(fl, set(lit)):
        lit[b] = build(aig, fl.comb[b][0], lit)
    for b, fb in fl.flops.items():
        q = lit[b]
        pin = {p: build(aig, x, lit) for p, (x, _) in fb.pins.items()}
        if fb.kind == "D":
            f = pin["d"]
        elif fb.kind == "T":
            f = aig.xor(q, pin["t"])
        elif fb.kind == "JK":
            f = aig.or_(aig.and_(pin["j"], q ^ 1), aig.and_(pin["k"] ^ 1, q))
        else:
            f = aig.or_(pin["s"], aig.and_(pin["r"] ^ 1, q))
        clr = FALSE if fb.clear is None else build(aig, fb.clear, lit)
        pre = FALSE if fb.preset is None else build(aig, fb.preset, lit)
        m.next_lits.append(aig.and_(clr ^ 1, aig.or_(pre, f)))
        if fb.kind == "SR":
            fault = aig.and_all([pin["s"], pin["r"], clr ^ 1, pre ^ 1])
            m.faults.append((b, fault))
    for b in outputs:
        m.outputs.append(b)
        m.output_lits.append(lit[b])
    m.signals = lit
    return m


def elaborate_design(blocks: dict[str, P.DesignBlock], name: str) -> Design:
    """Flatten design ``name`` and build its model."""
    block = blocks[name]
    fl = _Flattener(blocks)
    fl.instantiate(block, "")
    in_vec: dict[str, list[str]] = {}
    out_vec: dict[str, list[str]] = {}
    for key, sym in fl.syms.items():
        if "." in key:
            continue
        if sym.kind == "in":
            in_vec[key] = sym.bits
        elif sym.kind == "out":
            out_vec[key] = sym.bits
    inputs = [b for bits in in_vec.values() for b in bits]
    outputs = [b for bits in out_vec.values() for b in bits]
    model = _to_model(name, fl, inputs, outputs)
    vectors = {k: s for k, s in fl.syms.items() if s.kind != "part"}
    kinds = {b: fb.kind for b, fb in fl.flops.items()}
    return Design(name, block.pos, model, in_vec, out_vec, kinds, vectors, blocks)


# --- files and namespaces ------------------------------------------------
def read_file(path: str, pos: Optional[Pos] = None) -> P.File:
    """Read and parse one file; a missing or unreadable file is an InputError."""
    where = pos or Pos(path, 1, 1)
    p = Path(path)
    try:
        if p.is_dir():
            raise InputError(where, f"'{path}' is a folder, not a file")
        data = p.read_bytes()
    except FileNotFoundError:
        raise InputError(where, f"no such file '{path}'") from None
    except PermissionError:
        raise InputError(where, f"cannot read '{path}': permission denied") from None
    except OSError as e:
        raise InputError(where, f"cannot read '{path}': {e.strerror or e}") from None
    return P.parse_text(path, P.decode_source(path, data))


def _gather(path: str) -> list[P.File]:
    """The file and everything it uses, each read once; a cycle is an error."""
    files: dict[str, P.File] = {}
    order: list[P.File] = []
    onstack: list[str] = []

    def key(p: str) -> str:
        return str(Path(p).resolve())

    # iterative DFS over use edges
    top = read_file(path)
    files[key(path)] = top
    stack: list[tuple[P.File, int]] = [(top, 0)]
    onstack.append(key(path))
    while stack:
        f, i = stack.pop()
        if i < len(f.uses):
            stack.append((f, i + 1))
            u = f.uses[i]
            target = str(Path(f.path).parent / u.path) if not Path(u.path).is_absolute() else u.path
            k = key(target)
            if k in onstack:
                raise InputError(u.pos, f"use cycle: '{u.path}' is already being read")
            if k in files:
                continue
            if len(files) >= MAX_USE_FILES:
                raise InputError(u.pos, f"more than {MAX_USE_FILES} files used (the limit)")
            g = read_file(target, u.pos)
            files[k] = g
            onstack.append(k)
            stack.append((g, 0))
        else:
            onstack.pop()
            order.append(f)
    return order


def load_namespace(path: str) -> Namespace:
    """Read ``path`` and its uses; elaborate every design and the file's own checks."""
    from .spec import elaborate_check  # check blocks are elaborated in their own module

    files = _gather(path)
    blocks: dict[str, P.DesignBlock] = {}
    for f in files:
        for d in f.designs:
            old = blocks.get(d.name)
            if old is not None:
                raise InputError(d.pos, f"design '{d.name}' is defined twice (first at {old.pos})")
            blocks[d.name] = d
    designs = {name: elaborate_design(blocks, name) for name in blocks}
    top = files[-1]
    seen: dict[str, Pos] = {}
    checks = []
    for c in top.checks:
        if c.name in seen:
            raise InputError(c.pos, f"check '{c.name}' is defined twice in this file (first at line {seen[c.name].line})")
        seen[c.name] = c.pos
        checks.append(elaborate_check(c, designs))
    return Namespace(path, designs, checks, [f.path for f in files])

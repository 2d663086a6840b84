"""Design blocks to circuit models: flatten parts, expand vectors, build the AIG.

``elaborate_design(blocks, name)`` instantiates a design and its parts into
bit-level tables, checks them (widths, pins, loops, limits), and builds one
:class:`checker.model.Model`. Every problem is an :class:`InputError` with a
position.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Optional

from ..errors import InputError, Pos
from ..lang import parse as P
from ..model import FALSE, Model
from .bits import (MAX_VECTOR, BExpr, bitwise, bnot, build, gate, kind_text, num_bits, select_bits,
                   shared_deps)
from .design import Design, Symbol

MAX_BITS = 100_000
MAX_PART_DEPTH = 64
"""Deepest nesting of parts (a part of a part of ... a design)."""
MAX_PARTS = 10_000
"""Most part instances in one flattened design, counted before anything is flattened."""
FLOP_PINS = {"D": ("d",), "T": ("t",), "JK": ("j", "k"), "SR": ("s", "r")}


@dataclass
class _FlopBit:
    kind: str
    pos: Pos
    pins: dict[str, tuple[BExpr, Pos]] = field(default_factory=dict)
    clear: Optional[BExpr] = None
    preset: Optional[BExpr] = None
    aclear: Optional[BExpr] = None  # asynchronous clear
    apreset: Optional[BExpr] = None
    clock: Optional[tuple[str, BExpr, Pos]] = None  # (edge, signal, where written); None: the system clock


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


def is_flop_output(s: P.OutDecl, flop_names: set[str]) -> bool:
    """``out q = q`` where ``q`` is a flop of the same design: the flop itself is the
    output (a netlist's ``output reg q``, a BLIF latch listed in ``.outputs``)."""
    e = s.expr
    return (isinstance(e, P.Ref) and e.path == [s.decl.name] and e.index is None
            and s.decl.name in flop_names)


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
        self.copies: set[str] = set()  # comb bits written as a plain copy of a bit (a clock may pass them)
        self.flops: dict[str, _FlopBit] = {}
        self.syms: dict[str, Symbol] = {}  # flattened vector name -> symbol
        self.nbits = 0
        self.stack: list[str] = []
        self.flop_outs: dict[str, Symbol] = {}  # outputs that are a flop of their own name

    def count_bits(self, n: int, pos: Pos) -> None:
        self.nbits += n
        if self.nbits > MAX_BITS:
            raise InputError(pos, f"the flattened design has more than {MAX_BITS} bits (the limit)")

    def declare(self, prefix: str, name: str, sym: Symbol) -> None:
        key = prefix + name
        old = self.syms.get(key)
        if old is not None and key in self.flop_outs and sym.kind == "flop":
            self.syms[key] = sym  # a part's output that is its flop: the flop, read as the output
            return
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
        """Flatten ``block`` under ``prefix`` (``''`` for the top, ``'u1.'`` for a part).

        A part of a design already being flattened is refused where the part
        is placed, so the recursion always ends."""
        self.stack.append(block.name)
        # pass 1: names and widths, so statements may come in any order
        pieces: dict[str, list[P.FlopDecl]] = {}
        flop_names = {s.decl.name for s in block.stmts if isinstance(s, P.FlopDecl)}
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
                if kind == "out" and is_flop_output(s, flop_names):
                    self.flop_outs[prefix + d.name] = Symbol("out", bits, d.pos, d.msb, d.lsb)
                    continue
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
                if isinstance(s, P.OutDecl) and prefix + s.decl.name in self.flop_outs:
                    continue
                sym = self.syms[prefix + s.decl.name]
                vals = self.vec(s.expr, prefix, len(sym.bits))
                self.need_width(vals, len(sym.bits), s.expr, f"'{s.decl.name}'")
                for b, v, plain in zip(sym.bits, vals, self.plain_bits(s.expr, prefix, len(vals))):
                    self.comb[b] = (v, s.pos)
                    if plain:
                        self.copies.add(b)
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
        bits = _decl_bits(s.decl, prefix)
        n = len(bits)
        clock: list[Optional[tuple[str, BExpr, Pos]]] = [None] * n
        if s.clock is not None:
            sig = self.vec(s.clock.signal, prefix, n)
            if len(sig) == 1:
                sig = sig * n
            self.need_width(sig, n, s.clock.signal, f"the clock of {local}")
            plain = self.plain_bits(s.clock.signal, prefix, len(sig))
            for x, ok in zip(sig, plain):
                if not ok:
                    raise InputError(s.clock.pos, f"the clock of flop {local} passes through a gate; a clock is "
                                                  f"a flop bit or a plain copy of one (use 'clock fall' for an "
                                                  f"inverted clock)")
            clock = [(s.clock.edge, x, s.clock.pos) for x in sig]
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
        sync_clear, async_clear = (None, clear) if s.clear_async else (clear, None)
        sync_preset, async_preset = (None, preset) if s.preset_async else (preset, None)
        for k, b in enumerate(bits):
            self.flops[b] = _FlopBit(kind, s.pos, {p: (v[k], pin_pos[p]) for p, v in pins.items()},
                                     sync_clear, sync_preset, async_clear, async_preset, clock[k])

    def plain_bits(self, e: P.Expr, prefix: str, n: int) -> list[bool]:
        """For each of the ``n`` bits of ``e``, whether it is written as a plain bit (a name, a
        slice, or a brace list of those), not through an operator, a gate (``buf`` included) or a
        constant: the only way a clock may pass."""
        if isinstance(e, P.Ref):
            return [True] * n
        if isinstance(e, P.Cat):
            out: list[bool] = []
            for item in e.items:
                out += self.plain_bits(item, prefix, len(self.vec(item, prefix)))
            return out if len(out) == n else [False] * n
        return [False] * n

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
            for b, v, plain in zip(bits, vals, self.plain_bits(c.expr, prefix, len(vals))):
                if b in driven:
                    raise InputError(c.pos, f"input {b[len(pre):]} of part {s.name} is connected twice (first at line {driven[b].line})")
                driven[b] = c.pos
                self.comb[b] = (v, c.pos)
                if plain:
                    self.copies.add(b)
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
            if sym is None or (sym.kind != "out" and prefix + name not in self.flop_outs):
                raise InputError(r.pos, f"design {part.design} has no output '{r.path[1]}'")
            return select_bits(sym, r.index, name)
        raise InputError(r.pos, f"'{name}': inside a design, read a part's output as PART.PORT")


def _comb_order(fl: _Flattener, leaves: set[str]) -> list[str]:
    """Combinational bits in dependency order; a cycle is an error naming it."""
    deps: dict[str, list[str]] = {}
    memo: dict = {}  # a sub-expression shared by many bits is walked once
    for b, (x, _) in fl.comb.items():
        deps[b] = [y for y in shared_deps(x, memo) if y not in leaves]
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


class ClockFromInput(InputError):
    """A clock that traces to an input of the design being elaborated: an error for that
    design on its own, but not for the same design placed as a part that a parent clocks."""


def _clock_source(fl: _Flattener, flop: str, x: BExpr, where: Pos) -> str:
    """The flop bit a clock comes from, through plain copies (nodes, outputs, part inputs) only."""
    seen = x
    while True:
        if x[0] != "r":
            raise InputError(where, f"the clock of flop {flop} passes through a gate; a clock is a flop bit or "
                                    f"a plain copy of one (use 'clock fall' for an inverted clock)")
        name = x[1]
        if name in fl.flops:
            return name
        if name not in fl.comb:
            raise ClockFromInput(where, f"the clock of flop {flop} traces to input {name} of the top design; "
                                        f"flops on the system clock need no clock, and a clock is a flop bit")
        if name not in fl.copies:
            raise InputError(where, f"the clock of flop {flop} passes through a gate at {name}; a clock is a "
                                    f"flop bit or a plain copy of one")
        x = fl.comb[name][0]
        if x is seen:  # pragma: no cover - combinational loops are refused before this
            raise InputError(where, f"the clock of flop {flop} runs in a loop")


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
    memo: dict = {}  # a sub-expression shared by many bits is built once
    for b in _comb_order(fl, set(lit)):
        lit[b] = build(aig, fl.comb[b][0], lit, memo)
    index = {s: i for i, s in enumerate(m.states)}
    for b, fb in fl.flops.items():
        q = lit[b]
        pin = {p: build(aig, x, lit, memo) for p, (x, _) in fb.pins.items()}
        if fb.kind == "D":
            f = pin["d"]
        elif fb.kind == "T":
            f = aig.xor(q, pin["t"])
        elif fb.kind == "JK":
            f = aig.or_(aig.and_(pin["j"], q ^ 1), aig.and_(pin["k"] ^ 1, q))
        else:
            f = aig.or_(pin["s"], aig.and_(pin["r"] ^ 1, q))
        clr = FALSE if fb.clear is None else build(aig, fb.clear, lit, memo)
        pre = FALSE if fb.preset is None else build(aig, fb.preset, lit, memo)
        m.next_lits.append(aig.and_(clr ^ 1, aig.or_(pre, f)))
        m.declared_async = m.declared_async or fb.aclear is not None or fb.apreset is not None
        m.async_clear.append(FALSE if fb.aclear is None else build(aig, fb.aclear, lit))
        m.async_preset.append(FALSE if fb.apreset is None else build(aig, fb.apreset, lit))
        if fb.clock is None:
            m.clocks.append(None)
        else:
            edge, x, where = fb.clock
            m.clocks.append((edge, index[_clock_source(fl, b, x, where)]))
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
    for key, sym in fl.flop_outs.items():
        if any(b not in fl.flops for b in sym.bits):
            raise InputError(sym.pos, f"output '{key}' reads the flop of its own name, so it must "
                                      f"declare the same bits as that flop")
        if "." not in key:
            out_vec[key] = sym.bits
    inputs = [b for bits in in_vec.values() for b in bits]
    outputs = [b for bits in out_vec.values() for b in bits]
    model = _to_model(name, fl, inputs, outputs)
    vectors = {k: s for k, s in fl.syms.items() if s.kind != "part"}
    kinds = {b: fb.kind for b, fb in fl.flops.items()}
    return Design(name, block.pos, model, in_vec, out_vec, kinds, vectors, blocks)


def check_hierarchy(blocks: dict[str, P.DesignBlock]) -> None:
    """Refuse, before anything is flattened, a design whose parts nest deeper than
    :data:`MAX_PART_DEPTH`, place more than :data:`MAX_PARTS` instances in all, or
    declare more than :data:`MAX_BITS` bits once flattened (or a recursive part).

    Sizes are counted per design from its declarations and its parts' sizes,
    without recursion, so a tree of parts that would flatten into millions of
    instances is refused in time proportional to the file.
    """
    depth: dict[str, int] = {}
    parts: dict[str, int] = {}
    nbits: dict[str, int] = {}

    def own_bits(block: P.DesignBlock) -> int:
        n = 0
        pieces: dict[str, list[P.FlopDecl]] = {}
        for st in block.stmts:
            if isinstance(st, P.InDecl):
                n += sum(len(_decl_bits(d, "")) for d in st.decls)
            elif isinstance(st, (P.OutDecl, P.NodeDecl)):
                n += len(_decl_bits(st.decl, ""))
            elif isinstance(st, P.FlopDecl):
                pieces.setdefault(st.decl.name, []).append(st)
        return n + sum(len(_decl_bits(g.decl, "")) for group in pieces.values() for g in group)

    def finish(block: P.DesignBlock) -> None:
        d, n, b = 0, 0, own_bits(block)
        for st in block.stmts:
            if not isinstance(st, P.PartDecl) or st.design not in blocks:
                continue  # an unknown design is reported where the part is flattened
            sub = st.design
            if depth[sub] + 1 > MAX_PART_DEPTH:
                raise InputError(st.pos, f"parts nest more than {MAX_PART_DEPTH} levels deep (the limit): "
                                         f"part {st.name} of design {block.name} places {sub}, "
                                         f"whose parts nest {depth[sub]} deep")
            d = max(d, depth[sub] + 1)
            n += 1 + parts[sub]
            if n > MAX_PARTS:
                raise InputError(st.pos, f"design {block.name} would flatten into more than {MAX_PARTS} "
                                         f"part instances (the limit), counting the parts of its parts")
            b += nbits[sub]
            if b > MAX_BITS:
                raise InputError(st.pos, f"design {block.name} would flatten into more than {MAX_BITS} bits "
                                         f"(the limit), counting the bits of its parts")
        if b > MAX_BITS:
            raise InputError(block.pos, f"design {block.name} declares more than {MAX_BITS} bits (the limit)")
        depth[block.name], parts[block.name], nbits[block.name] = d, n, b

    subs = {name: [st for st in b.stmts if isinstance(st, P.PartDecl) and st.design in blocks]
            for name, b in blocks.items()}
    for root in blocks:
        if root in depth:
            continue
        stack: list[tuple[str, int]] = [(root, 0)]
        on_stack, on_set = [root], {root}
        while stack:
            name, i = stack.pop()
            if i < len(subs[name]):
                stack.append((name, i + 1))
                st = subs[name][i]
                if st.design in on_set:
                    chain = " -> ".join(on_stack[on_stack.index(st.design):] + [st.design])
                    raise InputError(st.pos, f"recursive part: {chain}")
                if st.design not in depth:
                    stack.append((st.design, 0))
                    on_stack.append(st.design)
                    on_set.add(st.design)
            else:
                finish(blocks[name])
                on_set.discard(on_stack.pop())

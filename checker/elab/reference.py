"""A second, independent evaluator of designs: straight from the syntax tree.

Every engine reads the and-inverter graph that :mod:`checker.elaborate` builds,
so a wrong equation there would be proved and replayed without complaint.
:class:`Reference` reads the same design again, from the parsed blocks and the
language contract alone, and computes one clock with plain Python ints (0 or 1
per bit). Replay (``claims.common.replay``) runs every counterexample through
both and stops at the first bit on which they differ.

It deliberately shares nothing with the elaborator, the model or the
simulator: its own name resolution, part flattening, width rules and flop
equations. It trusts that the design passed elaboration (widths agree, names
exist, no combinational loop), but it never loops: combinational bits are put
in dependency order once, and a loop is reported instead of followed.

Asynchronous designs (``clock rise|fall BIT``, ``clear async``, ``preset
async``) are read too, but one clock of theirs is a cascade of events that
this module does not run: :meth:`Reference.sample` gives what the event model
needs at one code (each flop's sampled next value, its asynchronous clear and
preset) and :meth:`Reference.clock_sources` each flop's clock, and replay
(``claims.common.replay_events``) compares both with the graph at every firing.
:meth:`Reference.step` is for synchronous designs only.
"""

from __future__ import annotations

import bisect
from dataclasses import dataclass, field
from typing import Callable, Optional

from ..lang import parse as P
from ..errors import InputError

Read = Callable[[str], int]

# q+ of each flop kind from its pins and q (the contract's table; clear and
# preset are applied afterwards).
_NEXT: dict[str, Callable[[dict[str, int], int], int]] = {
    "D": lambda p, q: p["d"],
    "T": lambda p, q: q ^ p["t"],
    "JK": lambda p, q: (p["j"] & (1 - q)) | ((1 - p["k"]) & q),
    "SR": lambda p, q: p["s"] | ((1 - p["r"]) & q),
}

# gate name -> (fold over the argument bits, invert the result)
_FOLDS: dict[str, tuple[Callable[[list[int]], int], int]] = {
    "and": (lambda xs: int(all(xs)), 0),
    "nand": (lambda xs: int(all(xs)), 1),
    "or": (lambda xs: int(any(xs)), 0),
    "nor": (lambda xs: int(any(xs)), 1),
    "xor": (lambda xs: sum(xs) & 1, 0),
    "xnor": (lambda xs: sum(xs) & 1, 1),
}


def _bit_names(prefix: str, name: str, msb: Optional[int], lsb: Optional[int]) -> list[str]:
    """Flattened names of a declared range, ``msb`` first; a scalar is just its name."""
    if msb is None:
        return [prefix + name]
    assert lsb is not None
    step = 1 if lsb >= msb else -1
    return [f"{prefix}{name}[{i}]" for i in range(msb, lsb + step, step)]


@dataclass
class _Sym:
    """A name declared in one instance: what it is and its bit range."""

    kind: str  # in, out, node, flop
    name: str
    msb: Optional[int]
    lsb: Optional[int]
    prefix: str

    def select(self, index: Optional[P.Index]) -> list[str]:
        if index is None:
            return _bit_names(self.prefix, self.name, self.msb, self.lsb)
        last = index.first if index.last is None else index.last
        return _bit_names(self.prefix, self.name, index.first, last)


@dataclass
class _Scope:
    """One instance of a design block: the top, or a part at ``prefix``."""

    prefix: str
    block: P.DesignBlock
    syms: dict[str, _Sym] = field(default_factory=dict)
    parts: dict[str, "_Scope"] = field(default_factory=dict)


@dataclass
class _Comb:
    """A combinational bit: bit ``k`` of ``expr`` read in ``scope`` where ``want`` bits are driven."""

    expr: P.Expr
    scope: _Scope
    want: int
    k: int


@dataclass
class _Flop:
    """One flop bit with its own pins (bit ``k`` of each pin expression), clear and preset."""

    name: str
    kind: str
    scope: _Scope
    pins: dict[str, P.Expr]
    want: int
    k: int
    clear: Optional[P.Expr]
    preset: Optional[P.Expr]
    clock: Optional[P.Clock] = None  # None: the system clock
    aclear: Optional[P.Expr] = None  # `clear async`
    apreset: Optional[P.Expr] = None  # `preset async`


class Reference:
    """Evaluate design ``top`` of ``blocks`` one clock at a time, from its syntax tree."""

    def __init__(self, blocks: dict[str, P.DesignBlock], top: str) -> None:
        self.blocks = blocks
        self.top = top
        self.states: list[str] = []
        self.inputs: list[str] = []
        self.outputs: list[str] = []
        self._comb: dict[str, _Comb] = {}
        self._flops: list[_Flop] = []
        self._widths: dict[tuple[int, Optional[int]], int] = {}
        self._offsets: dict[int, list[int]] = {}
        self._names: dict[tuple[int, str], list[str]] = {}
        root = self._instance(blocks[top], "", [])
        for s in root.block.stmts:
            if isinstance(s, P.InDecl):
                for d in s.decls:
                    self.inputs += _bit_names("", d.name, d.msb, d.lsb)
            elif isinstance(s, P.OutDecl):
                self.outputs += _bit_names("", s.decl.name, s.decl.msb, s.decl.lsb)
        self.states = [f.name for f in self._flops]
        self.synchronous = all(f.clock is None and f.aclear is None and f.apreset is None for f in self._flops)
        self._order = self._comb_order()

    # --- flattening ---------------------------------------------------
    def _instance(self, block: P.DesignBlock, prefix: str, stack: list[str]) -> _Scope:
        """Declare ``block``'s names under ``prefix`` and record its bits; recurse into parts."""
        if block.name in stack:
            raise InputError(block.pos, "recursive part: " + " -> ".join(stack + [block.name]))
        sc = _Scope(prefix, block)
        ranges: dict[str, list[tuple[int, int]]] = {}
        flop_names = {s.decl.name for s in block.stmts if isinstance(s, P.FlopDecl)}
        for s in block.stmts:
            if isinstance(s, P.InDecl):
                for d in s.decls:
                    sc.syms[d.name] = _Sym("in", d.name, d.msb, d.lsb, prefix)
            elif isinstance(s, (P.OutDecl, P.NodeDecl)):
                d = s.decl
                if isinstance(s, P.OutDecl) and _flop_output(s, flop_names):
                    continue  # the flop of that name is the output
                sc.syms[d.name] = _Sym("out" if isinstance(s, P.OutDecl) else "node", d.name, d.msb, d.lsb, prefix)
            elif isinstance(s, P.FlopDecl):
                d = s.decl
                if d.msb is None:
                    sc.syms[d.name] = _Sym("flop", d.name, None, None, prefix)
                else:
                    ranges.setdefault(d.name, []).append((d.msb, d.lsb))
        for name, rs in ranges.items():
            sc.syms[name] = _Sym("flop", name, *_whole_range(rs), prefix)
        for s in block.stmts:
            if isinstance(s, (P.OutDecl, P.NodeDecl)):
                if isinstance(s, P.OutDecl) and _flop_output(s, flop_names):
                    continue
                bits = _bit_names(prefix, s.decl.name, s.decl.msb, s.decl.lsb)
                for k, b in enumerate(bits):
                    self._comb[b] = _Comb(s.expr, sc, len(bits), k)
            elif isinstance(s, P.FlopDecl):
                bits = _bit_names(prefix, s.decl.name, s.decl.msb, s.decl.lsb)
                pins = {p.name: p.expr for p in (s.pins or [])}
                sync_clear = None if s.clear_async else s.clear
                sync_preset = None if s.preset_async else s.preset
                for k, b in enumerate(bits):
                    self._flops.append(_Flop(b, s.kind, sc, pins, len(bits), k, sync_clear, sync_preset, s.clock,
                                             s.clear if s.clear_async else None,
                                             s.preset if s.preset_async else None))
            elif isinstance(s, P.PartDecl):
                sub = self.blocks[s.design]
                pre = f"{prefix}{s.name}."
                ports = {d.name: d for st in sub.stmts if isinstance(st, P.InDecl) for d in st.decls}
                for c in s.conns:
                    d = ports[c.port]
                    bits = _Sym("in", d.name, d.msb, d.lsb, pre).select(c.index)
                    for k, b in enumerate(bits):
                        self._comb[b] = _Comb(c.expr, sc, len(bits), k)
                sc.parts[s.name] = self._instance(sub, pre, stack + [block.name])
        return sc

    # --- widths -------------------------------------------------------
    def _width(self, e: P.Expr, sc: _Scope, want: Optional[int]) -> int:
        """Bits of ``e`` where ``want`` bits are driven (None: no width is known, as in a brace list)."""
        key = (id(e), want)
        w = self._widths.get(key)
        if w is None:
            w = self._width_of(e, sc, want)
            self._widths[key] = w
        return w

    def _width_of(self, e: P.Expr, sc: _Scope, want: Optional[int]) -> int:
        if isinstance(e, P.Num):
            if e.text[:2].lower() == "0b":
                return len(e.text) - 2
            return want if want is not None and want > 1 else 1
        if isinstance(e, P.Ref):
            return len(self._resolve(e, sc))
        if isinstance(e, P.Not):
            return self._width(e.arg, sc, want)
        if isinstance(e, P.Op):
            return max(self._width(a, sc, want) for a in e.args)
        if isinstance(e, P.Cat):
            return self._cat_offsets(e, sc)[-1]
        if isinstance(e, P.Call):
            return max(self._width(a, sc, want) for a in e.args)
        raise ValueError(f"not a design expression: {e!r}")

    def _cat_offsets(self, e: P.Cat, sc: _Scope) -> list[int]:
        """Start of each item in a brace list, counted from the msb, and the total last."""
        offs = self._offsets.get(id(e))
        if offs is None:
            offs = [0]
            for it in e.items:
                offs.append(offs[-1] + self._width(it, sc, None))
            self._offsets[id(e)] = offs
        return offs

    # --- names --------------------------------------------------------
    def _resolve(self, r: P.Ref, sc: _Scope) -> list[str]:
        """The flattened bit names a reference reads in instance ``sc``, msb first."""
        key = (id(r), sc.prefix)
        names = self._names.get(key)
        if names is None:
            if len(r.path) == 1:
                names = sc.syms[r.path[0]].select(r.index)
            else:
                part, port = r.path
                sym = sc.parts[part].syms[port]
                assert sym.kind in ("out", "flop"), r  # a flop of the output's name is that output
                names = sym.select(r.index)
            self._names[key] = names
        return names

    # --- one bit of an expression -------------------------------------
    def _bit(self, e: P.Expr, sc: _Scope, want: Optional[int], k: int, read: Read) -> int:
        """Bit ``k`` (0 = most significant) of ``e``; ``read`` gives any named bit's value."""
        if isinstance(e, P.Num):
            if e.text[:2].lower() == "0b":
                return int(e.text[2 + k])
            w = self._width(e, sc, want)
            return (e.value >> (w - 1 - k)) & 1
        if isinstance(e, P.Ref):
            return read(self._resolve(e, sc)[k])
        if isinstance(e, P.Not):
            return 1 - self._bit(e.arg, sc, want, k, read)
        if isinstance(e, P.Op):
            xs = self._operands(e.args, sc, want, k, read)
            if e.op == "&":
                return int(all(xs))
            if e.op == "|":
                return int(any(xs))
            return sum(xs) & 1
        if isinstance(e, P.Cat):
            offs = self._cat_offsets(e, sc)
            i = bisect.bisect_right(offs, k) - 1
            return self._bit(e.items[i], sc, None, k - offs[i], read)
        if isinstance(e, P.Call):
            xs = self._operands(e.args, sc, want, k, read)
            if e.name == "not":
                return 1 - xs[0]
            if e.name == "buf":
                return xs[0]
            if e.name == "mux":
                s, a, b = xs
                return b if s else a
            fold, inv = _FOLDS[e.name]
            return fold(xs) ^ inv
        raise ValueError(f"not a design expression: {e!r}")

    def _operands(self, args: list[P.Expr], sc: _Scope, want: Optional[int], k: int, read: Read) -> list[int]:
        """Bit ``k`` of each operand; a one-bit operand applies to every bit."""
        return [self._bit(a, sc, want, 0 if self._width(a, sc, want) == 1 else k, read) for a in args]

    # --- evaluation order ---------------------------------------------
    def _deps(self, c: _Comb) -> list[str]:
        seen: list[str] = []

        def note(name: str) -> int:
            seen.append(name)
            return 0

        self._bit(c.expr, c.scope, c.want, c.k, note)
        return [n for n in seen if n in self._comb]

    def _comb_order(self) -> list[str]:
        """Combinational bits, each after the bits it reads; a loop is an InputError."""
        deps = {b: self._deps(c) for b, c in self._comb.items()}
        order: list[str] = []
        mark: dict[str, int] = {}  # 1 being visited, 2 placed
        for root in self._comb:
            if mark.get(root):
                continue
            mark[root] = 1
            stack = [(root, iter(deps[root]))]
            while stack:
                b, it = stack[-1]
                nxt = next(it, None)
                if nxt is None:
                    stack.pop()
                    mark[b] = 2
                    order.append(b)
                elif mark.get(nxt) == 1:
                    loop = [x for x, _ in stack]
                    loop = loop[loop.index(nxt):] + [nxt]
                    raise InputError(self._comb[nxt].expr.pos, "combinational loop: " + " -> ".join(loop))
                elif not mark.get(nxt):
                    mark[nxt] = 1
                    stack.append((nxt, iter(deps[nxt])))
        return order

    # --- one clock ----------------------------------------------------
    def values(self, state: dict[str, int], inputs: dict[str, int]) -> dict[str, int]:
        """Every named bit (inputs, flops, nodes, outputs, part inputs) in ``state`` under ``inputs``."""
        val: dict[str, int] = {n: inputs.get(n, 0) & 1 for n in self.inputs}
        for n in self.states:
            val[n] = state[n] & 1
        read = val.__getitem__
        for b in self._order:
            c = self._comb[b]
            val[b] = self._bit(c.expr, c.scope, c.want, c.k, read)
        return val

    def _loads(self, val: dict[str, int]) -> tuple[dict[str, int], list[str]]:
        """What every flop loads at its own clock edge (pins, then synchronous clear and
        preset, clear winning) in the named bits ``val``; and its SR faults."""
        read = val.__getitem__
        nxt: dict[str, int] = {}
        faults: list[str] = []
        for f in self._flops:
            pins = {p: self._bit(e, f.scope, f.want, f.k, read) for p, e in f.pins.items()}
            clear = 0 if f.clear is None else self._bit(f.clear, f.scope, 1, 0, read)
            preset = 0 if f.preset is None else self._bit(f.preset, f.scope, 1, 0, read)
            q = val[f.name]
            if clear:
                nxt[f.name] = 0
            elif preset:
                nxt[f.name] = 1
            else:
                nxt[f.name] = _NEXT[f.kind](pins, q)
                if f.kind == "SR" and pins["s"] and pins["r"]:
                    faults.append(f.name)
        return nxt, faults

    def step(self, state: dict[str, int], inputs: dict[str, int]) -> tuple[dict[str, int], dict[str, int], list[str]]:
        """(next state, outputs before the edge, SR bits with s = r = 1 while clear = preset = 0).

        Synchronous designs only: in an asynchronous one a clock is a cascade of
        events, and :meth:`sample` gives what each event reads instead."""
        if not self.synchronous:
            raise NotImplementedError(f"{self.top} is asynchronous: one clock is a cascade of events, not one "
                                      f"step; use sample() at each code of the cascade")
        val = self.values(state, inputs)
        nxt, faults = self._loads(val)
        outs = {n: val[n] for n in self.outputs}
        return nxt, outs, faults

    # --- asynchronous designs -----------------------------------------
    def sample(self, state: dict[str, int], inputs: dict[str, int]) -> tuple[dict[str, int], dict[str, int], dict[str, int]]:
        """At the code ``state`` under ``inputs``: (what each flop would load at an edge of its
        clock, from its pins and synchronous clear/preset only; whether its asynchronous clear
        holds; whether its asynchronous preset holds), each keyed by flop bit name. A flop
        without ``clear async`` (``preset async``) has 0 there."""
        val = self.values(state, inputs)
        read = val.__getitem__
        nxt, _ = self._loads(val)
        aclear = {f.name: 0 if f.aclear is None else self._bit(f.aclear, f.scope, 1, 0, read) for f in self._flops}
        apreset = {f.name: 0 if f.apreset is None else self._bit(f.apreset, f.scope, 1, 0, read) for f in self._flops}
        return nxt, aclear, apreset

    def clock_sources(self) -> dict[str, Optional[tuple[str, str]]]:
        """Each flop bit's clock: None for the system clock, else (edge, flop bit) with edge
        'rise' or 'fall'. A clock is a flop bit or a plain copy of one through nodes, outputs
        or part inputs (a brace list only selects bits); bit ``i`` of a vector flop's clock
        clocks its bit ``i``. A clock through a gate or a constant, or one that traces to an
        input of the top design, is an InputError."""
        out: dict[str, Optional[tuple[str, str]]] = {}
        flops = set(self.states)
        for f in self._flops:
            if f.clock is None:
                out[f.name] = None
                continue
            e: P.Expr = f.clock.signal
            sc, want, k = f.scope, f.want, f.k
            seen: set[str] = set()
            while True:
                name = self._copied_bit(e, sc, want, k)
                if name is None:
                    raise InputError(f.clock.pos, f"the clock of flop {f.name} passes through a gate or a constant; "
                                                  f"a clock is a flop bit or a plain copy of one")
                if name in flops:
                    out[f.name] = (f.clock.edge, name)
                    break
                c = self._comb.get(name)
                if c is None:
                    raise InputError(f.clock.pos, f"the clock of flop {f.name} traces to input {name} of the "
                                                  f"top design, not to a flop bit")
                if name in seen:  # pragma: no cover - a loop is refused when the order is built
                    raise InputError(f.clock.pos, f"the clock of flop {f.name} runs in a loop")
                seen.add(name)
                e, sc, want, k = c.expr, c.scope, c.want, c.k
        return out

    def _copied_bit(self, e: P.Expr, sc: _Scope, want: Optional[int], k: int) -> Optional[str]:
        """The named bit that bit ``k`` of ``e`` copies unchanged, or None when a gate or a
        constant makes it (a name reads its bits; a brace list picks one of its items' bits)."""
        while True:
            if isinstance(e, P.Ref):
                names = self._resolve(e, sc)
                return names[k] if len(names) > 1 else names[0]
            if isinstance(e, P.Cat):
                offs = self._cat_offsets(e, sc)
                i = bisect.bisect_right(offs, k) - 1
                e, k = e.items[i], k - offs[i]
                continue
            return None


def _flop_output(s: P.OutDecl, flop_names: set[str]) -> bool:
    """``out q = q`` with ``q`` a flop of the same design: the flop is the output."""
    e = s.expr
    return isinstance(e, P.Ref) and e.path == [s.decl.name] and e.index is None and s.decl.name in flop_names


def _whole_range(rs: list[tuple[int, int]]) -> tuple[int, int]:
    """The (msb, lsb) that a flop's pieces form together: descending unless its slices ascend."""
    lo = min(min(a, b) for a, b in rs)
    hi = max(max(a, b) for a, b in rs)
    if len(rs) == 1:
        return rs[0]
    if any(a < b for a, b in rs):
        return lo, hi
    return hi, lo

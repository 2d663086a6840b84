"""AIGER 1.9 (``.aag`` ASCII and ``.aig`` binary) to the syntax tree.

The format (Biere, "The AIGER And-Inverter Graph (AIG) Format, Version
20071012" and its 1.9 additions): a header ``aag M I L O A [B C J F]``, one
line per input, latch (``next [reset]``), output, bad, constraint, justice
and fairness literal, then the AND gates (ASCII: ``lhs rhs0 rhs1``; binary:
two 7-bit varint deltas per gate), a symbol table and comments.

:func:`parse_aiger` reads either form into :class:`AigerData`;
:func:`aiger_file` turns it into one design named after the file: inputs and
latches (D flops) and outputs from the symbol table (``i0``, ``l0``, ``o0``
where it has none; ``NAME[i]`` symbols make vectors), one node per AND gate.
A design has no bad-state, constraint, justice or fairness properties, so a
file with any is refused for ``use`` (tests read them with ``properties=True``).
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from pathlib import Path
from typing import Optional

from ..errors import InputError, Pos
from . import netlist as N
from . import parse as P

MAX_AIGER_VARS = 10_000_000


@dataclass
class AigerData:
    """One AIGER file, literals as written; ``latches`` are ``(lit, next, reset)``."""

    maxvar: int
    inputs: list[int] = field(default_factory=list)
    latches: list[tuple[int, int, int]] = field(default_factory=list)
    outputs: list[int] = field(default_factory=list)
    bad: list[int] = field(default_factory=list)
    constraints: list[int] = field(default_factory=list)
    justice: list[list[int]] = field(default_factory=list)
    fairness: list[int] = field(default_factory=list)
    ands: list[tuple[int, int, int]] = field(default_factory=list)
    symbols: dict[tuple[str, int], str] = field(default_factory=dict)
    comments: list[str] = field(default_factory=list)
    pos: dict = field(default_factory=dict)  # ('and', k) / ('latch', k) ... -> Pos


class _Reader:
    """Lines and binary numbers of an AIGER file, with positions."""

    def __init__(self, path: str, data: bytes) -> None:
        self.path, self.data, self.at, self.line = path, data, 0, 1

    def pos(self, col: int = 1) -> Pos:
        return Pos(self.path, self.line, col)

    def text_line(self, what: str) -> tuple[list[str], Pos]:
        if self.at >= len(self.data):
            raise InputError(self.pos(), f"unexpected end of file; expected {what}")
        end = self.data.find(b"\n", self.at)
        if end < 0:
            end = len(self.data)
        raw = self.data[self.at:end]
        try:
            text = raw.decode("ascii")
        except UnicodeDecodeError:
            raise InputError(self.pos(), f"expected {what} as ASCII text") from None
        p = self.pos()
        self.at, self.line = end + 1, self.line + 1
        return text.rstrip("\r").split(" ") if text.strip() else [], p

    def numbers(self, n_min: int, n_max: int, what: str) -> tuple[list[int], Pos]:
        words, p = self.text_line(what)
        if not n_min <= len(words) <= n_max or not all(w.isdigit() for w in words):
            raise InputError(p, f"expected {what}, found {' '.join(words)!r}")
        return [int(w) for w in words], p

    def varint(self) -> int:
        x, shift = 0, 0
        start = self.at
        while True:
            if self.at >= len(self.data):
                raise InputError(self.pos(), f"unexpected end of file in the binary AND gates (byte {start})")
            b = self.data[self.at]
            self.at += 1
            x |= (b & 0x7F) << shift
            if not b & 0x80:
                return x
            shift += 7
            if shift > 63:
                raise InputError(self.pos(), f"binary number at byte {start} is too long")


_HEADER = re.compile(r"^(aag|aig)( \d+){5,9}$")


def parse_aiger(path: str, data: bytes) -> AigerData:
    """Read an ASCII or binary AIGER file; every problem is an InputError at its line."""
    r = _Reader(path, data)
    words, hp = r.text_line("the header 'aag M I L O A'")
    if not words or words[0] not in ("aag", "aig"):
        raise InputError(hp, "an AIGER file starts with 'aag' (ASCII) or 'aig' (binary)")
    if not _HEADER.match(" ".join(words)):
        raise InputError(hp, "the AIGER header is 'aag M I L O A' with up to four more counts B C J F")
    binary = words[0] == "aig"
    m, i, l, o, a, *rest = [int(w) for w in words[1:]]
    b, c, j, f = (rest + [0, 0, 0, 0])[:4]
    if m > MAX_AIGER_VARS:
        raise InputError(hp, f"{m} variables; the limit is {MAX_AIGER_VARS}")
    if m < i + l + a:
        raise InputError(hp, f"M = {m} is less than I + L + A = {i + l + a}")
    if binary and m != i + l + a:
        raise InputError(hp, f"a binary AIGER file needs M = I + L + A ({m} != {i + l + a})")
    d = AigerData(m)
    maxlit = 2 * m + 1

    def lit(x: int, p: Pos, what: str) -> int:
        if x > maxlit:
            raise InputError(p, f"{what} literal {x} is above 2M+1 = {maxlit}")
        return x

    for k in range(i):
        if binary:
            d.inputs.append(2 * (k + 1))
            continue
        (x,), p = r.numbers(1, 1, f"input {k} (one literal)")
        if x < 2 or x & 1:
            raise InputError(p, f"input literal {x} must be even and not constant")
        d.inputs.append(lit(x, p, "input"))
        d.pos[("input", k)] = p
    for k in range(l):
        if binary:
            nums, p = r.numbers(1, 2, f"latch {k} (next [reset])")
            cur = 2 * (i + k + 1)
        else:
            nums, p = r.numbers(2, 3, f"latch {k} (lit next [reset])")
            cur = nums.pop(0)
            if cur < 2 or cur & 1:
                raise InputError(p, f"latch literal {cur} must be even and not constant")
        nxt = lit(nums[0], p, "latch next-state")
        reset = nums[1] if len(nums) > 1 else 0
        if reset not in (0, 1, cur):
            raise InputError(p, f"latch reset {reset} must be 0, 1 or the latch's own literal {cur} (free)")
        d.latches.append((lit(cur, p, "latch"), nxt, reset))
        d.pos[("latch", k)] = p
    for what, n, target in (("output", o, d.outputs), ("bad", b, d.bad), ("constraint", c, d.constraints)):
        for k in range(n):
            (x,), p = r.numbers(1, 1, f"{what} {k} (one literal)")
            target.append(lit(x, p, what))
            d.pos[(what, k)] = p
    sizes = []
    for k in range(j):
        (x,), p = r.numbers(1, 1, f"the size of justice property {k}")
        sizes.append(x)
    for k, n in enumerate(sizes):
        d.justice.append([lit(r.numbers(1, 1, "a justice literal")[0][0], r.pos(), "justice") for _ in range(n)])
    for k in range(f):
        (x,), p = r.numbers(1, 1, f"fairness {k} (one literal)")
        d.fairness.append(lit(x, p, "fairness"))
    for k in range(a):
        if binary:
            p = r.pos()
            lhs = 2 * (i + l + k + 1)
            d0 = r.varint()
            d1 = r.varint()
            r0 = lhs - d0
            r1 = r0 - d1
            if d0 == 0 or r0 < 0 or r1 < 0:
                raise InputError(p, f"binary AND gate {k} (literal {lhs}) has bad deltas {d0}, {d1}")
            d.ands.append((lhs, r0, r1))
        else:
            (lhs, r0, r1), p = r.numbers(3, 3, f"AND gate {k} (lhs rhs0 rhs1)")
            if lhs < 2 or lhs & 1:
                raise InputError(p, f"AND gate literal {lhs} must be even and not constant")
            d.ands.append((lit(lhs, p, "AND"), lit(r0, p, "AND input"), lit(r1, p, "AND input")))
        d.pos[("and", k)] = p
    if binary:  # the text after the gates starts a line
        r.line = r.data.count(b"\n", 0, r.at) + 1
    counts = {"i": i, "l": l, "o": o, "b": b, "c": c, "j": j, "f": f}
    while r.at < len(r.data):
        p = r.pos()
        end = r.data.find(b"\n", r.at)
        end = len(r.data) if end < 0 else end
        raw = r.data[r.at:end]
        r.at, r.line = end + 1, r.line + 1
        text = raw.decode("utf-8", errors="replace").rstrip("\r")
        if text == "c":
            rest_text = r.data[r.at:].decode("utf-8", errors="replace")
            d.comments = rest_text.splitlines()
            break
        if not text:
            continue
        m_ = re.match(r"^([ilobcjf])(\d+) (.+)$", text)
        if not m_:
            raise InputError(p, f"expected a symbol ('i0 NAME'), or 'c' before comments; found {text[:40]!r}")
        kind, idx, name = m_.group(1), int(m_.group(2)), m_.group(3)
        if idx >= counts[kind]:
            raise InputError(p, f"symbol {kind}{idx} names a {kind}-entry that does not exist "
                                f"(there are {counts[kind]})")
        if (kind, idx) in d.symbols:
            raise InputError(p, f"symbol {kind}{idx} is given twice")
        d.symbols[(kind, idx)] = name
        d.pos[("sym", kind, idx)] = p
    _check_defs(path, d)
    return d


def _check_defs(path: str, d: AigerData) -> None:
    defined: dict[int, str] = {}
    for k, x in enumerate(d.inputs):
        if x >> 1 in defined:
            raise InputError(d.pos.get(("input", k), Pos(path, 1, 1)), f"variable {x >> 1} is defined twice")
        defined[x >> 1] = "input"
    for k, (x, _, _) in enumerate(d.latches):
        if x >> 1 in defined:
            raise InputError(d.pos[("latch", k)], f"variable {x >> 1} is defined twice")
        defined[x >> 1] = "latch"
    for k, (x, _, _) in enumerate(d.ands):
        if x >> 1 in defined:
            raise InputError(d.pos[("and", k)], f"variable {x >> 1} is defined twice")
        defined[x >> 1] = "and"
    for k, (lhs, r0, r1) in enumerate(d.ands):
        for x in (r0, r1):
            if x >> 1 and x >> 1 not in defined:
                raise InputError(d.pos[("and", k)], f"AND gate {lhs} reads literal {x}, whose variable is never defined")
    for key, x in ([(("latch", k), nx) for k, (_, nx, _) in enumerate(d.latches)]
                   + [(("output", k), x) for k, x in enumerate(d.outputs)]
                   + [(("bad", k), x) for k, x in enumerate(d.bad)]):
        if x >> 1 and x >> 1 not in defined:
            raise InputError(d.pos.get(key, Pos(path, 1, 1)), f"literal {x} reads variable {x >> 1}, which is never defined")


def design_name(path: str) -> str:
    """A design name from a file name: its stem, other characters than letters, digits and _ as _."""
    stem = re.sub(r"[^A-Za-z0-9_]", "_", Path(path).stem) or "design"
    return "_" + stem if stem[0].isdigit() or stem in P.RESERVED else stem


def aiger_file(path: str, data: bytes, properties: bool = False) -> P.File:
    """One AIGER file as a :class:`P.File` holding one design named after the file.

    With ``properties``, bad-state and justice literals become outputs ``bad0``,
    ``justice0_1`` ... (for tests that check what ``export`` wrote); otherwise a
    file with bad, constraint, justice or fairness entries is refused."""
    top = Pos(path, 1, 1)
    if len(data) > P.MAX_FILE_BYTES:
        raise InputError(top, f"file is larger than {P.MAX_FILE_BYTES // (1024 * 1024)} MiB (the limit)")
    d = parse_aiger(path, data)
    if not properties:
        for what, items in (("bad-state", d.bad), ("constraint", d.constraints), ("justice", d.justice),
                            ("fairness", d.fairness)):
            if items:
                raise InputError(top, f"this AIGER file has {len(items)} {what} propert"
                                      f"{'y' if len(items) == 1 else 'ies'}; a design read by 'use' has "
                                      f"inputs, latches, outputs and AND gates only")
    names_in = [d.symbols.get(("i", k), f"i{k}") for k in range(len(d.inputs))]
    names_l = [d.symbols.get(("l", k), f"l{k}") for k in range(len(d.latches))]
    names_o = [d.symbols.get(("o", k), f"o{k}") for k in range(len(d.outputs))]
    outs = list(zip(names_o, d.outputs))
    if properties:
        outs += [(d.symbols.get(("b", k), f"bad{k}"), x) for k, x in enumerate(d.bad)]
        for k, js in enumerate(d.justice):
            outs += [(f"justice{k}_{t}", x) for t, x in enumerate(js)]
    vec = N.Vectors()
    stmts: list = []
    ins = vec.group(names_in)
    if ins:
        stmts.append(P.InDecl([N.decl(b, hi, lo, top) for b, hi, lo, _ in ins], top))
    flops = vec.group(names_l)
    node = N.fresh_prefix(names_in + names_l + [n for n, _ in outs], "_a")
    var_bit: dict[int, str] = {}
    for x, n in zip(d.inputs, names_in):
        var_bit[x >> 1] = n
    for (x, _, _), n in zip(d.latches, names_l):
        var_bit[x >> 1] = n
    and_vars = {lhs >> 1 for lhs, _, _ in d.ands}

    def ref(x: int, p: Pos) -> P.Expr:
        v = x >> 1
        if v == 0:
            e: P.Expr = N.const(0, p)
        elif v in and_vars:
            e = P.Ref([f"{node}{v}"], None, p)
        else:
            e = vec.ref(var_bit[v], p)
        return N.neg(e, p) if x & 1 else e

    for k, (lhs, r0, r1) in enumerate(d.ands):
        p = d.pos[("and", k)]
        stmts.append(P.NodeDecl(N.decl(f"{node}{lhs >> 1}", None, None, p), N.and_([ref(r0, p), ref(r1, p)], p), p))
    inits: dict[str, Optional[int]] = {}
    latch_of = {n: k for k, n in enumerate(names_l)}
    for base, hi, lo, bits in flops:
        for b in bits:
            k = latch_of[b]
            x, nxt, reset = d.latches[k]
            p = d.pos[("latch", k)]
            i_ = N.split_bit(b)[1] if hi is not None else None
            dd = N.decl(base, i_, i_, p, bit=i_ is not None)
            stmts.append(P.FlopDecl(dd, "D", p, [P.Pin("d", ref(nxt, p), p)], None, None, None, p))
            inits[b] = None if reset == x else reset
    flop_base = {f[0] for f in flops}
    latch_lit = {n: x for (x, _, _), n in zip(d.latches, names_l)}
    out_pos = {n: d.pos.get(("output", k), top) for k, n in enumerate(names_o)}
    lits = dict(outs)
    for base, hi, lo, bits in vec.group([n for n, _ in outs], reuse=[f[0] for f in flops]):
        p = out_pos.get(bits[0], top)
        if base in flop_base:
            if any(lits[b] != latch_lit[b] for b in bits):
                raise InputError(p, f"output {base} has the name of a latch but is not that latch")
            e: P.Expr = P.Ref([base], None, p)
        else:
            items = [ref(lits[b], p) for b in bits]
            e = items[0] if hi is None else P.Cat(items, p)
        stmts.append(P.OutDecl(N.decl(base, hi, lo, p), e, p))
    block = P.DesignBlock(design_name(path), stmts, top, source="aiger", inits=inits)
    return P.File(path, designs=[block])

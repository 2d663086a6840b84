"""BLIF (Berkeley Logic Interchange Format) to the syntax tree.

The subset read: ``.model .inputs .outputs .names .latch .subckt .end``, ``#``
comments and ``\\`` line continuation. Each ``.model`` is a design of that
name. A ``.names`` cover lists rows of ``0 1 -`` input columns and one output
column: rows ending in 1 give the on-set, rows ending in 0 the off-set (one
kind per cover). ``.latch IN OUT [re|fe CONTROL] [INIT]`` is a D flop; the
input that controls a model's latches is its system clock, not one of its
inputs; a latch controlled by another latch's output is clocked by that flop
(a ripple stage, passed to the elaborator as ``clock``). Level-sensitive latch
types (``ah al as``) and every other construct are refused by name.
Initial values (0, 1; 2 and 3 mean free) are kept for ``export``.
"""

from __future__ import annotations

import re
from typing import Optional

from ..words import count
from ..errors import InputError, Pos
from . import netlist as N
from . import parse as P

REFUSED = {
    ".gate": "library gates (.gate)", ".mlatch": "library latches (.mlatch)", ".clock": "clock lists (.clock)",
    ".exdc": "external don't-care networks (.exdc)", ".search": "file inclusion (.search)",
    ".start_kiss": "state tables (.start_kiss)", ".end_kiss": "state tables (.end_kiss)",
    ".area": "delay and area annotations", ".delay": "delay and area annotations",
    ".wire_load_slope": "delay and area annotations", ".wire": "delay and area annotations",
    ".input_arrival": "delay and area annotations", ".output_required": "delay and area annotations",
    ".default_input_arrival": "delay and area annotations", ".default_output_required": "delay and area annotations",
    ".default_input_drive": "delay and area annotations", ".input_drive": "delay and area annotations",
    ".default_output_load": "delay and area annotations", ".output_load": "delay and area annotations",
    ".default_max_input_load": "delay and area annotations", ".max_input_load": "delay and area annotations",
    ".cname": "cell names (.cname)", ".attr": "attributes (.attr)", ".param": "parameters (.param)",
    ".conn": "connections (.conn)", ".barbuf": "buffers (.barbuf)", ".blackbox": "black boxes (.blackbox)",
    ".flop": "library flops (.flop)", ".constraint": "constraints",
}
LEVEL_LATCHES = {"ah": "active-high", "al": "active-low", "as": "asynchronous"}


class _Line:
    def __init__(self, words: list[tuple[str, Pos]], pos: Pos) -> None:
        self.words, self.pos = words, pos


def _lines(path: str, text: str) -> list[_Line]:
    out: list[_Line] = []
    pending: list[tuple[str, Pos]] = []
    start: Optional[Pos] = None
    for ln, raw in enumerate(text.split("\n"), 1):
        body = raw.split("#", 1)[0].rstrip("\r")
        cont = body.rstrip().endswith("\\")
        if cont:
            body = body.rstrip()[:-1]
        for m in re.finditer(r"\S+", body):
            p = Pos(path, ln, m.start() + 1)
            if start is None:
                start = p
            pending.append((m.group(0), p))
        if not cont and pending:
            out.append(_Line(pending, start))
            pending, start = [], None
    if pending:
        out.append(_Line(pending, start))
    return out


class _Model:
    def __init__(self, name: str, pos: Pos) -> None:
        self.name, self.pos = name, pos
        self.inputs: list[tuple[str, Pos]] = []
        self.outputs: list[tuple[str, Pos]] = []
        self.covers: list[tuple[list[tuple[str, Pos]], tuple[str, Pos], list[tuple[str, str, Pos]], Pos]] = []
        self.latches: list[dict] = []
        self.subckts: list[tuple[str, Pos, list[tuple[str, str, Pos]], Pos]] = []


def _parse(path: str, text: str) -> list[_Model]:
    models: list[_Model] = []
    cur: Optional[_Model] = None
    cover = None
    for line in _lines(path, text):
        head, hp = line.words[0]
        if not head.startswith("."):
            if cover is None:
                raise InputError(hp, f"'{head}' is not a BLIF command (they start with '.'), and no .names cover is open")
            ins, _, rows, _ = cover
            if len(ins) == 0:
                if len(line.words) != 1 or line.words[0][0] not in ("0", "1"):
                    raise InputError(hp, "a .names with no inputs takes rows '1' (constant 1) or '0'")
                rows.append(("", line.words[0][0], hp))
                continue
            if len(line.words) != 2:
                raise InputError(hp, f"a cover row is {count(len(ins), 'input column')} and one output column")
            cols, outv = line.words[0][0], line.words[1][0]
            if len(cols) != len(ins) or set(cols) - set("01-"):
                raise InputError(hp, f"cover row '{cols}' must have {count(len(ins), 'column')} of 0, 1 or -")
            if outv not in ("0", "1"):
                raise InputError(line.words[1][1], f"a cover row's output column is 0 or 1, not '{outv}'")
            rows.append((cols, outv, hp))
            continue
        cover = None
        args = line.words[1:]
        if head == ".model":
            if cur is not None:
                raise InputError(hp, f".model {cur.name} (line {cur.pos.line}) has no .end before this .model")
            name = args[0][0] if args else "top"
            cur = _Model(name, hp)
            models.append(cur)
            continue
        if head in REFUSED:
            raise InputError(hp, f"{REFUSED[head]} are outside the BLIF subset countersign reads "
                                 f"(.model .inputs .outputs .names .latch .subckt .end)")
        if cur is None:
            if head == ".end":
                raise InputError(hp, ".end without a .model")
            cur = _Model("top", hp)
            models.append(cur)
        if head == ".inputs":
            cur.inputs.extend(args)
        elif head == ".outputs":
            cur.outputs.extend(args)
        elif head == ".names":
            if not args:
                raise InputError(hp, ".names needs at least its output signal")
            cover = (args[:-1], args[-1], [], hp)
            cur.covers.append(cover)
        elif head == ".latch":
            cur.latches.append(_latch(args, hp))
        elif head == ".subckt":
            if not args:
                raise InputError(hp, ".subckt needs a model name")
            conns = []
            for w, p in args[1:]:
                if w.count("=") != 1:
                    raise InputError(p, f"a .subckt connection is FORMAL=ACTUAL, not '{w}'")
                a, b = w.split("=")
                conns.append((a, b, p))
            cur.subckts.append((args[0][0], args[0][1], conns, hp))
        elif head == ".end":
            cur = None
        else:
            raise InputError(hp, f"'{head}' is not part of the BLIF subset countersign reads "
                                 f"(.model .inputs .outputs .names .latch .subckt .end)")
    return models


def _latch(args: list[tuple[str, Pos]], hp: Pos) -> dict:
    if len(args) < 2 or len(args) > 5:
        raise InputError(hp, ".latch is IN OUT [TYPE CONTROL] [INIT]")
    lat = {"in": args[0], "out": args[1], "type": None, "control": None, "init": None, "pos": hp}
    rest = args[2:]
    if len(rest) >= 2:
        t, tp = rest[0]
        if t in LEVEL_LATCHES:
            raise InputError(tp, f"{LEVEL_LATCHES[t]} level-sensitive latches ('{t}') are not read; "
                                 f"only edge-triggered latches (re, fe) are")
        if t not in ("re", "fe"):
            raise InputError(tp, f"latch type '{t}': the types read are re and fe")
        lat["type"], lat["control"] = t, rest[1]
        rest = rest[2:]
    if len(rest) == 1:
        v, vp = rest[0]
        if v not in ("0", "1", "2", "3"):
            raise InputError(vp, f"a latch's initial value is 0, 1, 2 or 3, not '{v}'")
        lat["init"] = int(v)
        rest = []
    if rest:
        raise InputError(rest[0][1], ".latch is IN OUT [TYPE CONTROL] [INIT]")
    return lat


def _system_clocks(m: _Model, clocks: dict[str, set[str]]) -> set[str]:
    """The inputs of ``m`` that control latches, its own or through a subcircuit's clock
    (and nothing else): its system clock. ``clocks``: what is known of the other models."""
    used: set[str] = set()
    ctl = {lat["control"][0] for lat in m.latches if lat["control"] is not None}
    for ins, _, _, _ in m.covers:
        used.update(w for w, _ in ins)
    for lat in m.latches:
        used.add(lat["in"][0])
    for model, _, conns, _ in m.subckts:
        for a, b, _ in conns:
            (ctl if a in clocks.get(model, ()) else used).add(b)
    used.update(w for w, _ in m.outputs)
    names = {w for w, _ in m.inputs}
    return {c for c in ctl if c in names and c not in used}


def blif_file(path: str, data: bytes) -> P.File:
    """A BLIF file as a :class:`P.File`: one design per ``.model``."""
    text = P.decode_source(path, data)
    models = _parse(path, text)
    by_name = {m.name: m for m in models}
    clocks: dict[str, set[str]] = {}
    for _ in range(len(models) + 1):  # through every level of subcircuits
        new = {m.name: _system_clocks(m, clocks) for m in models}
        if new == clocks:
            break
        clocks = new
    f = P.File(path)
    for m in models:
        f.designs.append(_design(m, by_name, clocks))
    return f


def _design(m: _Model, models: dict[str, _Model], clocks: dict[str, set[str]]) -> P.DesignBlock:
    sysclk = clocks[m.name]
    vec = N.Vectors()
    stmts: list = []
    in_names = [w for w, _ in m.inputs if w not in sysclk]
    in_pos = {w: p for w, p in m.inputs}
    seen: dict[str, Pos] = {}
    for w, p in m.inputs:
        if w in seen:
            raise InputError(p, f"input '{w}' is listed twice (first at line {seen[w].line})")
        seen[w] = p
    ins = vec.group(in_names)
    if ins:
        stmts.append(P.InDecl([N.decl(b, hi, lo, in_pos[bits[0]]) for b, hi, lo, bits in ins], m.pos))
    latch_out = {lat["out"][0]: lat for lat in m.latches}
    flops = vec.group(list(latch_out))
    defined: dict[str, Pos] = {}

    def define(name: str, p: Pos) -> None:
        if name in defined or name in seen:
            first = defined.get(name) or seen[name]
            raise InputError(p, f"signal '{name}' is driven twice (first at line {first.line})")
        defined[name] = p

    def ref(name: str, p: Pos) -> P.Expr:
        return vec.ref(name, p)

    out_names = [w for w, _ in m.outputs]
    out_pos = {w: p for w, p in m.outputs}
    flop_base = {x[0] for x in flops}
    outs = vec.group(out_names, reuse=flop_base)
    # combinational signals: covers and subcircuit outputs
    comb: dict[str, tuple[P.Expr, Pos]] = {}
    for ins_, (outn, op), rows, hp in m.covers:
        define(outn, op)
        comb[outn] = (_cover(ins_, rows, hp, ref), hp)
    inits: dict[str, Optional[int]] = {}
    parts = N.fresh_prefix(list(seen) + list(latch_out) + list(comb) + out_names, "sub")
    for k, (model, mp, conns, hp) in enumerate(m.subckts):
        sub = models.get(model)
        if sub is None:
            raise InputError(mp, f"unknown model '{model}'")
        inst = f"{parts}{k}"
        sub_in = {w for w, _ in sub.inputs}
        sub_out = {w for w, _ in sub.outputs}
        sub_clk = clocks[model]
        pconns = []
        for a, b, p in conns:
            if a in sub_clk:
                if b not in sysclk:
                    raise InputError(p, f"'{a}' clocks the latches of {model}; connect it to this model's "
                                        f"system clock (a part clocked by another signal is not read)")
                continue
            if a in sub_in:
                pconns.append((a, b, p))
            elif a in sub_out:
                define(b, p)
                comb[b] = (None, p)  # filled below, once the part's vectors are known
                pconns.append((a, b, p))
            else:
                raise InputError(p, f"model {model} has no input or output '{a}'")
        sub_vec = N.Vectors()
        sub_vec.group([w for w, _ in sub.inputs if w not in sub_clk])
        sub_flops = sub_vec.group([lat["out"][0] for lat in sub.latches])
        sub_vec.group([w for w, _ in sub.outputs], reuse=[x[0] for x in sub_flops])
        in_conns: dict[str, dict[Optional[int], tuple[str, Pos]]] = {}
        for a, b, p in pconns:
            base, i = sub_vec.where.get(a, (a, None))
            if a in sub_in:
                in_conns.setdefault(base, {})[i] = (b, p)
            else:
                comb[b] = (P.Ref([inst, base], None if i is None else P.Index(i, None, p), p), p)
        cs = []
        for base, bits in in_conns.items():
            for i, (b, p) in bits.items():
                cs.append(P.Conn(base, None if i is None else P.Index(i, None, p), ref(b, p), p))
        stmts.append(P.PartDecl(inst, model, mp, cs, hp))
    for name, (e, p) in comb.items():
        if name in latch_out:
            raise InputError(p, f"signal '{name}' is driven twice (it is also a latch output)")
        if name in out_names:
            continue
        stmts.append(P.NodeDecl(N.decl(name, None, None, p), e, p))
    for base, hi, lo, bits in flops:
        for b in bits:
            lat = latch_out[b]
            p = lat["pos"]
            define(b, lat["out"][1])
            i = N.split_bit(b)[1] if hi is not None else None
            clock = None
            if lat["control"] is not None:
                c, cp = lat["control"]
                if c in latch_out:
                    clock = P.Clock("rise" if lat["type"] == "re" else "fall", ref(c, cp), cp)
                elif c not in sysclk:
                    raise InputError(cp, f"latch {b} is controlled by '{c}', which is neither this model's "
                                         f"clock input nor another latch's output")
            stmts.append(P.FlopDecl(N.decl(base, i, i, p, bit=i is not None), "D", p,
                                    [P.Pin("d", ref(lat["in"][0], lat["in"][1]), p)], clock, None, None, p))
            init = lat["init"]
            inits[b] = init if init in (0, 1) else None
    edges = {lat["type"] for lat in m.latches if lat["control"] is not None and lat["control"][0] in sysclk}
    if len(edges) > 1:
        raise InputError(m.pos, f"model {m.name}: latches on both edges of the system clock are not read")
    for base, hi, lo, bits in outs:
        p = out_pos[bits[0]]
        for b in bits:
            if b in seen:
                raise InputError(out_pos[b], f"output '{b}' is also an input; BLIF outputs are driven signals")
        if base in flop_base:
            e: P.Expr = P.Ref([base], None, p)
        else:
            items = []
            for b in bits:
                if b in comb:
                    items.append(comb[b][0])
                elif b in latch_out:
                    items.append(ref(b, p))
                else:
                    raise InputError(out_pos[b], f"output '{b}' is never driven")
            e = items[0] if hi is None else P.Cat(items, p)
        stmts.append(P.OutDecl(N.decl(base, hi, lo, p), e, p))
    return P.DesignBlock(m.name, stmts, m.pos, source="blif", inits=inits)


def _cover(ins: list[tuple[str, Pos]], rows: list[tuple[str, str, Pos]], hp: Pos, ref) -> P.Expr:
    if not rows:
        return N.const(0, hp)
    kinds = {o for _, o, _ in rows}
    if len(kinds) > 1:
        raise InputError(rows[0][2], "a cover mixes rows of output 1 (on-set) and 0 (off-set); use one kind")
    terms = []
    for cols, _, rp in rows:
        lits = []
        for (name, np_), c in zip(ins, cols):
            if c == "1":
                lits.append(ref(name, np_))
            elif c == "0":
                lits.append(N.neg(ref(name, np_), np_))
        terms.append(N.and_(lits, rp))
    e = N.or_(terms, hp)
    return N.neg(e, hp) if kinds == {"0"} else e

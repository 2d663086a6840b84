"""Designs out to the open formats: AIGER (``.aag``, ``.aig``), BLIF, structural Verilog, ``.cnl``.

Every writer starts from the elaborated design's circuit model (the flattened
and-inverter graph), so what is written is exactly what the claims were
proved about: flop bits keep their flattened names (``u1.q[2]``), inputs and
outputs their bit names, and every AND node of the graph becomes one gate.
A ``.cnl`` export of a design written in ``.cnl`` keeps its blocks (and the
blocks of its parts) as written; any other design is written flattened.

:class:`Circuit` with :func:`aiger_bytes` is also how claims are written
(``checker.tools.export``): bad-state outputs and justice properties of
AIGER 1.9 (Biere, Heljanko, Wieringa, "AIGER 1.9 and beyond", 2011).
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from pathlib import Path
from typing import Optional

from ..elab import Design
from ..fileio import write_output
from ..lang import parse as P
from ..lang.netlist import Vectors, fresh_prefix
from ..lang.unparse import unparse_file
from ..model import FALSE, Aig

FORMATS = (".aag", ".aig", ".blif", ".v", ".cnl")


@dataclass
class Circuit:
    """A sequential circuit over one fresh graph, ready for AIGER.

    ``inputs``: (name, leaf literal); ``latches``: (name, leaf literal, next
    literal, reset 0/1 or None for free); ``outputs`` and ``bad``: (name,
    literal); ``justice``: (name, literals)."""

    aig: Aig
    inputs: list[tuple[str, int]] = field(default_factory=list)
    latches: list[tuple[str, int, int, Optional[int]]] = field(default_factory=list)
    outputs: list[tuple[str, int]] = field(default_factory=list)
    bad: list[tuple[str, int]] = field(default_factory=list)
    justice: list[tuple[str, list[int]]] = field(default_factory=list)
    comments: list[str] = field(default_factory=list)
    clocks: list[Optional[tuple[str, int]]] = field(default_factory=list)  # per latch: None, or (edge, latch index)
    async_clear: list[int] = field(default_factory=list)  # per latch: literal (FALSE: none)
    async_preset: list[int] = field(default_factory=list)
    declared_async: bool = False  # the design is asynchronous even where its clears are constants

    @property
    def synchronous(self) -> bool:
        """Every latch on the system clock, no asynchronous clear or preset."""
        return (not self.declared_async and all(k is None for k in self.clocks)
                and not any(self.async_clear) and not any(self.async_preset))


def design_circuit(design: Design) -> Circuit:
    """The design's model copied into a fresh graph, with its flops' initial values
    where the netlist it was read from gave them (free otherwise)."""
    m = design.model
    aig = Aig()
    leaf: dict[int, int] = {}
    c = Circuit(aig)
    for n, l in zip(m.inputs, m.input_lits):
        leaf[l >> 1] = aig.leaf(n)
        c.inputs.append((n, leaf[l >> 1]))
    for n, l in zip(m.states, m.state_lits):
        leaf[l >> 1] = aig.leaf(n)
    n = len(m.states)
    clear = list(m.async_clear) or [FALSE] * n
    preset = list(m.async_preset) or [FALSE] * n
    roots = m.aig.copy_into(aig, list(m.next_lits) + list(m.output_lits) + clear + preset, leaf)
    inits = initial_values(design)
    for k, (name, l) in enumerate(zip(m.states, m.state_lits)):
        c.latches.append((name, leaf[l >> 1], roots[k], inits.get(name)))
    no = len(m.outputs)
    c.outputs = list(zip(m.outputs, roots[n:n + no]))
    c.async_clear = roots[n + no:2 * n + no]
    c.async_preset = roots[2 * n + no:]
    c.clocks = list(m.clocks) or [None] * n
    c.declared_async = m.declared_async
    c.comments = [f"countersign: design {design.name} from {design.pos.file}"]
    return c


def initial_values(design: Design) -> dict[str, Optional[int]]:
    """Initial values a netlist gave the top design's flops (bit name -> 0/1/None)."""
    block = design.source.get(design.name)
    return dict(block.inits) if block is not None else {}


# --- AIGER ------------------------------------------------------------------------
def _varint(x: int) -> bytes:
    out = bytearray()
    while x & ~0x7F:
        out.append((x & 0x7F) | 0x80)
        x >>= 7
    out.append(x)
    return bytes(out)


def aiger_bytes(c: Circuit, binary: bool) -> bytes:
    """The circuit as AIGER 1.9, ASCII (``aag``) or binary (``aig``)."""
    aig = c.aig
    var: dict[int, int] = {0: 0}
    for k, (_, l) in enumerate(c.inputs):
        var[l >> 1] = k + 1
    ni = len(c.inputs)
    for k, (_, l, _, _) in enumerate(c.latches):
        var[l >> 1] = ni + k + 1
    roots = ([nx for _, _, nx, _ in c.latches] + [l for _, l in c.outputs] + [l for _, l in c.bad]
             + [l for _, ls in c.justice for l in ls])
    ands = []
    nxt = ni + len(c.latches) + 1
    for n in aig.cone(roots):
        if aig.left[n] < 0:
            assert n in var, f"leaf {aig.leaf_names.get(n)} is neither an input nor a latch"
            continue
        var[n] = nxt
        nxt += 1
        ands.append(n)

    def lit(x: int) -> int:
        return 2 * var[x >> 1] + (x & 1)

    m = nxt - 1
    head = [m, ni, len(c.latches), len(c.outputs), len(ands)]
    if c.bad or c.justice:
        head += [len(c.bad), 0, len(c.justice), 0]
    lines = [("aig " if binary else "aag ") + " ".join(map(str, head))]
    if not binary:
        lines += [str(lit(l)) for _, l in c.inputs]
    for _, l, nx, reset in c.latches:
        r = lit(l) if reset is None else reset
        cur = [] if binary else [str(lit(l))]
        lines.append(" ".join(cur + [str(lit(nx))] + ([] if r == 0 else [str(r)])))
    lines += [str(lit(l)) for _, l in c.outputs]
    lines += [str(lit(l)) for _, l in c.bad]
    lines += [str(len(ls)) for _, ls in c.justice]
    lines += [str(lit(l)) for _, ls in c.justice for l in ls]
    body = bytearray(("\n".join(lines) + "\n").encode("ascii"))
    for n in ands:
        lhs = 2 * var[n]
        a, b = lit(aig.left[n]), lit(aig.right[n])
        a, b = max(a, b), min(a, b)
        if binary:
            body += _varint(lhs - a) + _varint(a - b)
        else:
            body += f"{lhs} {a} {b}\n".encode("ascii")
    syms = [f"i{k} {n}" for k, (n, _) in enumerate(c.inputs)]
    syms += [f"l{k} {n}" for k, (n, _, _, _) in enumerate(c.latches)]
    syms += [f"o{k} {n}" for k, (n, _) in enumerate(c.outputs)]
    syms += [f"b{k} {n}" for k, (n, _) in enumerate(c.bad)]
    syms += [f"j{k} {n}" for k, (n, _) in enumerate(c.justice)]
    body += ("\n".join(s for s in syms if "\n" not in s) + "\n" if syms else "").encode("utf-8")
    if c.comments:
        body += ("c\n" + "\n".join(c.comments) + "\n").encode("utf-8")
    return bytes(body)


# --- BLIF -------------------------------------------------------------------------
class NoForm(ValueError):
    """The design has no form in the format asked for (the message says why)."""


def _async_flops(c: Circuit) -> list[str]:
    return [n for (n, *_), cl, pr in zip(c.latches, c.async_clear, c.async_preset) if cl or pr]


def blif_text(design: Design) -> str:
    """The design as BLIF: one ``.names`` per AND gate; a flop on the system clock is a
    ``.latch`` on the rising edge of the ``clock`` input, a ripple stage a ``.latch`` whose
    control is the latch that clocks it (``re``/``fe``). Raises NoForm for an asynchronous
    clear or preset, which ``.latch`` cannot say."""
    c = design_circuit(design)
    aig = c.aig
    held = _async_flops(c)
    if held or (c.declared_async and all(k is None for k in c.clocks)):
        which = f" ({', '.join(held[:4])}{' ...' if len(held) > 4 else ''})" if held else ""
        raise NoForm(f"design {design.name} has asynchronous clears or presets{which}; a BLIF .latch has "
                     f"an edge and a control signal but no asynchronous clear or preset, so BLIF cannot "
                     f"hold this design: write it as .v or .cnl")
    system = [k is None for k in c.clocks]
    names = [n for n, _ in c.inputs] + [n for n, *_ in c.latches] + [n for n, _ in c.outputs]
    pre = fresh_prefix(names, "_n")
    clock = "clock" if "clock" not in names else fresh_prefix(names, "clock")
    sig: dict[int, str] = {}
    for n, l in c.inputs:
        sig[l >> 1] = n
    for n, l, _, _ in c.latches:
        sig[l >> 1] = n
    out = [f"# countersign: design {design.name} from {design.pos.file}",
           f"# {clock} is the system clock; a latch on it takes its rising edge" + (
               "; a latch controlled by another latch is a ripple stage on that latch's edge"
               if not all(system) else ""),
           f".model {design.name}",
           ".inputs " + " ".join([n for n, _ in c.inputs] + ([clock] if any(system) else [])),
           ".outputs " + " ".join(n for n, _ in c.outputs)]
    out = [line for line in out if line not in (".inputs ", ".outputs ")]  # none: no line (an empty one is unusual)
    roots = [nx for *_, nx, _ in c.latches] + [l for _, l in c.outputs]
    for n in aig.cone(roots):
        if aig.left[n] < 0:
            continue
        sig[n] = f"{pre}{n}"
        a, b = aig.left[n], aig.right[n]
        out.append(f".names {sig[a >> 1]} {sig[b >> 1]} {sig[n]}")
        out.append(f"{1 - (a & 1)}{1 - (b & 1)} 1")

    def source(l: int, want: str) -> None:
        """Drive signal ``want`` with literal ``l``."""
        if l >> 1 == 0:
            out.append(f".names {want}")
            if l & 1:
                out.append("1")
            return
        out.append(f".names {sig[l >> 1]} {want}")
        out.append(f"{1 - (l & 1)} 1")

    for k, (n, l, nx, reset) in enumerate(c.latches):
        d = f"{pre}d{k}"
        source(nx, d)
        if c.clocks[k] is None:
            edge, control = "re", clock
        else:
            edge, control = ("re" if c.clocks[k][0] == "rise" else "fe"), c.latches[c.clocks[k][1]][0]
        out.append(f".latch {d} {n} {edge} {control} {3 if reset is None else reset}")
    for n, l in c.outputs:
        if l >> 1 in sig and sig[l >> 1] == n and not l & 1:
            continue  # a flop of the same name is the output
        source(l, n)
    out.append(".end")
    return "\n".join(out) + "\n"


# --- Verilog ----------------------------------------------------------------------
_VKEYWORDS = set("""always and assign begin buf bufif0 bufif1 case casex casez cmos deassign default defparam
disable edge else end endcase endfunction endmodule endprimitive endspecify endtable endtask event for force
forever fork function highz0 highz1 if ifnone initial inout input integer join large macromodule medium module
nand negedge nmos nor not notif0 notif1 or output parameter pmos posedge primitive pull0 pull1 pulldown pullup
rcmos real realtime reg release repeat rnmos rpmos rtran rtranif0 rtranif1 scalared small specify specparam
strong0 strong1 supply0 supply1 table task time tran tranif0 tranif1 tri tri0 tri1 triand trior trireg vectored
wait wand weak0 weak1 while wire wor xnor xor generate endgenerate genvar localparam signed unsigned automatic
config library""".split())


def _vname(n: str) -> str:
    if re.fullmatch(r"[A-Za-z_][A-Za-z0-9_$]*", n) and n not in _VKEYWORDS:
        return n
    return "\\" + n + " "


def verilog_text(design: Design) -> str:
    c = design_circuit(design)
    aig = c.aig
    vec = Vectors()
    in_groups = vec.group([n for n, _ in c.inputs])
    st_groups = vec.group([n for n, *_ in c.latches])
    flop_base = {g[0] for g in st_groups}
    out_groups = vec.group([n for n, _ in c.outputs], reuse=flop_base)
    lit_of_out = dict(c.outputs)
    lit_of_state = {n: l for n, l, _, _ in c.latches}
    names = [n for n, _ in c.inputs] + [n for n, *_ in c.latches] + [n for n, _ in c.outputs]
    pre = fresh_prefix(names + [g[0] for g in in_groups + st_groups + out_groups], "_n")
    clock = "clock" if not any(g[0] == "clock" for g in in_groups + st_groups + out_groups) else pre + "clock"

    def rng(hi, lo) -> str:
        return "" if hi is None else f"[{hi}:{lo}] "

    def bit(n: str) -> str:
        return _bit_text(vec, n, _vname)

    sig = _leaf_texts(c, bit)

    def expr(l: int) -> str:
        if l >> 1 == 0:
            return "1'b1" if l & 1 else "1'b0"
        return ("~" if l & 1 else "") + sig[l >> 1]

    reg_outs = set()
    for base, hi, lo, bits in out_groups:
        if base in flop_base and all(lit_of_out[b] == lit_of_state.get(b) for b in bits):
            reg_outs.add(base)
    system = [k is None for k in c.clocks]
    ports = [f"  input {clock}"] if any(system) else []
    ports += [f"  input {rng(hi, lo)}{_vname(b)}" for b, hi, lo, _ in in_groups]
    ports += [f"  output {'reg ' if b in reg_outs else ''}{rng(hi, lo)}{_vname(b)}" for b, hi, lo, _ in out_groups]
    lines = [f"// countersign: design {design.name} from {design.pos.file}",
             f"// {clock} is the system clock; a flop on it takes its rising edge" + (
                 "" if c.synchronous else "; a flop clocked by another flop is a ripple stage; an always block "
                 "with a reset event is an asynchronous clear or preset"),
             f"module {_vname(design.name)} (", ",\n".join(ports), ");"]
    inits = initial_values(design)
    for b, hi, lo, bits in st_groups:
        if b in reg_outs:
            continue
        init = ""
        if all(inits.get(x) is not None for x in bits):
            v = 0
            for x in bits:
                v = 2 * v + inits[x]
            init = f" = {len(bits)}'d{v}"
        lines.append(f"  reg {rng(hi, lo)}{_vname(b)}{init};")
    roots = [nx for *_, nx, _ in c.latches] + [l for _, l in c.outputs] + c.async_clear + c.async_preset
    gates = []
    for n in aig.cone(roots):
        if aig.left[n] < 0:
            continue
        sig[n] = f"{pre}{n}"
        gates.append(f"  wire {pre}{n} = {expr(aig.left[n])} & {expr(aig.right[n])};")
    lines += gates
    # Asynchronous clears and presets: one wire each, read as a reset event of the flop's block.
    # A design declared asynchronous with only constant clears keeps one constant clear.
    resets: dict[int, list[tuple[str, str]]] = {}
    keep_constant = c.declared_async and all(system) and not _async_flops(c)
    for k, (cl, pr) in enumerate(zip(c.async_clear, c.async_preset)):
        for tag, lit, value in (("clr", cl, "1'b0"), ("pre", pr, "1'b1")):
            if lit != FALSE or (keep_constant and k == 0 and tag == "clr"):
                lines.append(f"  wire {pre}{tag}{k} = {expr(lit)};")
                resets.setdefault(k, []).append((f"{pre}{tag}{k}", value))
    for b, hi, lo, bits in out_groups:
        if b in reg_outs:
            continue
        for x in bits:
            lines.append(f"  assign {bit(x)} = {expr(lit_of_out[x])};")
    plain = [k for k in range(len(c.latches)) if system[k] and k not in resets]
    if plain:
        lines.append(f"  always @(posedge {clock}) begin")
        for k in plain:
            n, l, nx, _ = c.latches[k]
            lines.append(f"    {bit(n)} <= {expr(nx)};")
        lines.append("  end")
    for k, (n, l, nx, _) in enumerate(c.latches):
        if k in plain:
            continue
        if system[k]:
            event = f"posedge {clock}"
        else:
            edge, j = c.clocks[k]
            event = f"{'posedge' if edge == 'rise' else 'negedge'} {bit(c.latches[j][0])}"
        rs = resets.get(k, [])
        lines.append(f"  always @({' or '.join([event] + [f'posedge {w}' for w, _ in rs])})")
        for m, (w, value) in enumerate(rs):
            lines.append(f"    {'else ' if m else ''}if ({w}) {bit(n)} <= {value};")
        lines.append(f"    {'else ' if rs else ''}{bit(n)} <= {expr(nx)};")
    lines.append("endmodule")
    return "\n".join(lines) + "\n"


# --- .cnl -------------------------------------------------------------------------
_CNL_NAME = re.compile(r"[A-Za-z_][A-Za-z0-9_]*")


def _cnl_blocks(design: Design) -> Optional[list[P.DesignBlock]]:
    """The .cnl blocks of the design and its parts, parts first; None if any came from a netlist."""
    order: list[P.DesignBlock] = []
    seen: set[str] = set()

    def visit(name: str) -> bool:
        if name in seen:
            return True
        seen.add(name)
        b = design.source.get(name)
        if b is None or b.source != "cnl":
            return False
        for s in b.stmts:
            if isinstance(s, P.PartDecl) and not visit(s.design):
                return False
        order.append(b)
        return True

    return order if visit(design.name) else None


def cnl_text(design: Design) -> str:
    blocks = _cnl_blocks(design)
    if blocks is not None:
        head = f"# countersign: design {design.name} from {design.pos.file}, as written there\n"
        return head + unparse_file(P.File(design.pos.file, designs=blocks))
    c = design_circuit(design)
    aig = c.aig
    taken: dict[str, str] = {}

    def cname(base: str) -> str:
        if base in taken:
            return taken[base]
        n = re.sub(r"[^A-Za-z0-9_]", "_", base)
        if not _CNL_NAME.fullmatch(n):
            n = "_" + n
        if n in P.RESERVED:
            n += "_"
        while n in taken.values():
            n += "_"
        taken[base] = n
        return n

    vec = Vectors()
    in_groups = vec.group([n for n, _ in c.inputs])
    st_groups = vec.group([n for n, *_ in c.latches])
    flop_base = {g[0] for g in st_groups}
    out_groups = vec.group([n for n, _ in c.outputs], reuse=flop_base)
    for g in in_groups + st_groups + out_groups:
        cname(g[0])
    pre = fresh_prefix(list(taken.values()), "_n")
    lit_of_out = dict(c.outputs)
    lit_of_state = {n: l for n, l, _, _ in c.latches}

    def bit(n: str) -> str:
        return _bit_text(vec, n, cname)

    sig = _leaf_texts(c, bit)

    def expr(l: int) -> str:
        if l >> 1 == 0:
            return str(l & 1)
        return ("!" if l & 1 else "") + sig[l >> 1]

    renamed = sorted(b for b, n in taken.items() if b != n)
    lines = [f"# countersign: design {design.name} from {design.pos.file}, flattened"]
    if renamed:
        lines.append("# renamed to .cnl names: " + ", ".join(f"{b} -> {taken[b]}" for b in renamed))
    lines.append(f"design {cname(design.name) if design.name not in taken else taken[design.name]}")
    if in_groups:
        lines.append("  in " + ", ".join(cname(b) + ("" if hi is None else f"[{hi}:{lo}]") for b, hi, lo, _ in in_groups))
    roots = [nx for *_, nx, _ in c.latches] + [l for _, l in c.outputs] + c.async_clear + c.async_preset
    for n in aig.cone(roots):
        if aig.left[n] < 0:
            continue
        sig[n] = f"{pre}{n}"
        lines.append(f"  node {pre}{n} = {expr(aig.left[n])} & {expr(aig.right[n])}")
    keep_constant = c.declared_async and all(k is None for k in c.clocks) and not _async_flops(c)
    for k, (n, l, nx, _) in enumerate(c.latches):
        text = f"  flop {bit(n)} : D (d = {expr(nx)})"
        if c.clocks[k] is not None:
            edge, j = c.clocks[k]
            text += f" clock {edge} {bit(c.latches[j][0])}"
        if c.async_clear[k] != FALSE or (keep_constant and k == 0):
            text += f" clear async {expr(c.async_clear[k])}"
        if c.async_preset[k] != FALSE:
            text += f" preset async {expr(c.async_preset[k])}"
        lines.append(text)
    for b, hi, lo, bits in out_groups:
        if b in flop_base and all(lit_of_out[x] == lit_of_state.get(x) for x in bits):
            lines.append(f"  out {cname(b)}{'' if hi is None else f'[{hi}:{lo}]'} = {cname(b)}")
            continue
        vals = [expr(lit_of_out[x]) for x in bits]
        rhs = vals[0] if hi is None else "{" + ", ".join(vals) + "}"
        lines.append(f"  out {cname(b)}{'' if hi is None else f'[{hi}:{lo}]'} = {rhs}")
    lines.append("end")
    return "\n".join(lines) + "\n"


def _bit_text(vec, n: str, name) -> str:
    """A netlist bit as written: ``name(base)`` with its index where it belongs to a vector."""
    base, i = vec.where.get(n, (n, None))
    return name(base) + ("" if i is None else f"[{i}]")


def _leaf_texts(c, bit) -> dict[int, str]:
    """The written name of every input and latch node of circuit ``c``."""
    sig: dict[int, str] = {}
    for n, l in c.inputs:
        sig[l >> 1] = bit(n)
    for n, l, _, _ in c.latches:
        sig[l >> 1] = bit(n)
    return sig


def write_design(design: Design, path: str) -> dict:
    """Write ``design`` in the format of ``path``'s extension; returns what was written."""
    ext = Path(path).suffix.lower()
    if ext in (".aag", ".aig"):
        c = design_circuit(design)
        if not c.synchronous:
            raise NoForm(f"design {design.name} is asynchronous (flops clocked by flops, or asynchronous clears "
                         f"or presets); an AIGER latch steps on one implicit clock and has neither, so AIGER cannot "
                         f"hold this design: write it as .v or .cnl, or export a claim about it (--claim), which "
                         f"writes the event model as a synchronous AIGER circuit")
        data = aiger_bytes(c, binary=ext == ".aig")
    elif ext == ".blif":
        data = blif_text(design).encode("utf-8")
    elif ext == ".v":
        data = verilog_text(design).encode("utf-8")
    elif ext == ".cnl":
        data = cnl_text(design).encode("utf-8")
    else:
        raise ValueError(f"'{path}': the design formats are {', '.join(FORMATS)}")
    write_output(path, data)
    m = design.model
    return {"path": path, "design": design.name, "format": ext[1:], "inputs": len(m.inputs),
            "flops": len(m.states), "outputs": len(m.outputs), "bytes": len(data)}


__all__ = ["Circuit", "FORMATS", "NoForm", "aiger_bytes", "blif_text", "cnl_text", "design_circuit", "verilog_text",
           "write_design"]

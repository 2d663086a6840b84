"""``sim``: a design clocked from one or many start codes, under held, per-clock or replayed inputs.

A synchronous design runs through the compiled evaluator
(:mod:`checker.model.compiled`): one start code as straight-line Python over
many clocks, several start codes together bit-parallel (one lane each). An
asynchronous design runs through the event model (:func:`model.simulate.run`).

The code's bit order: ``--code VEC``; else the code line of check ``--check
NAME`` (so that ``sim``, ``check`` and ``map`` show one state as one code);
else the order of declaration, most significant first, as contract v2 fixes
it (the label then names a check of the design that reads the flops in
another order, so the table says how to see its codes).
"""

from __future__ import annotations

import json
from dataclasses import dataclass, field
from typing import Iterable, Optional

import numpy as np

from ..elab import Design, Namespace, load_namespace
from ..elab.spec import flop_indices
from ..errors import InputError, Pos
from ..fileio import read_limited
from ..lang.parse import parse_expr
from ..words import count
from ..model.compiled import PackedRun, compile_model, run_lanes, run_packed
from ..model.events import unpacked
from ..model.simulate import Step, code_value, run, state_of_code
from .siminputs import choose_claim, read_inputs

CMDLINE = "<command line>"

MAX_CODE_BITS = 4096
"""Widest code (the widest vector)."""

MAX_CYCLES = 1_000_000
"""Most clocks ``sim`` runs."""

MAX_SIM_VALUES = 70_000_000
"""Most bit values a run holds, over every start code: (clocks + 1) x (flops + inputs + outputs),
checked before it starts (a synchronous run keeps one byte per value; a million clocks of a
64-bit counter fit)."""

MAX_SIM_ROWS = 1_000_001
"""Most rows (clocks + 1, over every start code) one sim prints: its table or JSON is that long."""

MAX_EVENT_SIM_VALUES = 20_000_000
"""The same for an asynchronous design, whose runs keep each clock's values and firings as records."""

MAX_STARTS = 4096
"""Most start codes of one ``sim`` (each a lane of the bit-parallel run)."""

MAX_TRACE_BYTES = 32 * 1024 * 1024
"""Largest trace file ``sim --trace`` reads (the source file limit)."""


def _cmdline(message: str) -> InputError:
    return InputError(Pos(CMDLINE, 1, 1), message)


@dataclass
class SimRequest:
    """What ``sim`` was asked, as the command line gives it."""

    path: str
    design: str
    start: Optional[str] = None
    code: Optional[str] = None
    settings: list[str] = field(default_factory=list)
    cycles: Optional[int] = None
    trace: Optional[str] = None
    check: Optional[str] = None
    claim: Optional[int] = None
    inputs: Optional[str] = None


@dataclass
class SimRun:
    """A simulated run: the design, the code's state indices (msb first), the run itself.

    A synchronous design's run is held as bit columns (``packed``, from the
    compiled evaluator); an asynchronous design's as ``steps`` with the firings
    of each clock. ``order`` says where the code's bit order came from;
    ``others`` holds the runs of further start codes of the same command.
    """

    design: Design
    code: list[int]
    steps: list[Step] = field(default_factory=list)
    packed: Optional[PackedRun] = None
    order: str = "declaration"
    others: list["SimRun"] = field(default_factory=list)

    def runs(self) -> list["SimRun"]:
        """This run and the others, in the order their start codes were given."""
        return [self] + self.others

    def codes(self) -> list[int]:
        """The code at each clock."""
        if self.packed is not None:
            return bit_values(self.packed.states[:, self.code])
        return [code_value(self.design.model, self.code, s.state) for s in self.steps]

    def entries(self) -> list[dict]:
        """The contract's ``sim --json`` trace entries."""
        return list(self.iter_entries())

    def iter_entries(self):
        """The entries one at a time (a long run is written without holding them all)."""
        m = self.design.model
        if self.packed is not None:
            p = self.packed
            for t, c in enumerate(self.codes()):
                yield {"clock": t, "code": c, "inputs": dict(zip(m.inputs, p.inputs[t].tolist())),
                       "outputs": dict(zip(m.outputs, p.outputs[t].tolist()))}
            return
        for s in self.steps:
            e = {"clock": s.clock, "code": code_value(m, self.code, s.state), "inputs": s.inputs,
                 "outputs": s.outputs}
            if not m.synchronous:
                e["events"] = [{"flop": m.states[f.flop], "value": f.value, "depth": f.depth, "time": t,
                                "code": unpacked(self.code, f.code)} for t, f in s.events]
                if not s.settled:
                    e["settled"] = False
            yield e

    def as_steps(self) -> list[Step]:
        """The run as :class:`Step` records (a packed run converted clock by clock)."""
        if self.packed is None:
            return self.steps
        m, p = self.design.model, self.packed
        names = [name for name, _ in m.faults]
        return [Step(t, dict(zip(m.states, st)), dict(zip(m.inputs, i)), dict(zip(m.outputs, o)),
                     [f for f, hit in zip(names, fl) if hit])
                for t, (st, i, o, fl) in enumerate(zip(p.states.tolist(), p.inputs.tolist(), p.outputs.tolist(),
                                                       p.faults.tolist()))]

    def vectors(self, kind: str) -> list[tuple[str, int, list[int]]]:
        """Each input (``kind`` 'in') or output ('out') vector of the design with its value per
        clock, in declaration order; a bit outside every vector on its own."""
        m, d = self.design.model, self.design
        names = m.inputs if kind == "in" else m.outputs
        groups = d.input_vectors if kind == "in" else d.output_vectors
        index = {n: k for k, n in enumerate(names)}
        if self.packed is not None:
            cols = self.packed.inputs if kind == "in" else self.packed.outputs
        else:
            key = "inputs" if kind == "in" else "outputs"
            cols = np.array([[getattr(s, key).get(n, 0) for n in names] for s in self.steps],
                            dtype=np.uint8).reshape(len(self.steps), len(names))
        out, done = [], set()
        for name, bits in groups.items():
            if bits and all(b in index for b in bits) and not done & set(bits):
                out.append((name, len(bits), bit_values(cols[:, [index[b] for b in bits]])))
                done.update(bits)
        out += [(n, 1, cols[:, k].tolist()) for k, n in enumerate(names) if n not in done]
        return out

    def faults(self) -> dict[int, list[str]]:
        """The SR faults hit, by clock (only the clocks that hit one)."""
        if self.packed is not None:
            names = [n for n, _ in self.design.model.faults]
            out: dict[int, list[str]] = {}
            if names:
                for t in np.flatnonzero(self.packed.faults.any(axis=1)).tolist():
                    out[t] = [f for f, hit in zip(names, self.packed.faults[t].tolist()) if hit]
            return out
        return {s.clock: s.faults for s in self.steps if s.faults}


def bit_values(bits: np.ndarray) -> list[int]:
    """The integer each row of a 0/1 matrix spells, most significant column first."""
    rows, w = bits.shape
    if w == 0:
        return [0] * rows
    if w <= 64:
        full = np.zeros((rows, 64), dtype=np.uint8)
        full[:, 64 - w:] = bits
        return np.packbits(full, axis=1).view(">u8").ravel().tolist()
    packed = np.packbits(bits, axis=1)  # pads on the right: shifted away
    pad = packed.shape[1] * 8 - w
    return [int.from_bytes(r, "big") >> pad for r in map(bytes, packed)]


# --- what the command line gives ---------------------------------------------------

def parse_number(text: str, what: str) -> int:
    """A number as the command line takes it: decimal, 0b binary or 0x hex."""
    if len(text) > len(str(1 << MAX_CODE_BITS)) + 3:  # checked before conversion
        raise _cmdline(f"{what}: a number of {len(text)} characters is wider than any code ({MAX_CODE_BITS} bits at most)")
    try:
        return int(text, 0)
    except ValueError:
        raise _cmdline(f"{what}: '{text}' is not a number (decimal, 0b binary or 0x hex)") from None


def parse_starts(text: str) -> list[int]:
    """``--from``: one code, several (``0,5,9``), ranges (``0..15``), or a mix."""
    starts: list[int] = []
    for item in text.split(","):
        lo, dots, hi = item.partition("..")
        a = parse_number(lo.strip(), "--from")
        b = parse_number(hi.strip(), "--from") if dots else a
        if b < a:
            raise _cmdline(f"--from {item}: a range runs upwards")
        if len(starts) + (b - a + 1) > MAX_STARTS:
            raise _cmdline(f"--from: at most {MAX_STARTS} start codes in one run")
        starts.extend(range(a, b + 1))
    return starts


def input_settings(settings: Iterable[str], design: Design) -> dict[str, int]:
    """Input bit values from ``NAME=VALUE`` items (each may hold several, comma-separated)."""
    fixed: dict[str, int] = {}
    for item in (it for group in settings for it in group.split(",") if it):
        name, eq, value = item.partition("=")
        if not eq:
            raise _cmdline(f"--set takes NAME=VALUE, not '{item}'")
        v = parse_number(value, f"--set {name}")
        if name in design.input_vectors:
            bitsn = design.input_vectors[name]
            if v < 0 or v >> len(bitsn):
                raise _cmdline(f"--set {name}: {value} does not fit its {count(len(bitsn), 'bit')}")
            for k, b in enumerate(bitsn):
                fixed[b] = (v >> (len(bitsn) - 1 - k)) & 1
        elif name in design.model.inputs:
            if v not in (0, 1):
                raise _cmdline(f"--set {name}: a single bit is 0 or 1")
            fixed[name] = v
        else:
            known = ", ".join(design.input_vectors) or "none"
            raise _cmdline(f"--set {name}: design {design.name} has no input '{name}' (inputs: {known})")
    return fixed


class _TraceNumber(ValueError):
    pass


def _trace_int(text: str) -> int:
    """A JSON integer of a trace, refused (before conversion) when wider than any code can be."""
    digits = text.lstrip("-").lstrip("0")
    if len(digits) > len(str(1 << MAX_CODE_BITS)):
        raise _TraceNumber(f"a number of {len(digits)} digits in the trace is wider than any code "
                           f"({MAX_CODE_BITS} bits at most)")
    return int(text)


def read_trace(path: str, design: Design, want_code: bool,
               line: Optional[int] = None) -> tuple[list[dict], Optional[list[int]]]:
    """The trace list of a trace file (a trace list, a claim object, or a whole ``check --json``
    document with the claim on ``line``), and the code order of its check where it names one."""
    where = Pos(path, 1, 1)
    raw = read_limited(path, MAX_TRACE_BYTES, where, "trace file")
    try:
        data = json.loads(raw.decode("utf-8"), parse_int=_trace_int)
    except UnicodeDecodeError as e:
        raise InputError(where, f"cannot read '{path}': not UTF-8 text (byte {e.start})") from None
    except json.JSONDecodeError as e:
        raise InputError(Pos(path, e.lineno, e.colno), f"not JSON: {e.msg}") from None
    except _TraceNumber as e:
        raise InputError(where, str(e)) from None
    code = None
    if isinstance(data, dict) and isinstance(data.get("claims"), list):
        data = choose_claim(data, line, path)
    elif line is not None:
        raise _cmdline("--claim LINE chooses a claim of a whole 'check --json' document; this trace file "
                       "holds one trace")
    if isinstance(data, dict):
        if want_code and isinstance(data.get("file"), str) and isinstance(data.get("check"), str):
            try:
                for c in load_namespace(data["file"]).checks:
                    if c.name == data["check"] and c.design.name == design.name:
                        code = list(c.code) or None  # no code line: declaration order, as check read it
            except InputError:
                code = None
        data = data.get("trace")
    if not isinstance(data, list) or not data or not all(isinstance(e, dict) for e in data):
        raise InputError(where, "a trace file holds a trace list, a claim object with a 'trace', or the "
                                "whole document of 'check --json'")
    for i, e in enumerate(data):
        code_i = e.get("code", 0)
        if not isinstance(code_i, int) or not isinstance(e.get("inputs") or {}, dict):
            raise InputError(where, f"trace entry {i}: each trace entry has an integer 'code' and an 'inputs' object")
        for k, v in (e.get("inputs") or {}).items():
            if k not in design.model.inputs or v not in (0, 1):
                raise InputError(where, f"trace entry {i}: input '{k}'={v!r} is not an input bit of {design.name} "
                                        f"set to 0 or 1")
    return data, code


def code_order(ns: Namespace, d: Design, req: SimRequest) -> tuple[list[int], str]:
    """The code's state indices (msb first) and where that order comes from."""
    if req.code is not None:
        return flop_indices(d, parse_expr("--code", req.code)), "--code"
    own = [c for c in ns.checks if c.design.name == d.name and c.code]
    if req.check is not None:
        for c in ns.checks:
            if c.name == req.check:
                if c.design.name != d.name:
                    raise _cmdline(f"--check {c.name} is a check of design {c.design.name}, not {d.name}")
                if not c.code:
                    raise InputError(c.pos, f"check {c.name} has no code line to order the code by")
                return list(c.code), f"check {c.name}"
        names = ", ".join(c.name for c in ns.checks if c.design.name == d.name) or "none"
        raise _cmdline(f"--check {req.check}: no such check of {d.name} in {req.path} (checks of it: {names})")
    declared = list(range(len(d.model.states)))
    other = next((c for c in own if list(c.code) != declared), None)
    if other is not None:
        return declared, f"declaration (check {other.name} orders them otherwise: --check {other.name})"
    return declared, "declaration"


def simulate(req: SimRequest, ns: Namespace, d: Design) -> SimRun:
    """Run ``req`` on design ``d`` of namespace ``ns`` (read from ``req.path``); bad input is an
    InputError, found before the run starts."""
    if req.claim is not None and req.trace is None:
        raise _cmdline("--claim LINE chooses the claim of a --trace document to replay; give --trace FILE")
    if req.inputs is not None and req.trace is not None:
        raise _cmdline("--inputs and --trace both give the inputs of each clock: give one of them")
    model = d.model
    idx, order = code_order(ns, d, req)
    fixed = input_settings(req.settings, d)
    orders = None
    if req.trace is not None:
        entries, code_from_trace = read_trace(req.trace, d, req.code is None and req.check is None, req.claim)
        if code_from_trace is not None:
            idx, order = code_from_trace, "the trace's check"
        starts = [entries[0].get("code", 0)]
        per_clock = [{**fixed, **{k: int(v) for k, v in (e.get("inputs") or {}).items()}} for e in entries]
        orders = [[ev.get("flop") for ev in e["events"]] if isinstance(e.get("events"), list) else None
                  for e in entries]
        n = len(entries) - 1 if req.cycles is None else req.cycles
    elif req.inputs is not None:
        rows = read_inputs(req.inputs, d)
        both = sorted(set(fixed) & {b for r in rows for b in r})
        if both:
            raise _cmdline(f"input {both[0]} is held by --set and also given per clock by --inputs {req.inputs}")
        per_clock = [{**fixed, **r} for r in rows]
        starts = parse_starts(req.start) if req.start is not None else [0]
        n = len(rows) if req.cycles is None else req.cycles
    else:
        starts = parse_starts(req.start) if req.start is not None else [0]
        per_clock = [fixed]
        n = 16 if req.cycles is None else req.cycles
    if n < 0 or n > MAX_CYCLES:
        raise _cmdline(f"--cycles takes a number from 0 to {MAX_CYCLES}")
    width = len(model.states) + len(model.inputs) + len(model.outputs)
    limit = MAX_SIM_VALUES if model.synchronous else MAX_EVENT_SIM_VALUES
    if (n + 1) * width * len(starts) > limit:  # the cost, said before the run rather than found during it
        most = max(0, limit // max(1, width * len(starts)) - 1)
        where = Pos(req.trace, 1, 1) if req.trace is not None and req.cycles is None else Pos(CMDLINE, 1, 1)
        runs = f" x {len(starts)} start codes" if len(starts) > 1 else ""
        raise InputError(where, f"{n} clocks of {d.name} ({width} bits a clock{runs}) would hold "
                                f"{(n + 1) * width * len(starts):,} bit values; the limit is {limit:,}: "
                                f"run at most {most} clocks")
    if (n + 1) * len(starts) > MAX_SIM_ROWS:
        raise _cmdline(f"{len(starts)} start codes x {n + 1} clocks would print {(n + 1) * len(starts):,} rows; "
                       f"the limit is {MAX_SIM_ROWS:,}")
    for c in starts:
        if c < 0 or c >> len(idx):
            if req.trace is not None:
                raise InputError(Pos(req.trace, 1, 1), f"trace entry 0: code {c} does not fit the "
                                                       f"{len(idx)}-bit code of {d.name}")
            raise _cmdline(f"--from {c} does not fit the {len(idx)}-bit code")
    if orders is not None:
        for k, fired in enumerate(orders):
            if fired is not None and not all(f in model.states for f in fired):
                raise InputError(Pos(req.trace, 1, 1), f"entry {k} of the trace fires a flop that "
                                                       f"{d.name} does not have")
    states = [state_of_code(model, idx, c) for c in starts]
    if compile_model(model) is not None:
        if len(starts) == 1:
            packed = [run_packed(model, states[0], per_clock, n)]
        else:
            packed = run_lanes(model, states, per_clock, n)
        runs = [SimRun(d, idx, packed=p, order=order) for p in packed]
    else:
        try:
            runs = [SimRun(d, idx, run(model, st, per_clock, n, orders), order=order) for st in states]
        except ValueError as e:
            raise InputError(Pos(req.trace or "<trace>", 1, 1),
                             f"the trace's order of firings does not replay: {e}") from None
    first = runs[0]
    first.others = runs[1:]
    return first

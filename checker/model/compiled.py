"""A synchronous model compiled to straight-line Python, for long runs and many runs at once.

:func:`compile_model` writes one Python function per model (and per mode) whose
loop body is the next-state logic as a list of assignments, one per and-node of
the next-state cone, over local variables. The graph is read once, when the
source is written, instead of once per clock as :func:`aig.evaluate` does.
Three shapes that :class:`~checker.model.aig.Aig` builds out of three and-nodes
are written as one operation when their inner nodes are used nowhere else:
exclusive or, its complement, and the multiplexer.

Two modes share the generator:

* ``scalar``: each variable is 0 or 1; a run of one start code over many clocks
  (:func:`run_packed`). States are recorded one byte per bit per clock.
* ``lanes``: each variable is a Python int whose bit k belongs to run k, so one
  pass evaluates every start code at once, bit-parallel (:func:`run_lanes`).

Outputs and SR faults do not feed the next state, so they are evaluated after
the run for every clock at once: NumPy over the run's bits packed eight clocks
to a byte (:func:`aig.evaluate` on packed words).
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass
from typing import Callable, Optional, Sequence

import numpy as np

from .aig import evaluate
from .circuit import Model

MAX_COMPILED_NODES = 400_000
"""Largest next-state cone compiled; past it :func:`compile_model` returns None."""


@dataclass
class PackedRun:
    """A run held as bit columns: row t of each array is clock t (uint8, 0 or 1).

    ``states`` has one column per state bit (``Model.states``), ``inputs`` per
    input bit, ``outputs`` per output bit, ``faults`` per SR fault literal.
    """

    states: np.ndarray
    inputs: np.ndarray
    outputs: np.ndarray
    faults: np.ndarray

    @property
    def clocks(self) -> int:
        return len(self.states)


def _fanout(model: Model, nodes: Sequence[int], roots: Sequence[int]) -> dict[int, int]:
    aig = model.aig
    count: dict[int, int] = {}
    for n in nodes:
        if aig.left[n] >= 0:
            for c in (aig.left[n] >> 1, aig.right[n] >> 1):
                count[c] = count.get(c, 0) + 1
    for r in roots:
        count[r >> 1] = count.get(r >> 1, 0) + 1
    return count


def _shape(model: Model, n: int, fanout: dict[int, int]) -> Optional[tuple]:
    """('xor', x, y): node n is x ^ y; ('mux', x, y, z): node n is !(x ? y : z); else None.

    Only when both inner nodes feed n alone (otherwise they are computed anyway)."""
    aig = model.aig
    a, b = aig.left[n], aig.right[n]
    if not (a & 1 and b & 1):
        return None
    p, q = a >> 1, b >> 1
    if p == q or aig.left[p] < 0 or aig.left[q] < 0 or fanout.get(p) != 1 or fanout.get(q) != 1:
        return None
    P = (aig.left[p], aig.right[p])
    Q = (aig.left[q], aig.right[q])
    for x, y in (P, P[::-1]):
        for u, z in (Q, Q[::-1]):
            if u == x ^ 1:
                # p | q = x & y | !x & z
                if z == y ^ 1:
                    return ("xor", x, y)  # p | q = x xnor y, so n = x ^ y
                return ("mux", x, y, z)
    return None


def _source(model: Model, lanes: bool, fixed: Optional[dict[int, int]] = None) -> str:
    """The Python text of the run function of ``model``.

    Each node becomes a variable or, when it has one reader and a shallow
    expression, text inlined into that reader; a node carries a polarity, so a
    negation is folded into the expression that reads it rather than computed.
    ``fixed`` maps input indices held constant for the whole run to their value:
    they are folded in as constants, and the rows hold only the other inputs."""
    aig = model.aig
    roots = list(model.next_lits)
    nodes = aig.cone(roots)
    fanout = _fanout(model, nodes, roots)
    one = "ONE" if lanes else "1"
    # node -> (text, polarity, depth): the node's value is text ^ polarity; a constant node has text None
    val: dict[int, tuple] = {0: (None, 0, 0)}
    for k, l in enumerate(model.state_lits):
        val[l >> 1] = (f"s{k}", 0, 0)
    for k, l in enumerate(model.input_lits):
        if fixed is not None and k in fixed:
            val[l >> 1] = (None, fixed[k], 0)
        else:
            val[l >> 1] = (f"i{k}", 0, 0)

    def lit(l: int) -> tuple:
        """(text, polarity, depth) of literal ``l``."""
        text, pol, depth = val[l >> 1]
        return text, pol ^ (l & 1), depth

    def show(t: tuple) -> str:
        text, pol, _ = t
        if text is None:
            return one if pol else "0"
        return f"({wrap(text)} ^ {one})" if pol else text

    def wrap(text: str) -> str:
        return text if text.isidentifier() else f"({text})"

    skipped: set[int] = set()
    shapes = {}
    for n in reversed(nodes):  # parents first, so an inner node is known to be skipped
        if aig.left[n] < 0 or n in skipped:
            continue
        sh = _shape(model, n, fanout)
        if sh is not None:
            shapes[n] = sh
            skipped.update((aig.left[n] >> 1, aig.right[n] >> 1))
    body: list[str] = []
    for n in nodes:
        if aig.left[n] < 0 or n in skipped:
            continue
        sh = shapes.get(n)
        if sh is None:
            x, y = lit(aig.left[n]), lit(aig.right[n])
            if (x[0] is None and not x[1]) or (y[0] is None and not y[1]):
                val[n] = (None, 0, 0)
                continue
            if x[0] is None:
                val[n] = y
                continue
            if y[0] is None:
                val[n] = x
                continue
            text, pol, depth = f"{wrap(show(x))} & {wrap(show(y))}", 0, max(x[2], y[2]) + 1
        elif sh[0] == "xor":
            x, y = lit(sh[1]), lit(sh[2])
            pol = x[1] ^ y[1]
            if x[0] is None or y[0] is None:
                val[n] = (y[0] if x[0] is None else x[0], pol, max(x[2], y[2]))
                continue
            text, depth = f"{wrap(x[0])} ^ {wrap(y[0])}", max(x[2], y[2]) + 1
        else:  # !(x ? y : z)
            x, y, z = lit(sh[1]), lit(sh[2]), lit(sh[3])
            if x[0] is None:
                t = y if x[1] else z
                val[n] = (t[0], t[1] ^ 1, t[2])
                continue
            depth = max(x[2], y[2], z[2]) + 1
            if lanes:  # x ? y : z = z ^ (x & (y ^ z))
                text = f"{wrap(show(z))} ^ ({wrap(show(x))} & ({wrap(show(y))} ^ {wrap(show(z))}))"
            else:
                text = f"{wrap(show(y))} if {wrap(show(x))} else {wrap(show(z))}"
            pol = 1
        if fanout.get(n, 0) == 1 and depth < 12:
            val[n] = (text, pol, depth)  # read once: inlined into its reader
        else:
            body.append(f"        v{n} = {text}")
            val[n] = (f"v{n}", pol, 0)
    ns, ni = len(model.states), len(model.inputs)
    svars = "".join(f"s{k}, " for k in range(ns))
    ivars = "".join(f"i{k}, " for k in range(ni) if fixed is None or k not in fixed)
    nxt = "".join(f"{show(lit(l))}, " for l in model.next_lits)
    lines = ["def run(start, rows, record, ONE):\n",
             f"    ({svars}) = start\n" if ns else "",
             f"    for ({ivars}) in rows:\n",
             f"        record(({svars}))\n"]
    lines += [b + "\n" for b in body]
    lines.append(f"        ({svars}) = ({nxt})\n" if ns else "        pass\n")
    lines.append(f"    return ({svars})\n")
    return "".join(lines)


_CACHE: dict[tuple, Callable] = {}


def compile_model(model: Model, lanes: bool = False, fixed: Optional[dict[int, int]] = None) -> Optional[Callable]:
    """The compiled run function of synchronous ``model``; None when the model is
    asynchronous or its next-state cone is larger than :data:`MAX_COMPILED_NODES`.

    ``run(start, rows, record, ONE)``: ``start`` holds a value per state bit,
    ``rows`` yields one tuple of input values per clock (the inputs not in
    ``fixed``, in order); before each clock ``record`` receives the tuple of
    state values; returns the state after the last row. ``ONE`` is the all-ones
    value (1, or every lane's bit). ``fixed`` holds inputs (by index) constant
    for the whole run, folded into the text.
    """
    if not model.synchronous:
        return None
    key = (id(model), lanes, tuple(sorted((fixed or {}).items())) if fixed is not None else None)
    fn = _CACHE.get(key)
    if fn is not None and getattr(fn, "_model", None) is model:
        return fn
    if len(model.aig.cone(model.next_lits)) > MAX_COMPILED_NODES:
        return None
    scope: dict = {}
    exec(compile(_source(model, lanes, fixed), f"<compiled {model.name}>", "exec"), scope)  # noqa: S102 (our own text)
    fn = scope["run"]
    fn._model = model
    if len(_CACHE) >= 16:  # a few models at a time: the cache holds on to them
        _CACHE.clear()
    _CACHE[key] = fn
    return fn


def _rows(model: Model, inputs: Sequence[dict[str, int]], clocks: int) -> np.ndarray:
    """Input bits per clock (uint8, ``clocks`` rows): ``inputs[i]`` for clock i, the last repeated."""
    out = np.zeros((clocks, len(model.inputs)), dtype=np.uint8)
    given = list(inputs) or [{}]
    for t, row in enumerate(given[:clocks]):
        out[t] = [row.get(i, 0) & 1 for i in model.inputs]
    if len(given) < clocks:
        out[len(given):] = out[len(given) - 1]
    return out


def evaluate_columns(model: Model, states: np.ndarray, inputs: np.ndarray,
                     roots: Sequence[int]) -> np.ndarray:
    """``roots`` evaluated at every row of ``states``/``inputs`` (uint8 bit columns), bit-parallel
    over the rows packed eight to a byte; returns (rows, len(roots)) uint8."""
    rows = len(states)
    if not roots:
        return np.zeros((rows, 0), dtype=np.uint8)
    leaves: dict[int, np.ndarray] = {}
    for k, l in enumerate(model.state_lits):
        leaves[l >> 1] = np.packbits(states[:, k])
    for k, l in enumerate(model.input_lits):
        leaves[l >> 1] = np.packbits(inputs[:, k])
    ones = np.full((rows + 7) // 8, 0xFF, dtype=np.uint8)
    vals = evaluate(model.aig, leaves, list(roots), ones)
    cols = [np.unpackbits(np.broadcast_to(v, ones.shape).astype(np.uint8), count=rows) for v in vals]
    return np.stack(cols, axis=1)


def run_packed(model: Model, start: dict[str, int], inputs: Sequence[dict[str, int]], cycles: int) -> PackedRun:
    """Clock synchronous ``model`` from ``start`` for ``cycles`` clocks; ``inputs[i]`` drives
    clock i (the last one repeats). The same run as :func:`simulate.run`, held as bit columns."""
    ins = _rows(model, inputs, cycles + 1)
    held = len(inputs) <= 1  # one row for every clock: compiled with those inputs as constants
    fixed = {k: int(v) for k, v in enumerate(ins[0])} if held else None
    fn = compile_model(model, fixed=fixed)
    assert fn is not None, "run_packed takes a synchronous model small enough to compile"
    rows = itertools.repeat((), cycles) if held else map(tuple, ins[:cycles].tolist())
    rec = bytearray()
    ns = len(model.states)
    final = fn(tuple(start.get(s, 0) & 1 for s in model.states), rows, rec.extend, 1)
    rec.extend(final)
    states = np.frombuffer(bytes(rec), dtype=np.uint8).reshape(cycles + 1, ns)
    outputs = evaluate_columns(model, states, ins, model.output_lits)
    faults = evaluate_columns(model, states, ins, [l for _, l in model.faults])
    return PackedRun(states, ins, outputs, faults)


def run_lanes(model: Model, starts: Sequence[dict[str, int]], inputs: Sequence[dict[str, int]],
              cycles: int) -> list[PackedRun]:
    """One run per start state, all clocked together bit-parallel (one lane per start);
    ``inputs[i]`` drives clock i of every run. Equal to :func:`run_packed` of each start."""
    fn = compile_model(model, lanes=True)
    assert fn is not None, "run_lanes takes a synchronous model small enough to compile"
    k = len(starts)
    ones = (1 << k) - 1
    ins = _rows(model, inputs, cycles + 1)
    start = tuple(sum(((s.get(b, 0) & 1) << lane) for lane, s in enumerate(starts)) for b in model.states)
    rows = ([ones if x else 0 for x in row] for row in ins[:cycles].tolist())
    recorded: list[tuple] = []
    final = fn(start, map(tuple, rows), recorded.append, ones)
    recorded.append(tuple(final))
    nbytes = (k + 7) // 8
    ns = len(model.states)
    # (clocks, state bits, lanes): each recorded int spread into its lanes' bits
    flat = b"".join(v.to_bytes(nbytes, "little") for row in recorded for v in row)
    bits = np.unpackbits(np.frombuffer(flat, dtype=np.uint8).reshape(len(recorded), ns, nbytes),
                         axis=2, bitorder="little")[:, :, :k] if ns else np.zeros((cycles + 1, 0, k), np.uint8)
    runs = []
    for lane in range(k):
        states = np.ascontiguousarray(bits[:, :, lane])
        runs.append(PackedRun(states, ins, evaluate_columns(model, states, ins, model.output_lits),
                              evaluate_columns(model, states, ins, [l for _, l in model.faults])))
    return runs


__all__ = ["PackedRun", "compile_model", "evaluate_columns", "run_packed", "run_lanes", "MAX_COMPILED_NODES"]

"""Cycle simulation of a model: one run at a time, or many states at once.

``run`` clocks a design from a state under per-clock inputs and returns the
trace. ``eval_states`` evaluates literals over NumPy arrays of states and
inputs (bit-parallel), for exhaustive engines and for tests.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Optional, Sequence

if TYPE_CHECKING:
    import numpy as np

from .aig import evaluate
from .circuit import Model
from .events import EventModel, Firing, in_order, state_int, unit_delay


@dataclass
class Step:
    """One clock of a run: the state at this clock, the inputs applied, the outputs seen."""

    clock: int
    state: dict[str, int]
    inputs: dict[str, int] = field(default_factory=dict)
    outputs: dict[str, int] = field(default_factory=dict)
    faults: list[str] = field(default_factory=list)
    events: list[tuple[int, Firing]] = field(default_factory=list)  # (time, firing) of the clock that follows
    settled: bool = True  # False: the cascade after this clock did not settle (asynchronous designs)


def run(model: Model, start: dict[str, int], inputs: Sequence[dict[str, int]], cycles: Optional[int] = None,
        orders: Optional[Sequence[Optional[list[str]]]] = None) -> list[Step]:
    """Clock ``model`` from ``start``; ``inputs[i]`` drives clock i (the last one repeats).

    Returns ``cycles + 1`` steps (clock 0 is ``start``); the last step's inputs
    are those it would see next, so its outputs are defined too. An
    asynchronous design is clocked through the event model with unit delays
    (every pending change of depth k fires at time k), or in the order of
    flop names ``orders[i]`` where one is given for clock i (a recorded trace);
    each step keeps the firings of the cascade that follows it.
    """
    n = len(inputs) if cycles is None else cycles
    steps: list[Step] = []
    state = {s: start.get(s, 0) & 1 for s in model.states}
    for clock in range(n + 1):
        if inputs:
            inp = inputs[min(clock, len(inputs) - 1)]
        else:
            inp = {}
        inp = {i: inp.get(i, 0) & 1 for i in model.inputs}
        nxt, outs, faults = model.step(state, inp)
        step = Step(clock, dict(state), inp, outs, faults)
        if not model.synchronous:
            code = state_int(model.states, state)
            em = EventModel(model, inp)
            given = orders[clock] if orders is not None and clock < len(orders) else None
            if given is not None:
                index = {s: i for i, s in enumerate(model.states)}
                settled_code, times, step.settled = in_order(em, code, [index[f] for f in given])
            else:
                settled_code, times, step.settled = unit_delay(em, code)
            step.events = [(t + 1, f) for t, fired in enumerate(times) for f in fired]
            nxt = {s: (settled_code >> i) & 1 for i, s in enumerate(model.states)}
        steps.append(step)
        state = nxt
    return steps


def code_value(model: Model, code: Sequence[int], state: dict[str, int]) -> int:
    """The integer spelled by state bits ``code`` (indices, most significant first)."""
    v = 0
    for i in code:
        v = (v << 1) | (state[model.states[i]] & 1)
    return v


def state_of_code(model: Model, code: Sequence[int], value: int) -> dict[str, int]:
    """The state whose bits ``code`` (most significant first) spell ``value``; other bits 0."""
    state = {s: 0 for s in model.states}
    w = len(code)
    for k, i in enumerate(code):
        state[model.states[i]] = (value >> (w - 1 - k)) & 1
    return state


def leaf_arrays(model: Model, code: Sequence[int], codes: np.ndarray,
                inputs: Optional[dict[str, np.ndarray]] = None) -> dict[int, np.ndarray]:
    """Leaf values (bool arrays) for evaluating ``model`` at each of ``codes``.

    ``code`` lists the state indices of the code, most significant first;
    states not in it are 0. ``inputs`` gives a bool array (or scalar) per input
    bit name; missing inputs are 0.
    """
    import numpy as np
    n = len(codes)
    codes = codes.astype(np.uint64, copy=False)
    w = len(code)
    vals: dict[int, np.ndarray] = {}
    for lit in model.state_lits:
        vals[lit >> 1] = np.zeros(n, dtype=bool)
    for k, i in enumerate(code):
        vals[model.state_lits[i] >> 1] = ((codes >> np.uint64(w - 1 - k)) & np.uint64(1)).astype(bool)
    for name, lit in zip(model.inputs, model.input_lits):
        v = None if inputs is None else inputs.get(name)
        if v is None:
            vals[lit >> 1] = np.zeros(n, dtype=bool)
        else:
            vals[lit >> 1] = np.broadcast_to(np.asarray(v, dtype=bool), (n,)).copy()
    return vals


def eval_states(model: Model, roots: Sequence[int], leaves: dict[int, np.ndarray], n: int) -> list[np.ndarray]:
    """Evaluate literals ``roots`` bit-parallel over ``n`` samples (bool arrays)."""
    import numpy as np
    ones = np.ones(n, dtype=bool)
    needed = {}
    for node in model.aig.cone(roots):
        if model.aig.is_leaf(node):
            needed[node] = leaves[node]
    out = evaluate(model.aig, needed, roots, ones)
    return [np.broadcast_to(v, (n,)) if np.ndim(v) == 0 else v for v in out]


def pack_codes(bits_msb_first: Sequence[np.ndarray]) -> np.ndarray:
    """Integers (uint64) from bool arrays, most significant first (width <= 64)."""
    import numpy as np
    assert len(bits_msb_first) <= 64
    n = len(bits_msb_first[0]) if bits_msb_first else 0
    out = np.zeros(n, dtype=np.uint64)
    for b in bits_msb_first:
        out = (out << np.uint64(1)) | b.astype(np.uint64)
    return out


def next_codes(model: Model, code: Sequence[int], codes: np.ndarray,
               inputs: Optional[dict[str, np.ndarray]] = None) -> np.ndarray:
    """The next code of each of ``codes`` under ``inputs`` (code width <= 64)."""
    leaves = leaf_arrays(model, code, codes, inputs)
    roots = [model.next_lits[i] for i in code]
    return pack_codes(eval_states(model, roots, leaves, len(codes)))

"""The product machine of two designs, and exhaustive search of its reachable states.

The product machine runs two designs side by side on the same inputs; its one
property is ``bad``: some output differs. ``explicit_search`` walks its
reachable states breadth first with every input combination, for machines
small enough to enumerate.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Optional

import numpy as np

from ..model import Model, evaluate
from .budget import Budget


@dataclass
class Product:
    """Two designs on shared inputs: ``model`` holds A's flops, then B's.

    ``bad`` is 1 when some output differs at the current clock. State names
    are ``a:NAME`` and ``b:NAME``; ``na`` is the number of A's flops.
    """

    model: Model
    bad: int
    na: int
    a_outputs: list[int]
    b_outputs: list[int]


def product(a: Model, b: Model) -> Product:
    """The product machine of ``a`` and ``b``, inputs and outputs paired by name.

    Both designs are copied into one and-inverter graph, so structurally equal
    logic of the two designs becomes one node (structural hashing).
    """
    m = Model(f"{a.name}*{b.name}")
    aig = m.aig
    ins: dict[str, int] = {}
    for n in a.inputs:
        ins[n] = aig.leaf(n)
        m.inputs.append(n)
        m.input_lits.append(ins[n])
    for n in b.inputs:
        if n not in ins:  # the language requires equal names; tolerate extras
            ins[n] = aig.leaf(n)
            m.inputs.append(n)
            m.input_lits.append(ins[n])
    copies = []
    for tag, d in (("a", a), ("b", b)):
        leaf_map = {l >> 1: ins[n] for n, l in zip(d.inputs, d.input_lits)}
        for n, l in zip(d.states, d.state_lits):
            sl = aig.leaf(f"{tag}:{n}")
            m.states.append(f"{tag}:{n}")
            m.state_lits.append(sl)
            leaf_map[l >> 1] = sl
        copies.append(d.aig.copy_into(aig, d.next_lits + d.output_lits, leaf_map))
    ca, cb = copies
    m.next_lits = ca[:len(a.states)] + cb[:len(b.states)]
    a_out = dict(zip(a.outputs, ca[len(a.states):]))
    b_out = dict(zip(b.outputs, cb[len(b.states):]))
    names = [n for n in a.outputs if n in b_out]
    ao = [a_out[n] for n in names]
    bo = [b_out[n] for n in names]
    bad = aig.or_all(aig.xor(x, y) for x, y in zip(ao, bo))
    m.outputs = ["bad"]
    m.output_lits = [bad]
    m.signals = {**{f"a:{n}": l for n, l in a_out.items()}, **{f"b:{n}": l for n, l in b_out.items()}}
    return Product(m, bad, len(a.states), ao, bo)


def simulate_inputs(model: Model, init: list[int], inputs: list[dict[str, int]]) -> list[list[int]]:
    """States (bit lists in ``model.states`` order) at clocks 0..len(inputs)."""
    states = [list(init)]
    for inp in inputs:
        nxt, _, _ = model.step(dict(zip(model.states, states[-1])), inp)
        states.append([nxt[s] for s in model.states])
    return states


SLICE_EDGES = 1 << 16
"""(State, input) pairs of a frontier evaluated at once: memory stays small whatever the frontier."""


@dataclass
class ExplicitResult:
    """``inputs`` of a shortest run reaching ``bad`` (None when unreachable),
    ``states`` the number of reachable product states seen, ``depth`` the BFS depth."""

    inputs: Optional[list[dict[str, int]]]
    states: int
    depth: int


WORD = 63  # state bits per uint64 word of a packed product state (any width: as many words as it takes)


def _words(states: list[int], ns: int) -> list[np.ndarray]:
    """Packed states (ints of ``ns`` bits) as uint64 arrays of WORD bits each, least significant word first."""
    mask = (1 << WORD) - 1
    return [np.array([(s >> (WORD * w)) & mask for s in states], dtype=np.uint64)
            for w in range(max(1, (ns + WORD - 1) // WORD))]


def _packed(bits: list[np.ndarray], ns: int, count: int) -> list[int]:
    """Bit arrays of ``count`` elements (most significant bit first) packed into one int per element."""
    out: Optional[list[int]] = None
    for w in range(max(1, (ns + WORD - 1) // WORD)):
        lo, hi = WORD * w, min(ns, WORD * (w + 1))  # bit positions lo .. hi-1 from the least significant
        word = np.zeros(count, dtype=np.uint64)
        for pos in reversed(range(lo, hi)):
            word = (word << np.uint64(1)) | bits[ns - 1 - pos].astype(np.uint64)
        vals = word.tolist()
        out = vals if out is None else [o | (v << (WORD * w)) for o, v in zip(out, vals)]
    return out or []


INT_LANES = 1 << 12  # a BFS layer of at most this many (state, input) lanes is evaluated on Python ints


def _layer_ints(model: Model, frontier: list[int], ni: int, roots: list[int]) -> tuple[Optional[int], list[int]]:
    """One BFS layer on Python ints as bit sets, lane j = (frontier[j >> ni], input j % 2^ni):
    the first lane where roots[0] (bad) holds, or None, and every lane's next state."""
    ns, lanes = len(model.states), len(frontier) << ni
    ones = (1 << lanes) - 1
    leaves: dict[int, object] = {}
    for k, l in enumerate(model.state_lits):
        pos, v = ns - 1 - k, 0
        for i, s in enumerate(frontier):
            if (s >> pos) & 1:
                v |= ((1 << (1 << ni)) - 1) << (i << ni)
        leaves[l >> 1] = v
    for k, l in enumerate(model.input_lits):
        one = sum(1 << c for c in range(1 << ni) if (c >> (ni - 1 - k)) & 1)  # this input's lanes in one state
        leaves[l >> 1] = sum(one << (i << ni) for i in range(len(frontier)))
    vals = evaluate(model.aig, leaves, roots, ones)
    bad = vals[0] & ones
    if bad:
        return (bad & -bad).bit_length() - 1, []
    nxt = [0] * lanes
    for v in vals[1:]:
        v &= ones
        nxt = [(t << 1) | ((v >> j) & 1) for j, t in enumerate(nxt)]
    return None, nxt


def _layer_arrays(model: Model, frontier: list[int], ni: int, roots: list[int],
                  in_bits: dict[str, np.ndarray]) -> tuple[Optional[int], list[int]]:
    """The same layer on NumPy arrays, for wide layers."""
    ns, nf = len(model.states), len(frontier)
    words = _words(frontier, ns)
    st = [np.repeat(w, 1 << ni) for w in words]
    leaves: dict[int, object] = {}
    for k, l in enumerate(model.state_lits):
        pos = ns - 1 - k  # bit k (most significant first) of the packed state
        leaves[l >> 1] = ((st[pos // WORD] >> np.uint64(pos % WORD)) & np.uint64(1)).astype(bool)
    for n, l in zip(model.inputs, model.input_lits):
        leaves[l >> 1] = np.tile(in_bits[n], nf)
    ones = np.ones(nf << ni, dtype=bool)
    vals = [np.broadcast_to(v, ones.shape) for v in evaluate(model.aig, leaves, roots, ones)]
    hit = np.flatnonzero(vals[0])
    if len(hit):
        return int(hit[0]), []
    return None, _packed(vals[1:], ns, len(ones))


def explicit_search(model: Model, init: list[int], bad: int, max_states: int = 1 << 20,
                    max_inputs: int = 12, budget: Optional[Budget] = None) -> Optional[ExplicitResult]:
    """Breadth-first search of the reachable states of ``model`` from ``init``
    under every input combination; None when it does not fit the limits.

    Exhaustive: when it returns ``inputs=None``, ``bad`` is 0 in every
    reachable state under every input.
    """
    ni = len(model.inputs)
    if ni > max_inputs:
        return None
    combos = np.arange(1 << ni, dtype=np.uint64)
    in_bits = {n: ((combos >> np.uint64(ni - 1 - k)) & np.uint64(1)).astype(bool)
               for k, n in enumerate(model.inputs)}
    start = 0
    for v in init:
        start = (start << 1) | v
    parent: dict[int, tuple[int, int]] = {start: (-1, -1)}
    frontier = [start]
    depth = 0
    roots = [bad] + model.next_lits
    piece = max(1, SLICE_EDGES >> ni)  # states of a frontier evaluated at once
    while frontier:
        new: list[int] = []
        for lo in range(0, len(frontier), piece):
            if budget is not None and budget.expired():
                return None
            part = frontier[lo:lo + piece]
            if len(part) << ni <= INT_LANES:
                hit_at, nxt = _layer_ints(model, part, ni, roots)
            else:
                hit_at, nxt = _layer_arrays(model, part, ni, roots, in_bits)
            if hit_at is not None:
                return ExplicitResult(_path(parent, part[hit_at >> ni], hit_at % (1 << ni), model.inputs),
                                      len(parent), depth)
            for j, t in enumerate(nxt):
                if t not in parent:
                    parent[t] = (part[j >> ni], j % (1 << ni))
                    new.append(t)
            if len(parent) > max_states:
                return None
        frontier = new
        depth += 1
    return ExplicitResult(None, len(parent), depth)


def _path(parent: dict[int, tuple[int, int]], state: int, last_input: int, names: list[str]) -> list[dict[str, int]]:
    ni = len(names)

    def spell(c: int) -> dict[str, int]:
        return {n: (c >> (ni - 1 - k)) & 1 for k, n in enumerate(names)}

    seq = [spell(last_input)]
    s = state
    while parent[s][0] >= 0:
        p, c = parent[s]
        seq.append(spell(c))
        s = p
    return list(reversed(seq))

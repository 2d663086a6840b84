"""Sequential equivalence on the product machine of two designs.

The product machine runs two designs side by side on the same inputs; its one
property is ``bad``: some output differs. This module builds that machine and
holds three engines over it:

* ``bmc``: bounded model checking, unrolling the product machine from its
  initial state (Biere, Cimatti, Clarke, Zhu 1999); finds shortest
  counterexamples and proves nothing beyond its depth.
* ``signal_correspondence``: candidate equivalences between signals of the
  two designs, found by random simulation and pruned until they are an
  inductive invariant (van Eijk 2000, "Sequential equivalence checking
  based on structural similarities"). When the invariant implies that the
  outputs agree, the designs are equivalent.
* ``explicit_search``: breadth-first search over reachable product states
  with every input combination, for machines small enough to enumerate.

IC3/PDR (checker.pdr) takes the proved correspondences as a constraint when
they alone are not enough.
"""

from __future__ import annotations

import random
from dataclasses import dataclass, field
from typing import Optional

import numpy as np

from .budget import Budget
from ..model import TRUE, Model, evaluate
from .sat import Sat, Unrolling, any_lit, equal_lit


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


# --- bounded model checking --------------------------------------------------
@dataclass
class BmcResult:
    """``inputs`` per clock of the shortest run reaching ``bad`` (None: none found);
    ``depth``: every run of that many clocks was checked."""

    inputs: Optional[list[dict[str, int]]]
    depth: int


def bmc(model: Model, init: list[int], bad: int, max_depth: int, budget: Budget,
        solver: str, on_depth=None) -> BmcResult:
    """Bounded model checking (Biere et al. 1999): is ``bad`` reachable within
    ``max_depth`` clocks from ``init``? Frame by frame, one incremental solver."""
    with Sat(solver) as sat:
        u = Unrolling(model, sat, init=[sat.true if v else -sat.true for v in init])
        for t in range(max_depth):
            if budget.expired():
                return BmcResult(None, t)
            if sat.solve([u.lit(t, bad)]):
                return BmcResult([u.read_inputs(k) for k in range(t + 1)], t)
            if on_depth is not None:
                on_depth(t + 1)
        return BmcResult(None, max_depth)


# --- signal correspondence ---------------------------------------------------
@dataclass
class Correspondence:
    """The outcome of signal correspondence.

    ``status``: 'proved' (the invariant implies ``bad`` is 0), 'unproved' (an
    inductive invariant was found but does not exclude ``bad``), or 'open'
    (the budget ran out). ``pairs`` are (literal, literal) of ``model.aig``
    proved equal in every reachable state under every input; ``constraint``
    is their conjunction as one literal of ``model.aig``.
    """

    status: str
    pairs: list[tuple[int, int]] = field(default_factory=list)
    constraint: int = TRUE
    rounds: int = 0
    candidates: int = 0


def _signatures(model: Model, init: list[int], nodes: list[int], runs: int, steps: int,
                rng: random.Random) -> dict[int, tuple[int, ...]]:
    """Values of ``nodes`` over random runs from ``init``, one int (``runs`` bits) a clock."""
    ones = (1 << runs) - 1
    state = [ones if v else 0 for v in init]
    sig: dict[int, list[int]] = {n: [] for n in nodes}
    roots = [2 * n for n in nodes] + model.next_lits
    for _ in range(steps):
        leaves: dict[int, object] = {l >> 1: v for l, v in zip(model.state_lits, state)}
        for l in model.input_lits:
            leaves[l >> 1] = rng.getrandbits(runs)
        vals = evaluate(model.aig, leaves, roots, ones)
        for n, v in zip(nodes, vals):
            sig[n].append(v)
        state = vals[len(nodes):]
    return {n: tuple(v) for n, v in sig.items()}


def _classes(sigs: dict[int, tuple[int, ...]], nodes: list[int], ones: int) -> list[list[tuple[int, int]]]:
    """Nodes grouped by signature up to complement: classes of (node, phase)."""
    groups: dict[tuple[int, ...], list[tuple[int, int]]] = {}
    for n in nodes:
        s = sigs[n]
        phase = s[0] & 1 if s else 0
        key = tuple(v ^ ones for v in s) if phase else s
        groups.setdefault(key, []).append((n, phase))
    return [g for g in groups.values() if len(g) > 1]


class _Frames:
    """Solver literals of AIG nodes in three frames: reset ('base'), any ('hyp'), next ('step')."""

    def __init__(self, model: Model, init: list[int], solver: str) -> None:
        self.sat = Sat(solver)
        s = self.sat
        self.base = Unrolling(model, s, init=[s.true if v else -s.true for v in init])
        self.free = Unrolling(model, s)
        self.eq_cache: dict[tuple[str, int, int, int], int] = {}

    def lit(self, frame: str, node: int) -> int:
        if frame == "base":
            return self.base.lit(0, 2 * node)
        return self.free.lit(0 if frame == "hyp" else 1, 2 * node)

    def eq(self, frame: str, n: int, rep: int, phase: int) -> int:
        key = (frame, n, rep, phase)
        v = self.eq_cache.get(key)
        if v is None:
            a, b = self.lit(frame, n), self.lit(frame, rep)
            v = equal_lit(self.sat, a, -b if phase else b)
            self.eq_cache[key] = v
        return v


def _pairs(classes: list[list[tuple[int, int]]]) -> list[tuple[int, int, int]]:
    """(member, representative, relative phase) for every non-representative member."""
    out = []
    for c in classes:
        rep, rp = c[0]
        for n, p in c[1:]:
            out.append((n, rep, p ^ rp))
    return out


def _split(classes: list[list[tuple[int, int]]], value) -> list[list[tuple[int, int]]]:
    """Refine classes: members stay together only when ``value(node, phase)``
    (the node's sample bits, complemented when its phase is 1) agree."""
    out = []
    for c in classes:
        parts: dict[int, list[tuple[int, int]]] = {}
        for n, p in c:
            parts.setdefault(value(n, p), []).append((n, p))
        out.extend(g for g in parts.values() if len(g) > 1)
    return out


def signal_correspondence(model: Model, init: list[int], bad: int, budget: Budget, solver: str,
                          runs: int = 256, steps: int = 48, seed: int = 1) -> Correspondence:
    """Signal correspondence (van Eijk 2000) on ``model`` from the state ``init``.

    Candidates: nodes (state bits and gates) whose values agree, up to
    complement, on random runs from ``init``. They are pruned until (base)
    they hold at ``init`` under every input and (step) holding at one clock
    they hold at the next under every input; what remains is an invariant of
    every reachable state and input. Proved when it implies ``bad`` = 0.
    """
    aig = model.aig
    input_nodes = {l >> 1 for l in model.input_lits}
    nodes = [0] + [n for n in aig.cone(model.next_lits + [bad]) if n not in input_nodes]
    rng = random.Random(seed)
    ones = (1 << runs) - 1
    classes = _classes(_signatures(model, init, nodes, runs, steps, rng), nodes, ones)
    res = Correspondence("unproved", candidates=sum(len(c) for c in classes))
    fr = _Frames(model, init, solver)
    try:
        # base: the candidates hold at the reset state under every input
        while classes:
            if budget.expired():
                res.status = "open"
                return res
            pairs = _pairs(classes)
            res.rounds += 1
            if not fr.sat.solve([any_lit(fr.sat, [-fr.eq("base", *p) for p in pairs])]):
                break
            classes = _split(classes, lambda n, p: fr.sat.value(fr.lit("base", n)) ^ p)
        # step: holding now, they hold at the next clock (van Eijk's fixpoint)
        while classes:
            if budget.expired():
                res.status = "open"
                return res
            pairs = _pairs(classes)
            res.rounds += 1
            hyp = [fr.eq("hyp", *p) for p in pairs]
            if not fr.sat.solve(hyp + [any_lit(fr.sat, [-fr.eq("step", *p) for p in pairs])]):
                break
            classes = _refine_step(model, fr, classes, rng)
        pairs = _pairs(classes)
        hyp = [fr.eq("hyp", *p) for p in pairs]
        proved = not fr.sat.solve(hyp + [fr.free.lit(0, bad)])
        res.status = "proved" if proved else "unproved"
        res.pairs = [(2 * n, 2 * r ^ ph) for n, r, ph in pairs]
        res.constraint = aig.and_all(aig.xnor(x, y) for x, y in res.pairs)
        return res
    finally:
        fr.sat.close()


def _refine_step(model: Model, fr: _Frames, classes, rng: random.Random):
    """Split classes by the step model, and by that next state under random inputs.

    The next state came from a state meeting every candidate, so any input
    there is a valid witness against a candidate.
    """
    sat = fr.sat
    width = 64
    ones = (1 << width) - 1
    st = [sat.value(v) for v in fr.free.state(1)]
    leaves: dict[int, object] = {l >> 1: (ones if v else 0) for l, v in zip(model.state_lits, st)}
    for l in model.input_lits:
        leaves[l >> 1] = rng.getrandbits(width)
    members = sorted({n for c in classes for n, _ in c})
    vals = dict(zip(members, evaluate(model.aig, leaves, [2 * n for n in members], ones)))
    # one key per node: the solver's value as bit 64, then 64 random inputs
    return _split(classes, lambda n, p: ((sat.value(fr.lit("step", n)) << width) | vals[n]) ^ (p * ((ones << 1) | 1)))


# --- explicit product-machine search ----------------------------------------
@dataclass
class ExplicitResult:
    """``inputs`` of a shortest run reaching ``bad`` (None when unreachable),
    ``states`` the number of reachable product states seen, ``depth`` the BFS depth."""

    inputs: Optional[list[dict[str, int]]]
    states: int
    depth: int


def explicit_search(model: Model, init: list[int], bad: int, max_states: int = 1 << 20,
                    max_inputs: int = 12, budget: Optional[Budget] = None) -> Optional[ExplicitResult]:
    """Breadth-first search of the reachable states of ``model`` from ``init``
    under every input combination; None when it does not fit the limits.

    Exhaustive: when it returns ``inputs=None``, ``bad`` is 0 in every
    reachable state under every input.
    """
    ns, ni = len(model.states), len(model.inputs)
    if ns > 63 or ni > max_inputs:
        return None
    combos = np.arange(1 << ni, dtype=np.uint64)
    in_bits = {n: ((combos >> np.uint64(ni - 1 - k)) & np.uint64(1)).astype(bool)
               for k, n in enumerate(model.inputs)}
    start = 0
    for v in init:
        start = (start << 1) | v
    parent: dict[int, tuple[int, int]] = {start: (-1, -1)}
    frontier = np.array([start], dtype=np.uint64)
    depth = 0
    roots = [bad] + model.next_lits
    while len(frontier):
        if budget is not None and budget.expired():
            return None
        nf = len(frontier)
        st = np.repeat(frontier, 1 << ni)
        leaves: dict[int, object] = {}
        for k, l in enumerate(model.state_lits):
            leaves[l >> 1] = ((st >> np.uint64(ns - 1 - k)) & np.uint64(1)).astype(bool)
        for n, l in zip(model.inputs, model.input_lits):
            leaves[l >> 1] = np.tile(in_bits[n], nf)
        ones = np.ones(len(st), dtype=bool)
        vals = [np.broadcast_to(v, st.shape) for v in evaluate(model.aig, leaves, roots, ones)]
        hit = np.flatnonzero(vals[0])
        if len(hit):
            j = int(hit[0])
            return ExplicitResult(_path(parent, int(st[j]), j % (1 << ni), model.inputs), len(parent), depth)
        nxt = np.zeros(len(st), dtype=np.uint64)
        for v in vals[1:]:
            nxt = (nxt << np.uint64(1)) | v.astype(np.uint64)
        new = []
        for j, (s, t) in enumerate(zip(st.tolist(), nxt.tolist())):
            if t not in parent:
                parent[t] = (s, j % (1 << ni))
                new.append(t)
        if len(parent) > max_states:
            return None
        frontier = np.array(new, dtype=np.uint64)
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

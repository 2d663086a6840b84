"""Signal correspondence: sequential equivalence by an inductive set of equal signals.

Candidate equivalences between signals of a machine (typically the product of
two designs, :mod:`checker.engines.product`) are found by random simulation
and pruned until they are an inductive invariant (van Eijk 2000, "Sequential
equivalence checking based on structural similarities"). When the invariant
implies that ``bad`` is 0, the property holds in every reachable state.
IC3/PDR (:mod:`checker.engines.pdr`) takes the proved correspondences as a
constraint when they alone are not enough.
"""

from __future__ import annotations

import random
from dataclasses import dataclass, field
from ..model import TRUE, Model, evaluate
from .budget import Budget
from .sat import Sat, Unrolling, any_lit, equal_lit


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


class _InductionFrames:
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
    fr = _InductionFrames(model, init, solver)
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


def _refine_step(model: Model, fr: _InductionFrames, classes, rng: random.Random):
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

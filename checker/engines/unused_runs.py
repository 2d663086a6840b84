"""Runs of unused codes by SAT: lockout, the worst recovery, and `within` bounds.

For a code space (a model, its code and its sequence) and a literal over the
inputs that says which inputs may occur, :func:`sat_search` unrolls runs of
unused codes:

* a bounded path search (bounded model checking, Biere, Cimatti, Clarke and
  Zhu 1999) for an admissible run of k+1 unused codes; none at depth k
  proves worst <= k, with every unused code a possible start, so the
  search is complete at that depth;
* a lasso search (a run of unused codes whose last code repeats an earlier
  one) for locked cycles;
* k-induction with simple-path constraints (Sheeran, Singh and Stalmarck
  2000) for the proof of no lockout: when no admissible run of k+1
  pairwise distinct unused codes exists and no lasso of at most k+1 codes
  does, the unused codes hold no cycle at all (a longer cycle would give a
  simple run of k+1 codes), so no code is locked and worst = k.
"""

from __future__ import annotations

import time
from dataclasses import dataclass, field
from typing import Optional

from ..model.simulate import run
from ..model.space import CodeSpace
from .budget import Budget
from .sat import DEFAULT_SOLVER, Sat, Unrolling

PAIR_DEPTH = 64
"""Deepest frame that gets lasso and simple-path constraints (they grow with depth squared)."""

MAX_SAT_DEPTH = 10_000
"""Deepest frame the SAT engine unrolls before it says the claim is open."""

EXTRA_DEPTH = 64
"""After refuting `recover within N`, how far past N the SAT engine looks for the exact worst."""


@dataclass
class SatSearch:
    """What the SAT engine found.

    ``status``: 'proved' (no lock; ``worst`` exact), 'locked' (``cycle`` holds
    the codes of a locked cycle), 'slow' (a run of ``within``+1 unused codes;
    ``worst`` exact or None with ``worst_at_least``) or 'open' (``depth`` frames
    searched). ``codes`` and ``inputs`` are the run shown as evidence:
    ``len(inputs) == len(codes) - 1``.
    """

    status: str
    depth: int
    worst: Optional[int] = None
    worst_at_least: Optional[int] = None
    codes: list[int] = field(default_factory=list)
    inputs: list[dict[str, int]] = field(default_factory=list)
    cycle: list[int] = field(default_factory=list)
    worst_codes: list[int] = field(default_factory=list)
    worst_inputs: list[dict[str, int]] = field(default_factory=list)


class _UnusedRuns:
    """Runs of unused codes over one solver, one frame at a time."""

    def __init__(self, space: CodeSpace, cond: int, solver: str) -> None:
        self.space = space
        self.sat = Sat(solver)
        self.un = Unrolling(space.model, self.sat)
        self.member = space.member_lit()
        self.cond = cond
        self.act = self.sat.new_var()  # switches the simple-path constraints on
        self.loops: list[int] = []
        self.k = -1

    def grow(self, pairs: bool) -> None:
        """Add frame k+1: its code unused, its inputs admissible, and its pair constraints."""
        self.k += 1
        k, sat, un = self.k, self.sat, self.un
        sat.add([-un.lit(k, self.member)])
        sat.add([un.lit(k, self.cond)])
        if not pairs or k == 0:
            self.loops.append(0)
            return
        cur = un.state(k)
        eqs = []
        for j in range(k):
            old = un.state(j)
            e = sat.new_var()
            diff = []
            for a, b in zip(old, cur):
                sat.add([-e, -a, b])
                sat.add([-e, a, -b])
                d = sat.new_var()
                sat.add([-d, a, b])
                sat.add([-d, -a, -b])
                diff.append(d)
            sat.add([-self.act, *diff])
            eqs.append(e)
        loop = sat.new_var()
        sat.add([-loop, *eqs])
        self.loops.append(loop)

    def read(self, upto: int) -> tuple[list[int], list[dict[str, int]]]:
        codes = [self.space.code_of(self.un.read_state(t)) for t in range(upto + 1)]
        inputs = [self.un.read_inputs(t) for t in range(upto + 1)]
        return codes, inputs

    def close(self) -> None:
        self.sat.close()


def _first_repeat(codes: list[int]) -> Optional[int]:
    seen: dict[int, int] = {}
    for i, c in enumerate(codes):
        if c in seen:
            return i
        seen[c] = i
    return None


def _finish_path(space: CodeSpace, codes: list[int], inputs: list[dict[str, int]]) -> tuple[list[int], list[dict[str, int]]]:
    """Extend a run by one simulated clock (under its last inputs) to the code it reaches."""
    steps = run(space.model, space.state_of(codes[-1]), [inputs[len(codes) - 1]], 1)
    return codes + [space.code_of(steps[1].state)], inputs[:len(codes)]


def sat_search(space: CodeSpace, cond: int, within: Optional[int], budget: Budget,
               solver: str = DEFAULT_SOLVER, max_depth: int = MAX_SAT_DEPTH) -> SatSearch:
    """Decide lockout (and the worst, and ``within``) by unrolling runs of unused codes.

    Proves only from UNSAT answers on complete questions (see the module
    docstring); returns 'open' with the depth reached when the budget or
    ``max_depth`` runs out.
    """
    if within is not None and within <= max_depth:
        quick = _within_first(space, cond, within, budget, solver)
        if quick is not None:
            return quick
    f = _UnusedRuns(space, cond, solver)
    budget.report(depth=0, engine="sat")
    last_path: Optional[tuple[list[int], list[dict[str, int]]]] = None
    slow: Optional[tuple[list[int], list[dict[str, int]]]] = None
    stop_at: Optional[float] = None
    extra_until: Optional[int] = None
    try:
        while True:
            k = f.k + 1
            if k > max_depth:
                return _stopped(k - 1, slow, last_path)
            if budget.expired() or (stop_at is not None and time.monotonic() > stop_at):
                return _stopped(k - 1, slow, last_path)
            if extra_until is not None and k > extra_until:
                return _stopped(k - 1, slow, last_path)
            pairs = k <= PAIR_DEPTH
            f.grow(pairs)
            t0 = time.monotonic()
            found = f.sat.solve([f.act] if pairs else [])
            if not found:
                # no simple run of k+1 unused codes (no run at all, past PAIR_DEPTH):
                # complete once no lasso ends at frame k either
                if pairs and k > 0 and f.sat.solve([f.loops[k]]):
                    return _locked(f, k, slow)
                res = SatSearch("slow" if slow else "proved", k, worst=k)
                if slow:
                    res.codes, res.inputs = slow
                if last_path is not None:
                    res.worst_codes, res.worst_inputs = _finish_path(space, *last_path)
                return res
            codes, inputs = f.read(k)
            last_path = (codes, inputs)
            rep = _first_repeat(codes)
            if rep is not None:  # only without pair constraints
                return _locked_from(codes[:rep + 1], inputs, slow, k)
            if within is not None and k == within and slow is None:
                slow = (codes, inputs)
                # keep looking for the exact worst, within half the time left and a few frames
                left = budget.left()
                stop_at = None if left is None else time.monotonic() + left / 2
                extra_until = within + EXTRA_DEPTH
            if pairs and k > 0 and f.sat.solve([f.loops[k]]):
                return _locked(f, k, slow)
            budget.report(depth=k, engine="sat")
            if stop_at is not None and time.monotonic() - t0 > (stop_at - time.monotonic()) / 4:
                return _stopped(k, slow, last_path)
    finally:
        f.close()


def _within_first(space: CodeSpace, cond: int, within: int, budget: Budget, solver: str) -> Optional[SatSearch]:
    """`recover within N` asked first as one question, the one ``export --claim`` writes: is there
    an admissible run of N+1 unused codes (bounded model checking, Biere et al. 1999, from every
    unused code at once)? None when there is one (or the budget ran out): the search above then
    decides, as it did before. When there is none, the claim is proved and no code is locked (a
    locked code starts runs of every length), so every run of unused codes is a simple path and
    the exact worst is the smallest depth k with no run of k+1 unused codes, the depth at which
    the search above would stop too; it is found on the same unrolling, each frame's constraints
    switched on by an assumption: depth N-1 first (a bound written tight then needs no more),
    else by bisection. The pair constraints of that search (quadratic in
    the depth) are never built on this path: a 64-bit `recover within 128` took 13 s with them
    where the one question takes a standalone solver 0.2 s."""
    if budget.expired():
        return None
    sat = Sat(solver)
    try:
        un = Unrolling(space.model, sat)
        member = space.member_lit()
        on: list[int] = []
        for t in range(within + 1):
            a = sat.new_var()
            sat.add([-a, -un.lit(t, member)])
            sat.add([-a, un.lit(t, cond)])
            on.append(a)
        budget.report(depth=0, engine="sat")
        if sat.solve(on):
            return None
        lo, hi = 0, within  # no run of hi+1 unused codes; a run of lo (when lo > 0)
        model_at = None  # the depth of the solver's current model (a run), if any
        if within > 0:  # a bound is often written tight: one question settles the worst then
            if sat.solve(on[:within]):
                lo, model_at = within, within - 1
            else:
                hi = within - 1
        while lo < hi:
            if budget.expired():
                return None
            mid = (lo + hi) // 2
            if sat.solve(on[:mid + 1]):
                lo, model_at = mid + 1, mid
            else:
                hi, model_at = mid, None
        if budget.expired():
            return None
        res = SatSearch("proved", hi, worst=hi)
        if hi > 0:  # the worst run, read once (a run of hi codes exists: lo == hi)
            if model_at != hi - 1:
                found = sat.solve(on[:hi])
                assert found, "a run shorter than one the solver refuted"
            res.worst_codes, res.worst_inputs = _finish_path(space, *_read(space, un, hi - 1))
        budget.report(depth=hi, engine="sat")
        return res
    finally:
        sat.close()


def _read(space: CodeSpace, un: Unrolling, upto: int) -> tuple[list[int], list[dict[str, int]]]:
    """Codes and inputs of frames 0 .. ``upto`` of the solver's model."""
    return ([space.code_of(un.read_state(t)) for t in range(upto + 1)],
            [un.read_inputs(t) for t in range(upto + 1)])


def _stopped(depth: int, slow, last_path) -> SatSearch:
    if slow is not None:
        return SatSearch("slow", depth, worst=None, worst_at_least=depth + 1, codes=slow[0], inputs=slow[1])
    return SatSearch("open", max(depth, 0), worst_at_least=None if depth < 0 else depth + 1)


def _locked(f: _UnusedRuns, k: int, slow) -> SatSearch:
    codes, inputs = f.read(k)
    rep = _first_repeat(codes)
    assert rep is not None, "a lasso model without a repeated code"
    return _locked_from(codes[:rep + 1], inputs, slow, k)


def _locked_from(codes: list[int], inputs: list[dict[str, int]], slow, k: int) -> SatSearch:
    j = codes.index(codes[-1])
    return SatSearch("locked", k, codes=codes, inputs=inputs[:len(codes) - 1], cycle=sorted(set(codes[j:-1])))

"""Runs of unused codes of an asynchronous design by SAT: lockout, the worst recovery, `within`.

The synchronous search (:mod:`checker.engines.unused_runs`) unrolls the
next-state function; here each clock is the firings cascade of
:mod:`checker.engines.clock_runs`, so a run picks at every clock an
admissible input *and* an order of firings, both at worst, as the language
reads `recover` on an asynchronous design (shared/LANGUAGE.md: "recover
takes, at every clock, the worst settled code any order reaches").

First the number of firings that covers every order of one clock from every
unused code under every admissible input is proved
(:func:`checker.engines.clock_runs.clock_bound`); an order that never
settles from an unused code refutes the claim outright. Then, as in the
synchronous search:

* bounded model checking (Biere, Cimatti, Clarke and Zhu 1999): an
  admissible run of k+1 unused codes; none at depth k proves worst <= k
  (every unused code is a possible start, so the search is complete there);
* a lasso search (a run whose last code repeats an earlier one) for locked
  cycles;
* k-induction with simple-path constraints (Sheeran, Singh and Stalmarck
  2000): when no admissible run of k+1 pairwise distinct unused codes exists
  and no lasso of at most k+1 codes does, the unused codes hold no cycle, so
  nothing is locked and worst = k.

Every code along a run is unused, so the bound proved over unused starts
covers every clock of every run.
"""

from __future__ import annotations

import time
from dataclasses import dataclass, field
from typing import Optional

from ..model.events import unpacked
from ..model.space import CodeSpace
from .budget import Budget
from .clock_runs import Chain, Run, Unrolled, clock_bound, fire, read_run, settling_order
from .firings import structural_bound
from .sat import DEFAULT_SOLVER
from .unused_runs import EXTRA_DEPTH, MAX_SAT_DEPTH, PAIR_DEPTH, SatSearch


@dataclass
class ClockSearch(SatSearch):
    """What the search found, as :class:`checker.engines.unused_runs.SatSearch` plus: the order of
    firings of every clock of ``codes`` (``orders``) and of ``worst_codes`` (``worst_orders``),
    as state indices; ``steps`` firings cover every order of a clock (``how``: 'structure' or
    'sat'; ``tried``: the most firings the termination search tried). Two more statuses:
    'never' (``never`` = (state, inputs, flops): an order from an unused code that never
    settles) and 'unbounded' (the termination search found no bound; open)."""

    orders: list[list[int]] = field(default_factory=list)
    worst_orders: list[list[int]] = field(default_factory=list)
    steps: Optional[int] = None
    how: str = ""
    tried: int = 0
    never: Optional[tuple[int, dict[str, int], list[int]]] = None


class _Runs:
    """Runs of unused codes over one solver, one clock at a time."""

    def __init__(self, space: CodeSpace, cond: int, steps: int, solver: str) -> None:
        self.space = space
        self.model = space.model
        self.u = Unrolled(solver)
        self.ch = Chain(self.u, space.model, steps, "")
        self.member = space.member_lit()
        self.cond = cond
        self.act = self.u.sat.new_var()  # switches the simple-path constraints on
        self.ins: list[list[int]] = []
        self.loops: list[int] = []
        self.k = -1

    def grow(self, pairs: bool) -> None:
        """Add frame k+1 (the clock into it from frame k): its code unused, its inputs admissible,
        and its pair constraints."""
        self.k += 1
        k, u, g = self.k, self.u, self.u.g
        if k > 0:
            self.ch.clock(self.ins[k - 1])
        ins = u.leaves([f"{i}@{k}" for i in self.model.inputs])
        self.ins.append(ins)
        member, cond = self.ch.at(k, ins, [self.member, self.cond])
        u.hold(member ^ 1)
        u.hold(cond)
        if not pairs or k == 0:
            self.loops.append(0)
            return
        cur = self.ch.codes[k]
        eqs = []
        for j in range(k):
            e = g.and_all(g.xnor(a, b) for a, b in zip(self.ch.codes[j], cur))
            u.sat.add([-self.act, -u.lit(e)])
            eqs.append(e)
        self.loops.append(u.lit(g.or_all(eqs)))

    def read(self, upto: int) -> tuple[Run, dict[str, int]]:
        """The run of frames 0..upto in the last model, and the inputs of frame ``upto``."""
        last = {n: self.u.value(l) for n, l in zip(self.model.inputs, self.ins[upto])}
        return read_run(self.ch, upto), last

    def codes(self, run: Run) -> list[int]:
        return [unpacked(self.space.code, s) for s in run.states]

    def close(self) -> None:
        self.u.close()


def _first_repeat(codes: list[int]) -> Optional[int]:
    seen: set[int] = set()
    for i, c in enumerate(codes):
        if c in seen:
            return i
        seen.add(c)
    return None


def clock_search(space: CodeSpace, cond: int, within: Optional[int], budget: Budget,
                 solver: str = DEFAULT_SOLVER, max_depth: int = MAX_SAT_DEPTH) -> ClockSearch:
    """Decide lockout (and the worst, and ``within``) of an asynchronous design by unrolling runs
    of unused codes, each clock every order of its firings. Proves only from UNSAT answers on
    complete questions (see the module docstring); 'open' with the depth reached when the
    budget or ``max_depth`` runs out."""
    budget.report(depth=0, engine="firings")
    if structural_bound(space.model) is None:
        quick = _quick_refutation(space, cond, within, budget.share(0.25, 1.0, QUICK_SECONDS), solver)
        if quick is not None:
            return quick
    bound = clock_bound(space.model, [space.member_lit() ^ 1, cond], budget, solver)
    if bound.never is not None:
        return ClockSearch("never", 0, never=bound.never, how=bound.how, tried=bound.tried)
    if bound.steps is None:
        return ClockSearch("unbounded", 0, how=bound.how, tried=bound.tried)
    info = dict(steps=bound.steps, how=bound.how, tried=bound.tried)
    f = _Runs(space, cond, bound.steps, solver)
    last: Optional[tuple[Run, dict[str, int]]] = None
    slow: Optional[Run] = None
    stop_at: Optional[float] = None
    extra_until: Optional[int] = None
    try:
        while True:
            k = f.k + 1
            if k > max_depth or budget.expired() or (stop_at is not None and time.monotonic() > stop_at) \
                    or (extra_until is not None and k > extra_until):
                return _stopped(f, k - 1, slow, info)
            pairs = k <= PAIR_DEPTH
            f.grow(pairs)
            t0 = time.monotonic()
            if not f.u.sat.solve([f.act] if pairs else []):
                # no simple run of k+1 unused codes (no run at all past PAIR_DEPTH):
                # complete once no lasso ends at frame k either
                if pairs and k > 0 and f.u.sat.solve([f.loops[k]]):
                    return _locked(f, k, slow, info)
                res = ClockSearch("slow" if slow else "proved", k, worst=k, **info)
                if slow is not None:
                    _put(f, res, slow)
                if last is not None:
                    _finish(f, res, *last, bound.steps, solver)
                return res
            run, ins = f.read(k)
            last = (run, ins)
            codes = f.codes(run)
            rep = _first_repeat(codes)
            if rep is not None:  # only without pair constraints
                return _locked_from(f, run, rep, slow, k, info)
            if within is not None and k == within and slow is None:
                slow = run
                left = budget.left()  # look on for the exact worst, within half the time left
                stop_at = None if left is None else time.monotonic() + left / 2
                extra_until = within + EXTRA_DEPTH
            if pairs and k > 0 and f.u.sat.solve([f.loops[k]]):
                return _locked(f, k, slow, info)
            budget.report(depth=k, engine="firings")
            if stop_at is not None and time.monotonic() - t0 > (stop_at - time.monotonic()) / 4:
                return _stopped(f, k, slow, info)
    finally:
        f.close()


QUICK_SECONDS = 10.0
"""Longest the search for a refutation before the bound on firings may take (a quarter of the
time left when there is a deadline)."""

QUICK_FIRINGS = 2
"""That search unrolls each clock to this many firings per flop, plus one (a clear that drops
early lets a stage fire twice: the lock of tests/test_recover_wide.py needs 2n - 1 firings)."""

QUICK_CONFLICTS = 20_000
"""Conflicts each question of that search may take; one left unanswered finds nothing."""

QUICK_CLOCKS = 4
"""Most clocks that search unrolls: it looks for short locked cycles only (a slow run it found
would leave the worst unknown, which the full search gives)."""


def _quick_refutation(space: CodeSpace, cond: int, within: Optional[int], budget: Budget,
                      solver: str) -> Optional[ClockSearch]:
    """A short locked cycle among runs whose every clock settles
    within 2n+1 firings, before the bound on firings is known. Whatever it finds is a real run
    (each clock an order that settles), so it refutes; finding nothing proves nothing, since a
    clock may have longer orders: the caller goes on to the bound. Proving that bound can take
    the solver minutes where a lock shows within two clocks (a clear decoded from many stages)."""
    steps = QUICK_FIRINGS * len(space.model.states) + 1
    limit = QUICK_CLOCKS
    f = _Runs(space, cond, steps, solver)
    info = dict(steps=None, how="none needed: the runs shown settle at every clock", tried=steps)
    try:
        for k in range(limit + 1):
            if budget.expired():
                return None
            f.grow(True)
            if not f.u.sat.solve_limited([], QUICK_CONFLICTS):
                return None  # no run of k+1 unused codes among these, or no quick answer
            if k > 0 and f.u.sat.solve_limited([f.loops[k]], QUICK_CONFLICTS):
                return _locked(f, k, None, info)
        return None
    finally:
        f.close()


def _put(f: _Runs, res: ClockSearch, run: Run) -> None:
    res.codes, res.inputs, res.orders = f.codes(run), run.inputs, run.orders


def _finish(f: _Runs, res: ClockSearch, run: Run, ins: dict[str, int], steps: int, solver: str) -> None:
    """The worst run: the last run of unused codes found, and one more clock (under the inputs its
    last code had) by an order that settles, which lands in the sequence (no longer run exists)."""
    model = f.model
    order = settling_order(model, run.states[-1], ins, steps, solver)
    end = fire(model, run.states[-1], ins, order)[-1].code if order else run.states[-1]
    res.worst_codes = f.codes(run) + [unpacked(f.space.code, end)]
    res.worst_inputs = run.inputs + [ins]
    res.worst_orders = run.orders + [order]


def _stopped(f: _Runs, depth: int, slow: Optional[Run], info: dict) -> ClockSearch:
    if slow is not None:
        res = ClockSearch("slow", depth, worst=None, worst_at_least=depth + 1, **info)
        _put(f, res, slow)
        return res
    return ClockSearch("open", max(depth, 0), worst_at_least=None if depth < 0 else depth + 1, **info)


def _locked(f: _Runs, k: int, slow: Optional[Run], info: dict) -> ClockSearch:
    run, _ = f.read(k)
    rep = _first_repeat(f.codes(run))
    assert rep is not None, "a lasso model without a repeated code"
    return _locked_from(f, run, rep, slow, k, info)


def _locked_from(f: _Runs, run: Run, rep: int, slow: Optional[Run], k: int, info: dict) -> ClockSearch:
    codes = f.codes(run)[:rep + 1]
    j = codes.index(codes[-1])
    return ClockSearch("locked", k, codes=codes, inputs=run.inputs[:rep], orders=run.orders[:rep],
                       cycle=sorted(set(codes[j:-1])), **info)

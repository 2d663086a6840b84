"""`equal ... after` on wide designs, either asynchronous: a miter of two clock chains by SAT.

Two designs, each clock of each the firings cascade of
:mod:`checker.engines.clock_runs` (a synchronous one's next-state function),
are run side by side under shared inputs (paired by name), each choosing its
own order of firings at every clock, as the explicit product search does
(:mod:`checker.claims.equal_async`). The steps:

1. the reset: one clock under the condition from every state must settle
   each design in one state. Asked by SAT: some start and order settle in r;
   does any start and order meeting the condition settle elsewhere? A
   second code is a refutation (the flops left undetermined), UNSAT makes r
   the one reset state. An order that never settles from a start meeting the
   condition refutes as well;
2. bounded model checking (Biere, Cimatti, Clarke and Zhu 1999) from the
   pair of reset states: at depth k, a run of k clocks after which some
   output differs under some input;
3. k-induction with simple-path constraints (Sheeran, Singh and Stalmarck
   2000) from a free pair of states: no run of pairwise distinct pairs whose
   outputs agree for k clocks and differ at the next, together with the
   base case up to k, proves the outputs agree forever.

The chains of steps 2 and 3 start anywhere, so the number of firings each
clock is given must cover every order from every state under every input
(:func:`checker.engines.clock_runs.clock_bound` with no restriction). When
some order from some state never settles, that state may be unreachable;
the search is then not attempted (``open``, said so).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Optional

from ..model.circuit import Model
from .budget import Budget
from .clock_runs import Chain, Run, Unrolled, clock_bound, read_run
from .sat import DEFAULT_SOLVER

MAX_DEPTH = 10_000
"""Deepest clock the miter unrolls before the claim is open."""

PAIR_DEPTH = 64
"""Deepest frame of the induction step that gets simple-path constraints (they grow with depth squared)."""


@dataclass
class Reset:
    """One design's clock under the condition: ``state`` the one settled state (None when not
    one), ``runs`` (state, inputs, order, settled state or None) showing it or its failure:
    one run for a reset, two that settle apart, or one whose order never settles (settled None);
    ``steps`` firings cover the condition's clocks."""

    state: Optional[int]
    runs: list[tuple[int, dict[str, int], list[int], Optional[int]]]
    steps: Optional[int] = None
    tried: int = 0


@dataclass
class MiterSearch:
    """What the miter found. ``status``: 'proved' (k-induction closed at ``depth``), 'differ'
    (``a`` and ``b``: the runs from the reset pair, outputs ``outputs`` differ at their last
    state under ``last_inputs``), 'open' (``depth`` clocks searched; ``why`` when no search
    was possible)."""

    status: str
    depth: int
    a: Optional[Run] = None
    b: Optional[Run] = None
    last_inputs: dict[str, int] = field(default_factory=dict)
    outputs: list[str] = field(default_factory=list)
    why: str = ""
    firings: tuple[Optional[int], Optional[int]] = (None, None)


def reset(model: Model, cond: int, budget: Budget, solver: str = DEFAULT_SOLVER) -> Reset:
    """One clock of ``model`` under ``cond`` from every state (step 1 of the module docstring)."""
    b = clock_bound(model, [cond], budget, solver)
    if b.never is not None:
        state, inputs, flops = b.never
        return Reset(None, [(state, inputs, flops, None)], tried=b.tried)
    if b.steps is None:
        return Reset(None, [], None, b.tried)
    u = Unrolled(solver)
    try:
        ch = Chain(u, model, b.steps, "r")
        ins = u.leaves([f"{n}@0" for n in model.inputs])
        u.hold(ch.at(0, ins, [cond])[0])
        ch.clock(ins)
        if not u.solve([], budget):
            raise AssertionError("no input meets the condition (the caller checks that first)")
        first = read_run(ch, 1)
        r = first.states[1]
        g = u.g
        elsewhere = g.or_all(l if not (r >> i) & 1 else l ^ 1 for i, l in enumerate(ch.codes[1]))
        runs = [(first.states[0], first.inputs[0], first.orders[0], r)]
        if not u.solve([elsewhere], budget):
            return Reset(r, runs, b.steps, b.tried)
        second = read_run(ch, 1)
        runs.append((second.states[0], second.inputs[0], second.orders[0], second.states[1]))
        return Reset(None, runs, b.steps, b.tried)
    finally:
        u.close()


class _Miter:
    """Two chains under shared inputs in one solver; ``bad[t]``: some output differs at clock t."""

    def __init__(self, a: Model, b: Model, steps: tuple[int, int], solver: str,
                 start: Optional[tuple[int, int]]) -> None:
        self.a, self.b = a, b
        self.u = u = Unrolled(solver)
        first = [None, None]
        if start is not None:
            first = [[1 if (s >> i) & 1 else 0 for i in range(len(m.states))] for s, m in zip(start, (a, b))]
        self.ca = Chain(u, a, steps[0], "a", first[0])
        self.cb = Chain(u, b, steps[1], "b", first[1])
        self.names = list(a.inputs)
        self.ins: list[dict[str, int]] = []
        self.bad: list[int] = []
        self.diffs: list[list[int]] = []
        self._frame()

    def _frame(self) -> None:
        u, g = self.u, self.u.g
        t = len(self.ins)
        leaves = dict(zip(self.names, u.leaves([f"{n}@{t}" for n in self.names])))
        self.ins.append(leaves)
        oa = self.ca.at(t, [leaves[n] for n in self.a.inputs], self.a.output_lits)
        ob = self.cb.at(t, [leaves[n] for n in self.b.inputs], self.b.output_lits)
        byname = dict(zip(self.b.outputs, ob))
        diffs = [g.xor(x, byname[n]) for n, x in zip(self.a.outputs, oa)]
        for d in diffs:
            u.lit(d)
        self.diffs.append(diffs)
        self.bad.append(g.or_all(diffs))

    def step(self) -> None:
        """Clock both chains under the last frame's inputs, and add the next frame."""
        t = len(self.ins) - 1
        self.ca.clock([self.ins[t][n] for n in self.a.inputs])
        self.cb.clock([self.ins[t][n] for n in self.b.inputs])
        self._frame()

    def distinct(self, t: int) -> None:
        """Require the pair of states at clock ``t`` to differ from every earlier one."""
        g = self.u.g
        cur = self.ca.codes[t] + self.cb.codes[t]
        for j in range(t):
            old = self.ca.codes[j] + self.cb.codes[j]
            self.u.hold(g.and_all(g.xnor(x, y) for x, y in zip(old, cur)) ^ 1)

    def close(self) -> None:
        self.u.close()


def after_search(a: Model, b: Model, start: tuple[int, int], budget: Budget, solver: str = DEFAULT_SOLVER,
                 max_depth: int = MAX_DEPTH) -> MiterSearch:
    """From the pair of reset states ``start``, whether the outputs of ``a`` and ``b`` (paired by
    name, inputs shared by name) agree under every input sequence and every order of firings of
    both (steps 2 and 3 of the module docstring)."""
    ba = clock_bound(a, [], budget, solver)
    bb = clock_bound(b, [], budget, solver)
    firings = (ba.steps, bb.steps)
    for name, bd in (("first", ba), ("second", bb)):
        if bd.steps is None:
            why = (f"from some state (perhaps one never reached) an order of the {name} design's firings "
                   f"never settles, so no number of firings covers every clock of the miter"
                   if bd.never is not None else
                   f"the {name} design has orders of {bd.tried} firings that never come back to a cascade "
                   f"they have met, and the search for a bound stopped there")
            return MiterSearch("open", 0, why=why, firings=firings)
    steps = (ba.steps or 0, bb.steps or 0)
    base = _Miter(a, b, steps, solver, start)
    ind = _Miter(a, b, steps, solver, None)
    try:
        k = 0
        while True:
            if k > max_depth or budget.expired():
                return MiterSearch("open", max(k - 1, 0), firings=firings)
            budget.report(depth=k, engine="firings miter")
            if base.u.solve([base.bad[k]], budget, k):
                ra, rb = read_run(base.ca, k), read_run(base.cb, k)
                last = {n: base.u.value(l) for n, l in base.ins[k].items()}
                outs = [n for n, d in zip(a.outputs, base.diffs[k]) if base.u.value(d)]
                return MiterSearch("differ", k, ra, rb, last, outs, firings=firings)
            base.u.hold(base.bad[k] ^ 1)
            # induction: a run of k+1 distinct pairs, outputs agreeing on the first k, differing at the last
            if k <= PAIR_DEPTH:
                ind.distinct(k)
            if not ind.u.solve([ind.bad[k]], budget, k):
                return MiterSearch("proved", k, firings=firings)
            ind.u.hold(ind.bad[k] ^ 1)
            base.step()
            ind.step()
            k += 1
    finally:
        base.close()
        ind.close()



@dataclass
class PairedSearch:
    """One clock of two designs from every state (flops paired by name) that ``domain`` admits.
    ``status``: 'same' (outputs agree and every order of both settles in one code), 'differ'
    (``state``, ``inputs``, an order of each, ``ends`` their settled states, ``outputs`` that
    differ), 'never' (``who`` is 'a' or 'b', ``never`` = (state of that design, inputs, flops):
    an order that never settles), 'open' (``why``)."""

    status: str
    state: int = 0
    inputs: dict[str, int] = field(default_factory=dict)
    orders: tuple[list[int], list[int]] = ([], [])
    ends: tuple[int, int] = (0, 0)
    outputs: list[str] = field(default_factory=list)
    who: str = ""
    never: Optional[tuple[int, dict[str, int], list[int]]] = None
    why: str = ""
    firings: tuple[Optional[int], Optional[int]] = (None, None)


def paired_search(a: Model, b: Model, pos: list[int], domain: tuple[list[int], list[int]], budget: Budget,
                  solver: str = DEFAULT_SOLVER) -> PairedSearch:
    """Whether, from every state of ``a`` meeting the model literals ``domain[0]`` (the same state
    of ``b``, flop ``i`` of ``a`` being flop ``pos[i]`` of ``b``, meets ``domain[1]``) under every
    input, the outputs agree and every order of one clock of each design settles in one and the
    same code: one SAT question, each design's order free, after a proved bound on firings
    over that domain (an order that never settles there refutes)."""
    bounds = []
    for who, m, dom in (("a", a, domain[0]), ("b", b, domain[1])):
        bd = clock_bound(m, dom, budget, solver)
        if bd.never is not None:
            return PairedSearch("never", who=who, never=bd.never)
        if bd.steps is None:
            return PairedSearch("open", why=f"orders of {bd.tried} firings that never come back to a cascade they "
                                            f"have met, and the search for a bound stopped there")
        bounds.append(bd.steps)
    u = Unrolled(solver)
    try:
        g = u.g
        ca = Chain(u, a, bounds[0], "a")
        back = {j: i for i, j in enumerate(pos)}
        cb = Chain(u, b, bounds[1], "b", [ca.codes[0][back[j]] for j in range(len(b.states))])
        names = list(a.inputs)
        ins = dict(zip(names, u.leaves([f"{n}@0" for n in names])))
        ia, ib = [ins[n] for n in a.inputs], [ins[n] for n in b.inputs]
        for lit in ca.at(0, ia, domain[0]):
            u.hold(lit)
        for lit in cb.at(0, ib, domain[1]):
            u.hold(lit)
        oa = ca.at(0, ia, a.output_lits)
        ob = dict(zip(b.outputs, cb.at(0, ib, b.output_lits)))
        diffs = [g.xor(x, ob[n]) for n, x in zip(a.outputs, oa)]
        for d in diffs:
            u.lit(d)
        ca.clock(ia)
        cb.clock(ib)
        apart = [g.xor(ca.codes[1][i], cb.codes[1][pos[i]]) for i in range(len(a.states))]
        budget.report(depth=1, engine="firings miter")
        firings = (bounds[0], bounds[1])
        if not u.solve([g.or_all(diffs + apart)], budget, 1):
            return PairedSearch("same", firings=firings)
        return PairedSearch("differ", ca.state(0), {n: u.value(l) for n, l in ins.items()},
                            (ca.order(0), cb.order(0)), (ca.state(1), cb.state(1)),
                            [n for n, d in zip(a.outputs, diffs) if u.value(d)], firings=firings)
    finally:
        u.close()

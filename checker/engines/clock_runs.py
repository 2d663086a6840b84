"""Runs of clocks of asynchronous designs as one SAT problem: every clock a firings cascade.

:mod:`checker.engines.firings` writes one clock of an asynchronous design as
its cascade unrolled firing by firing, the firing order a free index per
step, with a proved number of steps that covers every order (from the clock
tree, or by an UNSAT question). Here clocks are chained: the code after one
clock's last step is the next clock's start code, each clock with inputs of
its own. Within one clock the solver may pick any order, so a run of the
chain is exactly a run of the settled-successor relation that the explicit
engine builds (:func:`checker.engines.explicit.build_settled_graph`): at
every clock any admissible input and any order, chosen at worst.

Soundness rests on the bound: ``steps`` must cover every order from every
start that a chained clock can have (:func:`clock_bound` asks it over the
same starts the run admits). Each clock then requires that no step idles
while a change is pending and that nothing is pending after the last step;
both follow from the bound, and stating them keeps the solver from
exploring assignments that mean nothing.

:class:`Chain` holds one design's clocks in a shared AIG; :class:`Unrolled`
owns the AIG and the solver, so that two designs (a miter, for ``equal``)
can share both. A synchronous design's clock is its next-state function.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Optional, Sequence

from ..model.aig import Aig
from ..model.circuit import Model
from ..model.events import EventModel, Firing
from .budget import Budget
from .firings import Bound, Cascade, Firings, settle_bound
from .sat import DEFAULT_SOLVER, Encoder, Sat


def at(model: Model, g: Aig, q: Sequence[int], ins: Sequence[int], alits: Sequence[int]) -> list[int]:
    """Model literals evaluated in ``g`` at code literals ``q`` under input literals ``ins``."""
    lm = {l >> 1: v for l, v in zip(model.state_lits, q)}
    lm.update({l >> 1: v for l, v in zip(model.input_lits, ins)})
    return model.aig.copy_into(g, list(alits), lm)


class Unrolled:
    """One AIG and one incremental solver that several :class:`Chain` objects build into."""

    def __init__(self, solver: str = DEFAULT_SOLVER) -> None:
        self.g = Aig()
        self.sat = Sat(solver)
        self.enc = Encoder(self.g, self.sat)
        self.env = self.enc.new_env({})

    def lit(self, alit: int) -> int:
        """The solver literal of a literal of :attr:`g` (its cone encoded on first use)."""
        return self.enc.lit(self.env, alit)

    def hold(self, alit: int) -> None:
        """Require a literal of :attr:`g` in every model."""
        self.sat.add([self.lit(alit)])

    def leaves(self, names: Sequence[str]) -> list[int]:
        """New leaves of :attr:`g`, encoded at once (so that every model gives their values)."""
        out = [self.g.leaf(n) for n in names]
        for l in out:
            self.lit(l)
        return out

    def value(self, alit: int) -> int:
        """The value of an encoded literal of :attr:`g` in the last model."""
        return self.sat.value(self.lit(alit))

    def solve(self, alits: Sequence[int] = (), budget: Optional[Budget] = None, depth: int = 0) -> bool:
        """Whether literals of :attr:`g` can all hold at once (with everything held)."""
        if budget is not None:
            budget.check(depth)
        assume = [self.lit(l) for l in alits]
        if any(a == -self.sat.true for a in assume):
            return False
        return self.sat.solve([a for a in assume if a != self.sat.true])

    def close(self) -> None:
        self.sat.close()


class Chain:
    """Clocks of one design, chained in :attr:`Unrolled.g`: ``codes[t]`` the code literals at
    clock t, ``cascades[t]`` the cascade of clock t (None for a synchronous design)."""

    def __init__(self, u: Unrolled, model: Model, steps: int, tag: str, first: Optional[list[int]] = None) -> None:
        self.u = u
        self.model = model
        self.steps = steps
        self.tag = tag
        self.codes: list[list[int]] = [first if first is not None else u.leaves([f"{tag}{s}@0" for s in model.states])]
        self.inputs: list[list[int]] = []
        self.cascades: list[Optional[Cascade]] = []

    def at(self, t: int, ins: Sequence[int], alits: Sequence[int]) -> list[int]:
        """Model literals at clock ``t``'s code under input literals ``ins``."""
        return at(self.model, self.u.g, self.codes[t], ins, alits)

    def clock(self, ins: list[int]) -> None:
        """Add the clock from the last code under input literals ``ins`` (model input order)."""
        t = len(self.cascades)
        self.inputs.append(ins)
        if self.model.synchronous:
            self.cascades.append(None)
            self.codes.append(self.at(t, ins, self.model.next_lits))
            for l in self.codes[-1]:
                self.u.lit(l)  # encoded now, so that every later model gives their values
            return
        c = Cascade(self.model, self.u.g, self.codes[t], ins, tag=f"{self.tag}#{t}")
        c.extend(self.steps)
        for st in c.steps:
            for l in st.idx:
                self.u.lit(l)
        for pending, fired in c.idle:
            self.u.sat.add([-self.u.lit(pending), self.u.lit(fired)])
        self.u.hold(c.pending_at(self.steps) ^ 1)
        self.cascades.append(c)
        self.codes.append(c.end())
        for l in self.codes[-1]:
            self.u.lit(l)

    def state(self, t: int) -> int:
        """The state integer at clock ``t`` in the last model."""
        return sum(self.u.value(l) << i for i, l in enumerate(self.codes[t]))

    def input_values(self, t: int) -> dict[str, int]:
        return {n: self.u.value(l) for n, l in zip(self.model.inputs, self.inputs[t])}

    def order(self, t: int) -> list[int]:
        """The flops clock ``t`` fires in the last model (state indices), replayed through the
        event model; it must settle in the next clock's code (else the encoding is wrong)."""
        c = self.cascades[t]
        if c is None:
            return []
        start, inputs = self.state(t), self.input_values(t)
        flops = c.order_of(self.u.value, start, inputs)
        end = fire(self.model, start, inputs, flops)[-1].code if flops else EventModel(self.model, inputs).edge(start).code
        if end != self.state(t + 1):
            raise AssertionError(f"the clock chain's clock {t} settles in {self.state(t + 1)}, "
                                 f"the event model in {end}")
        return flops


def fire(model: Model, state: int, inputs: dict[str, int], flops: Sequence[int]) -> list[Firing]:
    """The firings of the order ``flops`` from the edge at ``state``, through the event model,
    which checks that each is pending at its turn; the last leaves nothing pending unless the
    order is one that never settles."""
    return fire_in(EventModel(model, inputs), state, flops)


def fire_in(em: EventModel, state: int, flops: Sequence[int]) -> list[Firing]:
    """:func:`fire` in an event model already made for the inputs."""
    cur = em.edge(state)
    out = []
    for f in flops:
        if not any(c.flop == f for c in cur.pending):
            raise AssertionError(f"order: {em.model.states[f]} is not pending at its turn")
        cur, firing = em.fire(cur, f)
        out.append(firing)
    return out


TIGHTEN_CONFLICTS = 5_000
"""Conflicts each question of the tightening of a SAT-found bound may take (the bound stays
sound without it: a question left unanswered keeps the larger number)."""


def clock_bound(model: Model, extra: Sequence[int], budget: Optional[Budget], solver: str = DEFAULT_SOLVER,
                max_firings: Optional[int] = None) -> Bound:
    """How many steps cover every order of one clock from every start code and input meeting the
    model literals ``extra`` (over the code and inputs); see :func:`checker.engines.firings.settle_bound`.
    A synchronous design needs none."""
    if model.synchronous:
        return Bound(0, "structure")
    fir = Firings(model, solver=solver)
    try:
        start = fir.first(list(extra))
        b = settle_bound(fir, start, budget, max_firings)
        if b.steps is None or b.how != "sat":
            return b
        # the search doubles; halve the gap to the least number of firings that no order exceeds
        # (an order of m firings has every shorter prefix, so "some order has m firings" is monotone)
        lo, hi = 0, b.steps + 1
        while hi - lo > 1:
            mid = (lo + hi) // 2
            if fir.try_solve(list(start) + [st.fired for st in fir.steps[:mid]], TIGHTEN_CONFLICTS, budget) is not False:
                lo = mid  # an order of mid firings, or no quick proof that none exists
            else:
                hi = mid
        return Bound(hi - 1, "sat", tried=b.tried)
    finally:
        fir.close()


def settling_order(model: Model, state: int, inputs: dict[str, int], steps: int,
                   solver: str = DEFAULT_SOLVER, target: Optional[int] = None) -> list[int]:
    """An order of the clock from ``state`` under ``inputs`` that settles within ``steps`` firings
    (in state ``target`` when given), found by the firings engine with the start pinned."""
    if model.synchronous:
        return []
    fir = Firings(model, solver=solver)
    try:
        fir.extend(steps)
        pin = [l if (state >> i) & 1 else l ^ 1 for i, l in enumerate(fir.q0)]
        pin += [l if inputs.get(n, 0) else l ^ 1 for n, l in zip(model.inputs, fir.ins)]
        pin.append(fir.pending_at(steps) ^ 1)
        if target is not None:
            pin += [l if (target >> i) & 1 else l ^ 1 for i, l in enumerate(fir.end())]
        if not fir.solve(pin):
            raise AssertionError("no order of this clock settles where it should")
        return fir.order(steps)
    finally:
        fir.close()


@dataclass
class Run:
    """A run of a chain read from a model: state integers (one more than clocks), the inputs and
    the order of firings of every clock."""

    states: list[int]
    inputs: list[dict[str, int]]
    orders: list[list[int]]


def read_run(ch: Chain, clocks: int) -> Run:
    """The first ``clocks`` clocks of ``ch`` in the last model."""
    return Run([ch.state(t) for t in range(clocks + 1)], [ch.input_values(t) for t in range(clocks)],
               [ch.order(t) for t in range(clocks)])

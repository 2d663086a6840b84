"""The claims about one clock on asynchronous designs too wide to visit start by start.

When the explicit cascade engine cannot visit every (sequence code, input)
pair (:func:`checker.claims.clocking.explicit_limit`), or ``--engine sat``
asks for it, ``count``, ``settle`` and ``glitchfree`` ask the firings engine
(:mod:`checker.engines.firings`): the start code and the inputs are free,
and every order of firings is one assignment of its index variables. This
module sets that problem up for a check (the sequence's membership circuit,
never a list of codes), finds how many steps cover every order, and turns a
model of the solver into an order of firings that the event model replays.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Sequence

from ..elab import Check, Claim
from ..engines.budget import Budget
from ..engines.firings import Bound, Firings, settle_bound
from ..engines.clock_runs import fire_in
from ..model.events import EventModel, Firing
from .clocking import explicit_limit
from .common import Options, make_result
from .result import OPEN, Result


@dataclass
class Wide:
    """A check's clock as a firings problem: the unrolling, the literals that admit a start
    (member of the sequence, and whatever the claim adds), and how many steps cover every order."""

    fir: Firings
    start: list[int]
    bound: Bound

    def details(self) -> dict:
        """What the engine did, for a result's details."""
        return {"engine": "firings", "firings": self.bound.steps, "bound": self.bound.how,
                "solver": self.fir.sat.name, "vars": self.fir.sat.nvars, "clauses": self.fir.sat.nclauses}


AUTO_EXPLICIT_STARTS = 1 << 12
"""``--engine auto`` walks up to this many (sequence code, input) starts explicitly; past it the
firings engine goes first (a 16-bit ripple divider: 0.2 s against 40 s, tests/perf/RESULTS_events.md)."""


def wide_engine(check: Check, opts: Options) -> bool:
    """Whether the claims about one clock take the firings engine for ``check``: ``--engine sat``
    asks for it, the explicit path cannot visit every start, or (``auto``) it has more than
    :data:`AUTO_EXPLICIT_STARTS` starts."""
    if opts.engine == "explicit":
        return False
    if opts.engine == "sat" or explicit_limit(check) is not None:
        return True
    assert check.sequence is not None
    return check.sequence.length() << len(check.design.model.inputs) > AUTO_EXPLICIT_STARTS


def explicit_after(check: Check, opts: Options, result: Result) -> bool:
    """Whether ``auto`` should try the explicit path after the firings engine left ``result``:
    it is open for want of a bound on firings, and the explicit path can visit every start."""
    return (result.status == OPEN and opts.engine == "auto" and explicit_limit(check) is None
            and result.details.get("engine") == "firings" and result.details.get("firings", 0) is None)


def setup(check: Check, opts: Options, budget: Budget, extra: Sequence[int] = (), depth_cap: int = 0,
          watch: Sequence[int] = ()) -> Wide:
    """The firings problem of ``check``: starts in the sequence meeting the model literals
    ``extra`` (conditions over the code and inputs); the unrolling extended to its bound."""
    model = check.design.model
    seq = check.sequence
    assert seq is not None
    fir = Firings(model, depth_cap, watch, opts.solver)
    try:
        member = seq.member(model.aig, check.code_lits())
        start = fir.first([member, *extra])
        bound = settle_bound(fir, start, budget)
    except BaseException:
        fir.close()
        raise
    return Wide(fir, start, bound)


def firings_of(check: Check, start: int, inputs: dict[str, int], flops: list[int]) -> tuple[EventModel, list[Firing]]:
    """The event model under ``inputs`` and the firings of the order ``flops`` (state indices) from
    the edge at ``start``, fired through the event model (which checks each is pending)."""
    em = EventModel(check.design.model, inputs)
    return em, fire_in(em, start, flops)


def no_bound(check: Check, claim: Claim, w: Wide) -> Result:
    """The open verdict when the termination search found no number of firings that covers every order."""
    return make_result(check, claim, OPEN, f"the firings engine found orders of {w.bound.tried} firings "
                       f"that never come back to a cascade they have met, and stopped there",
                       details=dict(w.details(), depth=w.bound.tried))


def the_model(w: Wide) -> tuple[int, dict[str, int], list[int]]:
    """(start state integer, inputs, order) of the solver's last model."""
    code, inputs = w.fir.start()
    return code, inputs, w.fir.order(w.bound.steps)

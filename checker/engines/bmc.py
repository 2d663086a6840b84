"""Bounded model checking: is a bad state reachable within k clocks of an initial state?

Biere, Cimatti, Clarke and Zhu 1999: unroll the transition relation frame by
frame in one incremental solver; the first satisfiable frame gives a shortest
counterexample. Proves nothing beyond its depth.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Optional

from ..model import Model
from .budget import Budget
from .sat import Sat, Unrolling


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
            budget.note(engine="bmc", depth=t)
            if sat.solve([u.lit(t, bad)]):
                return BmcResult([u.read_inputs(k) for k in range(t + 1)], t)
            if on_depth is not None:
                on_depth(t + 1)
        return BmcResult(None, max_depth)

"""k-induction on a machine with a bad literal (Sheeran, Singh and Stalmarck 2000).

The step case asks: can ``k`` clocks from any state, each free of ``bad``,
be followed by a clock with ``bad``? When that is unsatisfiable and bounded
model checking has found no ``bad`` in the first ``k`` clocks from the reset
state (the base case, which the caller establishes), ``bad`` is unreachable.

On the product of a binary counter and its Gray re-implementation with a
decoder on the outputs, "the decoded outputs agree" is itself inductive
(k = 1): one SAT call proves what signal correspondence proves only after a
refinement round per bit, because the high bits of both counters never move
in any simulation from reset and start out as one class of constants.
"""

from __future__ import annotations

from dataclasses import dataclass

from ..model import Model
from .budget import Budget
from .sat import Sat, Unrolling


@dataclass
class InductionResult:
    """``proved``: the step case holds at ``k`` (with a base case of ``k`` clocks, ``bad`` is
    unreachable); otherwise ``k`` is the last step depth tried."""

    proved: bool
    k: int


def k_induction_step(model: Model, bad: int, max_k: int, budget: Budget, solver: str) -> InductionResult:
    """The step case of k-induction for k = 1 .. ``max_k``, in one incremental solver.

    Without simple-path constraints, so it is a quick first try, not a
    complete method: a failure says nothing, and other engines go on.
    """
    with Sat(solver) as sat:
        u = Unrolling(model, sat)
        for k in range(1, max_k + 1):
            if budget.expired():
                return InductionResult(False, k - 1)
            sat.add([-u.lit(k - 1, bad)])  # clocks 0 .. k-1 are free of bad
            if not sat.solve([u.lit(k, bad)]):
                return InductionResult(True, k)
        return InductionResult(False, max_k)

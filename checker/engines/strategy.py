"""Worst depths with several input rows, within the compact engine's memory: strategy improvement.

With several input rows the recover claim asks, for every unused code, for
the most clocks any choice of admissible inputs can keep it out of the
sequence: a code is locked when some choice keeps it out forever, and
otherwise needs one clock more than its worst successor. A choice of one
row per code (a strategy) makes a one-successor table, ranked exactly and
fast by :func:`compact.depth_functional`; Howard's policy iteration (Howard,
Dynamic Programming and Markov Processes, 1960) then switches every unused
code whose other rows lead to a successor that needs more clocks (or is
locked) and ranks again, until no code can do worse. Each switch keeps or
raises every code's clocks (a switch that closes a cycle closes it through
admissible steps, so the codes on it are truly locked), and at the end
every code needs exactly one clock more than its worst successor, or can
stay out forever: the worst depths.

The first strategy takes, per code, a row whose successor stays unused when
there is one ("some input keeps it out"), since a code whose every row
leads into the sequence needs exactly one clock. Memory: the table of the
kept rows, the strategy (4 bytes a code) and what one ranking holds, with no
reversed table (the retrograde analysis before it held 24 bytes a code and
row more: 2^28 codes with two rows did not fit).
"""

from __future__ import annotations

from typing import Optional

import numpy as np

from . import compact as C
from .budget import Budget

def first_strategy(succ: np.ndarray, member: np.ndarray, budget: Optional[Budget] = None) -> np.ndarray:
    """Row 0's successors, replaced, per code, by another row's where row 0 leads into the
    sequence and that row does not."""
    strat = succ[0].copy()
    n = strat.size
    for base in range(0, n, C.CHUNK):
        C._tick(budget)
        cur = strat[base:base + C.CHUNK]
        for r in range(1, succ.shape[0]):
            cand = succ[r, base:base + C.CHUNK]
            d = np.flatnonzero(cand != cur)  # only where the rows differ
            take = d[member[cur[d]] & ~member[cand[d]]]
            cur[take] = cand[take]
    return strat


def improve(succ: np.ndarray, member: np.ndarray, steps: np.ndarray, strat: np.ndarray,
            budget: Optional[Budget] = None) -> int:
    """Switch, in place, every unused code whose other rows lead somewhere worse; how many switched.

    Depths compare as unsigned 32-bit numbers, so that a locked code (-1) is above every count."""
    n = strat.size
    key = steps.view(np.uint32)
    switched = 0
    for base in range(0, n, C.CHUNK):
        C._tick(budget)
        hi = min(n, base + C.CHUNK)
        cur = strat[base:hi]
        unused = ~member[base:hi]
        for r in range(succ.shape[0]):
            cand = succ[r, base:hi]
            d = np.flatnonzero((cand != cur) & unused)  # only where the rows differ
            if d.size == 0:
                continue
            better = d[key[cand[d]] > key[cur[d]]]
            if better.size:
                cur[better] = cand[better]
                switched += int(better.size)
    return switched


def worst_depths(succ: np.ndarray, member: np.ndarray,
                 budget: Optional[Budget] = None) -> tuple[np.ndarray, int, np.ndarray, int]:
    """(steps, ranking rounds, the final strategy, rankings) for the table ``succ[r, c]``.

    ``steps[c]``: 0 in the sequence, the worst clocks to reach it, or -1 when
    some choice of rows keeps ``c`` out forever (the strategy's table then
    has a cycle of unused codes that ``c`` reaches).
    """
    strat = first_strategy(succ, member, budget)
    rounds = 0
    rankings = 0
    while True:
        rankings += 1
        if budget is not None:
            budget.note(engine="explicit", step=f"worst inputs, ranking {rankings}")
        steps, r = C.depth_functional(strat, member, budget)
        rounds += r
        if improve(succ, member, steps, strat, budget) == 0:
            return steps, rounds, strat, rankings
        del steps

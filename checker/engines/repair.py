"""Repair hints for a counter that locks or recovers too slowly: advice only, never a verdict.

From an exhaustive analysis (:mod:`checker.explicit`) this computes a set of
unused codes whose next code, sent into the sequence, removes every lock: a
feedback vertex set of each locked set (every cycle of unused codes loses a
code), the smallest one up to :data:`EXACT_FVS_LIMIT` codes per set and a
greedy one past it. With a clock bound it adds greedy redirects until every
unused code reaches the sequence within the bound, re-running the analysis
on the redirected graph to say the worst afterwards.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Callable, Optional

import numpy as np

from ..words import count
from .budget import Budget
from .explicit import SCC_LIMIT, Analysis, Graph, analyse, inner_edges, scc_cycles, worst_step
from .sat import DEFAULT_SOLVER

EXACT_FVS_LIMIT = 128
"""Largest locked set whose smallest feedback set is found exactly (by SAT)."""

TABLE_LIMIT = 64
"""Most redirected codes a repair plan lists (the count is always given)."""


@dataclass
class RepairPlan:
    """Advice: unused codes whose next code, sent into the sequence, removes every lock.

    ``codes`` is a smallest such set when ``exact``; ``table`` rows are
    (code, its next codes now, the proposed next code); ``worst_after`` the
    worst number of clocks once redirected (None when not computed).
    """

    codes: list[int]
    target: int
    exact: bool
    table: list[tuple[int, list[int], int]]
    worst_after: Optional[int] = None
    for_within: list[int] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)


def _set_edges(a: Analysis, members: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Edges inside ``members`` (sorted codes), as positions into ``members``, each once."""
    src, dst = inner_edges(a.graph, members)
    n = members.size
    pairs = np.unique(src * n + dst)
    return pairs // n, pairs % n


def _find_cycle(n: int, adj: list[list[int]], removed: set[int]) -> Optional[list[int]]:
    """Some cycle among the nodes not removed (iterative depth-first search)."""
    state = [0] * n  # 0 new, 1 on stack, 2 done
    for root in range(n):
        if root in removed or state[root]:
            continue
        stack = [(root, iter(adj[root]))]
        path = [root]
        state[root] = 1
        while stack:
            v, it = stack[-1]
            nxt = next(it, None)
            if nxt is None:
                state[v] = 2
                stack.pop()
                path.pop()
                continue
            if nxt in removed:
                continue
            if state[nxt] == 1:
                return path[path.index(nxt):]
            if state[nxt] == 0:
                state[nxt] = 1
                stack.append((nxt, iter(adj[nxt])))
                path.append(nxt)
    return None


def _exact_fvs(n: int, adj: list[list[int]], forced: set[int], solver: str) -> list[int]:
    """A smallest feedback vertex set by implicit hitting sets.

    Cycles are collected lazily; a smallest set hitting all collected cycles
    is found by SAT with an at-most-k cardinality constraint (sequential
    counter, Sinz 2005, from pysat.card), k rising from the last optimum;
    when the graph without that set still has a cycle, the cycle is added.
    """
    from pysat.card import CardEnc, EncType
    from pysat.solvers import Solver

    cycles: list[list[int]] = []
    k = len(forced)  # every forced code is in the set: no smaller bound can be met
    while True:
        best: Optional[list[int]] = None
        while best is None:
            with Solver(name=solver) as s:
                for v in forced:
                    s.add_clause([v + 1])
                for cyc in cycles:
                    s.add_clause([v + 1 for v in cyc])
                if k < n:
                    card = CardEnc.atmost(list(range(1, n + 1)), bound=k, top_id=n, encoding=EncType.seqcounter)
                    for cl in card.clauses:
                        s.add_clause(cl)
                if s.solve():
                    model = s.get_model()
                    best = [v for v in range(n) if model[v] > 0]
                else:
                    k += 1
        cyc = _find_cycle(n, adj, set(best))
        if cyc is None:
            return best
        cycles.append(cyc)


def _greedy_fvs(n: int, src: np.ndarray, dst: np.ndarray, forced: set[int]) -> list[int]:
    """A feedback vertex set by repeated removal of the busiest node (not always smallest)."""
    removed = np.zeros(n, dtype=bool)
    removed[list(forced)] = True
    while True:
        keep = ~removed[src] & ~removed[dst]
        s, t = src[keep], dst[keep]
        sets = scc_cycles(n, s, t)
        if not sets:
            return sorted(int(x) for x in np.flatnonzero(removed))
        inside = np.zeros(n, dtype=bool)
        for grp in sets:
            inside[grp] = True
        e = inside[s] & inside[t]
        score = np.bincount(s[e], minlength=n) * np.bincount(t[e], minlength=n)
        removed[int(np.argmax(score))] = True


def _cycle_left(n: int, src: np.ndarray, dst: np.ndarray, removed: set[int]) -> bool:
    """Whether a cycle remains among nodes 0..n-1 once ``removed`` are taken out."""
    gone = np.zeros(n, dtype=bool)
    gone[list(removed)] = True
    keep = ~gone[src] & ~gone[dst]
    return bool(scc_cycles(n, src[keep], dst[keep]))


def feedback_codes(a: Analysis, solver: str = DEFAULT_SOLVER) -> tuple[list[int], bool]:
    """A smallest set of unused codes meeting every cycle of unused codes, and whether it is exact.

    Each locked set is independent: a code that holds itself under some
    input must be in the set; a set that is one simple cycle needs one code
    (its smallest); other sets up to :data:`EXACT_FVS_LIMIT` codes are
    solved exactly, larger ones greedily.
    """
    out: list[int] = []
    exact = True
    if a.graph.deterministic:  # every set is one simple cycle: its smallest code breaks it
        return sorted(int(s[0]) for s in a.locked_sets), True
    for members in a.locked_sets:
        if members.size == 1:  # a set of one code holds a cycle only by holding itself
            out.append(int(members[0]))
            continue
        src, dst = _set_edges(a, members)
        forced = set(int(x) for x in src[src == dst])
        n = members.size
        if not forced and src.size == n and np.unique(src).size == n:
            out.append(int(members[0]))  # a simple cycle: one code breaks it
            continue
        if forced and not _cycle_left(n, src, dst, forced):
            pick = sorted(forced)  # the codes that hold themselves break every cycle: nothing to choose
        elif n <= EXACT_FVS_LIMIT:
            adj: list[list[int]] = [[] for _ in range(n)]
            for x, y in zip(src.tolist(), dst.tolist()):  # the edges are distinct
                adj[x].append(y)
            pick = _exact_fvs(n, adj, forced, solver)
        else:
            pick = _greedy_fvs(n, src, dst, forced)
            exact = exact and len(pick) == len(forced)
        out.extend(int(members[i]) for i in pick)
    return sorted(out), exact


def redirected(a: Analysis, codes: list[int], target: int, budget: Optional[Budget] = None) -> Analysis:
    """The analysis of the same graph with ``codes`` sent to ``target`` under every row."""
    succ = a.graph.succ.copy()
    if codes:
        succ[:, np.asarray(codes, dtype=np.int64)] = target
    return analyse(Graph.of(a.graph.width, succ, a.graph.rows, a.graph.member), budget)


def repair_plan(a: Analysis, target: int, within: Optional[int] = None,
                budget: Optional[Budget] = None, recompute_limit: int = 1 << 20,
                solver: str = DEFAULT_SOLVER) -> RepairPlan:
    """Unused codes to redirect into ``target`` so that no lock remains (and, with
    ``within``, so that every unused code recovers within that many clocks).

    The lock part is a smallest feedback vertex set over the locked sets (see
    :func:`feedback_codes`). The ``within`` part is greedy: while some code
    needs more than ``within`` clocks, redirect the code ``within - 1`` clocks
    down its worst run, then look again. Advice only.
    """
    if not a.sets_complete:
        return RepairPlan([], target, False, [], notes=[
            f"no repair hint: more than {SCC_LIMIT} unused codes are locked under several inputs, and the "
            "sets they form are not separated (a smallest set of codes to redirect needs them)"])
    codes, exact = feedback_codes(a, solver)
    notes = []
    if not exact:
        notes.append(f"a locked set has more than {EXACT_FVS_LIMIT} codes: the set is found greedily and may not be the smallest")
    after: Optional[Analysis] = None
    extra: list[int] = []
    if a.graph.size <= recompute_limit:
        after = redirected(a, codes, target, budget) if codes else a
        rounds = 0
        while within is not None and after.worst is not None and after.worst > within and within >= 1:
            if rounds == 64:
                notes.append("stopped after 64 rounds of greedy redirects for the clock bound")
                break
            # every code at the current worst: redirect the code within-1 clocks down its worst run
            cur = np.flatnonzero(after.steps == after.worst).astype(np.int64)
            for _ in range(within - 1):
                _, cur = worst_step(after, cur)
                cur = cur.astype(np.int64)
            pick = sorted(set(int(c) for c in cur))
            extra.extend(pick)
            after = redirected(after, pick, target, budget)
            rounds += 1
        if extra:
            notes.append("the redirects for the clock bound are chosen greedily (not always the fewest)")
    succ = a.graph.succ
    if codes and not a.graph.deterministic:
        pick = np.asarray(codes, dtype=np.int64)
        held = int(np.count_nonzero((succ[:, pick] == pick).any(axis=0)))
        why = "(a hold that applies outside the sequence too), so none of them can be left out"
        if held == len(codes):
            notes.append(f"each of these codes goes to itself under some input {why}")
        elif held:
            notes.append(f"{held} of these {len(codes)} codes go to themselves under some input {why}")
    table = []
    for c in (codes + extra)[:TABLE_LIMIT]:
        table.append((c, sorted({int(x) for x in succ[:, c]}), target))
    return RepairPlan(codes, target, exact, table, None if after is None else after.worst, extra, notes)


def plan_lines(plan: RepairPlan, fmt: Callable[[int], str] = str) -> list[str]:
    """The repair plan as text lines for the readable report; ``fmt`` shows a code. The lines
    say what their notation means: each row is an unused code, the codes it can go to now
    (``a/b``: either, by the inputs) and the next code proposed for it."""
    every = plan.codes + plan.for_within
    if not every:
        return list(plan.notes)
    lines = []
    if plan.codes:
        what = "the smallest set" if plan.exact else "a set"
        lines.append(f"repair hint: redirecting {count(len(plan.codes), 'unused code')} into the sequence "
                     f"({what} that breaks every lock): {_short(plan.codes, fmt=fmt)}")
    if plan.for_within:
        lines.append(f"repair hint: redirecting {count(len(plan.for_within), 'more code')} meets the clock bound: "
                     f"{_short(plan.for_within, fmt=fmt)}")
    lines.append("  change the next-state logic so that each unused code below goes to the proposed code "
                 "(the sequence's first) instead of where it goes now; 'a/b' means a or b, by the inputs:")
    rows = [("unused code", "goes now to", "proposed next")]
    rows += [(fmt(c), "/".join(fmt(x) for x in now), fmt(new)) for c, now, new in plan.table]
    widths = [max(len(r[k]) for r in rows) for k in range(3)]
    lines += ["  " + "  ".join(x.ljust(widths[k]) for k, x in enumerate(r)).rstrip() for r in rows]
    if len(every) > len(plan.table):
        lines.append(f"  ({len(plan.table)} of {len(every)} codes shown)")
    if plan.worst_after is not None:
        lines.append(f"  worst after the redirect: {count(plan.worst_after, 'clock')} to reach the sequence")
    lines.extend(f"  note: {n}" for n in plan.notes)
    return lines


def _short(codes: list[int], limit: int = 16, fmt: Callable[[int], str] = str) -> str:
    s = ", ".join(fmt(c) for c in codes[:limit])
    return s + (f", ... ({limit} of {len(codes)} shown)" if len(codes) > limit else "")

"""The unused-code map and repair hints, as a Python API (used by the `map` command).

:func:`recovery_map` returns the contract's ``map --json`` document: every
unused code with the worst number of clocks it needs to reach the sequence,
its successor on a worst run and that run, worst first. The explicit engine
decides every code exactly; where the width is beyond it, the SAT engine
decides the worst and any lock but can name only the codes of the run it
found, so ``unused`` then lists those (``unused_count`` is still exact); where
neither finishes, ``worst`` is null and ``"status": "open"``.

:func:`repair_hints` names unused codes whose next code, if redirected into
the sequence, removes every lock: advice only, it never changes a verdict.
"""

from __future__ import annotations

from typing import Optional

import numpy as np

from ..claims.common import Options, stepping
from ..claims.recover import LOCKED_LIST_LIMIT, choose_engine
from ..elab import Check
from ..engines import explicit as X
from ..engines import repair
from ..engines.budget import Budget, OutOfBudget
from ..engines.sat import satisfiable
from ..engines.unused_runs import sat_search
from ..errors import InputError
from ..model.events import EventModel, packed

PATH_LIMIT = 64
"""Most codes in one entry's ``path`` (then ``"path_truncated": true``)."""


class MapDoc(dict):
    """The map document (a plain dict for JSON), carrying the explicit analysis it came
    from in ``analysis`` (None when the SAT engine made it) for the state graph."""

    analysis: Optional[X.Analysis] = None


def map_condition(check: Check) -> int:
    """The inputs the map assumes: the first recover claim's condition, else the stepping inputs."""
    for c in check.claims:
        if c.kind == "recover":
            return c.cond if c.cond is not None else stepping(check)
    return stepping(check)


def _condition(check: Check, cond: Optional[int], solver: str) -> int:
    lit = map_condition(check) if cond is None else cond
    if not satisfiable(check.design.model, lit, solver):
        raise InputError(check.pos, f"check {check.name}: no input meets the map's condition")
    return lit


def analyse(check: Check, cond: Optional[int] = None, opts: Optional[Options] = None,
            budget: Optional[Budget] = None) -> Optional[X.Analysis]:
    """The explicit analysis the map and the state graph draw on, or None when the
    explicit engine cannot take the check (or the options ask for SAT)."""
    opts = opts or Options()
    X.require_whole_state(check.space)
    lit = _condition(check, cond, opts.solver)
    engine, _ = choose_engine(check, lit, opts)
    if engine != "explicit":
        return None
    return X.explore(check.space, lit, budget, opts.solver)


def _top(codes: np.ndarray, key: np.ndarray, limit: int) -> tuple[np.ndarray, np.ndarray]:
    """The ``limit`` codes (ascending ``codes``) of largest ``key``, ties to the smallest codes, kept ascending."""
    if codes.size <= limit:
        return codes, key
    t = np.partition(key, codes.size - limit)[codes.size - limit]  # the limit-th largest key
    above = np.flatnonzero(key > t)
    tied = np.flatnonzero(key == t)[:limit - above.size]
    keep = np.sort(np.concatenate([above, tied]))
    return codes[keep], key[keep]


ORDER_CHUNK = 1 << 21
"""Codes whose keys are held at once while the slowest are picked (memory stays near the tables)."""


def _order(a: X.Analysis, limit: int) -> np.ndarray:
    """Up to ``limit`` unused codes, locked first, then by worst steps, then by code.

    Picked a chunk of codes at a time, so that a map of 2^28 codes holds no
    array of every unused code beside the engine's tables."""
    member = a.graph.member
    if limit <= 0:
        return np.zeros(0, dtype=np.int64)
    codes = np.zeros(0, dtype=np.int64)
    key = np.zeros(0, dtype=np.int64)
    for b in range(0, member.size, ORDER_CHUNK):
        u = np.flatnonzero(~member[b:b + ORDER_CHUNK]) + b
        cu, ku = _top(u, X.worst_key(a.steps[u]), limit)
        codes, key = _top(np.concatenate([codes, cu]), np.concatenate([key, ku]), limit)
    order = np.lexsort((codes, -key))
    return codes[order]


def _entries(a: X.Analysis, codes: np.ndarray) -> list[dict]:
    """Map entries for ``codes``: worst runs walked for all of them at once."""
    k = codes.size
    if k == 0:
        return []
    member = a.graph.member
    paths = [[int(c)] for c in codes]
    seen = [{int(c)} for c in codes]
    live = np.ones(k, dtype=bool)
    cur = codes.astype(np.int64)
    nexts: list[Optional[int]] = [None] * k
    for step in range(PATH_LIMIT - 1):
        idx = np.flatnonzero(live)
        if idx.size == 0:
            break
        _, nx = X.worst_step(a, cur[idx])
        for i, y in zip(idx.tolist(), nx.tolist()):
            if step == 0:
                nexts[i] = int(y)
            paths[i].append(int(y))
            if member[y] or y in seen[i]:
                live[i] = False
            seen[i].add(int(y))
        cur[idx] = nx
    out = []
    for i, c in enumerate(codes.tolist()):
        s = int(a.steps[c])
        e = {"code": int(c), "steps": None if s < 0 else s, "next": nexts[i], "path": paths[i]}
        if live[i]:
            e["path_truncated"] = True
        out.append(e)
    return out


def _run_entry(codes: list[int], steps: Optional[int]) -> dict:
    """The map entry of a run the SAT engine found, from its first code."""
    path = codes[:PATH_LIMIT]
    entry = {"code": path[0], "steps": steps, "next": path[1] if len(path) > 1 else None, "path": path}
    if len(codes) > PATH_LIMIT:
        entry["path_truncated"] = True
    return entry


def _mark_unstable(check: Check, a: X.Analysis, entries: list[dict]) -> None:
    """Flag each listed code in which an asynchronous clear or preset holds under some admissible
    input: such a code is not stable, and moves on within the clock that starts there."""
    models = [EventModel(check.design.model, full) for full in a.graph.rows.full]
    for e in entries:
        state = packed(check.code, e["code"])
        if any(em.holds(state) for em in models):
            e["unstable"] = True


def recovery_map(check: Check, cond: Optional[int] = None, limit: int = 256, opts: Optional[Options] = None,
                 budget: Optional[Budget] = None, analysis: Optional[X.Analysis] = None) -> MapDoc:
    """Every unused code of ``check``: worst steps to the sequence, next code and run; totals.

    ``cond`` is a literal over the inputs (default :func:`map_condition`).
    The result has exactly the keys of the contract's ``map --json``, plus
    ``"status": "open"`` when the question was not decided in the budget.
    """
    opts = opts or Options()
    budget = budget or Budget()
    seq = check.sequence
    if seq is None:
        raise InputError(check.pos, f"check {check.name} has no count line, so it has no unused codes to map")
    w = check.width
    doc = MapDoc({"check": check.name, "width": w, "sequence_length": seq.length(),
                  "unused_count": (1 << w) - seq.length(), "worst": None, "locked": None, "unused": []})
    X.require_whole_state(check.space)
    lit = _condition(check, cond, opts.solver)
    if analysis is None:
        engine, _ = choose_engine(check, lit, opts)
        if engine == "explicit":
            try:
                analysis = X.explore(check.space, lit, budget, opts.solver)
            except OutOfBudget:
                doc["status"] = "open"
                return doc
    if analysis is not None:
        doc.analysis = analysis
        doc["worst"] = analysis.worst
        doc["locked"] = analysis.locked_json(LOCKED_LIST_LIMIT)  # never every code of a huge set as ints
        if len(doc["locked"]) < analysis.locked_total:
            doc["locked_complete"] = False
        doc["unused"] = _entries(analysis, _order(analysis, limit))
        if not check.design.model.synchronous:
            _mark_unstable(check, analysis, doc["unused"])
        return doc
    s = sat_search(check.space, lit, None, budget, opts.solver)
    if s.status == "open":
        doc["status"] = "open"
        return doc
    if s.status == "locked":
        doc["locked"] = [s.cycle]
        doc["locked_complete"] = False  # the SAT engine shows one cycle; others may exist
        doc["unused"] = [_run_entry(s.codes, None)][:limit]
        return doc
    doc["worst"] = s.worst
    doc["locked"] = []
    if s.worst_codes:
        doc["unused"] = [_run_entry(s.worst_codes, s.worst)][:limit]
    return doc


def repair_hints(check: Check, cond: Optional[int] = None, within: Optional[int] = None,
                 opts: Optional[Options] = None, budget: Optional[Budget] = None,
                 analysis: Optional[X.Analysis] = None) -> Optional[dict]:
    """A smallest set of unused codes to redirect into the sequence so that no lock remains.

    Uses the explicit graph (a minimum feedback vertex set over the locked
    sets, exact up to :data:`checker.repair.EXACT_FVS_LIMIT` codes per set);
    with ``within``, greedy extra redirects until every unused code recovers
    in that many clocks. Returns None when the explicit engine cannot take
    the check. The dict holds ``redirect``, ``for_within``, ``target``,
    ``exact``, ``table`` (code, next codes now, proposed next), ``worst_after``,
    ``notes`` and the readable ``lines``.
    """
    opts = opts or Options()
    if analysis is None:
        analysis = analyse(check, cond, opts, budget)
    if analysis is None:
        return None
    assert check.sequence is not None
    plan = repair.repair_plan(analysis, check.sequence.first(), within, budget, solver=opts.solver)
    return {"redirect": plan.codes, "for_within": plan.for_within, "target": plan.target, "exact": plan.exact,
            "table": [{"code": c, "next_now": now, "next_new": new} for c, now, new in plan.table],
            "worst_after": plan.worst_after, "notes": plan.notes, "lines": repair.plan_lines(plan)}

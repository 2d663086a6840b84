"""`recover` and `recover within N`: no lockout among the unused codes, and how soon they recover.

The unused codes are every code of the code width outside the sequence. In
v1 ``code`` names every flop, so a code is the whole state. At every clock
any input meeting the claim's condition (the stepping inputs when it has
none) may occur, chosen at worst. Locked: some admissible run stays among
unused codes forever. Worst: the largest number of clocks any unused code
needs over every admissible run.

Two engines. The explicit one (:mod:`checker.engines.explicit`) decides every code
of widths up to its limits exactly and lists every locked set (and
:mod:`checker.engines.repair` turns its answer into repair hints). The SAT one
(:mod:`checker.engines.unused_runs`) unrolls runs of unused codes (bounded
model checking for the worst, lasso searches for locks, k-induction with
simple-path constraints for the proof of no lockout), which settles short
tails at any width.
"""

from __future__ import annotations

from typing import Callable, Optional

from ..elab import Check, Claim
from ..engines import explicit as X
from ..engines import repair
from ..engines.budget import Budget, OutOfBudget
from ..engines.sat import satisfiable
from ..engines.unused_runs import SatSearch, sat_search
from ..errors import InputError
from ..engines.cascade import CascadeLimit, Exploration, never_settling
from ..model.events import EventModel
from .clocking import events_json, order_lines, settle_order, state_of, warning_lines
from ..words import count
from .common import (Options, code_and_decimal, code_text, inputs_text, make_result, replay, run_text,
                     set_lines, stepping)
from .conditions import recover_condition
from .recover_wide import prove_wide
from .result import OPEN, PROVED, REFUTED, Result, TraceEntry

TRACE_LIMIT = 4096
"""Longest locked cycle a trace walks around in full."""

SAT_FIRST_WIDTH = 24
"""With engine 'auto', codes wider than this get a short SAT search before the exhaustive one
(up to 2^24 codes the compact explicit engine takes about a second: tests/perf/RESULTS_explicit.md)."""

SAT_FIRST_DEPTH = 16
"""Frames of that short SAT search."""

EVIDENCE_RUN = 64
"""Clocks of the worst run shown (and replayed) for a proved claim."""

LOCKED_LIST_LIMIT = 1 << 16
"""Most codes listed in a result's ``locked`` sets (the sizes are always given)."""


# --- the condition ---------------------------------------------------------------

def claim_condition(check: Check, claim: Claim, solver: str) -> int:
    """The admissible inputs of a recover claim as a literal; an input error when none exist."""
    cond = claim.cond if claim.cond is not None else stepping(check)
    if not satisfiable(check.design.model, cond, solver):
        if claim.cond is not None:
            raise InputError(claim.pos, "no input meets this recover condition")
        raise InputError(claim.pos, "the rules never let the counter step, so recover has no inputs to assume; add 'when COND'")
    return cond


# --- the claim -------------------------------------------------------------------

def choose_engine(check: Check, cond: int, opts: Options) -> tuple[str, str]:
    """('explicit' | 'sat' | 'firings', why): the engine a recover question runs on. An
    asynchronous design goes to the explicit engine, which explores every order of its clocks,
    when it can take it; past that (or with ``--engine sat``) to the chained firings engine
    (:mod:`checker.claims.recover_wide`)."""
    ok, why = X.feasible(check.space, cond, opts.solver, opts.parallel)
    if not check.design.model.synchronous:
        if opts.engine == "sat":
            return "firings", ""
        if not ok:
            if opts.engine == "explicit":
                raise InputError(check.sequence_pos or check.pos,
                                 f"the explicit engine cannot take this asynchronous design: {why}")
            return "firings", f"explicit engine not used: {why}"
        return "explicit", ""
    if opts.engine == "explicit":
        if not ok:
            pos = check.sequence_pos or check.pos
            raise InputError(pos, f"the explicit engine cannot take this check: {why}")
        return "explicit", ""
    if opts.engine == "sat":
        return "sat", ""
    return ("explicit", "") if ok else ("sat", f"explicit engine not used: {why}")


def prove(check: Check, claim: Claim, opts: Options, budget: Budget) -> Result:
    """Prove or refute a recover claim, with evidence and repair advice; the evidence (and
    ``condition`` in the details) names the inputs assumed, in the designer's words."""
    res = _prove(check, claim, opts, budget)
    said = recover_condition(check, claim)
    res.details["condition"] = said
    res.evidence.insert(0, said if said.startswith("no inputs") else f"inputs assumed at every clock, {said}")
    return res


def _prove(check: Check, claim: Claim, opts: Options, budget: Budget) -> Result:
    X.require_whole_state(check.space)
    cond = claim_condition(check, claim, opts.solver)
    engine, why = choose_engine(check, cond, opts)
    if engine == "explicit" and opts.engine == "auto" and check.width > SAT_FIRST_WIDTH \
            and check.design.model.synchronous:
        # a short SAT search first: it settles short tails at any width in a few frames
        s = sat_search(check.space, cond, claim.within, budget, opts.solver, max_depth=SAT_FIRST_DEPTH)
        if s.status == "proved" or (s.status == "slow" and s.worst is not None):
            res = _sat(check, claim, cond, opts, budget, s)
            res.evidence.insert(0, f"a SAT search of {SAT_FIRST_DEPTH} frames settled it before the exhaustive one")
            return res
    if engine == "explicit":
        try:
            res = _explicit(check, claim, cond, budget, opts.solver, opts.radix)
        except OutOfBudget as e:
            res = make_result(check, claim, OPEN, "ran out of time in the exhaustive search",
                              details={"engine": "explicit", "worst": None, "locked": None, "depth": e.depth})
        except X.NeverSettles as e:
            res = _never_settles(check, claim, e)
        except CascadeLimit as e:
            res = make_result(check, claim, OPEN, f"the explicit cascade engine reached its limit: {e}",
                              details={"engine": "explicit", "worst": None, "locked": None, "depth": None})
    elif engine == "firings":
        res = prove_wide(check, claim, cond, opts, budget)
    else:
        res = _sat(check, claim, cond, opts, budget)
    if why:
        res.evidence.insert(0, why)
    return res


def _replayed(check: Check, codes: list[int], inputs: list[dict[str, int]]) -> list[TraceEntry]:
    """The trace of a run, replayed through the simulator (which raises if it does not match).

    A step of an asynchronous design carries an order of firings that settles
    where the run goes next."""
    trace = [TraceEntry(i, c, dict(inputs[i]) if i < len(inputs) else None) for i, c in enumerate(codes)]
    trace[-1].inputs = None
    if not check.design.model.synchronous:
        for t, nxt in zip(trace, codes[1:]):
            t.events = events_json(check, settle_order(check, t.code, t.inputs or {}, nxt))
    replay(check.design, check, trace)
    return trace


def _never_settles(check: Check, claim: Claim, e: "X.NeverSettles") -> Result:
    em = EventModel(check.design.model, e.inputs)
    ex = Exploration(em)
    root, _ = ex.explore(state_of(check, e.code))
    order = never_settling(ex, root)
    trace = [TraceEntry(0, e.code, dict(e.inputs), events=events_json(check, order))]
    replay(check.design, check, trace)
    lines = [f"from unused code {e.code} this order of firings never settles:"] + order_lines(check, root.code, order)
    return make_result(check, claim, REFUTED, f"from unused code {e.code} a clock never settles",
                       trace=trace, details={"engine": "explicit", "worst": None, "locked": None,
                                             "warnings": warning_lines(order)}, evidence=lines)


def _sizes(sizes: list[int]) -> str:
    """Set sizes for people: '8' or '1 x1022, 4 x3'."""
    if len(sizes) <= 6:
        return ", ".join(map(str, sizes))
    from collections import Counter

    return ", ".join(f"{k} x{v}" for k, v in sorted(Counter(sizes).items()))


def locked_listing(sets: list[list[int]]) -> tuple[list[list[int]], bool]:
    """The first locked sets that fit in :data:`LOCKED_LIST_LIMIT` codes, and whether any were left out."""
    out, n = [], 0
    for s in sets:
        if n + len(s) > LOCKED_LIST_LIMIT:
            return out, True
        out.append(s)
        n += len(s)
    return out, False


CYCLE_ROWS_SHOWN = 16
"""Steps of a locked cycle listed with their inputs when the inputs change along it."""


def lock_inputs_lines(check: Check, codes: list[int], inputs: list[dict[str, int]],
                      fmt: Callable[[int], str] = str) -> list[str]:
    """The inputs that keep a locked cycle ``codes`` (first code repeated last) going round: one
    line when they are the same at every clock, else a line per step (code, inputs, next code)."""
    steps = list(zip(codes, inputs, codes[1:]))
    if not steps or not check.design.model.inputs:
        return []
    shown = {inputs_text(check, i) for _, i, _ in steps}
    if len(shown) == 1:
        return [f"inputs that keep it locked: {shown.pop()} at every clock"]
    lines = ["inputs that keep it locked, step by step:"]
    for c, i, n in steps[:CYCLE_ROWS_SHOWN]:
        lines.append(f"  {fmt(c)} under {inputs_text(check, i)} -> {fmt(n)}")
    if len(steps) > CYCLE_ROWS_SHOWN:
        lines.append(f"  ({CYCLE_ROWS_SHOWN} of {len(steps)} steps shown; --json gives the whole trace)")
    return lines




def _explicit(check: Check, claim: Claim, cond: int, budget: Budget, solver: str, radix: str = "dec") -> Result:
    def fmt(c: int) -> str:
        return code_text(c, check.width, radix)

    def one(c: int) -> str:
        return code_and_decimal(c, check.width, radix)

    need = X.memory_needed(check.space, cond, solver)  # stated before the run (feasible refused above the limit)
    a = X.explore(check.space, cond, budget, solver)
    g = a.graph
    seq = check.sequence
    assert seq is not None
    details: dict = {"engine": "explicit", "worst": a.worst, "worst_code": a.worst_code,
                     "unused_count": a.unused_count, "memory_bound": need}
    listed = a.locked_json(LOCKED_LIST_LIMIT)
    cut = len(listed) < a.locked_total or not a.sets_complete
    details["locked"] = listed
    details["locked_complete"] = not cut
    if cut:
        details["locked_truncated"] = True
    evidence = [f"engine explicit: {g.size} codes, {a.unused_count} unused, {count(len(g.rows), 'input row')}; "
                f"memory stated before the run: at most {X.C.gib(need)}"]
    if a.locked:
        sizes = [int(s.size) for s in a.locked_sets]
        details["locked_sizes"] = sizes
        smallest = min(a.locked_sets, key=lambda s: (s.size, int(s[0])))
        codes, rows, complete = X.cycle_run(a, smallest, TRACE_LIMIT)
        trace = _replayed(check, codes, [g.rows.full[r] for r in rows])
        n_locked = int((a.steps < 0).sum())
        n_sets = a.locked_total
        if a.sets_complete:
            evidence.append(f"locked: {count(n_sets, 'set of unused codes')} "
                            f"{'holds' if n_sets == 1 else 'hold'} a cycle "
                            f"({'size' if n_sets == 1 else 'sizes'} {_sizes(sizes)}"
                            f"{'' if not a.locked_cut else f' of the first {len(sizes)}'}); "
                            f"{count(n_locked, 'unused code')} can stay unused forever")
        else:  # too many locked codes to separate every set: the cycles one choice of inputs runs into
            evidence.append(f"locked: {count(n_locked, 'unused code')} can stay unused forever; "
                            f"{count(n_sets, 'cycle')} of unused codes found from the smallest of them "
                            f"(lengths {_sizes(sizes)}), one choice of inputs each; the sets they lie in "
                            f"are not separated above {X.SCC_LIMIT} locked codes")
        more = f"--json lists the first {len(listed)}" if cut else "--json lists every one"
        evidence.extend(set_lines(a.locked_sets, fmt, total=n_sets, more=more))
        evidence.append(("cycle: " if complete else f"run in the locked set, {TRACE_LIMIT} clocks: ") + run_text(codes, fmt=fmt))
        if complete:
            evidence.extend(lock_inputs_lines(check, codes, [t.inputs or {} for t in trace[:-1]], fmt))
        if not complete:
            details["trace_truncated"] = True
        res = make_result(check, claim, REFUTED, f"locked: {count(a.locked_total, 'set')} of unused codes with a cycle",
                          trace=trace, details=details, evidence=evidence)
    elif claim.within is not None and a.worst is not None and a.worst > claim.within:
        codes, rows = X.worst_run(a, a.worst_code, claim.within)
        trace = _replayed(check, codes, [g.rows.full[r] for r in rows])
        evidence.append(f"code {one(a.worst_code)} is still unused after {count(claim.within, 'clock')}: {run_text(codes, fmt=fmt)}")
        evidence.append(f"worst: {count(a.worst, 'clock')} (from code {one(a.worst_code)})")
        res = make_result(check, claim, REFUTED, f"code {one(a.worst_code)} needs {count(a.worst, 'clock')}, more than {claim.within}",
                          trace=trace, details=details, evidence=evidence)
    else:
        if a.worst_code is not None:
            # the evidence run (replayed as a check) is its first EVIDENCE_RUN clocks
            codes, rows = X.worst_run(a, a.worst_code, min(a.worst, EVIDENCE_RUN))
            _replayed(check, codes, [g.rows.full[r] for r in rows])
            more = "" if a.worst <= EVIDENCE_RUN else f" -> ... ({a.worst - EVIDENCE_RUN} more clocks)"
            evidence.append(f"worst: {count(a.worst, 'clock')}, from code {one(a.worst_code)}: {run_text(codes, fmt=fmt)}{more}")
        else:
            evidence.append("no unused codes: worst 0")
        res = make_result(check, claim, PROVED, f"no lockout; worst {count(a.worst, 'clock')}", details=details, evidence=evidence)
    if res.status == REFUTED:
        plan = repair.repair_plan(a, seq.first(), claim.within, budget, solver=solver)
        res.advice = repair.plan_lines(plan, fmt)
    return res


def _sat(check: Check, claim: Claim, cond: int, opts: Options, budget: Budget,
         s: Optional[SatSearch] = None) -> Result:
    def fmt(c: int) -> str:
        return code_text(c, check.width, opts.radix)

    def one(c: int) -> str:
        return code_and_decimal(c, check.width, opts.radix)

    if s is None:
        s = sat_search(check.space, cond, claim.within, budget, opts.solver)
    known = s.status == "proved" or (s.status == "slow" and s.worst is not None)
    details: dict = {"engine": "sat", "depth": s.depth, "worst": s.worst, "locked": [] if known else None}
    evidence: list[str] = []
    seq = check.sequence
    assert seq is not None
    if s.worst_codes:
        details["worst_code"] = s.worst_codes[0]
    if s.status == "open":
        details["worst"] = None
        evidence.append(f"engine sat: no locked cycle and some unused code still unused after {count(s.depth, 'clock')}; "
                        "the search stopped there")
        return make_result(check, claim, OPEN, f"open at depth {s.depth}", details=details, evidence=evidence)
    if s.status == "locked":
        trace = _replayed(check, s.codes, s.inputs)
        details["locked"] = [s.cycle]
        details["locked_complete"] = False  # one cycle found; other locked sets may exist
        details["worst"] = None
        loop = s.codes[s.codes.index(s.codes[-1]):]
        evidence.append(f"engine sat: a locked cycle of {count(len(s.cycle), 'unused code')}: {run_text(loop, fmt=fmt)}")
        evidence.extend(lock_inputs_lines(check, loop, [trace[k].inputs or {} for k in range(len(s.codes) - len(loop), len(s.codes) - 1)], fmt))
        evidence.append(f"run: {run_text(s.codes, fmt=fmt)}")
        evidence.append("the SAT engine shows one locked cycle; others may exist")
        res = make_result(check, claim, REFUTED, f"locked: a cycle of {count(len(s.cycle), 'unused code')}",
                          trace=trace, details=details, evidence=evidence)
        res.advice = [f"repair hint: redirecting code {one(s.cycle[0])} into the sequence (next code {one(seq.first())}) "
                      "breaks this cycle; the explicit engine would name a set for every lock"]
        return res
    if s.status == "slow":
        n = claim.within
        assert n is not None
        codes, inputs = s.codes[:n + 1], s.inputs[:n]
        trace = _replayed(check, codes, inputs)
        if s.worst is None:
            details["worst_at_least"] = s.worst_at_least
            evidence.append(f"worst: at least {count(s.worst_at_least, 'clock')} (the search for the exact worst stopped there)")
        else:
            evidence.append(f"worst: {count(s.worst, 'clock')}")
        evidence.append(f"code {one(codes[0])} is still unused after {count(n, 'clock')}: {run_text(codes, fmt=fmt)}")
        res = make_result(check, claim, REFUTED, f"code {one(codes[0])} needs more than {count(n, 'clock')}",
                          trace=trace, details=details, evidence=evidence)
        res.advice = [f"repair hint: redirecting code {one(codes[n - 1] if n >= 1 else codes[0])} into the sequence "
                      f"(next code {one(seq.first())}) shortens this run to {count(max(n, 1), 'clock')}"]
        return res
    if s.worst_codes:
        _replayed(check, s.worst_codes, s.worst_inputs)
        evidence.append(f"worst: {count(s.worst, 'clock')}, from code {one(s.worst_codes[0])}: {run_text(s.worst_codes, fmt=fmt)}")
    else:
        evidence.append("no unused codes: worst 0")
    evidence.append(f"engine sat: no run of {s.depth + 1} unused codes exists (k-induction closed at depth {s.depth})")
    if claim.within is not None and s.worst is not None and s.worst > claim.within:
        raise AssertionError("the SAT engine proved a worst above the bound it was asked about")
    return make_result(check, claim, PROVED, f"no lockout; worst {count(s.worst, 'clock')}", details=details, evidence=evidence)

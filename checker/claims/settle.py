"""`settle within N`: from every code of the sequence, under every input, every order settles within depth N.

A synchronous design settles at depth 1 (every change is made by the edge),
so the claim is proved at N >= 1 from the design's structure; at N = 0 one
SAT question asks whether some code of the sequence changes at all. An
asynchronous design is explored order by order (the explicit cascade engine):
proved when every start was visited and no order runs deeper than N or
never settles. One too wide for that goes to the firings engine
(:mod:`checker.claims.wide`): every start and order in one SAT problem.
"""

from __future__ import annotations

from typing import Optional

from ..elab import Check, Claim
from ..engines.budget import Budget, OutOfBudget
from ..engines.cascade import CascadeLimit, deepest, never_settling
from ..engines.sat import Sat, Unrolling
from ..model.events import EventModel
from .clocking import (code_of, each_clock, events_json, order_lines, out_of_reach, replay_order,
                       require_explicit, warning_lines)
from .common import Options, ReplayError, code_and_decimal, inputs_text, make_result, replay
from .wide import explicit_after, firings_of, no_bound, setup, the_model, wide_engine
from .result import OPEN, PROVED, REFUTED, Result, TraceEntry


def _synchronous(check: Check, claim: Claim, opts: Options) -> Result:
    n = claim.within
    assert n is not None
    if n >= 1:
        return make_result(check, claim, PROVED, "a synchronous design settles at depth 1: every change is "
                           "made by the clock edge", details={"engine": "structure", "depth": 1})
    model = check.design.model
    seq = check.sequence
    assert seq is not None
    aig = model.aig
    member = seq.member(aig, check.code_lits())
    moves = aig.or_all(aig.xor(model.next_lits[i], model.state_lits[i]) for i in check.code)
    with Sat(opts.solver) as sat:
        u = Unrolling(model, sat)
        if not sat.solve([u.lit(0, member), u.lit(0, moves)]):
            return make_result(check, claim, PROVED, "no code of the sequence changes, so nothing is pending",
                               details={"engine": "sat", "depth": 0})
        state, inputs = u.read_state(0), u.read_inputs(0)
    code = check.code_of(state)
    nxt = check.code_of(model.step(state, inputs)[0])
    trace = [TraceEntry(0, code, inputs), TraceEntry(1, nxt)]
    replay(check.design, check, trace)
    return make_result(check, claim, REFUTED, f"code {code} changes at the edge (depth 1 > 0)", trace=trace,
                       details={"engine": "sat", "depth": 1})


def prove(check: Check, claim: Claim, opts: Options, budget: Budget) -> Result:
    """Prove or refute `settle within N` (see the module docstring)."""
    model = check.design.model
    if model.synchronous:
        return _synchronous(check, claim, opts)
    if wide_engine(check, opts):
        res = _wide(check, claim, opts, budget)
        if not explicit_after(check, opts, res):
            return res
    require_explicit(check, "settle")
    n = claim.within
    assert n is not None
    worst = 0
    visited = 0
    try:
        for code, inputs, em, ex, root, out in each_clock(check, None, budget):
            visited += len(ex.memo)
            if out.never:
                return _refute(check, claim, em, root.code, inputs, never_settling(ex, root), never=True,
                               opts=opts)
            if out.depth > n:
                return _refute(check, claim, em, root.code, inputs, deepest(ex, root, out), never=False,
                               opts=opts)
            worst = max(worst, out.depth)
    except (CascadeLimit, OutOfBudget) as e:
        return out_of_reach(check, claim, e)
    return make_result(check, claim, PROVED, f"every order settles; the deepest at depth {worst} (at most {n})",
                       details={"engine": "explicit", "depth": worst, "cascade_states": visited})


WORST_CONFLICTS = 200_000
"""Solver conflicts spent on each question that pins down the deepest order once the claim is proved."""


def _wide(check: Check, claim: Claim, opts: Options, budget: Budget) -> Result:
    """`settle within N` by the firings engine: depths tracked up to N + 1; some firing of depth
    N + 1 along an order from some start refutes; none (and every order settles) proves. The
    deepest depth is then found by asking for N, N - 1, ... until some order reaches it."""
    n = claim.within
    assert n is not None
    try:
        w = setup(check, opts, budget, depth_cap=n + 1)
        try:
            fir = w.fir
            if w.bound.never is not None:
                code, inputs, flops = w.bound.never
                em, order = firings_of(check, code, inputs, flops)
                return _refute(check, claim, em, code, inputs, order, never=True, opts=opts, engine=w.details())
            if w.bound.steps is None:
                return no_bound(check, claim, w)
            # a firing is at most one level deeper than the one that made it, so no depth exceeds the
            # number of firings of the order (nor, with no asynchronous clear, the longest clock chain)
            longest = w.bound.steps if fir.chain is None else min(w.bound.steps, max(fir.chain, default=0))
            if longest > n and fir.solve(w.start + [fir.deep(n + 1)], budget):
                code, inputs, flops = the_model(w)
                em, order = firings_of(check, code, inputs, flops)
                return _refute(check, claim, em, code, inputs, order, never=False, opts=opts, engine=w.details())
            worst: Optional[int] = 0
            for k in range(min(n, longest), 0, -1):
                # the deepest order is reported, not claimed: each question gets a bounded effort
                got = fir.try_solve(w.start + [fir.deep(k)], WORST_CONFLICTS, budget)
                if got is None:
                    worst = None
                    break
                if got:
                    worst = k
                    break
            details = dict(w.details(), depth=worst)
        finally:
            w.fir.close()
    except OutOfBudget:
        return make_result(check, claim, OPEN, "ran out of time in the firings engine",
                           details={"engine": "firings", "depth": None})
    deepest = f"the deepest at depth {worst}" if worst is not None else "how deep the deepest goes was not pinned down"
    return make_result(check, claim, PROVED, f"every order settles; {deepest} (at most {n}); "
                       f"every order has at most {w.bound.steps} firings, by {w.bound.how}", details=details)


def _refute(check: Check, claim: Claim, em: EventModel, start: int, inputs: dict[str, int],
            order: list, never: bool, opts: Options = Options(), engine: Optional[dict] = None) -> Result:
    replay_order(em, start, order)
    code = code_of(check, start)
    depth = max((f.depth for f in order), default=0)
    if not never and depth <= (claim.within or 0):
        raise ReplayError(f"the order from {code} reaches depth {depth} only")
    entry = TraceEntry(0, code, dict(inputs), events=events_json(check, order))
    trace = [entry] if never else [entry, TraceEntry(1, code_of(check, order[-1].code))]
    replay(check.design, check, trace)  # the order again, and the syntax tree at every firing
    warns = warning_lines(order)
    shown = code_and_decimal(code, check.width, opts.radix)
    if never:
        summary = f"from code {shown} an order of firings never settles"
        lines = [f"from code {shown} under {inputs_text(check, inputs)}, this order comes back to a cascade "
                 f"it has seen:"]
    else:
        summary = f"from code {shown} an order settles only at depth {depth} (more than {claim.within})"
        lines = [f"from code {shown} under {inputs_text(check, inputs)}, the deepest order reaches depth {depth}:"]
    lines += order_lines(check, start, order, opts.radix) + warns
    details = dict(engine or {"engine": "explicit"})
    details.update(depth=None if never else depth, warnings=warns)
    return make_result(check, claim, REFUTED, summary, trace=trace, details=details, evidence=lines)

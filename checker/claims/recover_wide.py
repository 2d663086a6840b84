"""`recover` and `recover within N` on asynchronous designs too wide for the explicit engine.

The explicit engine (:mod:`checker.engines.explicit`) explores every order of
every clock from every code, up to 16 bits. Past that (or with ``--engine
sat``), :func:`checker.engines.unused_clocks.clock_search` unrolls runs of
unused codes, every clock the firings cascade with a proved number of
firings: a run of N+1 unused codes refutes `recover within N`, a lasso
refutes `recover`, and UNSAT answers prove (bounded model checking, and
k-induction with simple-path constraints for no lockout). A search that runs
out is ``open`` with the depth reached. Every run printed is replayed, clock
by clock and firing by firing, through the event model and the reference
evaluator (:func:`checker.claims.common.replay`).
"""

from __future__ import annotations

from typing import Optional

from ..elab import Check, Claim
from ..engines.budget import Budget, OutOfBudget
from ..engines.clock_runs import fire
from ..engines.unused_clocks import ClockSearch, clock_search
from ..model.events import packed, unpacked
from ..words import count
from .clocking import events_json, order_lines, warning_lines
from .common import Options, code_and_decimal, code_text, inputs_text, make_result, replay, run_text
from .result import OPEN, PROVED, REFUTED, Result, TraceEntry

ENGINE = "firings"
"""The name results give this engine (the one-clock claims' firings engine, chained)."""


def clock_trace(check: Check, states: list[int], inputs: list[dict[str, int]],
                orders: list[list[int]]) -> list[TraceEntry]:
    """A run as a trace whose every clock carries its order of firings, replayed through the
    event model and the reference evaluator (raises ReplayError if anything differs)."""
    model = check.design.model
    trace = []
    for t, st in enumerate(states):
        code = _code(check, st)
        if t < len(orders):
            events = events_json(check, fire(model, st, inputs[t], orders[t]))
            trace.append(TraceEntry(t, code, dict(inputs[t]), events=events))
        else:
            trace.append(TraceEntry(t, code))
    replay(check.design, check, trace)
    return trace


def _code(check: Check, state: int) -> int:
    return unpacked(list(check.code), state)


def _state(check: Check, code: int) -> int:
    return packed(list(check.code), code)


def prove_wide(check: Check, claim: Claim, cond: int, opts: Options, budget: Budget,
               s: Optional[ClockSearch] = None) -> Result:
    """Prove or refute a recover claim on an asynchronous design by the chained firings engine."""
    def fmt(c: int) -> str:
        return code_text(c, check.width, opts.radix)

    def one(c: int) -> str:
        return code_and_decimal(c, check.width, opts.radix)

    if s is None:
        try:
            s = clock_search(check.space, cond, claim.within, budget, opts.solver)
        except OutOfBudget as e:
            return make_result(check, claim, OPEN, "ran out of time in the chained firings engine",
                               details={"engine": ENGINE, "worst": None, "locked": None, "depth": e.depth})
    details: dict = {"engine": ENGINE, "depth": s.depth, "worst": s.worst, "firings": s.steps, "bound": s.how,
                     "locked": None}
    seq = check.sequence
    assert seq is not None
    if s.status == "never":
        assert s.never is not None
        state, inputs, flops = s.never
        firings = fire(check.design.model, state, inputs, flops)
        code = _code(check, state)
        trace = [TraceEntry(0, code, dict(inputs), events=events_json(check, firings))]
        replay(check.design, check, trace)
        details.update(worst=None, warnings=warning_lines(firings))
        lines = [f"from unused code {one(code)} under {inputs_text(check, inputs)} this order of firings "
                 f"never settles:"] + order_lines(check, state, firings, opts.radix)
        return make_result(check, claim, REFUTED, f"from unused code {one(code)} a clock never settles",
                           trace=trace, details=details, evidence=lines)
    if s.status == "unbounded":
        details.update(worst=None, depth=0)
        return make_result(check, claim, OPEN, f"the firings engine found orders of {s.tried} firings from unused "
                           f"codes that never come back to a cascade they have met, and stopped there",
                           details=details)
    if s.steps is None:  # a lock found before any bound: each clock shown is an order that settles
        evidence = [f"engine {ENGINE}: runs whose every clock settles within {count(s.tried, 'firing')} "
                    f"searched first (a refutation needs no bound on firings)"]
    else:
        evidence = [f"engine {ENGINE}: every order of a clock from an unused code settles within "
                    f"{count(s.steps, 'firing')} ({'by the clock tree' if s.how == 'structure' else 'proved by SAT'})"]
    if s.status == "open":
        details["worst"] = None
        evidence.append(f"no locked cycle and some unused code still unused after {count(s.depth, 'clock')}, "
                        "every order of every clock considered; the search stopped there")
        return make_result(check, claim, OPEN, f"open at depth {s.depth}", details=details, evidence=evidence)
    if s.status == "locked":
        trace = clock_trace(check, [_state(check, c) for c in s.codes], s.inputs, s.orders)
        details.update(locked=[s.cycle], locked_complete=False, worst=None)
        loop = s.codes[s.codes.index(s.codes[-1]):]
        evidence.append(f"a locked cycle of {count(len(s.cycle), 'unused code')}: {run_text(loop, fmt=fmt)}")
        evidence.append(f"run: {run_text(s.codes, fmt=fmt)} (each clock by the order of firings in the trace)")
        evidence.append("this engine shows one locked cycle; others may exist")
        res = make_result(check, claim, REFUTED, f"locked: a cycle of {count(len(s.cycle), 'unused code')}",
                          trace=trace, details=details, evidence=evidence)
        res.advice = [f"repair hint: redirecting code {one(s.cycle[0])} into the sequence (next code "
                      f"{one(seq.first())}) breaks this cycle"]
        return res
    if s.worst_codes:
        details["worst_code"] = s.worst_codes[0]
    if s.status == "slow":
        n = claim.within
        assert n is not None
        trace = clock_trace(check, [_state(check, c) for c in s.codes[:n + 1]], s.inputs[:n], s.orders[:n])
        if s.worst is None:
            details["worst_at_least"] = s.worst_at_least
            evidence.append(f"worst: at least {count(s.worst_at_least, 'clock')} (the search for the exact worst "
                            f"stopped there)")
        else:
            evidence.append(f"worst: {count(s.worst, 'clock')}")
        evidence.append(f"code {one(s.codes[0])} is still unused after {count(n, 'clock')}: {run_text(s.codes[:n + 1], fmt=fmt)}")
        return make_result(check, claim, REFUTED, f"code {one(s.codes[0])} needs more than {count(n, 'clock')}",
                           trace=trace, details=details, evidence=evidence)
    if s.worst_codes:
        clock_trace(check, [_state(check, c) for c in s.worst_codes], s.worst_inputs, s.worst_orders)
        if not seq.contains(s.worst_codes[-1]):
            raise AssertionError("the worst run shown does not end in the sequence")
        evidence.append(f"worst: {count(s.worst, 'clock')}, from code {one(s.worst_codes[0])}: "
                        f"{run_text(s.worst_codes, fmt=fmt)}")
    else:
        evidence.append("no unused codes: worst 0")
    evidence.append(f"no run of {s.depth + 1} unused codes exists under any inputs and orders "
                    f"(k-induction closed at depth {s.depth})")
    if claim.within is not None and s.worst is not None and s.worst > claim.within:
        raise AssertionError("the chained firings engine proved a worst above the bound it was asked about")
    return make_result(check, claim, PROVED, f"no lockout; worst {count(s.worst, 'clock')}", details=details,
                       evidence=evidence)

"""`equal D after COND` with an asynchronous design on either side, by the firings miter.

The explicit settled comparison (:mod:`checker.claims.equal_async`) visits
every state for the reset and every reachable pair of states; past its
limits (or with ``--engine sat``) the claim goes to
:mod:`checker.engines.clock_miter`: the reset by SAT over every state, then
bounded model checking and k-induction over a miter of the two designs'
clock chains, every order of every clock of each. ``proved`` only when
k-induction closes; a difference is shown as the runs of both designs,
each replayed clock by clock and firing by firing through the event model
and the reference evaluator; a search that runs out is ``open`` with the
depth reached.
"""

from __future__ import annotations

from typing import Optional

from ..elab import Check, Claim, Design
from ..engines.budget import Budget, OutOfBudget
from ..engines.clock_miter import MiterSearch, Reset, after_search, paired_search, reset
from ..engines.clock_runs import fire
from ..engines.sat import satisfiable
from ..errors import InputError
from ..model.events import Firing, unpacked
from ..words import count
from .common import Options, code_and_decimal, inputs_text, make_result, replay
from .result import OPEN, PROVED, REFUTED, Result, TraceEntry

ENGINE = "firings miter"
"""The name results give this engine."""



def differ_lines(check: Check, other: Design, trace: list[TraceEntry], outs: list[str],
                 opts: Options) -> tuple[str, list[str]]:
    """The summary and evidence of an ``equal ... after`` refutation: the outputs that differ at
    the trace's last clock, and each clock's code in both designs with its inputs."""
    a, b = check.design, other
    summary = (f"output{'s' if len(outs) > 1 else ''} {', '.join(outs)} of {a.name} and {b.name} "
               f"differ{'' if len(outs) > 1 else 's'} at clock {trace[-1].clock} (the condition applied at clock 0)")
    wb = len(b.model.states)
    ev = [f"clock {t.clock}: code {code_and_decimal(t.code, check.width, opts.radix)} "
          f"({b.name}: {code_and_decimal(t.other_code or 0, wb, opts.radix)}), inputs {inputs_text(None, t.inputs)}"
          for t in trace[1:]]
    ev.append(f"outputs that differ at clock {trace[-1].clock}: {', '.join(outs)}")
    return summary, ev

def _events(model, firings: list[Firing], idx: list[int]) -> list[dict]:
    return [{"flop": model.states[f.flop], "value": f.value, "code": unpacked(idx, f.code), "depth": f.depth}
            for f in firings]


def _order_text(model, firings: list[Firing]) -> str:
    return ", ".join(f"{model.states[f.flop]} -> {f.value}" for f in firings) or "nothing fires"


def prove_after_wide(check: Check, claim: Claim, opts: Options, budget: Budget) -> Result:
    """Prove or refute ``equal D after COND`` by the firings miter (see the module docstring)."""
    try:
        return _after(check, claim, opts, budget)
    except OutOfBudget as e:
        return make_result(check, claim, OPEN, "ran out of time in the firings miter",
                           details={"engine": ENGINE, "depth": e.depth})


def _after(check: Check, claim: Claim, opts: Options, budget: Budget) -> Result:
    a, b = check.design, claim.other
    assert b is not None and claim.cond is not None and claim.other_cond is not None
    resets: list[Reset] = []
    for d, cond in ((a, claim.cond), (b, claim.other_cond)):
        if not satisfiable(d.model, cond, opts.solver):
            raise InputError(claim.pos, f"no input meets the condition of 'equal {b.name} after'")
        r = reset(d.model, cond, budget, opts.solver)
        if r.state is None and not r.runs:
            return make_result(check, claim, OPEN, f"the firings engine found orders of {r.tried} firings of "
                               f"{d.name} under the condition that never come back to a cascade they have met, "
                               f"and stopped there", details={"engine": ENGINE, "depth": 0})
        if r.state is None:
            return _undetermined(check, claim, d, r, opts)
        resets.append(r)
    ra, rb = resets
    assert ra.state is not None and rb.state is not None
    s = after_search(a.model, b.model, (ra.state, rb.state), budget, opts.solver)
    details: dict = {"engine": ENGINE, "depth": s.depth, "firings": list(s.firings),
                     "reset_code": unpacked(list(check.code), ra.state)}
    if s.status == "open":
        why = s.why or (f"no difference within {count(s.depth, 'clock')} of the condition, and k-induction "
                        f"did not close; the search stopped there")
        return make_result(check, claim, OPEN, f"open at depth {s.depth}" if not s.why else "open: " + s.why,
                           details=details, evidence=[why])
    if s.status == "proved":
        return make_result(check, claim, PROVED,
                           f"after one clock with the condition, {a.name} and {b.name} give the same outputs under "
                           f"every input sequence and every order of firings (k-induction closed at depth {s.depth})",
                           details=details,
                           evidence=[f"engine {ENGINE}: reset states {code_and_decimal(details['reset_code'], check.width, opts.radix)} "
                                     f"and {rb.state} (state bits of {b.name}); no difference within "
                                     f"{count(s.depth, 'clock')}, and no run of distinct pairs of states whose outputs "
                                     f"agree for {count(s.depth, 'clock')} and differ at the next"])
    return _differ(check, claim, ra, rb, s, details, opts)


def _differ(check: Check, claim: Claim, ra: Reset, rb: Reset, s: MiterSearch, details: dict, opts: Options) -> Result:
    a, b = check.design, claim.other
    assert b is not None and s.a is not None and s.b is not None
    idx = list(check.code)
    bidx = list(range(len(b.model.states)))
    ta, tb = [], []
    for d, r, run, t, ix in ((a, ra, s.a, ta, idx), (b, rb, s.b, tb, bidx)):
        state, inputs, order, _ = r.runs[0]
        t.append(TraceEntry(0, unpacked(ix, state), dict(inputs), events=_events(d.model, fire(d.model, state, inputs, order), ix)))
        for k, st in enumerate(run.states):
            if k < len(run.orders):
                ins = run.inputs[k]
                ev: Optional[list] = _events(d.model, fire(d.model, st, ins, run.orders[k]), ix)
            else:
                ins, ev = s.last_inputs, None
            t.append(TraceEntry(k + 1, unpacked(ix, st), dict(ins), events=ev))
    for x, y in zip(ta, tb):
        x.other_code = y.code
    replay(a, check, ta)
    replay(b, check, tb, code=bidx)
    outs = s.outputs
    summary, ev = differ_lines(check, b, ta, outs, opts)
    details.update(outputs_differ=outs, other_trace=[t.to_json() for t in tb])
    return make_result(check, claim, REFUTED, summary, trace=ta, details=details, evidence=[summary] + ev)


def _undetermined(check: Check, claim: Claim, d: Design, r: Reset, opts: Options) -> Result:
    """The condition's clock does not settle ``d`` in one state: two runs settling apart, or one
    order that never settles; each replayed."""
    idx = list(check.code) if d is check.design else list(range(len(d.model.states)))
    m = d.model
    traces, lines = [], []
    for state, inputs, order, settled in r.runs:
        firings = fire(m, state, inputs, order)
        t = [TraceEntry(0, unpacked(idx, state), dict(inputs), events=_events(m, firings, idx))]
        if settled is not None:
            t.append(TraceEntry(1, unpacked(idx, settled)))
        replay(d, check, t, code=idx)
        traces.append(t)
        lines.append(f"  from code {code_and_decimal(unpacked(idx, state), len(idx), opts.radix)} under "
                     f"{inputs_text(None, inputs)}: {_order_text(m, firings)}")
    if len(r.runs) == 1:
        und: list[str] = []
        summary = f"one clock with the condition does not settle {d.name}: an order of its firings never settles"
    else:
        x, y = r.runs[0][3], r.runs[1][3]
        assert x is not None and y is not None
        und = [n for i, n in enumerate(m.states) if (x >> i) & 1 != (y >> i) & 1]
        summary = (f"one clock with the condition does not settle every flop ({d.name}: "
                   f"{', '.join(und[:8])}{' ...' if len(und) > 8 else ''})")
    details: dict = {"engine": ENGINE, "undetermined": {d.name: und}}
    if len(traces) > 1:
        details["second_trace"] = [t.to_json() for t in traces[1]]
    trace = traces[0]
    if d is not check.design:  # the other design's run: its code beside, the check's own left at 0
        trace = [TraceEntry(0, 0, trace[0].inputs, trace[0].code)]
    return make_result(check, claim, REFUTED, summary, trace=trace, details=details, evidence=[summary] + lines)


def prove_paired_wide(check: Check, claim: Claim, opts: Options, budget: Budget) -> Result:
    """``equal D`` and ``equal D on sequence`` by one SAT question over one clock of both designs
    (:func:`checker.engines.clock_miter.paired_search`): every state (or code of the sequence)
    and input, every order of each."""
    try:
        return _paired(check, claim, opts, budget)
    except OutOfBudget as e:
        return make_result(check, claim, OPEN, "ran out of time in the firings miter",
                           details={"engine": ENGINE, "depth": e.depth})


def _paired(check: Check, claim: Claim, opts: Options, budget: Budget) -> Result:
    a, b = check.design, claim.other
    assert b is not None
    pos = [b.model.states.index(n) for n in a.model.states]
    idx = list(check.code)
    bidx = [pos[i] for i in idx]
    seq = check.sequence
    on_seq = claim.mode == "sequence" and seq is not None
    dom: tuple[list[int], list[int]] = ([], [])
    if on_seq:
        assert seq is not None
        dom = ([seq.member(a.model.aig, check.code_lits())],
               [seq.member(b.model.aig, [b.model.state_lits[j] for j in reversed(bidx)])])
    s = paired_search(a.model, b.model, pos, dom, budget, opts.solver)
    details: dict = {"engine": ENGINE, "firings": list(s.firings)}
    where = f"in every code of the sequence ({seq.describe()})" if on_seq and seq is not None else "in every state"
    if s.status == "open":
        return make_result(check, claim, OPEN, "open: " + s.why, details=dict(details, depth=0))
    if s.status == "same":
        return make_result(check, claim, PROVED, f"{a.name} and {b.name} settle in the same code, by every order, "
                           f"and give the same outputs {where}", details=details,
                           evidence=[f"engine {ENGINE}: one SAT question over every start, input and pair of "
                                     f"orders, each clock unrolled to {s.firings[0]} and {s.firings[1]} firings "
                                     f"(no order has more)"])

    def f(c: int) -> str:
        return code_and_decimal(c, check.width, opts.radix)
    if s.status == "never":
        assert s.never is not None
        state, inputs, flops = s.never
        d = a if s.who == "a" else b
        firings = fire(d.model, state, inputs, flops)
        code = unpacked(idx if d is a else bidx, state)
        summary = f"at code {f(code)} under {inputs_text(None, inputs)}: an order of {d.name}'s firings never settles"
        ev = [summary, f"  {d.name}: {_order_text(d.model, firings)} (back to a cascade it has met)"]
        if d is a:
            trace = [TraceEntry(0, code, dict(inputs), events=_events(a.model, firings, idx))]
            replay(a, check, trace)
        else:
            trace = [TraceEntry(0, code, dict(inputs), other_code=code)]
            replay(b, check, [TraceEntry(0, code, dict(inputs), events=_events(b.model, firings, bidx))], code=bidx)
        return make_result(check, claim, REFUTED, summary, trace=trace, details=details, evidence=ev)
    code = unpacked(idx, s.state)
    fa = fire(a.model, s.state, s.inputs, s.orders[0])
    sb = sum(((s.state >> i) & 1) << pos[i] for i in range(len(pos)))
    fb = fire(b.model, sb, s.inputs, s.orders[1])
    ea, eb = unpacked(idx, s.ends[0]), unpacked(bidx, s.ends[1])
    trace = [TraceEntry(0, code, dict(s.inputs), code, _events(a.model, fa, idx)), TraceEntry(1, ea, None, eb)]
    replay(a, check, trace)
    replay(b, check, [TraceEntry(0, code, dict(s.inputs), events=_events(b.model, fb, bidx)), TraceEntry(1, eb)],
           code=bidx)
    what = []
    if ea != eb:
        what.append(f"{a.name} can settle in {f(ea)}, {b.name} in {f(eb)}")
    if s.outputs:
        what.append(f"output{'s' if len(s.outputs) > 1 else ''} {', '.join(s.outputs[:6])} "
                    f"differ{'' if len(s.outputs) > 1 else 's'}")
    summary = f"at code {f(code)} under {inputs_text(None, s.inputs)}: {'; '.join(what)}"
    details.update(outputs_differ=s.outputs, other_events=_events(b.model, fb, bidx))
    ev = [summary, f"  {a.name}: {_order_text(a.model, fa)} settles in {f(ea)}",
          f"  {b.name}: {_order_text(b.model, fb)} settles in {f(eb)}"]
    return make_result(check, claim, REFUTED, summary, trace=trace, details=details, evidence=ev)

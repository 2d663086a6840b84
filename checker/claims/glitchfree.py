"""`glitchfree SIG, ... [when COND]`: no watched bit pulses between the edge and settling.

From every code of the sequence, under every input meeting COND, in every
order of firings, each watched bit changes at most once, and not at all when
its settled value equals its value before the edge.

Synchronous designs: one SAT question for the whole claim, at any width. Every
change is pending at depth 1 and any order is possible, so the codes one
order passes through are a chain of "intermediate codes": the start code s
with a growing subset of the changing bits flipped. A bit f glitches exactly
when (static) f(s) = f(next) and some intermediate code m has f(m) != f(s),
or (dynamic) f(s) != f(next) and two intermediate codes m1 within m2 have
f(m1) = f(next) and f(m2) = f(s): the value leaves, comes back, and leaves
again. This is the function-hazard reading of ternary simulation
(Eichelberger 1965) for the changing inputs of the decoder, here with the
flops as the inputs that change. UNSAT is the proof; a model gives the code,
the inputs and an order, replayed through the event model before it is shown.

Asynchronous designs: the explicit cascade engine over every start and order;
one too wide for it goes to the firings engine (:mod:`checker.claims.wide`),
where a glitch of a watched bit is a value that leaves its start value and
comes back to it along one order (changing at least twice).
"""

from __future__ import annotations

from typing import Optional

from ..elab import Check, Claim
from ..engines.budget import Budget, OutOfBudget
from ..engines.cascade import CascadeLimit, Exploration, glitching, never_settling
from ..engines.sat import Encoder, Sat, Unrolling
from ..model.events import EventModel, Firing, state_int
from .clocking import (code_of, each_clock, events_json, order_lines, out_of_reach, replay_order,
                       require_explicit, warning_lines)
from .common import Options, ReplayError, code_and_decimal, inputs_text, make_result, reference_of, replay
from .wide import explicit_after, firings_of, no_bound, setup, the_model, wide_engine
from .result import OPEN, PROVED, REFUTED, Result, TraceEntry


def _and(sat: Sat, a: int, b: int) -> int:
    v = sat.new_var()
    sat.add([-v, a])
    sat.add([-v, b])
    sat.add([v, -a, -b])
    return v


def _xor(sat: Sat, a: int, b: int) -> int:
    v = sat.new_var()
    sat.add([-v, a, b])
    sat.add([-v, -a, -b])
    sat.add([v, -a, b])
    sat.add([v, a, -b])
    return v


def _or(sat: Sat, lits: list[int]) -> int:
    v = sat.new_var()
    sat.add([-v, *lits])
    for x in lits:
        sat.add([v, -x])
    return v


def _sync(check: Check, claim: Claim, opts: Options, budget: Budget) -> Result:
    model = check.design.model
    seq = check.sequence
    assert seq is not None
    aig = model.aig
    member = seq.member(aig, check.code_lits())
    with Sat(opts.solver) as sat:
        u = Unrolling(model, sat)
        s = u.state(0)
        ins = u.inputs(0)
        assume = [u.lit(0, member)]
        if claim.cond is not None:
            assume.append(u.lit(0, claim.cond))
        nxt = u.lits(0, model.next_lits)
        d = [_xor(sat, a, b) for a, b in zip(s, nxt)]  # the changing bits
        m1 = [sat.new_var(f"m1:{n}") for n in model.states]
        m2 = [sat.new_var(f"m2:{n}") for n in model.states]
        for a, b in zip(m1, m2):
            sat.add([-a, b])  # m1 within m2: both lie on one order
        enc = Encoder(aig, sat)

        def at(flips: list[int]) -> int:
            cur = [_xor(sat, x, _and(sat, dj, fj)) for x, dj, fj in zip(s, d, flips)]
            leaves = {l >> 1: v for l, v in zip(model.state_lits, cur)}
            leaves.update({l >> 1: v for l, v in zip(model.input_lits, ins)})
            return enc.new_env(leaves)

        e0, e1, e2 = u.frames[0], at(m1), at(m2)
        leaves_n = {l >> 1: v for l, v in zip(model.state_lits, nxt)}
        leaves_n.update({l >> 1: v for l, v in zip(model.input_lits, ins)})
        en = enc.new_env(leaves_n)
        which = []
        for name, lit in claim.signals:
            f0 = u.enc.lit(e0, lit)
            fn, f1, f2 = enc.lit(en, lit), enc.lit(e1, lit), enc.lit(e2, lit)
            same = -_xor(sat, f0, fn)
            static = _and(sat, same, _xor(sat, f1, f0))
            dynamic = _and(sat, _and(sat, -same, -_xor(sat, f1, fn)), -_xor(sat, f2, f0))
            which.append((name, _or(sat, [static, dynamic])))
        if budget.expired():
            return make_result(check, claim, OPEN, "ran out of time before the SAT question",
                               details={"engine": "sat", "depth": None})
        details = {"engine": "sat", "solver": opts.solver, "vars": sat.nvars, "clauses": sat.nclauses}
        if not sat.solve(assume + [_or(sat, [w for _, w in which])]):
            return make_result(check, claim, PROVED, f"no order of the changing bits makes "
                               f"{_names(claim)} pulse, from any code of the sequence", details=details)
        state = u.read_state(0)
        inputs = u.read_inputs(0)
        name = next(n for n, w in which if sat.value(w))
        first = {model.states[j] for j in range(len(s)) if sat.value(m1[j])}
        second = {model.states[j] for j in range(len(s)) if sat.value(m2[j])}
    em = EventModel(model, inputs)
    start = state_int(model.states, state)
    root = em.edge(start)
    rank = {n: (0 if n in first else 1 if n in second else 2) for n in model.states}
    order_flops = sorted((c.flop for c in root.pending), key=lambda j: (rank[model.states[j]], j))
    st, firings = root, []
    for j in order_flops:
        st, f = em.fire(st, j)
        firings.append(f)
    return _refute(check, claim, em, start, inputs, firings, name, details, opts)


def _names(claim: Claim) -> str:
    names = [n for n, _ in claim.signals]
    return ", ".join(names[:6]) + (f" and {len(names) - 6} more" if len(names) > 6 else "")


def _values_along(check: Check, em: EventModel, codes: list[int], lit: int) -> list[int]:
    ex = Exploration(em, (lit,))
    return [ex.values(c) & 1 for c in codes]


def _refute(check: Check, claim: Claim, em: EventModel, start: int, inputs: dict[str, int],
            firings: list[Firing], name: str, details: dict, opts: Options = Options()) -> Result:
    lit = dict(claim.signals)[name]
    codes = replay_order(em, start, firings)
    vals = _values_along(check, em, codes, lit)
    changes = sum(1 for a, b in zip(vals, vals[1:]) if a != b)
    if changes < 2:
        raise ReplayError(f"replay: {name} changes {changes} time(s) along the order, not a glitch")
    ref = reference_of(check.design)
    if ref is not None:  # the signal's values along the order, from the syntax tree
        states = check.design.model.states
        for j, c in enumerate(codes):
            v = ref.values({n: (c >> i) & 1 for i, n in enumerate(states)}, inputs).get(name)
            if v is not None and v != vals[j]:
                raise ReplayError(f"{check.design.name} disagrees with its own source: {name} is {vals[j]} in the "
                                  f"graph, {v} from the syntax tree, at code {code_of(check, c)} of the order")
    code = code_of(check, start)
    entry = TraceEntry(0, code, dict(inputs), events=events_json(check, firings))
    trace = [entry, TraceEntry(1, code_of(check, codes[-1]))]
    replay(check.design, check, trace)  # the order again, and the syntax tree at every firing
    warns = warning_lines(firings)
    shown = code_and_decimal(code, check.width, opts.radix)
    lines = [f"from code {shown} under {inputs_text(check, inputs)}, {name} goes "
             + " -> ".join(map(str, vals)) + " along this order:"]
    lines += order_lines(check, start, firings, opts.radix) + warns
    details = dict(details, signal=name, values=vals, warnings=warns)
    return make_result(check, claim, REFUTED, f"{name} pulses between the edge and settling "
                       f"(from code {shown}: {''.join(map(str, vals))})", trace=trace, details=details,
                       evidence=lines)


def _wide(check: Check, claim: Claim, opts: Options, budget: Budget) -> Result:
    watch = [l for _, l in claim.signals]
    try:
        w = setup(check, opts, budget, extra=[] if claim.cond is None else [claim.cond], watch=watch)
        try:
            fir = w.fir
            if w.bound.never is not None:
                code, inputs, flops = w.bound.never
                em, order = firings_of(check, code, inputs, flops)
                return _never(check, claim, em, code, inputs, order, w.details(), opts)
            if w.bound.steps is None:
                return no_bound(check, claim, w)
            glitches = [fir.glitch(k) for k in range(len(watch))]
            if fir.solve(w.start + [fir.any_of(glitches)], budget):
                k = next(k for k, gl in enumerate(glitches) if fir.value(gl))
                code, inputs, flops = the_model(w)
                em, order = firings_of(check, code, inputs, flops)
                return _refute(check, claim, em, code, inputs, order, claim.signals[k][0], w.details(), opts)
            details = w.details()
        finally:
            w.fir.close()
    except OutOfBudget:
        return make_result(check, claim, OPEN, "ran out of time in the firings engine",
                           details={"engine": "firings", "depth": None})
    return make_result(check, claim, PROVED, f"no order makes {_names(claim)} pulse, from any code of the "
                       f"sequence (every order has at most {w.bound.steps} firings, by {w.bound.how})",
                       details=details)


def _never(check: Check, claim: Claim, em: EventModel, start: int, inputs: dict[str, int],
           order: list[Firing], details: dict, opts: Options) -> Result:
    """Refuted by an order that never settles (the contract: that refutes every claim about the clock)."""
    replay_order(em, start, order)
    code = code_of(check, start)
    trace = [TraceEntry(0, code, dict(inputs), events=events_json(check, order))]
    replay(check.design, check, trace)
    warns = warning_lines(order)
    shown = code_and_decimal(code, check.width, opts.radix)
    summary = f"from code {shown} an order of firings never settles"
    lines = [f"from code {shown} under {inputs_text(check, inputs)}, this order comes back to a cascade it "
             f"has seen:"] + order_lines(check, start, order, opts.radix) + warns
    return make_result(check, claim, REFUTED, summary, trace=trace, details=dict(details, warnings=warns),
                       evidence=lines)


def _explicit(check: Check, claim: Claim, budget: Budget, opts: Options = Options()) -> Result:
    require_explicit(check, "glitchfree")
    watch = tuple(l for _, l in claim.signals)
    visited = 0
    try:
        for code, inputs, em, ex, root, out in each_clock(check, claim.cond, budget, watch):
            visited += len(ex.memo)
            if out.never:  # the contract: an order that never settles refutes every claim about the clock
                return _never(check, claim, em, root.code, inputs, never_settling(ex, root),
                              {"engine": "explicit"}, opts)
            if out.glitch:
                k = next(k for k in range(len(watch)) if out.glitch >> k & 1)
                order = glitching(ex, root, k)
                return _refute(check, claim, em, root.code, inputs, order, claim.signals[k][0],
                               {"engine": "explicit"}, opts)
    except (CascadeLimit, OutOfBudget) as e:
        return out_of_reach(check, claim, e)
    return make_result(check, claim, PROVED, f"no order makes {_names(claim)} pulse, from any code of the "
                       f"sequence", details={"engine": "explicit", "cascade_states": visited})


def prove(check: Check, claim: Claim, opts: Options, budget: Budget, engine: Optional[str] = None) -> Result:
    """Prove or refute `glitchfree` (see the module docstring)."""
    if check.design.model.synchronous and (engine or opts.engine) != "explicit":
        return _sync(check, claim, opts, budget)
    if not check.design.model.synchronous and (engine or opts.engine) != "explicit" and wide_engine(check, opts):
        res = _wide(check, claim, opts, budget)
        if not explicit_after(check, opts, res):
            return res
    return _explicit(check, claim, budget, opts)

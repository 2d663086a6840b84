"""The count claim by SAT: one clock from every code of the sequence at once.

One time frame with the state free: the code is constrained to be a member
of the sequence (the sequence's membership circuit, never a list of codes).
For each region of the inputs where one rule decides the next code (rules in
written order, then the default step), the solver is asked for a next code
that differs from that rule's target; the inputs the region fixes are
substituted first, so identical logic folds away by structural hashing. One
more question asks for an SR fault (s = r = 1 with clear and preset 0) in a
code of the sequence under any input. All questions go to one solver as
assumptions. Every one UNSAT: proved. One SAT: refuted by a one-clock trace,
replayed in the simulator and checked against the rules in plain Python.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Optional

from ..engines.budget import Budget, OutOfBudget
from ..engines.cascade import CascadeLimit, never_settling, settling_in, warned
from ..elab import Check, Claim
from ..model import FALSE, TRUE, Aig, evaluate
from ..engines.sat import Sat, Unrolling
from .result import OPEN, PROVED, REFUTED, Result, TraceEntry
from .clocking import (code_of, each_clock, events_json, order_lines, out_of_reach, replay_order,
                       require_explicit, state_of, warning_lines)
from .common import Options, ReplayError, code_and_decimal, inputs_text, make_result, regions, replay, rule_spec, trace_lines
from .wide import explicit_after, Wide, firings_of, no_bound, setup, the_model, wide_engine



@dataclass
class Question:
    """One SAT question of the count claim; a model of ``assumptions`` refutes it.

    ``kind`` is 'mismatch' (a wrong next code) or 'fault' (an SR fault).
    ``fixed`` holds the inputs that the question's region of the rules fixes
    (they were substituted as constants, so the solver leaves them unset);
    ``expected`` and ``actual`` are the next code's solver literals, least
    significant first; ``rule`` the index of the deciding rule (None: the
    default step, or the whole rule set when the question is not split).
    """

    kind: str
    assumptions: list[int]
    fixed: dict[str, int] = field(default_factory=dict)
    expected: list[int] = field(default_factory=list)
    actual: list[int] = field(default_factory=list)
    rule: Optional[int] = None


@dataclass
class CountProblem:
    """The count claim's formula in one solver: its questions in the order asked,
    and each SR flop's fault literal (solver literals of frame 0)."""

    sat: Sat
    frame: Unrolling
    member: int
    questions: list[Question]
    faults: list[tuple[str, int]] = field(default_factory=list)


def _some(sat: Sat, lits: list[int], name: str) -> int:
    """A fresh literal that implies the disjunction of ``lits`` (one direction
    only: it is only ever assumed true; Plaisted and Greenbaum 1986)."""
    if any(l == sat.true for l in lits):
        return sat.true
    lits = [l for l in lits if l != -sat.true]
    g = sat.new_var(name)
    sat.add([-g, *lits])
    return g


def _differs(frame: Unrolling, actual: list[int], expected: list[int], tag: str) -> tuple[int, list[int], list[int]]:
    """(a literal implying that some bit differs, actual and expected solver literals)."""
    sat = frame.sat
    diffs: list[int] = []
    for i, (a, e) in enumerate(zip(actual, expected)):
        if a == e:
            continue  # the same graph node: cannot differ
        la, le = frame.lit(0, a), frame.lit(0, e)
        if la == le:
            continue
        if la == -le:
            diffs.append(sat.true)
            continue
        # d -> (a != e): the two clauses of the xor that d needs (one polarity)
        d = sat.new_var(f"{tag} bit {i} differs@1")
        sat.add([-d, la, le])
        sat.add([-d, -la, -le])
        diffs.append(d)
    return _some(sat, diffs, f"{tag} next code differs@1"), frame.lits(0, actual), frame.lits(0, expected)


def _conjuncts(aig: Aig, lit: int) -> list[int]:
    """The literals whose conjunction is ``lit``, through positive and-nodes."""
    out, stack = [], [lit]
    while stack:
        l = stack.pop()
        n = l >> 1
        if not l & 1 and n and not aig.is_leaf(n):
            stack += [aig.left[n], aig.right[n]]
        else:
            out.append(l)
    return out


def build_count(check: Check, sat: Sat, split: bool = True) -> CountProblem:
    """Encode the count claim of ``check`` (one frame, state free) into ``sat``.

    With ``split`` there is one mismatch question per region of the rules
    (Boole's and Shannon's expansion on the deciding rule): the inputs that
    the region fixes (its conjuncts that are input bits) are substituted as
    constants and the graph is rebuilt with structural hashing, so that a
    next-state bit identical to the rules' one needs no clause at all; the
    rest of the region is an assumption. Without ``split`` one question asks
    for (decided and differs) against the rules' multiplexed next code.
    """
    model = check.design.model
    aig = model.aig
    seq = check.sequence
    assert seq is not None, "a count claim needs the check's sequence"
    cur = check.code_lits()
    frame = Unrolling(model, sat)
    member = frame.lit(0, seq.member(aig, cur))
    actual = [model.next_lits[i] for i in reversed(check.code)]
    questions: list[Question] = []
    if split:
        input_of = {l >> 1: n for n, l in zip(model.inputs, model.input_lits)}
        identity = {l >> 1: l for l in model.state_lits + model.input_lits}
        for k, region, target in regions(check):
            fixed: dict[str, int] = {}
            rest: list[int] = []
            empty = False
            for c in _conjuncts(aig, region):
                if aig.is_leaf(c >> 1) and (c >> 1) in input_of:
                    n, v = input_of[c >> 1], 1 - (c & 1)
                    empty |= fixed.setdefault(n, v) != v
                else:
                    rest.append(c)
            if empty:
                continue  # the region asks an input to be 0 and 1: no input is in it
            leaf_map = dict(identity)
            for l, n in zip(model.input_lits, model.inputs):
                if n in fixed:
                    leaf_map[l >> 1] = TRUE if fixed[n] else FALSE
            roots = actual + target + rest
            cof = aig.copy_into(aig, roots, leaf_map) if fixed else roots
            w = len(actual)
            a2, e2, rest2 = cof[:w], cof[w:2 * w], cof[2 * w:]
            tag = "default step" if k is None else f"rule {k + 1}"
            d, la, le = _differs(frame, a2, e2, tag)
            assume = [member] + frame.lits(0, rest2) + [d]
            questions.append(Question("mismatch", assume, fixed, le, la, k))
    else:
        decided, expected = rule_spec(check)
        d, la, le = _differs(frame, actual, expected, "rules")
        questions.append(Question("mismatch", [member, frame.lit(0, decided), d], {}, le, la, None))
    faults = [(name, frame.lit(0, f)) for name, f in model.faults]
    if faults:
        # An SR fault in a code of the sequence refutes the claim under any input,
        # not only under inputs whose next code the rules decide (our reading of
        # "no SR fault occurs" in the contract's count paragraph).
        faulty = _some(sat, [l for _, l in faults], "some SR fault@0")
        questions.append(Question("fault", [member, faulty], actual=frame.lits(0, actual)))
    return CountProblem(sat, frame, member, questions, faults)


def _code_from(values_lsb: list[int]) -> int:
    return sum(v << i for i, v in enumerate(values_lsb))


def reference_next(check: Check, code: int, inputs: dict[str, int]) -> Optional[int]:
    """The next code the rules decide at ``code`` under ``inputs``, in plain
    Python (conditions evaluated on the simulator's graph, the sequence's
    ``next``/``prev`` on integers); None when the rules leave it open."""
    model = check.design.model
    seq = check.sequence
    assert seq is not None
    lv = {l >> 1: inputs.get(n, 0) & 1 for n, l in zip(model.inputs, model.input_lits)}
    for l in model.state_lits:
        lv.setdefault(l >> 1, 0)
    for r in check.rules:
        cond, = evaluate(model.aig, lv, [r.cond], 1)
        if not cond:
            continue
        if r.kind == "hold":
            return code
        if r.kind == "step":
            return seq.next(code)
        if r.kind == "back":
            return seq.prev(code)
        if r.load_const is not None:
            return r.load_const
        assert r.load_bits is not None
        vals = evaluate(model.aig, lv, r.load_bits, 1)
        v = 0
        for b in vals:
            v = (v << 1) | b
        return v
    if any(r.kind == "step" for r in check.rules):
        return None
    return seq.next(code)


def _refute(check: Check, claim: Claim, p: CountProblem, q: Question, opts: Options) -> Result:
    sat, frame = p.sat, p.frame
    state = frame.read_state(0)
    inputs = frame.read_inputs(0)
    inputs.update(q.fixed)
    code = check.code_of(state)
    actual = _code_from([sat.value(l) for l in q.actual])
    ref = reference_next(check, code, inputs)
    if q.kind == "mismatch":
        expected: Optional[int] = _code_from([sat.value(l) for l in q.expected])
        if ref != expected:
            raise ReplayError(f"at code {code} the rules give {ref}, the SAT problem said {expected}")
    else:
        expected = ref
    trace = [TraceEntry(0, code, inputs), TraceEntry(1, actual)]
    # The simulator must reproduce the trace, and plain Python the expectation.
    replay(check.design, check, trace)
    if not check.sequence.contains(code):
        raise ReplayError(f"counterexample code {code} is not in the sequence ({check.sequence.describe()})")
    details = {"engine": "sat", "expected": expected, "actual": actual, "solver": opts.solver,
               "vars": sat.nvars, "clauses": sat.nclauses}
    lines = trace_lines(check, trace, radix=opts.radix)
    def c(v):  # a code as the report shows it
        return code_and_decimal(v, check.width, opts.radix)
    if q.kind == "fault":
        by_sat = [n for n, l in p.faults if sat.value(l)]
        _, _, hit = check.design.model.step(state, inputs)
        if not by_sat or by_sat[0] not in hit:
            raise ReplayError(f"the simulator does not report the SR fault the SAT problem found at code {code}")
        details["fault"] = by_sat[0]
        details["faults"] = list(hit)
        summary = f"SR flop {by_sat[0]} sees s = r = 1 at code {c(code)}"
        others = [n for n in hit if n != by_sat[0]]
        lines.append(f"at code {c(code)} under {inputs_text(check, inputs)}, SR flop {by_sat[0]} sees s = 1 and r = 1 "
                     "together, which the SR table forbids (the flop's next value is not defined)"
                     + (f"; so do {', '.join(others)}" if others else ""))
        if expected is not None and expected != actual:
            lines.append(f"and the next code differs as well: the rules say {c(expected)}, the logic model gives {c(actual)}")
        elif expected is not None:
            lines.append(f"the logic model's next code, {c(actual)}, is the one the rules name, "
                         "but it rests on the forbidden input, so the claim is refuted")
    else:
        if expected == actual:
            raise ReplayError(f"at code {code} the simulator's next code {actual} is what the rules say")
        summary = f"code {c(code)} goes to {c(actual)}, the rules say {c(expected)}"
        lines.append(f"expected {c(expected)}, got {c(actual)}")
    return make_result(check, claim, REFUTED, summary, trace=trace, details=details, evidence=lines)


def prove(check: Check, claim: Claim, opts: Options, budget: Budget, split: bool = True) -> Result:
    """Prove or refute the count claim: from every code of the sequence, under
    every input the rules decide, the next code is the rules' one, and no SR
    fault occurs in a code of the sequence. UNSAT of every question is the proof."""
    seq = check.sequence
    assert seq is not None
    if not check.design.model.synchronous:
        return _prove_settled(check, claim, opts, budget)
    with Sat(opts.solver) as sat:
        p = build_count(check, sat, split)
        details = {"engine": "sat", "solver": opts.solver, "vars": sat.nvars, "clauses": sat.nclauses,
                   "questions": len(p.questions)}
        for k, q in enumerate(p.questions):
            budget.note(engine="sat", questions=k, of=len(p.questions))
            if budget.expired():
                return make_result(check, claim, OPEN, f"ran out of time after {k} of {len(p.questions)} SAT questions",
                                   details=dict(details, depth=None))
            if sat.solve(q.assumptions):
                return _refute(check, claim, p, q, opts)
            budget.report(questions_answered=k + 1)
        details["solve_seconds"] = round(sat.solve_seconds, 6)
        return make_result(check, claim, PROVED,
                           f"every code of the sequence ({seq.describe()}) steps as the rules say",
                           details=details)


def _prove_settled(check: Check, claim: Claim, opts: Options, budget: Budget) -> Result:
    """The count claim on an asynchronous design: every order of every clock from a code of
    the sequence, under every input the rules decide, settles in the rules' next code, and no
    SR flop samples s = r = 1 (at the edge, or clocked by a firing) along any of them.
    Start by start with the explicit cascade engine where it can visit every start; otherwise
    by the firings engine over every start at once (:mod:`checker.claims.wide`)."""
    if wide_engine(check, opts):
        res = _prove_wide(check, claim, opts, budget)
        if not explicit_after(check, opts, res):
            return res
    require_explicit(check, "count")
    visited = 0
    rules_say: dict[str, Optional[int]] = {}

    def decided(code: int, inputs: dict[str, int]) -> bool:
        rules_say["next"] = reference_next(check, code, inputs)
        return rules_say["next"] is not None

    try:
        for code, inputs, em, ex, root, out in each_clock(check, None, budget, keep=decided):
            expected = rules_say["next"]
            visited += len(ex.memo)
            wrong = sorted(code_of(check, s) for s in out.settled if code_of(check, s) != expected)
            edge_faults = em.edge_faults(root.code)
            order_fault = any(k == "SR fault" for k, _ in out.warnings)
            if not out.never and not wrong and not edge_faults and not order_fault:
                continue
            if out.never:
                order = never_settling(ex, root)
            elif wrong:
                order = settling_in(ex, root, state_of(check, wrong[0]))
            elif edge_faults:
                order = settling_in(ex, root, min(out.settled))
            else:
                order = warned(ex, root, "SR fault")
            fault = None if out.never or wrong else (
                check.design.model.states[edge_faults[0]] if edge_faults else
                next(check.design.model.states[w.flop] for f in order for w in f.warnings if w.kind == "SR fault"))
            return _refute_settled(check, claim, em, root.code, dict(inputs), order, expected, opts,
                                   {"engine": "explicit", "settled": sorted(code_of(check, s) for s in out.settled)},
                                   fault=fault)
    except (CascadeLimit, OutOfBudget) as e:
        return out_of_reach(check, claim, e)
    return make_result(check, claim, PROVED, f"every order of every clock from the sequence "
                       f"({check.sequence.describe()}) settles where the rules say",
                       details={"engine": "explicit", "cascade_states": visited})


def _refute_settled(check: Check, claim: Claim, em, start: int, inputs: dict[str, int], order: list,
                    expected: Optional[int], opts: Options, details: dict, fault: Optional[str] = None) -> Result:
    """A refutation of the asynchronous count claim by one order of firings (replayed first):
    it never settles, settles away from ``expected``, or meets an SR fault (``fault``)."""
    replay_order(em, start, order)
    code = code_of(check, start)
    last = em.edge(start)
    for f in order:
        last, _ = em.fire(last, f.flop)
    never = bool(last.pending)
    entry = TraceEntry(0, code, dict(inputs), events=events_json(check, order))
    warns = warning_lines(order)

    def c(v):  # a code as the report shows it
        return code_and_decimal(v, check.width, opts.radix)
    if never:
        trace = [entry]
        summary = f"from code {c(code)} an order of firings never settles"
        details = dict(details, expected=expected, actual=None)
    else:
        actual = code_of(check, last.code)
        trace = [entry, TraceEntry(1, actual)]
        if fault is None:
            if actual == expected:
                raise ReplayError(f"the order from {code} settles in {actual}, which the rules say")
            summary = f"code {c(code)} can settle in {c(actual)}, the rules say {c(expected)}"
        else:
            summary = f"SR fault in the clock from code {c(code)}: {fault} has s = r = 1 when it samples"
            details = dict(details, fault=fault)
        details = dict(details, expected=expected, actual=actual)
    details["warnings"] = warns
    replay(check.design, check, trace)  # the order again, and the syntax tree at every firing
    lines = [summary + "; the order of firings:"] + order_lines(check, start, order, opts.radix) + warns
    return make_result(check, claim, REFUTED, summary, trace=trace, details=details, evidence=lines)


def _prove_wide(check: Check, claim: Claim, opts: Options, budget: Budget) -> Result:
    """The asynchronous count claim by the firings engine: one SAT question for a start of the
    sequence, under inputs the rules decide, and a complete order that settles away from the
    rules' code; one for an SR fault along an order. Both unsatisfiable: proved."""
    decided, expected_bits = rule_spec(check)
    try:
        w = setup(check, opts, budget, extra=[decided])
    except OutOfBudget:
        return make_result(check, claim, OPEN, "ran out of time in the firings engine",
                           details={"engine": "firings", "depth": None})
    try:
        return _wide_questions(check, claim, opts, budget, w, expected_bits)
    except OutOfBudget:
        return make_result(check, claim, OPEN, "ran out of time in the firings engine",
                           details={"engine": "firings", "depth": None})
    finally:
        w.fir.close()


def _wide_questions(check: Check, claim: Claim, opts: Options, budget: Budget, w: Wide,
                    expected_bits: list[int]) -> Result:
    """The questions of the asynchronous count claim on a set-up firings problem (see _prove_wide)."""
    fir = w.fir
    if w.bound.never is not None:
        code, inputs, flops = w.bound.never
        em, order = firings_of(check, code, inputs, flops)
        return _refute_settled(check, claim, em, code, inputs, order,
                               reference_next(check, code_of(check, code), inputs), opts, w.details())
    if w.bound.steps is None:
        return no_bound(check, claim, w)
    L = w.bound.steps
    final = fir.frames[L].q
    exp = fir.first(expected_bits)
    g = fir.g
    wbits = check.width
    differ = g.or_all(g.xor(final[check.code[wbits - 1 - k]], e) for k, e in enumerate(exp))
    if fir.solve(w.start + [fir.pending_at(L) ^ 1, differ], budget):
        code, inputs, flops = the_model(w)
        em, order = firings_of(check, code, inputs, flops)
        return _refute_settled(check, claim, em, code, inputs, order,
                               reference_next(check, code_of(check, code), inputs), opts, w.details())
    faulty, parts = fir.sr_fault()
    if parts and fir.solve(w.start + [fir.pending_at(L) ^ 1, faulty], budget):
        code, inputs, flops = the_model(w)
        em, order = firings_of(check, code, inputs, flops)
        hit = em.edge_faults(code)
        where = (check.design.model.states[hit[0]] if hit else
                 next((check.design.model.states[x.flop] for f in order for x in f.warnings
                       if x.kind == "SR fault"), None))
        if where is None:
            raise ReplayError(f"the event model meets no SR fault along the order from {code_of(check, code)}")
        return _refute_settled(check, claim, em, code, inputs, order,
                               reference_next(check, code_of(check, code), inputs), opts, w.details(),
                               fault=where)
    details = dict(w.details(), depth=None)
    return make_result(check, claim, PROVED, f"every order of every clock from the sequence "
                       f"({check.sequence.describe()}) settles where the rules say "
                       f"(every order has at most {L} firings, by {w.bound.how})", details=details)

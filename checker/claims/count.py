"""The count claim by SAT: one clock from every code of the sequence at once.

One time frame with the state free: the code is constrained to be a member
of the sequence (the sequence's membership circuit, never a list of codes),
the inputs to be ones whose next code the rules decide, and the solver is
asked for a next code that differs from the rules' one. A second question
on the same solver, by assumptions, asks for an SR fault (s = r = 1 with
clear and preset 0) in a code of the sequence under any input. Both UNSAT:
proved. Either SAT: refuted by a one-clock trace, replayed in the simulator.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Optional

from ..budget import Budget
from ..elaborate import Check, Claim
from ..model import evaluate
from ..sat import Sat, Unrolling
from ..verdict import OPEN, PROVED, REFUTED, Result, TraceEntry
from .common import Options, ReplayError, make_result, replay, rule_spec

# An SR fault in a code of the sequence refutes the claim under any input,
# not only under inputs whose next code the rules decide (the lead's reading
# of "no SR fault occurs" in the contract's count paragraph).
FAULT_UNDER_ANY_INPUT = True


@dataclass
class CountProblem:
    """The count claim's formula in one solver; every literal is a solver literal.

    ``member``: the code is in the sequence; ``decided``: the rules decide the
    next code; ``differs`` implies that some bit of ``actual`` differs from
    ``expected`` (both least significant first); ``faulty`` implies that some
    SR fault literal of ``faults`` is 1 (None without SR flops).
    """

    sat: Sat
    frame: Unrolling
    member: int
    decided: int
    differs: int
    faulty: Optional[int]
    expected: list[int]
    actual: list[int]
    faults: list[tuple[str, int]] = field(default_factory=list)

    def mismatch_question(self) -> list[int]:
        """Assumptions under which a model is a wrong next code."""
        return [self.member, self.decided, self.differs]

    def fault_question(self) -> Optional[list[int]]:
        """Assumptions under which a model is an SR fault in a sequence code."""
        if self.faulty is None:
            return None
        return [self.member, self.faulty] if FAULT_UNDER_ANY_INPUT else [self.member, self.decided, self.faulty]


def _some(sat: Sat, lits: list[int], name: str) -> int:
    """A fresh literal that implies the disjunction of ``lits`` (one direction
    only: it is only ever assumed true; Plaisted and Greenbaum 1986)."""
    if any(l == sat.true for l in lits):
        return sat.true
    lits = [l for l in lits if l != -sat.true]
    g = sat.new_var(name)
    sat.add([-g, *lits])
    return g


def build_count(check: Check, sat: Sat) -> CountProblem:
    """Encode the count claim of ``check`` (one frame, state free) into ``sat``."""
    model = check.design.model
    aig = model.aig
    seq = check.sequence
    assert seq is not None, "a count claim needs the check's sequence"
    cur = check.code_lits()
    member = seq.member(aig, cur)
    decided, expected = rule_spec(check)
    actual = [model.next_lits[i] for i in reversed(check.code)]
    frame = Unrolling(model, sat)
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
        d = sat.new_var(f"differs bit {i}@1")
        sat.add([-d, la, le])
        sat.add([-d, -la, -le])
        diffs.append(d)
    differs = _some(sat, diffs, "next code differs@1")
    faults = [(name, frame.lit(0, f)) for name, f in model.faults]
    faulty = _some(sat, [l for _, l in faults], "SR fault@0") if faults else None
    return CountProblem(sat, frame, frame.lit(0, member), frame.lit(0, decided), differs, faulty,
                        frame.lits(0, expected), frame.lits(0, actual), faults)


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


def inputs_text(check: Check, inputs: dict[str, int]) -> str:
    """Inputs for people: vectors as one binary number, bits as 0/1."""
    design = check.design
    done: set[str] = set()
    parts = []
    for name, bits in design.input_vectors.items():
        if len(bits) == 1 and bits[0] == name:
            parts.append(f"{name}={inputs.get(name, 0)}")
        else:
            parts.append(f"{name}=0b" + "".join(str(inputs.get(b, 0)) for b in bits))
        done.update(bits)
    parts += [f"{n}={v}" for n, v in inputs.items() if n not in done]
    return " ".join(parts) if parts else "-"


def trace_lines(check: Check, trace: list[TraceEntry]) -> list[str]:
    """A trace as a small table: clock, code in binary and decimal, inputs."""
    w = check.width
    rows = [("clock", "code", "", "inputs")]
    for t in trace:
        rows.append((str(t.clock), format(t.code, f"0{w}b"), str(t.code),
                     "" if t.inputs is None else inputs_text(check, t.inputs)))
    widths = [max(len(r[k]) for r in rows) for k in range(4)]
    return ["  ".join(c.ljust(widths[k]) for k, c in enumerate(r)).rstrip() for r in rows]


def _refute(check: Check, claim: Claim, p: CountProblem, opts: Options, fault: bool) -> Result:
    sat, frame = p.sat, p.frame
    state = frame.read_state(0)
    inputs = frame.read_inputs(0)
    code = check.code_of(state)
    actual = _code_from([sat.value(l) for l in p.actual])
    decided = sat.value(p.decided)
    expected = _code_from([sat.value(l) for l in p.expected]) if decided else None
    trace = [TraceEntry(0, code, inputs), TraceEntry(1, actual)]
    # The simulator must reproduce the trace, and plain Python the expectation.
    replay(check.design, check, trace)
    if not check.sequence.contains(code):
        raise ReplayError(f"counterexample code {code} is not in the sequence ({check.sequence.describe()})")
    ref = reference_next(check, code, inputs)
    if ref != expected:
        raise ReplayError(f"at code {code} the rules give {ref}, the SAT problem said {expected}")
    details = {"engine": "sat", "expected": expected, "actual": actual, "solver": opts.solver,
               "vars": sat.nvars, "clauses": sat.nclauses}
    lines = trace_lines(check, trace)
    if fault:
        hit_by_sat = [n for n, l in p.faults if sat.value(l)]
        _, _, hit = check.design.model.step(state, inputs)
        if not hit or hit_by_sat[0] not in hit:
            raise ReplayError(f"the simulator does not report the SR fault of {hit_by_sat[0]} at code {code}")
        details["fault"] = hit_by_sat[0]
        summary = f"SR flop {hit_by_sat[0]} has s = r = 1 at code {code}"
        lines.append(f"SR flop {hit_by_sat[0]}: s = 1 and r = 1 at code {code} (a fault)")
        if expected is not None:
            lines.append(f"expected {expected}, got {actual}")
    else:
        if ref == actual:
            raise ReplayError(f"at code {code} the simulator's next code {actual} is what the rules say")
        summary = f"code {code} goes to {actual}, the rules say {expected}"
        lines.append(f"expected {expected}, got {actual}")
    return make_result(check, claim, REFUTED, summary, trace=trace, details=details, evidence=lines)


def prove(check: Check, claim: Claim, opts: Options, budget: Budget) -> Result:
    """Prove or refute the count claim: from every code of the sequence, under
    every input the rules decide, the next code is the rules' one, and no SR
    fault occurs in a code of the sequence. UNSAT of both questions is the proof."""
    seq = check.sequence
    assert seq is not None
    with Sat(opts.solver) as sat:
        p = build_count(check, sat)
        base = {"engine": "sat", "solver": opts.solver, "vars": sat.nvars, "clauses": sat.nclauses}
        for fault, question in ((False, p.mismatch_question()), (True, p.fault_question())):
            if question is None:
                continue
            if budget.expired():
                return make_result(check, claim, OPEN, "ran out of time before the SAT question was answered",
                                   details=dict(base, depth=None))
            if sat.solve(question):
                return _refute(check, claim, p, opts, fault)
            budget.report(stage="fault" if fault else "mismatch")
        base["solve_seconds"] = round(sat.solve_seconds, 6)
        return make_result(check, claim, PROVED,
                           f"every code of the sequence ({seq.describe()}) steps as the rules say",
                           details=base)

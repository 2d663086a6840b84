"""The always claim by SAT: PROP is 1 in every code of the sequence, for every input.

One time frame with the state and the inputs free; the code is constrained
to the sequence by its membership circuit. UNSAT of ``member & !PROP`` is
the proof; a model is a code and an input where PROP is 0, confirmed by
evaluating PROP on the circuit graph before it is reported.
"""

from __future__ import annotations

from dataclasses import dataclass

from ..engines.budget import Budget
from ..elab import Check, Claim
from ..model import evaluate
from ..engines.sat import Sat, Unrolling
from .result import OPEN, PROVED, REFUTED, Result, TraceEntry
from .common import Options, ReplayError, code_and_decimal, make_result, trace_lines


@dataclass
class AlwaysProblem:
    """The always claim's formula: ``member`` (the code is in the sequence)
    and ``violated`` (PROP is 0), solver literals of frame 0."""

    sat: Sat
    frame: Unrolling
    member: int
    violated: int

    def question(self) -> list[int]:
        """Assumptions under which a model is a counterexample."""
        return [self.member, self.violated]


def build_always(check: Check, claim: Claim, sat: Sat) -> AlwaysProblem:
    """Encode the always claim ``claim`` of ``check`` into ``sat``."""
    model = check.design.model
    seq = check.sequence
    assert seq is not None and claim.prop is not None
    member = seq.member(model.aig, check.code_lits())
    frame = Unrolling(model, sat)
    return AlwaysProblem(sat, frame, frame.lit(0, member), frame.lit(0, claim.prop ^ 1))


def prop_value(check: Check, prop: int, state: dict[str, int], inputs: dict[str, int]) -> int:
    """The value (0/1) of the literal ``prop`` at ``state`` under ``inputs``, by graph evaluation."""
    model = check.design.model
    lv: dict[int, object] = {}
    for n, l in zip(model.states, model.state_lits):
        lv[l >> 1] = state.get(n, 0) & 1
    for n, l in zip(model.inputs, model.input_lits):
        lv[l >> 1] = inputs.get(n, 0) & 1
    v, = evaluate(model.aig, lv, [prop], 1)
    return int(v)


def prove(check: Check, claim: Claim, opts: Options, budget: Budget) -> Result:
    """Prove or refute ``always PROP``: PROP is 1 in every code of the sequence
    under every input. UNSAT of (member and not PROP) is the proof."""
    seq = check.sequence
    assert seq is not None
    with Sat(opts.solver) as sat:
        p = build_always(check, claim, sat)
        details = {"engine": "sat", "solver": opts.solver, "vars": sat.nvars, "clauses": sat.nclauses}
        budget.note(engine="sat")
        if budget.expired():
            return make_result(check, claim, OPEN, "ran out of time before the SAT question was answered",
                               details=dict(details, depth=None))
        if not sat.solve(p.question()):
            details["solve_seconds"] = round(sat.solve_seconds, 6)
            return make_result(check, claim, PROVED,
                               f"holds in every code of the sequence ({seq.describe()}) under every input",
                               details=details)
        state = p.frame.read_state(0)
        inputs = p.frame.read_inputs(0)
        code = check.code_of(state)
        # Replay: the code must be a member and the graph must give PROP = 0 there.
        full = dict(check.state_of(code))
        for n in check.design.model.states:
            full.setdefault(n, state[n])
        if not seq.contains(code):
            raise ReplayError(f"counterexample code {code} is not in the sequence ({seq.describe()})")
        if prop_value(check, claim.prop, full, inputs) != 0:
            raise ReplayError(f"the property is 1 at code {code} under the counterexample's inputs")
        trace = [TraceEntry(0, code, inputs)]
        lines = trace_lines(check, trace, radix=opts.radix)
        shown_code = code_and_decimal(code, check.width, opts.radix)
        lines.append(f"the property is 0 at code {shown_code}")
        details["code"] = code
        return make_result(check, claim, REFUTED, f"fails at code {shown_code}", trace=trace,
                           details=details, evidence=lines)

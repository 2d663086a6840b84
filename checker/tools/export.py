"""One claim's SAT problem as a DIMACS CNF file that any solver can read.

The file holds exactly the formula the count or always engine solves, with
its assumptions turned into clauses: for a count claim one selector variable
per question implies that question's assumptions, and one clause asks for
some selector. A comment header says what SAT and UNSAT mean and names the
variables: ``NAME@0`` is a signal in the checked clock, ``NAME@1`` the flop
bit after the edge, ``!NAME@0`` a variable that is the complement of NAME.
"""

from __future__ import annotations

from ..elab import Check, Claim
from ..fileio import atomic_output, shown
from ..engines.sat import Sat, Unrolling
from ..claims.always import build_always
from ..claims.count import build_count


def _name_signals(check: Check, frame: Unrolling) -> None:
    """Record a name for every solver variable that is a named signal at clock 0
    or a next-state bit, unless it already has one."""
    model = check.design.model
    sat = frame.sat
    env = frame.enc.envs[frame.frames[0]]

    def name(var: int, text: str) -> None:
        v = abs(var)
        if v != sat.true and v not in sat.names:
            sat.names[v] = text if var > 0 else "!" + text

    for sig, lit in model.signals.items():
        node = lit >> 1
        if node in env:
            name(env[node] if not lit & 1 else -env[node], f"{sig}@0")
    for s, lit in zip(model.states, model.next_lits):
        node = lit >> 1
        if node in env:
            name(env[node] if not lit & 1 else -env[node], f"{s}@1")


def _name_next(check: Check, sat: Sat, lits: list[int], pattern: str) -> None:
    """Name the solver variables of a next code (lsb first) by flop bit."""
    states = check.design.model.states
    for i, lit in zip(reversed(check.code), lits):
        v = abs(lit)
        if v != sat.true and v not in sat.names:
            text = pattern.format(states[i])
            sat.names[v] = text if lit > 0 else "!" + text


def _header(check: Check, claim: Claim, sat_means: str, unsat_means: str) -> list[str]:
    seq = check.sequence
    code_names = [check.design.model.states[i] for i in check.code]
    return [
        f"countersign: check {check.name} of design {check.design.name}, "
        f"{claim.kind} claim at {shown(claim.pos.file)}:{claim.pos.line}",
        f"sequence: {seq.describe() if seq is not None else '-'}",
        f"code, most significant first: {' '.join(code_names)}",
        f"SAT means: {sat_means}",
        f"UNSAT means: {unsat_means}",
        "variable 1 is the constant true; NAME@0 is a signal in the clock checked, "
        "NAME@1 a flop bit after the clock edge, !NAME a complemented variable",
    ]


def export_cnf(check: Check, claim: Claim, path: str) -> dict:
    """Write the SAT problem of one count or always claim to ``path`` as DIMACS
    CNF; returns its statistics (variables, clauses, questions)."""
    if claim.kind not in ("count", "always"):
        raise ValueError(f"a {claim.kind} claim cannot be written as CNF yet; "
                         f"only count and always claims can")
    with Sat(record=True) as sat:
        if claim.kind == "count":
            p = build_count(check, sat)
            frame = p.frame
            selectors = []
            for k, q in enumerate(p.questions):
                what = "an SR fault" if q.kind == "fault" else (
                    "the default step" if q.rule is None else f"rule {q.rule + 1} ({check.rules[q.rule].kind})")
                fixed = ", ".join(f"{n}={v}" for n, v in q.fixed.items())
                s = sat.new_var(f"question {k + 1}: {what}" + (f" with {fixed}" if fixed else ""))
                _name_next(check, sat, q.actual, f"{{}}@1 in question {k + 1}")
                _name_next(check, sat, q.expected, f"the rules' {{}}@1 in question {k + 1}")
                for a in q.assumptions:
                    sat.add([-s, a])
                # The question substituted these inputs as constants; tie their
                # variables too, so that a model read through the header is whole.
                for n, v in q.fixed.items():
                    var = frame.inputs(0)[check.design.model.inputs.index(n)]
                    sat.add([-s, var if v else -var])
                selectors.append(s)
            sat.add(selectors)
            header = _header(check, claim,
                             "refuted: some code of the sequence steps against the rules, or an SR flop "
                             "has s = r = 1 there (the true question variable says which)",
                             "proved: every code of the sequence steps as the rules say, with no SR fault")
            questions = len(p.questions)
        else:
            a = build_always(check, claim, sat)
            frame = a.frame
            for lit in a.question():
                sat.add([lit])
            header = _header(check, claim,
                             "refuted: in some code of the sequence, under some input, the property is 0",
                             "proved: the property is 1 in every code of the sequence under every input")
            questions = 1
        _name_signals(check, frame)
        with atomic_output(path) as f:  # whole or not at all
            sat.write_dimacs(f, header)
        return {"path": path, "check": check.name, "claim": claim.kind, "line": claim.pos.line,
                "vars": sat.nvars, "clauses": len(sat.log or []), "questions": questions}

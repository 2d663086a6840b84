"""What every claim shares: the rules as a circuit, trace replay, result records."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Optional, Sequence

from ..elaborate import Check, Claim, Design
from ..model import FALSE, TRUE
from ..sat import DEFAULT_SOLVER
from ..simulate import run
from ..verdict import Result, TraceEntry


@dataclass
class Options:
    """How to run claims: SAT solver name, per-claim timeout (s), engine choice."""

    solver: str = DEFAULT_SOLVER
    timeout: Optional[float] = None
    engine: str = "auto"  # auto, sat, explicit


class ReplayError(AssertionError):
    """A counterexample that the simulator does not reproduce: a bug, never printed."""


def rule_spec(check: Check) -> tuple[int, list[int]]:
    """The count claim's reference as a circuit over the check's code bits.

    Returns ``(decided, expected)``: ``decided`` is the literal that is 1 when
    the rules decide the next code (some rule's condition holds, or none does
    and the block has no ``step`` rule, so the counter must step);
    ``expected`` the decided next code, least significant bit first. Rules are
    taken in written order; the first whose condition holds wins.
    """
    seq = check.sequence
    assert seq is not None
    aig = check.design.model.aig
    cur = check.code_lits()
    w = len(cur)
    nxt = seq.next_bits(aig, cur)
    targets: list[tuple[int, list[int]]] = []
    for r in check.rules:
        if r.kind == "hold":
            t = cur
        elif r.kind == "step":
            t = nxt
        elif r.kind == "back":
            t = seq.prev_bits(aig, cur)
        elif r.load_const is not None:
            t = [TRUE if (r.load_const >> i) & 1 else FALSE for i in range(w)]
        else:
            assert r.load_bits is not None
            t = list(reversed(r.load_bits))
        targets.append((r.cond, t))
    has_step = any(r.kind == "step" for r in check.rules)
    expected = nxt
    decided = FALSE if has_step else TRUE
    for cond, t in reversed(targets):
        expected = [aig.mux(cond, e, x) for e, x in zip(expected, t)]
        decided = aig.or_(cond, decided)
    return decided, expected


def stepping(check: Check) -> int:
    """Literal over the inputs: 1 when the rules make the counter step."""
    aig = check.design.model.aig
    none_before = TRUE
    acc = FALSE
    for r in check.rules:
        if r.kind == "step":
            acc = aig.or_(acc, aig.and_(none_before, r.cond))
        none_before = aig.and_(none_before, r.cond ^ 1)
    if not any(r.kind == "step" for r in check.rules):
        acc = aig.or_(acc, none_before)
    return acc


def replay(design: Design, check: Check, trace: Sequence[TraceEntry], code: Optional[Sequence[int]] = None) -> None:
    """Re-run ``trace`` in the simulator; raise ReplayError if any code differs.

    Clock 0 starts at the trace's first code; each entry's inputs drive the
    step to the next entry, whose code must be what the simulator computes.
    ``code`` gives the state indices of the code in ``design`` (default: the
    check's code, for the check's own design).
    """
    model = design.model
    idx = list(check.code if code is None else code)
    w = len(idx)
    names = model.states
    state = {names[i]: (trace[0].code >> (w - 1 - k)) & 1 for k, i in enumerate(idx)}
    for s in names:
        state.setdefault(s, 0)
    for k in range(len(trace) - 1):
        inp = trace[k].inputs or {}
        steps = run(model, state, [inp], 1)
        state = steps[1].state
        got = 0
        for i in idx:
            got = (got << 1) | state[names[i]]
        if got != trace[k + 1].code:
            raise ReplayError(f"trace does not replay in {design.name}: clock {k + 1} gives {got}, trace says {trace[k + 1].code}")


def make_result(check: Check, claim: Claim, status: str, summary: str = "", **kw) -> Result:
    """A :class:`Result` for ``claim`` of ``check`` (file, names and line filled in)."""
    return Result(file=claim.pos.file, check=check.name, claim=claim.kind, line=claim.pos.line,
                  status=status, summary=summary, **kw)


def input_dict(names: Sequence[str], values: Sequence[int]) -> dict[str, int]:
    return {n: int(v) for n, v in zip(names, values)}

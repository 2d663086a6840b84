"""What the claims about one clock's cascade share: starts, orders as evidence, replay.

The explicit path of ``settle``, ``glitchfree`` and the asynchronous ``count``
visits every code of the sequence under every admissible input and explores
every order of that clock (:mod:`checker.engines.cascade`). Codes of the
check (most significant first over ``check.code``) and the event model's state
integers (bit ``i`` is ``model.states[i]``) convert here; so do orders to the
JSON ``events`` of a trace entry. Every order shown is replayed first,
firing by firing, through the event model.
"""

from __future__ import annotations

import itertools
from typing import Callable, Iterator, Optional

from ..elab import Check, Claim
from ..engines.budget import Budget, OutOfBudget
from ..engines.cascade import CascadeLimit, Exploration, Outcome, settling_in
from ..errors import InputError
from ..model.aig import evaluate
from ..model.events import Cascade, EventModel, Firing, packed, unpacked
from .common import ReplayError, code_and_decimal, make_result
from .result import OPEN, Result

MAX_START_POINTS = 1 << 20
"""Most (sequence code, input) pairs the explicit path visits for one claim."""

MAX_INPUT_BITS = 16
"""Most input bits the explicit path enumerates."""


def state_of(check: Check, code: int) -> int:
    """The event model's state integer of a check code."""
    return packed(check.code, code)


def code_of(check: Check, state: int) -> int:
    """The check code of an event-model state integer."""
    return unpacked(check.code, state)


def explicit_limit(check: Check) -> Optional[str]:
    """Why the explicit path cannot visit every start of ``check``, or None when it can."""
    m = check.design.model
    seq = check.sequence
    assert seq is not None
    if len(m.inputs) > MAX_INPUT_BITS:
        return f"{len(m.inputs)} input bits (the explicit cascade engine enumerates up to {MAX_INPUT_BITS})"
    if len(m.states) != check.width:
        return "the code does not name every flop"
    starts = seq.length() << len(m.inputs)
    if starts > MAX_START_POINTS:
        return (f"{seq.length()} sequence codes under {2 ** len(m.inputs)} inputs "
                f"(the explicit cascade engine visits up to {MAX_START_POINTS:,} pairs)")
    return None


def input_rows(model, cond: Optional[int] = None) -> list[dict[str, int]]:
    """Every input assignment of ``model`` (meeting ``cond``, a literal over the inputs)."""
    out = []
    for bits in itertools.product((0, 1), repeat=len(model.inputs)):
        if cond is not None:
            lv = {l >> 1: v for l, v in zip(model.input_lits, bits)}
            lv.update({l >> 1: 0 for l in model.state_lits})
            if not evaluate(model.aig, lv, [cond], 1)[0]:
                continue
        out.append(dict(zip(model.inputs, bits)))
    return out


def starts(check: Check, cond: Optional[int], budget: Budget) -> Iterator[tuple[int, dict[str, int]]]:
    """Every (sequence code, inputs meeting ``cond``), checking the budget as it goes."""
    m = check.design.model
    seq = check.sequence
    assert seq is not None
    combos = input_rows(m, cond)
    for k, code in enumerate(seq.codes()):
        if k % 64 == 0:
            budget.check(k)
        for inputs in combos:
            yield code, inputs


def each_clock(check: Check, cond: Optional[int], budget: Budget, watch: tuple[int, ...] = (),
               keep: Optional[Callable[[int, dict[str, int]], bool]] = None
               ) -> Iterator[tuple[int, dict[str, int], EventModel, Exploration, Cascade, Outcome]]:
    """Every order of every clock from a code of the sequence under inputs meeting ``cond``
    (and ``keep``): (code, inputs, event model, exploration, root cascade, outcome)."""
    ems: dict[tuple, EventModel] = {}
    for code, inputs in starts(check, cond, budget):
        if keep is not None and not keep(code, inputs):
            continue
        key = tuple(sorted(inputs.items()))
        em = ems.get(key)
        if em is None:
            em = ems[key] = EventModel(check.design.model, inputs)
        ex = Exploration(em, watch)
        root, out = ex.explore(state_of(check, code))
        yield code, inputs, em, ex, root, out


def out_of_reach(check: Check, claim: Claim, e: Exception) -> Result:
    """The open verdict of an explicit walk stopped by its limit or by the budget."""
    if isinstance(e, CascadeLimit):
        return make_result(check, claim, OPEN, f"the explicit cascade engine reached its limit: {e}",
                           details={"engine": "explicit", "depth": None})
    assert isinstance(e, OutOfBudget)
    return make_result(check, claim, OPEN, "ran out of time visiting the sequence",
                       details={"engine": "explicit", "depth": None})


def require_explicit(check: Check, what: str) -> None:
    """An InputError at the claim's check when the explicit path cannot take it."""
    why = explicit_limit(check)
    if why is not None:
        raise InputError(check.code_pos or check.pos,
                         f"{what} on this asynchronous design needs the explicit cascade engine, "
                         f"which cannot take it: {why}")


def settle_order(check: Check, code: int, inputs: dict[str, int], target: int) -> list[Firing]:
    """An order of the clock from ``code`` under ``inputs`` that settles in code ``target``."""
    ex = Exploration(EventModel(check.design.model, inputs))
    root, out = ex.explore(state_of(check, code))
    if state_of(check, target) not in out.settled:
        raise ReplayError(f"no order of the clock from {code} settles in {target}")
    return settling_in(ex, root, state_of(check, target))


def events_json(check: Check, firings: list[Firing]) -> list[dict]:
    """An order as the JSON ``events`` of a trace entry (``code``: the check code after the firing)."""
    names = check.design.model.states
    return [{"flop": names[f.flop], "value": f.value, "code": code_of(check, f.code), "depth": f.depth}
            for f in firings]


def replay_order(em: EventModel, start: int, firings: list[Firing]) -> list[int]:
    """Fire ``firings`` again from ``start`` through the event model; the codes after each.

    Raises ReplayError when a firing is not pending at its turn or lands elsewhere.
    """
    state = em.edge(start)
    codes = [start]
    for f in firings:
        if not any(c.flop == f.flop and c.value == f.value for c in state.pending):
            raise ReplayError(f"replay: {em.model.states[f.flop]} -> {f.value} is not pending at its turn")
        state, again = em.fire(state, f.flop)
        if again.code != f.code:
            raise ReplayError(f"replay: firing {em.model.states[f.flop]} gives state {again.code}, not {f.code}")
        codes.append(state.code)
    return codes


def order_lines(check: Check, start: int, firings: list[Firing], radix: str = "auto") -> list[str]:
    """An order for people: each firing, the flop's new value, the code after it (in ``radix``,
    see ``common.code_and_decimal``), its depth."""
    w = check.width

    def shown(c: int) -> str:
        return code_and_decimal(c, w, radix)
    names = check.design.model.states
    lines = [f"  start  {shown(code_of(check, start))}"]
    for f in firings:
        c = code_of(check, f.code)
        lines.append(f"  {names[f.flop]} -> {f.value}  {shown(c)}  depth {f.depth}")
        for wn in f.warnings:
            lines.append(f"    {wn.kind}: {wn.text}")
    return lines


def warning_lines(firings: list[Firing]) -> list[str]:
    """Short pulses and races met along an order, in a designer's words."""
    out = []
    for f in firings:
        for w in f.warnings:
            if w.kind == "short pulse":
                out.append(f"short pulse: {w.text}; the logic model completes the change, a real flop "
                           f"does only if the pulse meets its minimum width")
            elif w.kind == "SR fault":
                out.append(f"SR fault: {w.text} (a fault: what a real flop does then is not defined)")
            else:
                out.append(f"race: {w.text}; which edge a real flop takes depends on its timing")
    return out

"""The event model of one clock: pending changes, firings, triggered flops, asynchronous clear and preset.

This is the contract's event model (shared/LANGUAGE.md, "The event model of
an asynchronous design"), written once. Gates have no delay; every flop has a
delay of its own, unknown. At the system clock's rising edge every flop on
the system clock samples its pins on the code before the edge and gets a
*pending change* if its value would change (a flop whose asynchronous clear or
preset holds gets a change to 0 or 1 instead). Any pending change may fire
next; after each firing a flop clocked by the edge it made samples its pins
on the code just before the firing, and asynchronous clears and presets are
applied to the code after it. The clock has settled when nothing is pending.

A state of the cascade is a :class:`Cascade`: the code (an int, bit ``i``
the value of ``model.states[i]``) and the pending changes. Engines explore
every order (:mod:`checker.engines.cascade`); :func:`unit_delay` runs the one
order the simulator shows (every change of depth k fires at time k).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Optional, Sequence

from .aig import evaluate
from .circuit import Model

CLOCK, CLEAR, PRESET = "clock", "clear", "preset"


def packed(code: Sequence[int], value: int) -> int:
    """The state integer (bit ``i`` is ``model.states[i]``) whose bits ``code`` (state
    indices, most significant first) spell ``value``; bits outside the code are 0."""
    w = len(code)
    return sum(((value >> (w - 1 - k)) & 1) << i for k, i in enumerate(code))


def state_int(states: Sequence[str], values: dict[str, int]) -> int:
    """The state integer of a state given as bit name -> 0/1 (``states``: the model's state names)."""
    return sum((values[s] & 1) << i for i, s in enumerate(states))


def unpacked(code: Sequence[int], state: int) -> int:
    """The value that bits ``code`` (state indices, most significant first) spell in a state integer."""
    v = 0
    for i in code:
        v = (v << 1) | ((state >> i) & 1)
    return v


@dataclass(frozen=True)
class Change:
    """A pending change: flop ``flop`` (state index) to ``value``; ``depth`` as in the contract;
    ``cause`` is 'clock' (sampled at an edge), 'clear' or 'preset' (asynchronous)."""

    flop: int
    value: int
    depth: int
    cause: str


@dataclass(frozen=True)
class Cascade:
    """The code and the pending changes (sorted by flop) at one point of a clock."""

    code: int
    pending: tuple[Change, ...]

    def key(self) -> tuple:
        """Code and pending changes without their depths: a cascade that comes back to
        the same key along one order never settles."""
        return (self.code, tuple((c.flop, c.value) for c in self.pending))


@dataclass(frozen=True)
class Warning:
    """A short pulse (an asynchronous change that fires after its cause has gone), a race
    (a flop clocked again while its change is pending), or an SR fault (an SR flop clocked
    by the firing while s = r = 1 in the code before it)."""

    kind: str  # 'short pulse', 'race' or 'SR fault'
    flop: int
    text: str


@dataclass
class Firing:
    """One firing along an order: the flop, its new value, the code after it, its depth."""

    flop: int
    value: int
    code: int
    depth: int
    warnings: list[Warning] = field(default_factory=list)


class EventModel:
    """The event model of ``model`` under fixed inputs: evaluations cached per code."""

    def __init__(self, model: Model, inputs: dict[str, int]) -> None:
        self.model = model
        self.n = len(model.states)
        self.inputs = {name: inputs.get(name, 0) & 1 for name in model.inputs}
        clocks = model.clocks or [None] * self.n
        self.system = [i for i, c in enumerate(clocks) if c is None]
        self.triggers: dict[int, list[tuple[int, str]]] = {}
        for g, c in enumerate(clocks):
            if c is not None:
                edge, src = c
                self.triggers.setdefault(src, []).append((g, edge))
        self.aclear = model.async_clear or [0] * self.n
        self.apreset = model.async_preset or [0] * self.n
        self._system = frozenset(self.system)
        self._roots = list(model.next_lits) + list(self.aclear) + list(self.apreset)
        self._cache: dict[int, tuple[list[int], list[int], list[int]]] = {}
        self.fault_of = {model.states.index(name): lit for name, lit in model.faults}
        self._fault_cache: dict[int, frozenset] = {}

    def faults(self, code: int) -> frozenset:
        """The SR flops (state indices) whose s = r = 1, with clear and preset 0, at ``code``."""
        hit = self._fault_cache.get(code)
        if hit is None:
            if not self.fault_of:
                return frozenset()
            m = self.model
            lv: dict[int, object] = {l >> 1: (code >> i) & 1 for i, l in enumerate(m.state_lits)}
            lv.update({l >> 1: self.inputs[name] for name, l in zip(m.inputs, m.input_lits)})
            flops = sorted(self.fault_of)
            vals = evaluate(m.aig, lv, [self.fault_of[i] for i in flops], 1)
            hit = frozenset(i for i, v in zip(flops, vals) if v)
            if len(self._fault_cache) < 1 << 16:
                self._fault_cache[code] = hit
        return hit

    def edge_faults(self, code: int) -> list[int]:
        """The SR flops on the system clock that sample s = r = 1 at the edge from ``code``
        (an asynchronous clear or preset holding there means the flop does not sample)."""
        if not self.fault_of:
            return []
        _, clr, pre = self.eval(code)
        return sorted(g for g in self.faults(code) if g in self._system and not clr[g] and not pre[g])

    def eval(self, code: int) -> tuple[list[int], list[int], list[int]]:
        """(sampled next value, asynchronous clear, asynchronous preset) of every flop at ``code``."""
        hit = self._cache.get(code)
        if hit is not None:
            return hit
        m = self.model
        lv: dict[int, object] = {l >> 1: (code >> i) & 1 for i, l in enumerate(m.state_lits)}
        lv.update({l >> 1: self.inputs[name] for name, l in zip(m.inputs, m.input_lits)})
        vals = evaluate(m.aig, lv, self._roots, 1)
        n = self.n
        out = (vals[:n], vals[n:2 * n], vals[2 * n:])
        if len(self._cache) < 1 << 16:
            self._cache[code] = out
        return out

    def holds(self, code: int) -> bool:
        """Whether an asynchronous clear or preset holds at ``code`` (a code that is not stable)."""
        _, clr, pre = self.eval(code)
        return any(clr) or any(pre)

    def edge(self, code: int) -> Cascade:
        """The cascade just after the system clock's rising edge at ``code``."""
        nxt, clr, pre = self.eval(code)
        pending: dict[int, Change] = {}
        for g in range(self.n):
            q = (code >> g) & 1
            if clr[g] or pre[g]:  # an asynchronous clear (preset) holding before the edge
                target = 0 if clr[g] else 1
                if q != target:
                    pending[g] = Change(g, target, 1, CLEAR if clr[g] else PRESET)
            elif g in self._system and nxt[g] != q:
                pending[g] = Change(g, nxt[g], 1, CLOCK)
        return Cascade(code, tuple(pending[g] for g in sorted(pending)))

    def fire(self, state: Cascade, flop: int) -> tuple[Cascade, Firing]:
        """Fire the pending change of ``flop``; returns the cascade after it and the firing."""
        pending = {c.flop: c for c in state.pending}
        ch = pending.pop(flop)
        before = state.code
        after = (before & ~(1 << flop)) | (ch.value << flop)
        warnings: list[Warning] = []
        nxt_b, clr_b, pre_b = self.eval(before)
        if ch.cause != CLOCK:
            still = clr_b[flop] if ch.cause == CLEAR else pre_b[flop]
            if not still:
                warnings.append(Warning("short pulse", flop, f"the asynchronous {ch.cause} of "
                                        f"{self.model.states[flop]} dropped before the flop changed"))
        edge = "rise" if ch.value else "fall"
        depth = ch.depth + 1
        for g, want in self.triggers.get(flop, ()):
            if want != edge or clr_b[g] or pre_b[g]:
                continue  # the wrong edge, or an asynchronous clear/preset held: the edge is ignored
            if g in self.fault_of and g in self.faults(before):
                warnings.append(Warning("SR fault", g, f"SR flop {self.model.states[g]} was clocked with "
                                        f"s = 1 and r = 1"))
            present = (after >> g) & 1
            v = nxt_b[g]
            if g in pending:
                warnings.append(Warning("race", g, f"{self.model.states[g]} was clocked again while its "
                                        f"change was pending; the later edge wins"))
                if v != present:
                    pending[g] = Change(g, v, depth, CLOCK)
                else:
                    del pending[g]
            elif v != present:
                pending[g] = Change(g, v, depth, CLOCK)
        _, clr_a, pre_a = self.eval(after)
        for g in range(self.n):
            if not (clr_a[g] or pre_a[g]):
                continue
            target = 0 if clr_a[g] else 1  # clear wins over preset
            cause = CLEAR if clr_a[g] else PRESET
            q = (after >> g) & 1
            old = pending.get(g)
            if q != target:
                if old is None or old.cause == CLOCK or old.value != target:
                    pending[g] = Change(g, target, depth, cause)
            elif old is not None and (old.cause == CLOCK or old.value != target):
                del pending[g]
        new = Cascade(after, tuple(pending[g] for g in sorted(pending)))
        return new, Firing(flop, ch.value, after, ch.depth, warnings)


def in_order(em: EventModel, code: int, flops: list[int]) -> tuple[int, list[list[Firing]], bool]:
    """A given order of firings (state indices) from the edge at ``code``, in the shape of
    :func:`unit_delay` (each firing at the time of its depth). Raises ValueError when a flop of
    the order has no pending change at its turn."""
    state = em.edge(code)
    by_time: dict[int, list[Firing]] = {}
    for f in flops:
        if not any(c.flop == f for c in state.pending):
            raise ValueError(f"{em.model.states[f]} has no pending change at its turn")
        state, firing = em.fire(state, f)
        by_time.setdefault(firing.depth, []).append(firing)
    times = [by_time.get(t, []) for t in range(1, max(by_time, default=0) + 1)]
    return state.code, times, not state.pending


def unit_delay(em: EventModel, code: int, max_steps: Optional[int] = None) -> tuple[int, list[list[Firing]], bool]:
    """The order the simulator shows: every pending change of depth k fires at time k.

    Returns (settled code, the firings at each time 1, 2, ..., settled). Changes
    of one time fire in flop order, each seeing the code left by the one before.
    ``settled`` is False when the cascade ran ``max_steps`` times (default: a
    bound past any cascade that settles) without settling.
    """
    state = em.edge(code)
    times: list[list[Firing]] = []
    limit = max_steps if max_steps is not None else 4 * (em.n + 1) * (em.n + 1)
    seen = {state.key()}
    while state.pending:
        if len(times) >= limit:
            return state.code, times, False
        now = min(c.depth for c in state.pending)
        fired: list[Firing] = []
        for c in [c for c in state.pending if c.depth == now]:
            if any(p.flop == c.flop and p.depth == now for p in state.pending):
                state, f = em.fire(state, c.flop)
                fired.append(f)
        times.append(fired)
        if state.key() in seen and state.pending:
            return state.code, times, False
        seen.add(state.key())
    return state.code, times, True

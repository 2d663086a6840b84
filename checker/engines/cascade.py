"""Every order of one clock's firings, explored exhaustively with memoisation.

For a code and fixed inputs, the event model (:mod:`checker.model.events`)
allows any pending change to fire next. :func:`explore` walks every order,
memoising on the cascade (code and pending changes, with their depths) and on
which watched signals have already changed, and gives for that clock: the
settled codes, the greatest depth, whether some order never settles, and
which watched signals some order makes change twice (a glitch). The walk is
exact; it stops with :class:`CascadeLimit` past ``max_states`` cascade
states, so a caller can say the limit instead of answering.

Witnesses (an order realising a verdict) are read back from the memo by
:meth:`Exploration.order`.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Callable, Optional

from ..model.aig import evaluate
from ..model.events import Cascade, EventModel, Firing, Warning

MAX_STATES = 200_000
"""Cascade states explored for one (code, inputs) before the engine says it has reached its limit."""

MAX_PATH = 20_000
"""Firings along one order before the engine says it has reached its limit."""


class CascadeLimit(Exception):
    """The exploration of one clock passed ``MAX_STATES`` states or ``MAX_PATH`` firings."""


@dataclass(frozen=True)
class Outcome:
    """Every order from one point of a clock.

    ``settled``: the settled codes (state ints); ``depth``: the greatest depth
    of any firing; ``never``: some order never settles; ``glitch``: mask of the
    watched signals that some order makes change a second time; ``warnings``:
    (kind, flop) of every short pulse and race some order meets.
    """

    settled: frozenset
    depth: int
    never: bool
    glitch: int
    warnings: frozenset


_NEVER = Outcome(frozenset(), 0, True, 0, frozenset())


class Exploration:
    """The memoised walk over the orders of one clock (see the module docstring)."""

    def __init__(self, em: EventModel, watch: tuple[int, ...] = (), max_states: int = MAX_STATES) -> None:
        self.em = em
        self.watch = tuple(watch)
        self.max_states = max_states
        self.memo: dict[tuple, Outcome] = {}
        self.children: dict[tuple, list[tuple[Cascade, Firing, int, int]]] = {}
        self._vals: dict[int, int] = {}

    def values(self, code: int) -> int:
        """The watched signals at ``code`` as a bit mask (bit k: ``watch[k]``)."""
        v = self._vals.get(code)
        if v is None:
            m = self.em.model
            lv: dict[int, object] = {l >> 1: (code >> i) & 1 for i, l in enumerate(m.state_lits)}
            lv.update({l >> 1: self.em.inputs[n] for n, l in zip(m.inputs, m.input_lits)})
            bits = evaluate(m.aig, lv, list(self.watch), 1) if self.watch else []
            v = sum(b << k for k, b in enumerate(bits))
            self._vals[code] = v
        return v

    def explore(self, code: int) -> tuple[Cascade, Outcome]:
        """Every order of the clock from ``code`` (the code before the system clock's edge)."""
        root = self.em.edge(code)
        return root, self._solve(root, 0, set(), 0)

    def _expand(self, state: Cascade, changed: int) -> list[tuple[Cascade, Firing, int, int]]:
        key = (state, changed)
        kids = self.children.get(key)
        if kids is None:
            before = self.values(state.code)
            kids = []
            for c in state.pending:
                nxt, firing = self.em.fire(state, c.flop)
                diff = before ^ self.values(nxt.code)
                kids.append((nxt, firing, diff & changed, changed | diff))
            self.children[key] = kids
        return kids

    def _solve(self, state: Cascade, changed: int, path: set, length: int) -> Outcome:
        key = (state, changed)
        hit = self.memo.get(key)
        if hit is not None:
            return hit
        if not state.pending:
            out = Outcome(frozenset([state.code]), 0, False, 0, frozenset())
            self.memo[key] = out
            return out
        loop = (state.key(), changed)
        if loop in path:
            return _NEVER
        if len(self.memo) >= self.max_states or length >= MAX_PATH:
            raise CascadeLimit(f"more than {self.max_states} cascade states in one clock")
        path.add(loop)
        settled: set = set()
        depth, never, glitch, warns = 0, False, 0, set()
        for nxt, firing, again, changed2 in self._expand(state, changed):
            sub = self._solve(nxt, changed2, path, length + 1)
            settled |= sub.settled
            depth = max(depth, firing.depth, sub.depth)
            never = never or sub.never
            glitch |= again | sub.glitch
            warns |= sub.warnings | {(w.kind, w.flop) for w in firing.warnings}
        path.discard(loop)
        out = Outcome(frozenset(settled), depth, never, glitch, frozenset(warns))
        self.memo[key] = out
        return out

    def order(self, root: Cascade, want: Callable[[Firing, int, Outcome], bool]) -> tuple[list[Firing], bool]:
        """An order from ``root`` realising a verdict, read back from the memo.

        ``want(firing, again, outcome_after)`` says whether taking that firing
        keeps the verdict reachable (``again``: watched signals this firing
        changes a second time). Returns (firings, settled): the walk stops at a
        settled code, or when the order comes back to a cascade it has seen
        (``settled`` False: an order that never settles).
        """
        state, changed = root, 0
        seen = {(state.key(), changed)}
        out: list[Firing] = []
        while state.pending:
            for nxt, firing, again, changed2 in self._expand(state, changed):
                sub = self.memo.get((nxt, changed2), _NEVER)
                if want(firing, again, sub):
                    break
            else:  # pragma: no cover - the memo says some child realises it
                raise AssertionError("no firing realises the verdict")
            out.append(firing)
            state, changed = nxt, changed2
            k = (state.key(), changed)
            if k in seen and state.pending:
                return out, False
            seen.add(k)
        return out, True


def deepest(ex: Exploration, root: Cascade, outcome: Outcome) -> list[Firing]:
    """An order whose deepest firing has the clock's greatest depth."""
    target = outcome.depth
    got: list[Firing] = []
    reached = [0]

    def want(f: Firing, again: int, sub: Outcome) -> bool:
        if reached[0] >= target:
            return True
        if f.depth >= target or sub.depth >= target:
            reached[0] = max(reached[0], f.depth)
            return True
        return False

    got, _ = ex.order(root, want)
    return got


def settling_in(ex: Exploration, root: Cascade, code: int) -> list[Firing]:
    """An order that settles in ``code``."""
    return ex.order(root, lambda f, again, sub: code in sub.settled)[0]


def never_settling(ex: Exploration, root: Cascade) -> list[Firing]:
    """An order that never settles, up to the firing that repeats a cascade."""
    return ex.order(root, lambda f, again, sub: sub.never)[0]


def glitching(ex: Exploration, root: Cascade, k: int) -> list[Firing]:
    """An order along which watched signal ``k`` changes a second time (up to settling)."""
    bit = 1 << k
    done = [False]

    def want(f: Firing, again: int, sub: Outcome) -> bool:
        if done[0]:
            return True
        if again & bit:
            done[0] = True
            return True
        return bool(sub.glitch & bit)

    return ex.order(root, want)[0]


def warned(ex: Exploration, root: Cascade, kind: str) -> list[Firing]:
    """An order along which some firing carries a warning of ``kind`` (then on to settling)."""
    done = [False]

    def want(f: Firing, again: int, sub: Outcome) -> bool:
        if done[0]:
            return True
        if any(w.kind == kind for w in f.warnings):
            done[0] = True
            return True
        return any(k == kind for k, _ in sub.warnings)

    return ex.order(root, want)[0]


def warning_texts(firings: list[Firing]) -> list[Warning]:
    """Every short pulse and race met along an order."""
    return [w for f in firings for w in f.warnings]


def first_glitch(outcome: Outcome, watch_count: int) -> Optional[int]:
    """The first watched signal that some order makes glitch, or None."""
    for k in range(watch_count):
        if outcome.glitch >> k & 1:
            return k
    return None

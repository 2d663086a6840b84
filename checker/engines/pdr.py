"""IC3 / property-directed reachability (Bradley 2011, "SAT-based model
checking without unrolling"), in the form of Een, Mishchenko and Brayton 2011
("Efficient implementation of property directed reachability").

Proves that ``bad`` (a literal over state and inputs) is 0 in every state
reachable from one initial state, or finds an input sequence that reaches it.
Frames F_1..F_k are sets of blocked cubes over the state bits, stored at the
highest level where they hold (delta encoding) and activated in one solver by
one literal per level. Predecessor cubes are shrunk by lifting with an unsat
core (Chockler et al. 2011); blocked cubes are generalised by dropping
literals while they stay inductive relative to the previous frame.

``constraint`` is a literal over state and inputs known to be 1 in every
reachable state under every input (for example proved signal
correspondences); every transition is restricted to it, which keeps the
reachable states and strengthens every frame.
"""

from __future__ import annotations

import heapq
import itertools
from dataclasses import dataclass, field
from typing import Optional

from .budget import Budget, OutOfBudget
from ..model import TRUE, Model
from .sat import DEFAULT_SOLVER, Encoder, Sat

Cube = tuple[int, ...]  # state-bit literals: +(i + 1) for bit i = 1, -(i + 1) for 0


@dataclass
class PdrResult:
    """``status``: 'proved', 'refuted' or 'open'; ``depth``: no run of ``depth``
    clocks reaches ``bad``; ``inputs``: a run reaching it (refuted);
    ``invariant``: the blocked cubes whose negation is inductive (proved)."""

    status: str
    depth: int
    inputs: Optional[list[dict[str, int]]] = None
    invariant: list[Cube] = field(default_factory=list)
    frames: int = 0
    sat_calls: int = 0


@dataclass
class _Obligation:
    cube: Cube
    level: int
    inputs: Optional[dict[str, int]]  # drive this cube's states into ``succ`` (or into bad)
    succ: Optional["_Obligation"]


class _Transition:
    """One copy of the transition relation in a solver: state, inputs, next, bad."""

    def __init__(self, model: Model, bad: int, constraint: int, solver: str) -> None:
        self.sat = Sat(solver)
        s = self.sat
        enc = Encoder(model.aig, s)
        self.cur = [s.new_var() for _ in model.states]
        self.ins = [s.new_var() for _ in model.inputs]
        leaves = {l >> 1: v for l, v in zip(model.state_lits, self.cur)}
        leaves.update({l >> 1: v for l, v in zip(model.input_lits, self.ins)})
        env = enc.new_env(leaves)
        self.nxt = enc.lits(env, model.next_lits)
        self.bad = enc.lit(env, bad)
        if constraint != TRUE:
            s.add([enc.lit(env, constraint)])

    def now(self, l: int) -> int:
        v = self.cur[abs(l) - 1]
        return v if l > 0 else -v

    def then(self, l: int) -> int:
        v = self.nxt[abs(l) - 1]
        return v if l > 0 else -v


class Pdr:
    """IC3/PDR over ``model`` from the state ``init`` (bits in ``model.states`` order)."""

    def __init__(self, model: Model, init: list[int], bad: int, constraint: int = TRUE,
                 solver: str = DEFAULT_SOLVER, budget: Optional[Budget] = None) -> None:
        self.model = model
        self.init = list(init)
        self.budget = budget or Budget()
        self.t = _Transition(model, bad, constraint, solver)
        self.lift = _Transition(model, bad, constraint, solver)
        self.init_lits = [self.t.now(i + 1 if v else -(i + 1)) for i, v in enumerate(self.init)]
        self.levels: list[list[Cube]] = [[]]  # levels[i]: cubes blocked in F_1..F_i
        self.acts: list[int] = [0]
        self.depth = 0
        self.counter = itertools.count()
        self._sets: dict[Cube, frozenset] = {}

    # --- frames ---------------------------------------------------------
    def _add_level(self) -> None:
        self.levels.append([])
        self.acts.append(self.t.sat.new_var())

    def _frame(self, i: int) -> list[int]:
        """Assumptions that select F_i (F_0 is the initial state)."""
        if i == 0:
            return list(self.init_lits)
        return self.acts[i:]

    def _block_at(self, cube: Cube, level: int) -> None:
        cs = frozenset(cube)
        for j in range(1, level + 1):
            self.levels[j] = [c for c in self.levels[j] if not cs <= self._sets.setdefault(c, frozenset(c))]
        self.levels[level].append(cube)
        self.t.sat.add([-self.acts[level]] + [-self.t.now(l) for l in cube])

    def _meets_init(self, cube: Cube) -> bool:
        return all((l > 0) == bool(self.init[abs(l) - 1]) for l in cube)

    def _solve(self, assumptions: list[int]) -> bool:
        return self.t.sat.solve(assumptions)

    # --- queries --------------------------------------------------------
    def _model_state(self, tr: _Transition) -> tuple[Cube, dict[str, int]]:
        s = tr.sat
        cube = tuple((i + 1) if s.value(v) else -(i + 1) for i, v in enumerate(tr.cur))
        ins = {n: s.value(v) for n, v in zip(self.model.inputs, tr.ins)}
        return cube, ins

    def _lifted(self, cube: Cube, ins: dict[str, int], target: Optional[Cube]) -> Cube:
        """A sub-cube of ``cube`` all of whose states go, under ``ins``, into
        ``target`` (or into bad when ``target`` is None): an unsat core."""
        lt = self.lift
        s = lt.sat
        act = s.new_var()
        if target is None:
            s.add([-act, -lt.bad])
        else:
            s.add([-act] + [-lt.then(l) for l in target])
        ins_l = [v if ins[n] else -v for n, v in zip(self.model.inputs, lt.ins)]
        lits = {lt.now(l): l for l in cube}
        sat = s.solve([act] + ins_l + list(lits))
        assert not sat, "lifting: a full state under its inputs must reach its target"
        core = set(s.core())
        s.add([-act])
        kept = tuple(l for v, l in lits.items() if v in core)
        return kept

    def _relative(self, cube: Cube, i: int) -> tuple[bool, Cube | tuple[Cube, dict[str, int]]]:
        """Is ``cube`` unreachable in one step from F_{i-1} outside it?

        Returns (True, core cube) or (False, (predecessor cube, inputs)).
        """
        t = self.t
        s = t.sat
        act = s.new_var()
        s.add([-act] + [-t.now(l) for l in cube])
        nxt = {t.then(l): l for l in cube}
        ok = not self._solve([act] + self._frame(i - 1) + list(nxt))
        if ok:
            core = set(s.core())
            s.add([-act])
            kept = tuple(l for v, l in nxt.items() if v in core)
            return True, self._keep_off_init(kept, cube)
        pred, ins = self._model_state(t)
        s.add([-act])
        return False, (self._lifted(pred, ins, cube), ins)

    def _keep_off_init(self, kept: Cube, cube: Cube) -> Cube:
        if not self._meets_init(kept):
            return kept
        for l in cube:
            if (l > 0) != bool(self.init[abs(l) - 1]):
                return tuple(sorted(set(kept) | {l}, key=abs))
        raise AssertionError("a blocked cube always excludes the initial state")

    def _generalise(self, cube: Cube, i: int) -> Cube:
        """Drop literals while the cube stays inductive relative to F_{i-1}."""
        cur = list(cube)
        for l in list(cube):
            if l not in cur or len(cur) == 1:
                continue
            trial = tuple(x for x in cur if x != l)
            if self._meets_init(trial):
                continue
            ok, got = self._relative(trial, i)
            if ok:
                cur = list(got)  # type: ignore[arg-type]
        return tuple(cur)

    def _push_up(self, cube: Cube, i: int, k: int) -> int:
        while i < k:
            ok, _ = self._relative(cube, i + 1)
            if not ok:
                break
            i += 1
        return i

    # --- the algorithm --------------------------------------------------
    def _bad_cube(self, k: int) -> Optional[tuple[Cube, dict[str, int]]]:
        if not self._solve(self._frame(k) + [self.t.bad]):
            return None
        cube, ins = self._model_state(self.t)
        return self._lifted(cube, ins, None), ins

    def _trace(self, first_inputs: Optional[dict[str, int]], ob: _Obligation) -> list[dict[str, int]]:
        seq = [] if first_inputs is None else [first_inputs]
        o: Optional[_Obligation] = ob
        while o is not None:
            assert o.inputs is not None
            seq.append(o.inputs)
            o = o.succ
        return seq

    def _block(self, cube: Cube, ins: dict[str, int], k: int) -> Optional[list[dict[str, int]]]:
        """Block the bad cube at level k; returns a counterexample's inputs if it cannot."""
        top = _Obligation(cube, k, ins, None)
        heap = [(k, next(self.counter), top)]
        while heap:
            self.budget.check()
            self.budget.note(engine="ic3/pdr", depth=k)
            i, _, ob = heapq.heappop(heap)
            if self._meets_init(ob.cube):
                return self._trace(None, ob)
            # already blocked at this level?
            if not self._solve(self._frame(i) + [self.t.now(l) for l in ob.cube]):
                if i < k:
                    heapq.heappush(heap, (i + 1, next(self.counter), ob))
                continue
            ok, got = self._relative(ob.cube, i)
            if ok:
                g = self._generalise(got, i)  # type: ignore[arg-type]
                j = self._push_up(g, i, k)
                self._block_at(g, j)
                if j < k:
                    heapq.heappush(heap, (j + 1, next(self.counter), ob))
                continue
            pred, pins = got  # type: ignore[misc]
            if i == 1 or self._meets_init(pred):
                # F_0 is the initial state: the predecessor is the initial state
                return self._trace(pins, ob)
            heapq.heappush(heap, (i - 1, next(self.counter), _Obligation(pred, i - 1, pins, ob)))
            heapq.heappush(heap, (i, next(self.counter), ob))
        return None

    def _propagate(self, k: int) -> Optional[int]:
        """Push cubes forward; returns i when F_i = F_{i+1} (a fixpoint)."""
        for i in range(1, k + 1):
            for c in list(self.levels[i]):
                self.budget.check()
                if not self._solve(self._frame(i) + [self.t.then(l) for l in c]):
                    self.levels[i].remove(c)
                    self._block_at(c, i + 1)
            if not self.levels[i]:
                return i
        return None

    def run(self, max_frames: Optional[int] = None, on_depth=None) -> PdrResult:
        """Prove, refute, or (budget or ``max_frames`` exhausted) leave open."""
        try:
            return self._run(max_frames, on_depth)
        except OutOfBudget:
            return self._result("open")
        finally:
            self.t.sat.close()
            self.lift.sat.close()

    def _result(self, status: str, **kw) -> PdrResult:
        return PdrResult(status, self.depth, frames=len(self.levels) - 1,
                         sat_calls=self.t.sat.calls + self.lift.sat.calls, **kw)

    def _run(self, max_frames: Optional[int], on_depth) -> PdrResult:
        if self._solve(self.init_lits + [self.t.bad]):
            _, ins = self._model_state(self.t)
            return self._result("refuted", inputs=[ins])
        self.depth = 1
        self._add_level()
        k = 1
        while True:
            while True:
                self.budget.check()
                got = self._bad_cube(k)
                if got is None:
                    break
                cex = self._block(got[0], got[1], k)
                if cex is not None:
                    return self._result("refuted", inputs=cex)
            self.depth = k + 1  # F_k meets no bad state: no run of k + 1 clocks reaches bad
            if on_depth is not None:
                on_depth(self.depth)
            self._add_level()
            fix = self._propagate(k)
            if fix is not None:
                inv = [c for j in range(fix + 1, len(self.levels)) for c in self.levels[j]]
                return self._result("proved", invariant=inv)
            k += 1
            if max_frames is not None and k > max_frames:
                return self._result("open")




def check_invariant(model: Model, init: list[int], bad: int, cubes: list[Cube],
                    constraint: int = TRUE, solver: str = DEFAULT_SOLVER) -> bool:
    """Independent check of a PDR proof: the negated cubes hold initially, are
    inductive under ``constraint``, and exclude ``bad``."""
    for c in cubes:
        if all((l > 0) == bool(init[abs(l) - 1]) for l in c):
            return False
    t = _Transition(model, bad, constraint, solver)
    try:
        s = t.sat
        for c in cubes:
            s.add([-t.now(l) for l in c])
        if s.solve([t.bad]):
            return False
        for c in cubes:
            if s.solve([t.then(l) for l in c]):
                return False
        return True
    finally:
        t.sat.close()

"""CNF for the circuit model, time-frame unrolling, and the SAT solver.

The and-inverter graph is encoded by Tseitin's transformation, one variable
per and-node per time frame, and handed to python-sat. Frames share their
state variables: the next-state literals of frame t are the state of frame
t+1, so unrolling adds only the and-nodes of each frame. Unrolling a circuit
into a propositional formula over k clocks is bounded model checking (Biere,
Cimatti, Clarke, Zhu, 1999).
"""

from __future__ import annotations

import time
from typing import Iterable, Optional, Sequence

from pysat.solvers import Solver, SolverNames

from ..model import Aig, Model

from .names import DEFAULT_SOLVER  # noqa: E402  (re-exported: the default lives where it loads nothing)


def solver_names() -> list[str]:
    """Names python-sat accepts for ``--solver``."""
    names = []
    for attr in vars(SolverNames):
        if not attr.startswith("_"):
            names.append(attr)
    return sorted(names)


class Sat:
    """A python-sat solver with variable allocation, counts and an optional clause log.

    ``record=True`` keeps every clause so that the problem can be written as
    DIMACS CNF (``write_dimacs``).
    """

    def __init__(self, name: str = DEFAULT_SOLVER, record: bool = False) -> None:
        self.name = name
        self.solver = Solver(name=name)
        self.nvars = 1
        self.nclauses = 0
        self.solve_seconds = 0.0
        self.calls = 0
        self.last_result: Optional[bool] = None  # None until the first solve
        self._model_vars = 0  # variables that existed at the last solve
        self.log: Optional[list[list[int]]] = [] if record else None
        self.names: dict[int, str] = {}
        self.true = 1  # variable 1 is the constant true
        self.add([1])

    def new_var(self, name: Optional[str] = None) -> int:
        self.nvars += 1
        if name is not None and self.log is not None:
            self.names[self.nvars] = name
        return self.nvars

    def add(self, clause: Sequence[int]) -> None:
        self.solver.add_clause(clause)
        self.nclauses += 1
        if self.log is not None:
            self.log.append(list(clause))

    def solve(self, assumptions: Iterable[int] = ()) -> bool:
        """True when satisfiable under the assumptions (the model is then available)."""
        t0 = time.perf_counter()
        r = self.solver.solve(assumptions=list(assumptions))
        self.solve_seconds += time.perf_counter() - t0
        self.calls += 1
        self.last_result = bool(r)
        self._model_vars = self.nvars
        return bool(r)

    def solve_limited(self, assumptions: Iterable[int], conflicts: int) -> Optional[bool]:
        """Like :meth:`solve`, but giving up after ``conflicts`` conflicts: None then (no answer)."""
        t0 = time.perf_counter()
        self.solver.conf_budget(conflicts)
        r = self.solver.solve_limited(assumptions=list(assumptions))
        self.solve_seconds += time.perf_counter() - t0
        self.calls += 1
        self.last_result = None if r is None else bool(r)
        self._model_vars = self.nvars
        return None if r is None else bool(r)

    def value(self, lit: int) -> int:
        """0/1 value of a solver literal in the model of the last solve.

        Asking without a model (no solve yet, or the last one unsatisfiable)
        raises RuntimeError; asking for a variable that did not exist at that
        solve raises LookupError. Both are mistakes in the caller, never
        answers. A variable that existed but is in no clause may take either
        value; it reads 0.
        """
        if self.last_result is not True:
            raise RuntimeError(
                "Sat.value: no model, " + ("nothing was solved yet" if self.last_result is None
                                           else "the last solve was unsatisfiable"))
        v = abs(lit)
        if not 1 <= v <= self._model_vars:
            raise LookupError(f"Sat.value: variable {v} did not exist at the last solve "
                              f"(variables 1 .. {self._model_vars})")
        if v == 1:
            return 1 if lit > 0 else 0
        m = self._model()
        val = m[v - 1] > 0 if v <= len(m) else False
        return int(val if lit > 0 else not val)

    def _model(self) -> list[int]:
        if getattr(self, "_cached_calls", None) != self.calls:
            self._cached = self.solver.get_model() or []
            self._cached_calls = self.calls
        return self._cached

    def core(self) -> list[int]:
        return list(self.solver.get_core() or [])

    def write_dimacs(self, out, comments: Sequence[str] = ()) -> None:
        """Write the recorded clauses as DIMACS CNF with comment lines first, to a path or an open text file."""
        assert self.log is not None, "Sat(record=True) is needed to write DIMACS"
        if isinstance(out, str):
            with open(out, "w", encoding="utf-8") as f:
                self.write_dimacs(f, comments)
            return
        for c in comments:
            out.write(f"c {c}\n")
        for v, n in sorted(self.names.items()):
            out.write(f"c var {v} {n}\n")
        out.write(f"p cnf {self.nvars} {len(self.log)}\n")
        for cl in self.log:
            out.write(" ".join(map(str, cl)) + " 0\n")

    def close(self) -> None:
        self.solver.delete()

    def __enter__(self) -> "Sat":
        return self

    def __exit__(self, *exc) -> None:
        self.close()


class Encoder:
    """Tseitin encoding of AIG cones into a :class:`Sat`, cached per environment.

    An environment maps leaf node numbers to solver literals (one time frame,
    or one copy of a design). ``lit(env_id, aig_lit)`` returns the solver
    literal of an AIG literal, encoding the needed and-nodes once.
    """

    def __init__(self, aig: Aig, sat: Sat) -> None:
        self.aig = aig
        self.sat = sat
        self.envs: list[dict[int, int]] = []

    def new_env(self, leaves: dict[int, int]) -> int:
        """Register a leaf assignment (node -> solver literal); returns its id."""
        env = {0: -self.sat.true}
        env.update(leaves)
        self.envs.append(env)
        return len(self.envs) - 1

    def lit(self, env_id: int, alit: int) -> int:
        env = self.envs[env_id]
        node = alit >> 1
        if node not in env:
            self._encode(env, node, env_id)
        v = env[node]
        return -v if alit & 1 else v

    def lits(self, env_id: int, alits: Iterable[int]) -> list[int]:
        return [self.lit(env_id, a) for a in alits]

    def _encode(self, env: dict[int, int], root: int, env_id: int) -> None:
        left, right, sat = self.aig.left, self.aig.right, self.sat
        stack = [root]
        while stack:
            n = stack[-1]
            if n in env:
                stack.pop()
                continue
            if left[n] < 0:
                # a leaf without a literal in this environment: a free variable
                env[n] = sat.new_var()
                stack.pop()
                continue
            a, b = left[n] >> 1, right[n] >> 1
            pending = [c for c in (a, b) if c not in env]
            if pending:
                stack.extend(pending)
                continue
            stack.pop()
            la = env[a] if not left[n] & 1 else -env[a]
            lb = env[b] if not right[n] & 1 else -env[b]
            v = sat.new_var()
            sat.add([-v, la])
            sat.add([-v, lb])
            sat.add([v, -la, -lb])
            env[n] = v


class Unrolling:
    """Time frames of a model over one solver (bounded model checking).

    Frame 0's state is free unless ``init`` gives solver literals for it.
    ``state(t)`` are the solver literals of the state bits at clock t (in
    ``model.states`` order), ``inputs(t)`` those of the inputs applied at
    clock t, ``lit(t, alit)`` any AIG literal evaluated at clock t.
    """

    def __init__(self, model: Model, sat: Sat, init: Optional[list[int]] = None, tag: str = "") -> None:
        self.model = model
        self.sat = sat
        self.enc = Encoder(model.aig, sat)
        self.tag = tag
        self.frames: list[int] = []
        self._states: list[list[int]] = []
        self._inputs: list[list[int]] = []
        first = init if init is not None else [sat.new_var(f"{tag}{s}@0") for s in model.states]
        self._push(first)

    def _push(self, state: list[int]) -> None:
        t = len(self.frames)
        ins = [self.sat.new_var(f"{self.tag}{i}@{t}") for i in self.model.inputs]
        leaves = {l >> 1: v for l, v in zip(self.model.state_lits, state)}
        leaves.update({l >> 1: v for l, v in zip(self.model.input_lits, ins)})
        self.frames.append(self.enc.new_env(leaves))
        self._states.append(state)
        self._inputs.append(ins)

    def extend(self, t: int) -> None:
        """Make frames 0..t exist."""
        while len(self.frames) <= t:
            last = len(self.frames) - 1
            nxt = self.enc.lits(self.frames[last], self.model.next_lits)
            self._push(nxt)

    def state(self, t: int) -> list[int]:
        self.extend(t)
        return self._states[t]

    def inputs(self, t: int) -> list[int]:
        self.extend(t)
        return self._inputs[t]

    def lit(self, t: int, alit: int) -> int:
        self.extend(t)
        return self.enc.lit(self.frames[t], alit)

    def lits(self, t: int, alits: Iterable[int]) -> list[int]:
        self.extend(t)
        return self.enc.lits(self.frames[t], alits)

    def read_state(self, t: int) -> dict[str, int]:
        """State bit values at clock t in the last model."""
        return {n: self.sat.value(v) for n, v in zip(self.model.states, self.state(t))}

    def read_inputs(self, t: int) -> dict[str, int]:
        return {n: self.sat.value(v) for n, v in zip(self.model.inputs, self.inputs(t))}


def equal_lit(sat: Sat, a: int, b: int) -> int:
    """A fresh solver literal equivalent to ``a == b``."""
    v = sat.new_var()
    sat.add([-v, -a, b])
    sat.add([-v, a, -b])
    sat.add([v, a, b])
    sat.add([v, -a, -b])
    return v


def any_lit(sat: Sat, lits: Sequence[int]) -> int:
    """A fresh solver literal equivalent to the disjunction of ``lits``."""
    v = sat.new_var()
    sat.add([-v, *lits])
    for l in lits:
        sat.add([v, -l])
    return v


def satisfiable(model: Model, lit: int, solver: str = DEFAULT_SOLVER) -> bool:
    """Whether some assignment of the model's leaves makes ``lit`` 1 (one SAT call)."""
    with Sat(solver) as sat:
        enc = Encoder(model.aig, sat)
        env = enc.new_env({})
        return sat.solve([enc.lit(env, lit)])

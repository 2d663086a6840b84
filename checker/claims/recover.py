"""`recover` and `recover within N`: no lockout among the unused codes, and how soon they recover.

The unused codes are every code of the code width outside the sequence. In
v1 ``code`` names every flop, so a code is the whole state. At every clock
any input meeting the claim's condition (the stepping inputs when it has
none) may occur, chosen at worst. Locked: some admissible run stays among
unused codes forever. Worst: the largest number of clocks any unused code
needs over every admissible run.

Two engines. The explicit one (:mod:`checker.explicit`) decides every code
of widths up to its limits exactly and lists every locked set (and
:mod:`checker.repair` turns its answer into repair hints). The SAT one
(:func:`sat_search`) unrolls runs of unused codes:

* a bounded path search (bounded model checking, Biere, Cimatti, Clarke and
  Zhu 1999) for an admissible run of k+1 unused codes; none at depth k
  proves worst <= k, with every unused code a possible start, so the
  search is complete at that depth;
* a lasso search (a run of unused codes whose last code repeats an earlier
  one) for locked cycles;
* k-induction with simple-path constraints (Sheeran, Singh and Stalmarck
  2000) for the proof of no lockout: when no admissible run of k+1
  pairwise distinct unused codes exists and no lasso of at most k+1 codes
  does, the unused codes hold no cycle at all (a longer cycle would give a
  simple run of k+1 codes), so no code is locked and worst = k. Since every
  unused code is a start, base case and step ask about the same runs; the
  proof closes at the depth of the longest run of unused codes, a few
  frames for a counter whose unused codes recover in a few clocks, at any
  width, instead of the 2^width frames of the state space.
"""

from __future__ import annotations

import time
from dataclasses import dataclass, field
from typing import Optional

from .. import explicit as X
from .. import repair
from ..budget import Budget
from ..elaborate import Check, Claim
from ..errors import InputError
from ..sat import DEFAULT_SOLVER, Encoder, Sat, Unrolling
from ..simulate import run
from ..verdict import OPEN, PROVED, REFUTED, Result, TraceEntry
from .common import Options, make_result, replay, stepping

PAIR_DEPTH = 64
"""Deepest frame that gets lasso and simple-path constraints (they grow with depth squared)."""

MAX_SAT_DEPTH = 10_000
"""Deepest frame the SAT engine unrolls before it says the claim is open."""

EXTRA_DEPTH = 64
"""After refuting `recover within N`, how far past N the SAT engine looks for the exact worst."""

TRACE_LIMIT = 4096
"""Longest locked cycle a trace walks around in full."""

SAT_FIRST_WIDTH = 16
"""With engine 'auto', codes wider than this get a short SAT search before the exhaustive one."""

SAT_FIRST_DEPTH = 16
"""Frames of that short SAT search."""

EVIDENCE_RUN = 64
"""Clocks of the worst run shown (and replayed) for a proved claim."""

LOCKED_LIST_LIMIT = 1 << 16
"""Most codes listed in a result's ``locked`` sets (the sizes are always given)."""


# --- the condition ---------------------------------------------------------------

def satisfiable(check: Check, lit: int, solver: str) -> bool:
    """Whether some input assignment makes the input-only literal ``lit`` 1."""
    with Sat(solver) as sat:
        enc = Encoder(check.design.model.aig, sat)
        env = enc.new_env({})
        return sat.solve([enc.lit(env, lit)])


def claim_condition(check: Check, claim: Claim, solver: str) -> int:
    """The admissible inputs of a recover claim as a literal; an input error when none exist."""
    cond = claim.cond if claim.cond is not None else stepping(check)
    if not satisfiable(check, cond, solver):
        if claim.cond is not None:
            raise InputError(claim.pos, "no input meets this recover condition")
        raise InputError(claim.pos, "the rules never let the counter step, so recover has no inputs to assume; add 'when COND'")
    return cond


# --- the SAT engine -------------------------------------------------------------

@dataclass
class SatSearch:
    """What the SAT engine found.

    ``status``: 'proved' (no lock; ``worst`` exact), 'locked' (``cycle`` holds
    the codes of a locked cycle), 'slow' (a run of ``within``+1 unused codes;
    ``worst`` exact or None with ``worst_at_least``) or 'open' (``depth`` frames
    searched). ``codes`` and ``inputs`` are the run shown as evidence:
    ``len(inputs) == len(codes) - 1``.
    """

    status: str
    depth: int
    worst: Optional[int] = None
    worst_at_least: Optional[int] = None
    codes: list[int] = field(default_factory=list)
    inputs: list[dict[str, int]] = field(default_factory=list)
    cycle: list[int] = field(default_factory=list)
    worst_codes: list[int] = field(default_factory=list)
    worst_inputs: list[dict[str, int]] = field(default_factory=list)


class _Frames:
    """Runs of unused codes over one solver, one frame at a time."""

    def __init__(self, check: Check, cond: int, solver: str) -> None:
        self.check = check
        self.sat = Sat(solver)
        self.un = Unrolling(check.design.model, self.sat)
        assert check.sequence is not None
        aig = check.design.model.aig
        self.member = check.sequence.member(aig, check.code_lits())
        self.cond = cond
        self.act = self.sat.new_var()  # switches the simple-path constraints on
        self.loops: list[int] = []
        self.k = -1

    def grow(self, pairs: bool) -> None:
        """Add frame k+1: its code unused, its inputs admissible, and its pair constraints."""
        self.k += 1
        k, sat, un = self.k, self.sat, self.un
        sat.add([-un.lit(k, self.member)])
        sat.add([un.lit(k, self.cond)])
        if not pairs or k == 0:
            self.loops.append(0)
            return
        cur = un.state(k)
        eqs = []
        for j in range(k):
            old = un.state(j)
            e = sat.new_var()
            diff = []
            for a, b in zip(old, cur):
                sat.add([-e, -a, b])
                sat.add([-e, a, -b])
                d = sat.new_var()
                sat.add([-d, a, b])
                sat.add([-d, -a, -b])
                diff.append(d)
            sat.add([-self.act, *diff])
            eqs.append(e)
        loop = sat.new_var()
        sat.add([-loop, *eqs])
        self.loops.append(loop)

    def read(self, upto: int) -> tuple[list[int], list[dict[str, int]]]:
        codes = [self.check.code_of(self.un.read_state(t)) for t in range(upto + 1)]
        inputs = [self.un.read_inputs(t) for t in range(upto + 1)]
        return codes, inputs

    def close(self) -> None:
        self.sat.close()


def _first_repeat(codes: list[int]) -> Optional[int]:
    seen: dict[int, int] = {}
    for i, c in enumerate(codes):
        if c in seen:
            return i
        seen[c] = i
    return None


def _finish_path(check: Check, codes: list[int], inputs: list[dict[str, int]]) -> tuple[list[int], list[dict[str, int]]]:
    """Extend a run by one simulated clock (under its last inputs) to the code it reaches."""
    model = check.design.model
    steps = run(model, check.state_of(codes[-1]), [inputs[len(codes) - 1]], 1)
    return codes + [check.code_of(steps[1].state)], inputs[:len(codes)]


def sat_search(check: Check, cond: int, within: Optional[int], budget: Budget,
               solver: str = DEFAULT_SOLVER, max_depth: int = MAX_SAT_DEPTH) -> SatSearch:
    """Decide lockout (and the worst, and ``within``) by unrolling runs of unused codes.

    Proves only from UNSAT answers on complete questions (see the module
    docstring); returns 'open' with the depth reached when the budget or
    ``max_depth`` runs out.
    """
    f = _Frames(check, cond, solver)
    budget.report(depth=0, engine="sat")
    last_path: Optional[tuple[list[int], list[dict[str, int]]]] = None
    slow: Optional[tuple[list[int], list[dict[str, int]]]] = None
    stop_at: Optional[float] = None
    extra_until: Optional[int] = None
    try:
        while True:
            k = f.k + 1
            if k > max_depth:
                return _stopped(k - 1, slow, last_path)
            if budget.expired() or (stop_at is not None and time.monotonic() > stop_at):
                return _stopped(k - 1, slow, last_path)
            if extra_until is not None and k > extra_until:
                return _stopped(k - 1, slow, last_path)
            pairs = k <= PAIR_DEPTH
            f.grow(pairs)
            t0 = time.monotonic()
            found = f.sat.solve([f.act] if pairs else [])
            if not found:
                # no simple run of k+1 unused codes (no run at all, past PAIR_DEPTH):
                # complete once no lasso ends at frame k either
                if pairs and k > 0 and f.sat.solve([f.loops[k]]):
                    return _locked(f, k, slow)
                res = SatSearch("slow" if slow else "proved", k, worst=k)
                if slow:
                    res.codes, res.inputs = slow
                if last_path is not None:
                    res.worst_codes, res.worst_inputs = _finish_path(check, *last_path)
                return res
            codes, inputs = f.read(k)
            last_path = (codes, inputs)
            rep = _first_repeat(codes)
            if rep is not None:  # only without pair constraints
                return _locked_from(codes[:rep + 1], inputs, slow, k)
            if within is not None and k == within and slow is None:
                slow = (codes, inputs)
                # keep looking for the exact worst, within half the time left and a few frames
                left = budget.left()
                stop_at = None if left is None else time.monotonic() + left / 2
                extra_until = within + EXTRA_DEPTH
            if pairs and k > 0 and f.sat.solve([f.loops[k]]):
                return _locked(f, k, slow)
            budget.report(depth=k, engine="sat")
            if stop_at is not None and time.monotonic() - t0 > (stop_at - time.monotonic()) / 4:
                return _stopped(k, slow, last_path)
    finally:
        f.close()


def _stopped(depth: int, slow, last_path) -> SatSearch:
    if slow is not None:
        return SatSearch("slow", depth, worst=None, worst_at_least=depth + 1, codes=slow[0], inputs=slow[1])
    return SatSearch("open", max(depth, 0), worst_at_least=None if depth < 0 else depth + 1)


def _locked(f: _Frames, k: int, slow) -> SatSearch:
    codes, inputs = f.read(k)
    rep = _first_repeat(codes)
    assert rep is not None, "a lasso model without a repeated code"
    return _locked_from(codes[:rep + 1], inputs, slow, k)


def _locked_from(codes: list[int], inputs: list[dict[str, int]], slow, k: int) -> SatSearch:
    j = codes.index(codes[-1])
    return SatSearch("locked", k, codes=codes, inputs=inputs[:len(codes) - 1], cycle=sorted(set(codes[j:-1])))


# --- the claim -------------------------------------------------------------------

def choose_engine(check: Check, cond: int, opts: Options) -> tuple[str, str]:
    """('explicit' | 'sat', why): the engine a recover question runs on."""
    ok, why = X.feasible(check, cond, opts.solver)
    if opts.engine == "explicit":
        if not ok:
            pos = check.sequence_pos or check.pos
            raise InputError(pos, f"the explicit engine cannot take this check: {why}")
        return "explicit", ""
    if opts.engine == "sat":
        return "sat", ""
    return ("explicit", "") if ok else ("sat", f"explicit engine not used: {why}")


def prove(check: Check, claim: Claim, opts: Options, budget: Budget) -> Result:
    """Prove or refute a recover claim, with evidence and repair advice."""
    X.require_whole_state(check)
    cond = claim_condition(check, claim, opts.solver)
    engine, why = choose_engine(check, cond, opts)
    if engine == "explicit" and opts.engine == "auto" and check.width > SAT_FIRST_WIDTH:
        # a short SAT search first: it settles short tails at any width in a few frames
        s = sat_search(check, cond, claim.within, budget, opts.solver, max_depth=SAT_FIRST_DEPTH)
        if s.status == "proved" or (s.status == "slow" and s.worst is not None):
            res = _sat(check, claim, cond, opts, budget, s)
            res.evidence.insert(0, f"a SAT search of {SAT_FIRST_DEPTH} frames settled it before the exhaustive one")
            return res
    if engine == "explicit":
        try:
            res = _explicit(check, claim, cond, budget, opts.solver)
        except X.OutOfBudget as e:
            res = make_result(check, claim, OPEN, "ran out of time in the exhaustive search",
                              details={"engine": "explicit", "worst": None, "locked": None, "depth": e.depth})
    else:
        res = _sat(check, claim, cond, opts, budget)
    if why:
        res.evidence.insert(0, why)
    return res


def _replayed(check: Check, codes: list[int], inputs: list[dict[str, int]]) -> list[TraceEntry]:
    """The trace of a run, replayed through the simulator (which raises if it does not match)."""
    trace = [TraceEntry(i, c, dict(inputs[i]) if i < len(inputs) else None) for i, c in enumerate(codes)]
    trace[-1].inputs = None
    replay(check.design, check, trace)
    return trace


def _arrow(codes: list[int], limit: int = 24) -> str:
    if len(codes) <= limit:
        return " -> ".join(str(c) for c in codes)
    head = " -> ".join(str(c) for c in codes[:limit // 2])
    tail = " -> ".join(str(c) for c in codes[-limit // 2:])
    return f"{head} -> ... ({len(codes) - limit} more) ... -> {tail}"


def _sizes(sizes: list[int]) -> str:
    """Set sizes for people: '8' or '1 x1022, 4 x3'."""
    if len(sizes) <= 6:
        return ", ".join(map(str, sizes))
    from collections import Counter

    return ", ".join(f"{k} x{v}" for k, v in sorted(Counter(sizes).items()))


def locked_listing(sets: list[list[int]]) -> tuple[list[list[int]], bool]:
    """The first locked sets that fit in :data:`LOCKED_LIST_LIMIT` codes, and whether any were left out."""
    out, n = [], 0
    for s in sets:
        if n + len(s) > LOCKED_LIST_LIMIT:
            return out, True
        out.append(s)
        n += len(s)
    return out, False


def set_lines(sets: list[list[int]]) -> list[str]:
    """The first few sets of codes as readable lines, each cut short when long."""
    return ["  {" + ", ".join(map(str, s[:32])) + (", ..." if len(s) > 32 else "") + "}" for s in sets[:8]]


def _explicit(check: Check, claim: Claim, cond: int, budget: Budget, solver: str) -> Result:
    a = X.explore(check, cond, budget, solver)
    g = a.graph
    seq = check.sequence
    assert seq is not None
    details: dict = {"engine": "explicit", "worst": a.worst, "worst_code": a.worst_code,
                     "unused_count": a.unused_count}
    sets = a.locked_json()
    listed, cut = locked_listing(sets)
    details["locked"] = listed
    if cut:
        details["locked_truncated"] = True
    evidence = [f"engine explicit: {g.size} codes, {a.unused_count} unused, {len(g.rows)} input row(s)"]
    if a.locked:
        sizes = [len(s) for s in sets]
        details["locked_sizes"] = sizes
        smallest = min(a.locked_sets, key=lambda s: (s.size, int(s[0])))
        codes, rows, complete = X.cycle_run(a, smallest, TRACE_LIMIT)
        trace = _replayed(check, codes, [g.rows.full[r] for r in rows])
        n_locked = int((a.steps < 0).sum())
        evidence.append(f"locked: {len(sets)} set(s) of unused codes hold a cycle (sizes {_sizes(sizes)}); "
                        f"{n_locked} unused code(s) can stay unused forever")
        evidence.extend(set_lines(sets))
        evidence.append(("cycle: " if complete else f"run in the locked set, {TRACE_LIMIT} clocks: ") + _arrow(codes))
        if not complete:
            details["trace_truncated"] = True
        res = make_result(check, claim, REFUTED, f"locked: {len(sets)} cycle set(s) among unused codes",
                          trace=trace, details=details, evidence=evidence)
    elif claim.within is not None and a.worst is not None and a.worst > claim.within:
        codes, rows = X.worst_run(a, a.worst_code, claim.within)
        trace = _replayed(check, codes, [g.rows.full[r] for r in rows])
        evidence.append(f"code {a.worst_code} is still unused after {claim.within} clock(s): {_arrow(codes)}")
        evidence.append(f"worst: {a.worst} clocks (from code {a.worst_code})")
        res = make_result(check, claim, REFUTED, f"code {a.worst_code} needs {a.worst} clocks, more than {claim.within}",
                          trace=trace, details=details, evidence=evidence)
    else:
        if a.worst_code is not None:
            # the evidence run (replayed as a check) is its first EVIDENCE_RUN clocks
            codes, rows = X.worst_run(a, a.worst_code, min(a.worst, EVIDENCE_RUN))
            _replayed(check, codes, [g.rows.full[r] for r in rows])
            more = "" if a.worst <= EVIDENCE_RUN else f" -> ... ({a.worst - EVIDENCE_RUN} more clocks)"
            evidence.append(f"worst: {a.worst} clock(s), from code {a.worst_code}: {_arrow(codes)}{more}")
        else:
            evidence.append("no unused codes: worst 0")
        res = make_result(check, claim, PROVED, f"no lockout; worst {a.worst} clock(s)", details=details, evidence=evidence)
    if res.status == REFUTED:
        plan = repair.repair_plan(a, seq.first(), claim.within, budget, solver=solver)
        res.advice = repair.plan_lines(plan)
    return res


def _sat(check: Check, claim: Claim, cond: int, opts: Options, budget: Budget,
         s: Optional[SatSearch] = None) -> Result:
    if s is None:
        s = sat_search(check, cond, claim.within, budget, opts.solver)
    known = s.status == "proved" or (s.status == "slow" and s.worst is not None)
    details: dict = {"engine": "sat", "depth": s.depth, "worst": s.worst, "locked": [] if known else None}
    evidence: list[str] = []
    seq = check.sequence
    assert seq is not None
    if s.worst_codes:
        details["worst_code"] = s.worst_codes[0]
    if s.status == "open":
        details["worst"] = None
        evidence.append(f"engine sat: no locked cycle and some unused code still unused after {s.depth} clock(s); "
                        "the search stopped there")
        return make_result(check, claim, OPEN, f"open at depth {s.depth}", details=details, evidence=evidence)
    if s.status == "locked":
        trace = _replayed(check, s.codes, s.inputs)
        details["locked"] = [s.cycle]
        details["worst"] = None
        loop = s.codes[s.codes.index(s.codes[-1]):]
        evidence.append(f"engine sat: a locked cycle of {len(s.cycle)} unused code(s): {_arrow(loop)}")
        evidence.append(f"run: {_arrow(s.codes)}")
        evidence.append("the SAT engine shows one locked cycle; others may exist")
        res = make_result(check, claim, REFUTED, f"locked: a cycle of {len(s.cycle)} unused code(s)",
                          trace=trace, details=details, evidence=evidence)
        res.advice = [f"repair hint: redirecting code {s.cycle[0]} into the sequence (next code {seq.first()}) "
                      "breaks this cycle; the explicit engine would name a set for every lock"]
        return res
    if s.status == "slow":
        n = claim.within
        assert n is not None
        codes, inputs = s.codes[:n + 1], s.inputs[:n]
        trace = _replayed(check, codes, inputs)
        if s.worst is None:
            details["worst_at_least"] = s.worst_at_least
            evidence.append(f"worst: at least {s.worst_at_least} clocks (the search for the exact worst stopped there)")
        else:
            evidence.append(f"worst: {s.worst} clocks")
        evidence.append(f"code {codes[0]} is still unused after {n} clock(s): {_arrow(codes)}")
        res = make_result(check, claim, REFUTED, f"code {codes[0]} needs more than {n} clocks",
                          trace=trace, details=details, evidence=evidence)
        res.advice = [f"repair hint: redirecting code {codes[n - 1] if n >= 1 else codes[0]} into the sequence "
                      f"(next code {seq.first()}) shortens this run to {max(n, 1)} clock(s)"]
        return res
    if s.worst_codes:
        _replayed(check, s.worst_codes, s.worst_inputs)
        evidence.append(f"worst: {s.worst} clock(s), from code {s.worst_codes[0]}: {_arrow(s.worst_codes)}")
    else:
        evidence.append("no unused codes: worst 0")
    evidence.append(f"engine sat: no run of {s.depth + 1} unused codes exists (k-induction closed at depth {s.depth})")
    if claim.within is not None and s.worst is not None and s.worst > claim.within:
        raise AssertionError("the SAT engine proved a worst above the bound it was asked about")
    return make_result(check, claim, PROVED, f"no lockout; worst {s.worst} clock(s)", details=details, evidence=evidence)

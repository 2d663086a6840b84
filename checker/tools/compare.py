"""``compare OLD NEW``: what an edit changed, design by design and claim by claim.

For every design name defined in both namespaces: whether the two versions
have the same next state and outputs in every state (flops and inputs paired
by name, one SAT miter), and on the sequence of every check that uses the
design. Where they differ, the differing (state, input) points are listed
as cubes over flops and inputs: each found by the solver, grown by dropping
literals while every point of the cube still differs (an unsat core, then one
literal at a time), blocked, and the cover finally minimised with Espresso
(Brayton et al. 1984, as implemented in pyeda). When either version is
asynchronous the two are compared through the sets of codes the orders of
firings settle in, point by point (``claims.equal_async``): an edit that
leaves an order-dependent clock as order-dependent as it was changes
nothing (the ``equal`` claim is stricter and refutes any order dependence).
The differing points are listed as they are. Then every claim of both
files' checks is run, and the claims that held in OLD and fail in NEW are
listed. Designs present in only one file are listed too and count as a
difference.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Optional

from ..claims import run_check
from ..claims.common import Options
from ..claims.equal_async import settled_differences
from ..claims.result import PROVED, Result
from ..elab import Check, Design
from ..engines.budget import Budget, run_bounded
from ..engines.miter import PairedMiter, paired_miter
from ..model.events import packed
from .loading import LoadTimeout, load_within
from ..words import count

CUBE_LIMIT = 256  # cubes enumerated per question
ESPRESSO_LIMIT = 256  # minimise covers of at most this many cubes


@dataclass
class Cover:
    """Cubes (name -> 0/1 over flops and inputs) whose points all differ;
    ``complete`` when together they hold every differing point."""

    cubes: list[dict[str, int]]
    complete: bool
    minimised: bool


def _cube_lits(m: PairedMiter) -> list[tuple[str, int]]:
    return list(m.state_vars.items()) + list(m.input_vars.items())


def differing_cubes(m: PairedMiter, on_restrict: bool, budget: Budget, limit: int = CUBE_LIMIT) -> Cover:
    """Cover the points where the miter's designs differ (within ``restrict``
    when ``on_restrict``) with cubes, by SAT with blocking clauses."""
    sat = m.sat
    extra = [m.restrict] if on_restrict else []
    block = sat.new_var()  # blocking clauses apply to the search, not to growing
    names = _cube_lits(m)
    cubes: list[dict[str, int]] = []
    complete = False
    while len(cubes) < limit and not budget.expired():
        if not sat.solve([m.differ, block] + extra):
            complete = True
            break
        point = {v if sat.value(v) else -v: n for n, v in names}
        cube = _grow(m, list(point), extra)
        cubes.append({point[l]: int(l > 0) for l in cube})
        sat.add([-block] + [-l for l in cube])
    cover = Cover(cubes, complete, False)
    if 1 < len(cubes) <= ESPRESSO_LIMIT:
        _minimise(m, cover, extra)
    return cover


def _grow(m: PairedMiter, lits: list[int], extra: list[int]) -> list[int]:
    """Drop literals of a differing point while the cube has no agreeing point."""
    sat = m.sat
    ok = not sat.solve(lits + [-m.differ] + extra)
    assert ok, "a differing point must differ"
    core = set(sat.core())
    cube = [l for l in lits if l in core]
    for l in list(cube):
        trial = [x for x in cube if x != l]
        if not sat.solve(trial + [-m.differ] + extra):
            core = set(sat.core())
            cube = [x for x in trial if x in core]
    return cube


def _minimise(m: PairedMiter, cover: Cover, extra: list[int]) -> None:
    """Espresso over the cubes found; kept only when every new cube checks."""
    from pyeda.boolalg.expr import And, Or, exprvar
    from pyeda.boolalg.minimization import espresso_exprs

    names = [n for n, _ in _cube_lits(m)]
    var = {n: exprvar("v", k) for k, n in enumerate(names)}
    back = {str(v): n for n, v in var.items()}
    f = Or(*[And(*[var[n] if b else ~var[n] for n, b in c.items()]) for c in cover.cubes])
    (g,) = espresso_exprs(f)
    terms = list(g.xs) if type(g).__name__ == "OrOp" else [g]
    new = []
    for t in terms:
        point = t.satisfy_one() or {}
        new.append({back[str(v)]: int(b) for v, b in point.items()})
    if len(new) >= len(cover.cubes):
        return
    lits = dict(_cube_lits(m))
    for c in new:
        cl = [lits[n] if b else -lits[n] for n, b in c.items()]
        if m.sat.solve(cl + [-m.differ] + extra):
            return  # not exact: keep the solver's cubes
    cover.cubes = new
    cover.minimised = True


def _what_differs(m: PairedMiter, extra: list[int]) -> tuple[list[str], list[str]]:
    flops, outs = [], []
    for kind, name, d in m.diffs:
        if m.sat.solve([d] + extra):
            (flops if kind == "flop" else outs).append(name)
    return flops, outs


def _cover_json(cover: Cover, flop_names: list[str]) -> dict:
    fl = set(flop_names)
    cubes = [{"flops": {n: v for n, v in c.items() if n in fl}, "inputs": {n: v for n, v in c.items() if n not in fl},
              "text": cube_text(c)} for c in cover.cubes]
    return {"cubes": cubes, "cube_count": len(cubes), "complete": cover.complete, "minimised": cover.minimised}


def cube_text(cube: dict[str, int]) -> str:
    """A cube for people: ``q[2]=1 en=0``; ``(anything)`` for the full cube."""
    return " ".join(f"{n}={v}" for n, v in cube.items()) or "(anything)"


def _names_diff(a: list[str], b: list[str]) -> Optional[dict]:
    sa, sb = set(a), set(b)
    if sa == sb:
        return None
    return {"only_old": [n for n in a if n not in sb], "only_new": [n for n in b if n not in sa]}


def compare_designs(old: Design, new: Design, checks: list[Check], opts: Options,
                    budget: Optional[Budget] = None) -> dict:
    """Compare two versions of one design: everywhere, and on each check's sequence.

    The SAT questions run to the end; ``budget`` only bounds the listing of
    differing cubes (:func:`bounded_compare` puts a hard stop around it all).
    """
    out: dict = {"name": new.name}
    iface = {k: d for k, d in (("inputs", _names_diff(old.model.inputs, new.model.inputs)),
                                ("outputs", _names_diff(old.model.outputs, new.model.outputs))) if d}
    flops = _names_diff(old.model.states, new.model.states)
    if iface:
        out.update(status="interface differs", differs=True, **iface)
        return out
    if flops:
        out.update(status="flops differ", differs=True, flops=flops)
        return out
    budget = budget or Budget()
    if not (old.model.synchronous and new.model.synchronous):
        return _compare_settled(old, new, checks, budget, out)
    m = paired_miter(old.model, new.model, opts.solver)
    try:
        equal = not m.sat.solve([m.differ])
        out["everywhere"] = equal
        if not equal:
            f, o = _what_differs(m, [])
            out["next_differs"], out["outputs_differ"] = f, o
            out.update(_cover_json(differing_cubes(m, False, budget), old.model.states))
    finally:
        m.sat.close()
    seqs = []
    for c in checks:
        if c.sequence is None:
            continue
        other = new if c.design is old else old
        mm = paired_miter(c.design.model, other.model, opts.solver, c.sequence.member(c.design.model.aig, c.code_lits()))
        try:
            eq = not mm.sat.solve([mm.differ, mm.restrict])
            entry = {"file": c.pos.file, "check": c.name, "sequence": c.sequence.describe(), "equal": eq}
            if not eq:
                entry.update(_cover_json(differing_cubes(mm, True, budget), c.design.model.states))
            seqs.append(entry)
        finally:
            mm.sat.close()
    out["sequences"] = seqs
    out["status"] = "equal" if equal else "differs"
    out["differs"] = not equal
    return out


def _settled_json(d: dict, flop_names: list[str]) -> dict:
    fl = set(flop_names)
    cubes = [{"flops": {n: v for n, v in c.items() if n in fl}, "inputs": {n: v for n, v in c.items() if n not in fl},
              "text": cube_text(c)} for c in d["cubes"]]
    return {"cubes": cubes, "cube_count": len(cubes), "complete": d["complete"], "minimised": False}


def _compare_settled(old: Design, new: Design, checks: list[Check], budget: Budget, out: dict) -> dict:
    """Two versions of a design, either asynchronous, compared through the codes every order of
    firings settles in (:func:`checker.claims.equal_async.settled_differences`): point by point,
    so only within that search's limits; past them the comparison is open."""
    every = settled_differences(old, new, None, budget)
    if every is None:
        out.update(status="not compared: an asynchronous design is compared through its settled codes point by "
                          "point, and this one has too many states and inputs for that", differs=False, open=True)
        return out
    equal = every["points"] == 0
    out["everywhere"] = equal
    out["engine"] = "explicit settled"
    if not equal:
        out["next_differs"], out["outputs_differ"] = every["next_differs"], every["outputs_differ"]
        out.update(_settled_json(every, old.model.states))
    seqs = []
    for c in checks:
        if c.sequence is None:
            continue
        other = new if c.design is old else old
        states = [packed(c.code, v) for v in c.sequence.codes()] if c.sequence.length() <= 1 << 20 else None
        d = None if states is None else settled_differences(c.design, other, states, budget)
        entry = {"file": c.pos.file, "check": c.name, "sequence": c.sequence.describe(),
                 "equal": None if d is None else d["points"] == 0}
        if d is not None and d["points"]:
            entry.update(_settled_json(d, c.design.model.states))
        seqs.append(entry)
    out["sequences"] = seqs
    out["status"] = "equal" if equal else "differs"
    out["differs"] = not equal
    return out


def bounded_compare(old: Design, new: Design, checks: list[Check], opts: Options) -> dict:
    """:func:`compare_designs` under ``opts.timeout`` with a hard stop; out of time is open, never equal."""
    res, _, finished = run_bounded(lambda b: compare_designs(old, new, checks, opts, b), opts.timeout, opts.isolate)
    if finished:
        return res
    return {"name": new.name, "status": f"open (ran out of time after {opts.timeout:g} s)",
            "differs": False, "open": True}


def _claim_keys(checks: list[Check], results: dict[int, list[Result]]) -> dict[tuple, Result]:
    keyed: dict[tuple, Result] = {}
    for c in checks:
        seen: dict[str, int] = {}
        for r in results[id(c)]:
            k = seen.get(r.claim, 0)
            seen[r.claim] = k + 1
            keyed[(c.name, r.claim, k)] = r
    return keyed


def compare_claims(old_checks: list[Check], new_checks: list[Check], opts: Options) -> dict:
    """Run both files' claims; pair them by check name, claim kind and order."""
    ro = _claim_keys(old_checks, {id(c): run_check(c, opts) for c in old_checks})
    rn = _claim_keys(new_checks, {id(c): run_check(c, opts) for c in new_checks})

    def entry(k, r_old: Optional[Result], r_new: Optional[Result]) -> dict:
        r = r_new or r_old
        assert r is not None
        return {"check": k[0], "claim": k[1], "index": k[2], "line": r.line,
                "old": None if r_old is None else r_old.status, "new": None if r_new is None else r_new.status,
                "summary": r.summary}

    now_failing, now_holding, changed = [], [], []
    for k, r in rn.items():
        o = ro.get(k)
        if o is None:
            continue
        if o.status == PROVED and r.status != PROVED:
            now_failing.append(entry(k, o, r))
        elif o.status != PROVED and r.status == PROVED:
            now_holding.append(entry(k, o, r))
        elif o.status != r.status:
            changed.append(entry(k, o, r))
    return {"now_failing": now_failing, "now_holding": now_holding, "changed": changed,
            "only_old": [entry(k, r, None) for k, r in ro.items() if k not in rn],
            "only_new": [entry(k, None, r) for k, r in rn.items() if k not in ro],
            "results_old": [r.to_json() for r in ro.values()], "results_new": [r.to_json() for r in rn.values()]}


def compare_files(old_path: str, new_path: str, opts: Optional[Options] = None) -> dict:
    """Everything ``compare OLD NEW`` reports, as one JSON-ready dict; ``differs``
    is False only when no design or claim behaves differently (exit 0);
    ``open`` is True when a claim of NEW was left open (time ran out)."""
    opts = opts or Options()
    try:
        old = load_within(old_path, opts.timeout)
        new = load_within(new_path, opts.timeout)
    except LoadTimeout as e:  # open, like a comparison that runs out
        claims = {k: [] for k in ("now_failing", "now_holding", "changed", "only_old", "only_new",
                                  "results_old", "results_new")}
        return {"old": old_path, "new": new_path, "designs": [], "only_old": [], "only_new": [], "claims": claims,
                "differs": False, "reasons": [], "open": True, "unread": [{"file": e.pos.file, "message": e.message}]}
    common = [n for n in old.designs if n in new.designs]
    designs = []
    for n in common:
        uses = [c for c in old.checks if c.design.name == n]
        same_file = {(str(Path(c.pos.file).resolve()), c.name) for c in uses}
        uses += [c for c in new.checks if c.design.name == n and (str(Path(c.pos.file).resolve()), c.name) not in same_file]
        designs.append(bounded_compare(old.designs[n], new.designs[n], uses, opts))
    claims = compare_claims(old.checks, new.checks, opts)
    only_old = [n for n in old.designs if n not in new.designs]
    only_new = [n for n in new.designs if n not in old.designs]
    reasons = [f"design {d['name']}: {d['status']}" for d in designs if d["differs"]]
    reasons += [f"claim {c['claim']} of check {c['check']} held in OLD and is {c['new']} in NEW" for c in claims["now_failing"]]
    reasons += [f"design {n} only in OLD" for n in only_old] + [f"design {n} only in NEW" for n in only_new]
    open_claims = [r for r in claims["results_new"] if r["status"] == "open"] + [d for d in designs if d.get("open")]
    return {"old": old_path, "new": new_path, "designs": designs, "only_old": only_old, "only_new": only_new,
            "claims": claims, "differs": bool(reasons), "reasons": reasons, "open": bool(open_claims)}


def format_compare(res: dict) -> str:
    """The readable report of :func:`compare_files`' result, one string."""
    return "\n".join(compare_lines(res))


CUBES_SHOWN = 32
"""Cubes of one difference the readable report lists; ``--json`` lists them all."""


def _cube_lines(cubes: list[dict]) -> list[str]:
    lines = [f"    {c['text']}" for c in cubes[:CUBES_SHOWN]]
    if len(cubes) > CUBES_SHOWN:
        lines.append(f"    ({CUBES_SHOWN} of {len(cubes)} cubes shown; --json lists every one)")
    return lines


def compare_lines(res: dict) -> list[str]:
    """A readable rendering of :func:`compare_files`' result."""
    lines = [f"{u['file']}: open: {u['message']}" for u in res.get("unread", [])]
    for d in res["designs"]:
        lines.append(f"design {d['name']}: {d['status']}")
        for k in ("inputs", "outputs", "flops"):
            if k in d:
                lines.append(f"  {k}: only in OLD: {', '.join(d[k]['only_old']) or '-'}; only in NEW: {', '.join(d[k]['only_new']) or '-'}")
        if d.get("everywhere") is False:
            lines.append(f"  next state differs for: {', '.join(d['next_differs']) or '-'}; outputs differ: {', '.join(d['outputs_differ']) or '-'}")
            lines.append(f"  differing states and inputs ({count(d['cube_count'], 'cube')}"
                         f"{'' if d['complete'] else ' found; more exist and are not listed'}):")
            lines += _cube_lines(d["cubes"])
        for s in d.get("sequences", []):
            said = "not compared (too many codes for the settled comparison)" if s["equal"] is None else \
                "equal" if s["equal"] else "differs"
            lines.append(f"  on the sequence of check {s['check']} in {s['file']} ({s['sequence']}): {said}")
            if s["equal"] is False:
                lines += _cube_lines(s["cubes"])
    for n in res["only_old"]:
        lines.append(f"design {n}: only in OLD")
    for n in res["only_new"]:
        lines.append(f"design {n}: only in NEW")
    for c in res["claims"]["now_failing"]:
        lines.append(f"claim {c['claim']} (check {c['check']}, line {c['line']}): proved in OLD, {c['new']} in NEW: {c['summary']}")
    others = 0
    for c in res["claims"]["now_holding"]:
        lines.append(f"claim {c['claim']} (check {c['check']}, line {c['line']}): {c['old']} in OLD, proved in NEW")
        others += 1
    for c in res["claims"].get("changed", []):
        lines.append(f"claim {c['claim']} (check {c['check']}, line {c['line']}): {c['old']} in OLD, {c['new']} in NEW")
        others += 1
    for side, word in (("only_old", "OLD"), ("only_new", "NEW")):
        for c in res["claims"].get(side, []):
            lines.append(f"claim {c['claim']} (check {c['check']}, line {c['line']}): only in {word}")
            others += 1
    n = len(res["reasons"])
    if not res["differs"]:
        last = "nothing compared" if res.get("unread") else "no design behaves differently"
    else:
        last = f"{count(n, 'difference')}: " + "; ".join(res["reasons"])
    if others:
        last += (f"; {count(others, 'other verdict change')} listed above, not counted as "
                 f"{'a difference' if others == 1 else 'differences'}")
    lines.append(last)
    return lines

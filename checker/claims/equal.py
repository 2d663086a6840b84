"""The equal claim: two designs behave the same.

``equal D`` and ``equal D on sequence`` pair flops and inputs by name and ask
one SAT question, a miter: is there a state (every state, or a code of the
sequence) and an input under which some next-state bit or some output
differs? Both designs are copied into one and-inverter graph over shared
leaves, so logic they share becomes one node and needs no clause.

``equal D after COND`` pairs nothing. One clock under COND must drive each
design into one state from every state (a SAT question over two copies of
each design). From that pair of reset states the outputs must agree under
every input sequence: a sequential equivalence question on the product
machine, answered by bounded model checking (Biere et al. 1999) for
counterexamples, signal correspondence (van Eijk 2000) for proofs, and
IC3/PDR (Bradley 2011) strengthened with the correspondences where they are
not enough.

With an asynchronous design on either side the designs are compared through
their settled codes, exhaustively (:mod:`checker.claims.equal_async`).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Optional

import numpy as np

from ..elab import Check, Claim, Design
from ..engines.bmc import bmc
from ..engines.budget import Budget, OutOfBudget
from ..engines.correspond import signal_correspondence
from ..engines.induction import k_induction_step
from ..engines.miter import PairedMiter, paired_miter
from ..engines.pdr import Pdr, check_invariant
from ..engines.product import Product, explicit_search, product, simulate_inputs
from ..engines.sat import Encoder, Sat, any_lit, equal_lit
from ..errors import InputError
from ..words import plural
from ..model import TRUE
from ..model.simulate import code_value, eval_states, leaf_arrays
from .common import Options, ReplayError, code_and_decimal, code_text, inputs_text, make_result, replay
from .equal_async import prove_async
from .result import OPEN, PROVED, REFUTED, Result, TraceEntry

UNUSED_LIMIT = 256  # unused codes enumerated by blocking clauses
UNUSED_SHOWN = 16
EXHAUSTIVE_BITS = 22  # engine 'explicit' on paired forms: at most 2^22 (state, input) points
BMC_FIRST = 16  # clocks of BMC before the proof engines run
INDUCTION_FIRST = 2  # k-induction step cases tried (k = 1, 2) before signal correspondence
AUTO_EXPLICIT_STATES = 1 << 16  # engine 'auto' on `after`: explicit search up to this many product states
AUTO_EXPLICIT_INPUTS = 10  # ... and this many input bits
AUTO_EXPLICIT_SHARE = (0.25, 1.0, 4.0)  # ... within a quarter of the time left, at least 1 s (4 s without a timeout)


def code_indices(check: Check) -> list[int]:
    """State indices of the check's code; all flops in declaration order without a code line."""
    return list(check.code) if check.code else list(range(len(check.design.model.states)))


def _names(names: list[str], limit: int = 6) -> str:
    """Names joined by commas; a longer list says how many it shows of how many."""
    shown = ", ".join(names[:limit])
    return shown if len(names) <= limit else f"{shown}, ... ({limit} of {len(names)} shown; --json lists them all)"


def differences(a: Design, b: Design, state: dict[str, int], inputs: dict[str, int]) -> tuple[list[str], list[str]]:
    """(flops whose next values differ, outputs that differ) at one state and input, by simulation."""
    na, oa, _ = a.model.step(state, inputs)
    nb, ob, _ = b.model.step({n: state.get(n, 0) for n in b.model.states}, inputs)
    return [n for n in a.model.states if n in nb and na[n] != nb[n]], [n for n in a.model.outputs if n in ob and oa[n] != ob[n]]


def _paired_trace(check: Check, b: Design, state: dict[str, int], inputs: dict[str, int]) -> list[TraceEntry]:
    """A one-clock trace in both designs, replayed in both."""
    a = check.design
    bidx = [b.model.states.index(a.model.states[i]) for i in code_indices(check)]
    trace = _one_clock(check, b, bidx, state, state, inputs)
    flops, outs = differences(a, b, state, inputs)
    if not flops and not outs:
        raise ReplayError(f"{a.name} and {b.name} agree at code {trace[0].code} under the miter's inputs")
    return trace


def _unused_codes(m: PairedMiter, check: Check, budget: Budget) -> tuple[list[int], bool]:
    """Codes where the designs differ, by blocking clauses; (codes, complete)."""
    names = check.design.model.states
    idx = code_indices(check)
    bits = [m.state_vars[names[i]] for i in idx]
    codes: list[int] = []
    while len(codes) < UNUSED_LIMIT:
        if budget.expired():
            return sorted(codes), False
        if not m.sat.solve([m.differ]):
            return sorted(codes), True
        vals = [m.sat.value(x) for x in bits]
        codes.append(int("".join(map(str, vals)), 2) if vals else 0)
        m.sat.add([-x if v else x for x, v in zip(bits, vals)])
    return sorted(codes), not m.sat.solve([m.differ])


def exhaustive_paired(check: Check, b: Design, chunk: int = 1 << 16) -> Optional[tuple[np.ndarray, np.ndarray]]:
    """Every (code, input) point where ``check.design`` and ``b`` differ, by
    bit-parallel simulation of both designs over all states and inputs; None
    when they are more than EXHAUSTIVE_BITS bits. Returns (codes, input
    codes) of the differing points: codes over the check's code, inputs
    over the inputs in declaration order, most significant first."""
    ma, mb = check.design.model, b.model
    idx = code_indices(check)
    ns, ni = len(idx), len(ma.inputs)
    if ns + ni > EXHAUSTIVE_BITS:
        return None
    bidx = [mb.states.index(ma.states[i]) for i in idx]
    codes_out, ins_out = [], []
    total = 1 << (ns + ni)
    for lo in range(0, total, chunk):
        pts = np.arange(lo, min(total, lo + chunk), dtype=np.uint64)
        codes, ins = pts >> np.uint64(ni), pts & np.uint64((1 << ni) - 1)
        inputs = {n: ((ins >> np.uint64(ni - 1 - k)) & np.uint64(1)).astype(bool) for k, n in enumerate(ma.inputs)}
        va = eval_states(ma, ma.next_lits + ma.output_lits, leaf_arrays(ma, idx, codes, inputs), len(pts))
        vb = eval_states(mb, mb.next_lits + [mb.output_lits[mb.outputs.index(o)] for o in ma.outputs],
                         leaf_arrays(mb, bidx, codes, inputs), len(pts))
        nb = [vb[mb.states.index(q)] for q in ma.states] + vb[len(mb.states):]
        bad = np.zeros(len(pts), dtype=bool)
        for x, y in zip(va, nb):
            bad |= x ^ y
        codes_out.append(codes[bad])
        ins_out.append(ins[bad])
    return np.concatenate(codes_out), np.concatenate(ins_out)


def _prove_exhaustive(check: Check, claim: Claim, b: Design, opts: Options) -> Optional[Result]:
    got = exhaustive_paired(check, b)
    if got is None:
        return None
    a, seq = check.design, check.sequence
    on_seq = claim.mode == "sequence"
    codes, ins = got
    member = seq.member_array(codes) if seq is not None else np.ones(len(codes), dtype=bool)
    details: dict = {"engine": "exhaustive simulation", "points": 1 << (len(code_indices(check)) + len(a.model.inputs))}
    where = f"in every code of the sequence ({seq.describe()})" if on_seq else "in every state"
    pick = np.flatnonzero(member) if (on_seq or member.any()) else np.arange(len(codes))
    if not len(pick):
        return make_result(check, claim, PROVED, f"{a.name} and {b.name} have the same next state and outputs {where}",
                           details=details)
    j = int(pick[0])
    idx = code_indices(check)
    w = len(idx)
    state = {a.model.states[i]: (int(codes[j]) >> (w - 1 - k)) & 1 for k, i in enumerate(idx)}
    ni = len(a.model.inputs)
    inputs = {n: (int(ins[j]) >> (ni - 1 - k)) & 1 for k, n in enumerate(a.model.inputs)}
    lines: list[str] = []
    if not on_seq and seq is not None and not member.any():
        unused = sorted({int(c) for c in codes})
        details.update({"only_unused": True, "unused_codes": unused[:UNUSED_LIMIT], "unused_count": len(unused),
                        "unused_count_exact": True})
        lines = _unused_lines(check, b, unused, True, opts.radix)
    return _refuted_paired(check, claim, b, state, inputs, details, lines, opts.radix)


def _prove_paired(check: Check, claim: Claim, opts: Options, budget: Budget) -> Result:
    a, b = check.design, claim.other
    assert b is not None
    on_seq = claim.mode == "sequence"
    seq = check.sequence
    if opts.engine == "explicit":
        done = _prove_exhaustive(check, claim, b, opts)
        if done is not None:
            return done
    member = seq.member(a.model.aig, check.code_lits()) if seq is not None else None
    m = paired_miter(a.model, b.model, opts.solver, member)
    where = f"in every code of the sequence ({seq.describe()})" if on_seq else "in every state"
    try:
        details = {"engine": "sat miter", "solver": opts.solver, "compared": len(m.diffs)}
        assume = [m.differ] + ([m.restrict] if on_seq else [])
        if not m.sat.solve(assume):
            return make_result(check, claim, PROVED, f"{a.name} and {b.name} have the same next state and outputs {where}",
                               details=details)
        if on_seq or seq is None:
            return _refuted_paired(check, claim, b, *m.read(), details, [], opts.radix)
        state, inputs = m.read()
        if m.sat.solve([m.differ, m.restrict]):
            return _refuted_paired(check, claim, b, *m.read(), details, [], opts.radix)
        # differs, but never in a code of the sequence: only on unused codes
        codes, complete = _unused_codes(m, check, budget)
        details.update({"only_unused": True, "unused_codes": codes, "unused_count": len(codes),
                        "unused_count_exact": complete})
        return _refuted_paired(check, claim, b, state, inputs, details,
                                   _unused_lines(check, b, codes, complete, opts.radix), opts.radix)
    finally:
        m.sat.close()


def _unused_lines(check: Check, b: Design, codes: list[int], complete: bool, radix: str = "dec") -> list[str]:
    shown = ", ".join(code_text(c, check.width, radix) for c in codes[:UNUSED_SHOWN])
    more = "" if len(codes) <= UNUSED_SHOWN else f", ... ({UNUSED_SHOWN} of {len(codes)} shown; --json lists them all)"
    count = f"{len(codes)}" if complete else f"at least {len(codes)}"
    return [f"the designs agree on every code of the sequence; they differ only on unused codes ({count}): {shown}{more}",
            f"that matters for lockout: recovery from unused codes may differ from {b.name}'s"]


def _refuted_paired(check: Check, claim: Claim, b: Design, state, inputs, details: dict, lines: list[str],
                    radix: str = "dec") -> Result:
    a = check.design

    def f(code: Optional[int]) -> str:
        return "-" if code is None else code_and_decimal(code, check.width, radix)
    trace = _paired_trace(check, b, state, inputs)
    flops, outs = differences(a, b, state, inputs)
    details = dict(details, flops_differ=flops, outputs_differ=outs)
    c = trace[0].code
    what = []
    if flops:
        what.append(f"{a.name} goes to {f(trace[1].code)}, {b.name} to {f(trace[1].other_code)}")
    if outs:
        what.append(f"{plural('output', len(outs))} {_names(outs)} {plural('differs', len(outs), 'differ')}")
    summary = f"at code {f(c)} under {inputs_text(None, inputs)}: {'; '.join(what)}"
    if details.get("only_unused"):
        summary += " (an unused code: the designs agree on the sequence)"
    ev = [f"clock 0: code {f(c)} ({b.name}: {f(trace[0].other_code)}), inputs {inputs_text(None, inputs)}",
          f"clock 1: {a.name} goes to {f(trace[1].code)}, {b.name} to {f(trace[1].other_code)}"]
    if outs:
        _, oa, _ = a.model.step(state, inputs)
        _, ob, _ = b.model.step({n: state.get(n, 0) for n in b.model.states}, inputs)
        ev.append(f"{plural('output', len(outs))} that {plural('differs', len(outs), 'differ')} at clock 0:")
        ev += [f"  {n}: {a.name} gives {oa[n]}, {b.name} gives {ob[n]}" for n in outs]
    return make_result(check, claim, REFUTED, summary, trace=trace, details=details, evidence=ev + lines)


# --- equal after COND --------------------------------------------------------
@dataclass
class Reset:
    """The outcome of one clock under COND from every state of one design.

    ``state``: the single state reached (bits in ``model.states`` order), or
    None; ``undetermined``: flops that can end up 0 or 1; ``runs``: two
    (state, inputs) pairs that end in different states; ``inputs``: an input
    meeting COND.
    """

    state: Optional[list[int]]
    undetermined: list[str]
    runs: list[tuple[dict[str, int], dict[str, int]]]
    inputs: dict[str, int]


def reset_state(design: Design, cond: int, solver: str, budget: Budget) -> Optional[Reset]:
    """Does one clock with inputs meeting ``cond`` drive ``design`` into one state
    from every state? Two copies from free states under free inputs meeting
    ``cond``: UNSAT of 'some next-state bit differs' proves it. Otherwise the
    undetermined flops are collected by asking again for a flop not yet seen
    differing. None: no input meets ``cond``."""
    m = design.model
    with Sat(solver) as sat:
        enc = Encoder(m.aig, sat)
        copies = []
        for _ in range(2):
            leaves = {l >> 1: sat.new_var() for l in m.state_lits + m.input_lits}
            e = enc.new_env(leaves)
            sat.add([enc.lit(e, cond)])
            copies.append((e, enc.lits(e, m.next_lits)))
        (e1, n1), (e2, n2) = copies
        if not sat.solve():
            return None

        def read(e):
            st = {n: sat.value(enc.lit(e, l)) for n, l in zip(m.states, m.state_lits)}
            ins = {n: sat.value(enc.lit(e, l)) for n, l in zip(m.inputs, m.input_lits)}
            return st, ins

        first_inputs = read(e1)[1]
        reset = [sat.value(x) for x in n1]
        diff = {n: -equal_lit(sat, x, y) for n, x, y in zip(m.states, n1, n2)}
        seen: list[str] = []
        runs: list = []
        while True:
            budget.check()
            left = [d for n, d in diff.items() if n not in seen]
            if not left or not sat.solve([any_lit(sat, left)]):
                break
            if not runs:
                runs = [read(e1), read(e2)]
            seen += [n for n, d in diff.items() if n not in seen and sat.value(d)]
        order = [n for n in m.states if n in seen]
        return Reset(None if order else reset, order, runs, first_inputs)


def _prove_after(check: Check, claim: Claim, opts: Options, budget: Budget) -> Result:
    a, b = check.design, claim.other
    assert b is not None and claim.cond is not None and claim.other_cond is not None
    try:
        ra = reset_state(a, claim.cond, opts.solver, budget)
        rb = reset_state(b, claim.other_cond, opts.solver, budget)
    except OutOfBudget:
        return make_result(check, claim, OPEN, "ran out of time deciding whether the condition resets both designs",
                           details={"depth": 0})
    if ra is None or rb is None:
        raise InputError(claim.pos, f"no input meets the condition of 'equal {b.name} after'")
    if ra.state is None or rb.state is None:
        return _undetermined(check, claim, b, ra, rb)
    prod = product(a.model, b.model)
    init = ra.state + rb.state
    res = after_engines(prod, init, opts, budget)
    details = {"engine": res.engine, "depth": res.depth, "reset_code": code_value(a.model, code_indices(check), dict(zip(a.model.states, ra.state))),
               "other_reset_code": code_value(b.model, list(range(len(b.model.states))), dict(zip(b.model.states, rb.state)))}
    details.update(res.details)
    if res.status == PROVED:
        return make_result(check, claim, PROVED,
                           f"after one clock with the condition, {a.name} and {b.name} give the same outputs under every input sequence"
                           f" ({res.engine})", details=details)
    if res.status == OPEN:
        return make_result(check, claim, OPEN, f"outputs agree for the first {res.depth} {plural('clock', res.depth)} after the condition; no proof within the budget",
                           details=details)
    assert res.inputs is not None
    trace, values = _after_trace(check, b, prod, init, ra.inputs, res.inputs)
    outs = list(values)
    details["outputs_differ"] = outs
    details["output_values"] = {n: {a.name: va, b.name: vb} for n, (va, vb) in values.items()}
    details.pop("depth", None)
    summary = (f"{plural('output', len(outs))} {_names(outs)} of {a.name} and {b.name} "
               f"{plural('differs', len(outs), 'differ')} at clock {trace[-1].clock} (the condition applied at clock 0)")
    ev = [f"clock 0: any state, inputs meeting the condition ({inputs_text(None, ra.inputs)})"]
    wb = len(b.model.states)

    def f(code: Optional[int], width: int) -> str:
        return "-" if code is None else code_and_decimal(code, width, opts.radix)
    ev += [f"clock {t.clock}: code {f(t.code, check.width)} ({b.name}: {f(t.other_code, wb)}), "
           f"inputs {inputs_text(None, t.inputs or {})}" for t in trace[1:]]
    ev.append(f"{plural('output', len(outs))} that {plural('differs', len(outs), 'differ')} at clock "
              f"{trace[-1].clock}, under inputs {inputs_text(None, trace[-1].inputs or {})}:")
    ev += [f"  {n}: {a.name} gives {va}, {b.name} gives {vb}" for n, (va, vb) in values.items()]
    return make_result(check, claim, REFUTED, summary, trace=trace, details=details, evidence=ev)


def _undetermined(check: Check, claim: Claim, b: Design, ra: Reset, rb: Reset) -> Result:
    a = check.design
    bad = ra if ra.state is None else rb
    badd = a if ra.state is None else b
    (s1, i1), (s2, i2) = bad.runs
    runs = []
    for st, ins in ((s1, i1), (s2, i2)):
        sa = st if badd is a else {n: 0 for n in a.model.states}
        sb = st if badd is b else {n: 0 for n in b.model.states}
        runs.append(_after_prefix(check, b, sa, sb, ins))
    undet = {d.name: r.undetermined for d, r in ((a, ra), (b, rb)) if r.state is None}
    names = "; ".join(f"{d}: {_names(f, 8)}" for d, f in undet.items())
    summary = f"one clock with the condition does not settle every flop ({names})"
    details = {"undetermined": undet, "second_trace": [t.to_json() for t in runs[1]]}
    ev = [f"{d}: flops left undetermined: {', '.join(f)}" for d, f in undet.items()]
    ev.append(f"two runs of {badd.name} under the condition end in different states (trace and second_trace)")
    return make_result(check, claim, REFUTED, summary, trace=runs[0], details=details, evidence=ev)


def _after_prefix(check: Check, b: Design, sa: dict[str, int], sb: dict[str, int], ins: dict[str, int]) -> list[TraceEntry]:
    """One clock from (sa, sb) under ``ins``, replayed in both designs."""
    return _one_clock(check, b, list(range(len(b.model.states))), sa, sb, ins)


def _one_clock(check: Check, b: Design, bidx: list[int], sa: dict[str, int], sb: dict[str, int],
               ins: dict[str, int]) -> list[TraceEntry]:
    """A two-entry trace: this design from ``sa`` and ``b`` from ``sb`` (code bits ``bidx``)
    under ``ins`` for one clock, replayed in both designs."""
    a = check.design
    idx = code_indices(check)
    na, _, _ = a.model.step(sa, ins)
    nb, _, _ = b.model.step(sb, ins)
    trace = [TraceEntry(0, code_value(a.model, idx, sa), dict(ins), code_value(b.model, bidx, sb)),
             TraceEntry(1, code_value(a.model, idx, na), None, code_value(b.model, bidx, nb))]
    replay(a, check, trace, code=idx)
    replay(b, check, [TraceEntry(t.clock, t.other_code, t.inputs) for t in trace], code=bidx)
    return trace


def _after_trace(check: Check, b: Design, prod: Product, init: list[int], cond_inputs: dict[str, int],
                 inputs: list[dict[str, int]]) -> tuple[list[TraceEntry], dict[str, tuple[int, int]]]:
    """Clock 0 from all-zero states under the condition, then ``inputs``; replayed in both designs.
    Also the outputs that differ at the last clock: name -> (this design's value, the other's)."""
    a = check.design
    ma, mb = a.model, b.model
    idx = code_indices(check)
    bidx = list(range(len(mb.states)))
    states = simulate_inputs(prod.model, init, inputs[:-1])
    na = prod.na
    trace = [TraceEntry(0, 0, dict(cond_inputs), 0)]
    for t, (st, ins) in enumerate(zip(states, inputs)):
        sa = dict(zip(ma.states, st[:na]))
        sb = dict(zip(mb.states, st[na:]))
        trace.append(TraceEntry(t + 1, code_value(ma, idx, sa), dict(ins), code_value(mb, bidx, sb)))
    replay(a, check, trace, code=idx)
    replay(b, check, [TraceEntry(t.clock, t.other_code, t.inputs) for t in trace], code=bidx)
    last = states[-1]
    _, oa, _ = ma.step(dict(zip(ma.states, last[:na])), inputs[-1])
    _, ob, _ = mb.step(dict(zip(mb.states, last[na:])), inputs[-1])
    outs = [n for n in ma.outputs if n in ob and oa[n] != ob[n]]
    if not outs:
        raise ReplayError(f"the outputs of {a.name} and {b.name} agree at the end of the counterexample")
    return trace, {n: (oa[n], ob[n]) for n in outs}


@dataclass
class AfterResult:
    """What the sequential engines found: status, the engine that decided, depth."""

    status: str
    engine: str
    depth: int
    inputs: Optional[list[dict[str, int]]] = None
    details: dict = field(default_factory=dict)


def after_engines(prod: Product, init: list[int], opts: Options, budget: Budget,
                  bmc_first: int = BMC_FIRST, correspondence: bool = True) -> AfterResult:
    """Do the outputs of the product machine agree forever from ``init``?

    BMC for ``bmc_first`` clocks, then the step case of k-induction for k up
    to INDUCTION_FIRST, then signal correspondence (skipped when
    ``correspondence`` is False), then IC3/PDR under the correspondences.
    Proved only by a closed argument: an exhausted explicit search, an
    inductive correspondence that implies the outputs agree, or a PDR
    invariant that an independent check confirms.
    """
    m, bad = prod.model, prod.bad
    depth = 0

    def at(d: int) -> None:
        nonlocal depth
        depth = max(depth, d)
        budget.report(depth=depth)

    note: dict = {}
    if opts.engine in ("explicit", "auto"):
        # 'auto' tries explicit search first, within a share of the time: with
        # few reachable product states it decides in a fraction of a second
        # what the SAT engines may not decide at all (a counterexample deeper
        # than BMC reaches, an invariant PDR learns clause by clause;
        # tests/perf/RESULTS_equal.md); past the caps it gives up at once.
        cap = {} if opts.engine == "explicit" else {"max_states": AUTO_EXPLICIT_STATES, "max_inputs": AUTO_EXPLICIT_INPUTS}
        first = budget if opts.engine == "explicit" else budget.share(*AUTO_EXPLICIT_SHARE)
        ex = explicit_search(m, init, bad, budget=first, **cap)
        if ex is not None:
            det = {"product_states": ex.states}
            if ex.inputs is None:
                return AfterResult(PROVED, "explicit product-machine search", ex.depth, details=det)
            return AfterResult(REFUTED, "explicit product-machine search", len(ex.inputs) - 1, ex.inputs, det)
        if opts.engine == "explicit":
            note = {"explicit": "the product machine is too large for explicit search; SAT engines used"}
    r = bmc(m, init, bad, bmc_first, budget, opts.solver, at)
    if r.inputs is not None:
        return AfterResult(REFUTED, "bmc", len(r.inputs) - 1, r.inputs, dict(note))
    if budget.expired():
        return AfterResult(OPEN, "bmc", depth, details=dict(note))
    # k-induction (Sheeran et al. 2000), base case by the BMC above: one or two
    # SAT calls that prove a re-encoded counter whose decoded outputs are
    # inductive (tests/perf/RESULTS_hard_equal.md)
    ki = k_induction_step(m, bad, min(INDUCTION_FIRST, r.depth), budget, opts.solver)
    if ki.proved:
        return AfterResult(PROVED, "k-induction", depth, details=dict(note, induction_depth=ki.k))
    constraint, det = TRUE, dict(note)
    if correspondence:
        sc = signal_correspondence(m, init, bad, budget, opts.solver)
        det.update({"correspondences": len(sc.pairs), "candidates": sc.candidates, "refinement_rounds": sc.rounds})
        if sc.status == "proved":
            return AfterResult(PROVED, "signal correspondence", depth, details=det)
        if sc.status == "open":
            return AfterResult(OPEN, "signal correspondence", depth, details=det)
        constraint = sc.constraint
    p = Pdr(m, init, bad, constraint=constraint, solver=opts.solver, budget=budget).run(on_depth=at)
    det.update({"pdr_frames": p.frames, "pdr_sat_calls": p.sat_calls})
    if p.status == "proved":
        if not check_invariant(m, init, bad, p.invariant, constraint, opts.solver):
            raise AssertionError("IC3/PDR returned an invariant that does not check")
        det["invariant_clauses"] = len(p.invariant)
        name = "ic3/pdr with signal correspondence" if correspondence else "ic3/pdr"
        return AfterResult(PROVED, name, max(depth, p.depth), details=det)
    if p.status == "refuted":
        assert p.inputs is not None
        # the shortest counterexample, by BMC up to PDR's length
        r = bmc(m, init, bad, len(p.inputs), Budget(), opts.solver)
        inputs = r.inputs if r.inputs is not None else p.inputs
        return AfterResult(REFUTED, "ic3/pdr, shortened by bmc", len(inputs) - 1, inputs, det)
    return AfterResult(OPEN, "ic3/pdr", max(depth, p.depth), details=det)


def prove(check: Check, claim: Claim, opts: Options, budget: Budget) -> Result:
    """Prove or refute one ``equal`` claim (see the module docstring)."""
    if not (check.design.model.synchronous and claim.other is not None and claim.other.model.synchronous):
        return prove_async(check, claim, opts, budget)
    if claim.mode == "after":
        return _prove_after(check, claim, opts, budget)
    return _prove_paired(check, claim, opts, budget)

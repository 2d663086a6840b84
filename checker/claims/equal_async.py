"""`equal` when either design is asynchronous: the two designs compared through their settled codes.

One clock of an asynchronous design is a cascade whose every order may settle
in its own code (shared/LANGUAGE.md, "The event model"); a synchronous design
is the special case with one settled code. The explicit cascade engine
(:mod:`checker.engines.cascade`) gives, for a state and inputs, every code
some order settles in. Two designs agree at a state and input when their
outputs agree there, every order of each settles, and all of those orders
settle in one and the same code (flops paired by name). When some order of
one settles elsewhere than some order of the other, that pair of orders is
the refutation: the real circuits may take either, so no proof can rest on
which one they take.

* ``equal D`` and ``equal D on sequence``: every state (or code of the
  sequence) under every input, start by start.
* ``equal D after COND``: one clock under COND from every state must settle
  each design in one state (else refuted, naming the flops left
  undetermined); then the product of the two settled-successor relations is
  searched breadth first from that pair of states, every reachable pair under
  every input, outputs compared at each (an explicit product machine search).

Both are exhaustive and limited (:data:`MAX_POINTS`, :data:`MAX_PAIRS`,
:data:`MAX_INPUT_BITS`); past a limit (or with ``--engine sat``) the claim
goes to the firings miter (:mod:`checker.claims.equal_wide`), and ``compare``
says it cannot take the designs.
"""

from __future__ import annotations

from collections import deque
from typing import Iterator, Optional

from ..elab import Check, Claim, Design
from ..engines.budget import Budget, OutOfBudget
from ..errors import InputError
from ..engines.cascade import CascadeLimit, Exploration, Outcome, never_settling, settling_in
from ..model.aig import evaluate
from ..model.events import EventModel, Firing, packed, unpacked
from .common import Options, code_and_decimal, inputs_text, make_result, replay
from .clocking import input_rows
from .equal_wide import differ_lines, prove_after_wide, prove_paired_wide
from .result import OPEN, PROVED, REFUTED, Result, TraceEntry

MAX_POINTS = 1 << 18
"""Most (state, input) points the paired forms visit."""

MAX_PAIRS = 1 << 14
"""Most pairs of states the ``after`` form's product search visits."""

MAX_INPUT_BITS = 12
"""Most input bits either form enumerates."""


class Settler:
    """Every order of one clock of one design, per (state integer, inputs), memoised."""

    def __init__(self, design: Design) -> None:
        self.design = design
        self.model = design.model
        self._ems: dict[tuple, EventModel] = {}
        self._memo: dict[tuple, tuple[Exploration, object, Outcome]] = {}

    def em(self, inputs: dict[str, int]) -> EventModel:
        key = tuple(sorted(inputs.items()))
        e = self._ems.get(key)
        if e is None:
            e = self._ems[key] = EventModel(self.model, inputs)
        return e

    def settle(self, state: int, inputs: dict[str, int]) -> tuple[Exploration, object, Outcome]:
        """(exploration, root cascade, outcome) of the clock from ``state`` under ``inputs``."""
        key = (state, tuple(sorted(inputs.items())))
        hit = self._memo.get(key)
        if hit is None:
            ex = Exploration(self.em(inputs))
            root, out = ex.explore(state)
            hit = (ex, root, out)
            if len(self._memo) < 1 << 16:
                self._memo[key] = hit
        return hit

    def outputs(self, state: int, inputs: dict[str, int]) -> dict[str, int]:
        """The outputs at ``state`` under ``inputs`` (before the edge)."""
        m = self.model
        lv: dict[int, object] = {l >> 1: (state >> i) & 1 for i, l in enumerate(m.state_lits)}
        lv.update({l >> 1: inputs.get(n, 0) & 1 for n, l in zip(m.inputs, m.input_lits)})
        return dict(zip(m.outputs, evaluate(m.aig, lv, m.output_lits, 1)))


def _mapping(a: Design, b: Design) -> list[int]:
    """For each state bit of ``a``, the index of the flop of the same name in ``b``."""
    return [b.model.states.index(n) for n in a.model.states]


def _to_b(state: int, pos: list[int]) -> int:
    return sum(((state >> i) & 1) << j for i, j in enumerate(pos))


def _to_a(state: int, pos: list[int]) -> int:
    return sum(((state >> j) & 1) << i for i, j in enumerate(pos))


def _limit(check: Check, claim: Claim) -> Optional[str]:
    """Why the explicit settled comparison cannot take this claim, or None."""
    a, b = check.design, claim.other
    assert b is not None
    n_in = len(a.model.inputs)
    if n_in > MAX_INPUT_BITS:
        return f"{n_in} input bits (the settled comparison enumerates up to {MAX_INPUT_BITS})"
    if claim.mode == "after":
        return None
    seq = check.sequence
    starts = seq.length() if claim.mode == "sequence" and seq is not None else 1 << len(a.model.states)
    if starts << n_in > MAX_POINTS:
        return (f"{starts} states under {2 ** n_in} inputs (the settled comparison visits up to "
                f"{MAX_POINTS:,} points)")
    return None


def prove_async(check: Check, claim: Claim, opts: Options, budget: Budget) -> Result:
    """Prove or refute ``equal`` with an asynchronous design on either side (see the module docstring).
    Every form goes to the firings miter (:mod:`checker.claims.equal_wide`) with ``--engine sat``,
    and with ``auto`` past the explicit search's limits; the ``after`` form also when the
    explicit search stops at one, and first from :data:`AFTER_EXPLICIT_STATES` points."""
    why = _limit(check, claim)
    if claim.mode == "after" and opts.engine == "sat":
        return prove_after_wide(check, claim, opts, budget)
    if claim.mode == "after" and opts.engine == "auto":
        first, then = (_wide, _exact) if why is not None or _after_wide(check, claim) else (_exact, _wide)
        res = first(check, claim, opts, budget, why)
        if res.status == OPEN and not budget.expired() and (then is _wide or why is None):
            other = then(check, claim, opts, budget, why)
            other.evidence.insert(0, f"{res.details.get('engine')} stopped first: {res.summary}")
            return other
        return res
    if opts.engine == "sat" or (opts.engine == "auto" and why is not None):
        res = prove_paired_wide(check, claim, opts, budget)
        if why is not None:
            res.evidence.insert(0, f"the exhaustive settled comparison cannot take this claim: {why}")
        return res
    return _explicit(check, claim, opts, budget, why)


def _wide(check: Check, claim: Claim, opts: Options, budget: Budget, why: Optional[str]) -> Result:
    return prove_after_wide(check, claim, opts, budget)


def _exact(check: Check, claim: Claim, opts: Options, budget: Budget, why: Optional[str]) -> Result:
    return _explicit(check, claim, opts, budget, why)


AFTER_EXPLICIT_STATES = 1 << 10
"""With ``auto``, ``equal ... after`` goes to the explicit search first up to this many (state,
input) points in each design, and to the firings miter first past it (an 8-bit ripple counter
against a synchronous one: 4.5 s explicit, 0.1 s by the miter, tests/perf/RESULTS_async_wide.md);
either way the other follows when the first is open with time left."""


def _after_wide(check: Check, claim: Claim) -> bool:
    """Whether the explicit reset search of ``equal ... after`` would visit more than
    :data:`AFTER_EXPLICIT_STATES` (state, input) points in either design."""
    b = claim.other
    assert b is not None
    n_in = len(check.design.model.inputs)
    return any((1 << len(d.model.states)) << n_in > AFTER_EXPLICIT_STATES for d in (check.design, b))


def _explicit(check: Check, claim: Claim, opts: Options, budget: Budget, why: Optional[str]) -> Result:
    """The explicit settled comparison, or ``open`` saying why it cannot take the claim."""
    if why is not None:
        return make_result(check, claim, OPEN, f"an asynchronous design is compared through its settled codes "
                           f"by an exhaustive search, which cannot take this one: {why}",
                           details={"engine": "explicit settled", "depth": None})
    try:
        if claim.mode == "after":
            return _after(check, claim, opts, budget)
        return _paired(check, claim, opts, budget)
    except (CascadeLimit, OutOfBudget) as e:
        what = f"the explicit cascade engine reached its limit: {e}" if isinstance(e, CascadeLimit) \
            else "ran out of time comparing settled codes"
        return make_result(check, claim, OPEN, what, details={"engine": "explicit settled", "depth": None})


# --- paired forms ----------------------------------------------------------------------------------

def paired_points(check: Check, b: Design, on_sequence: bool) -> Iterator[tuple[int, dict[str, int]]]:
    """Every (state integer of the check's design, inputs) the paired forms visit."""
    a = check.design
    combos = input_rows(a.model)
    if on_sequence and check.sequence is not None:
        states: Iterator[int] = (packed(check.code, c) for c in check.sequence.codes())
    else:
        states = iter(range(1 << len(a.model.states)))
    for s in states:
        for inputs in combos:
            yield s, inputs


def first_difference(sa: Settler, sb: Settler, pos: list[int], state: int, inputs: dict[str, int],
                     sets: bool = False) -> Optional[dict]:
    """How the two designs differ at one (state, inputs), or None when they agree: outputs,
    an order that never settles, or two orders that settle in different codes. With ``sets``
    (what ``compare`` asks: did an edit change what can happen?) they agree when they can
    settle in the same codes and never settle alike, even if some order decides between codes."""
    oa, ob = sa.outputs(state, inputs), sb.outputs(_to_b(state, pos), inputs)
    outs = [n for n in sa.model.outputs if oa[n] != ob.get(n)]
    exa, ra, outa = sa.settle(state, inputs)
    exb, rb, outb = sb.settle(_to_b(state, pos), inputs)
    set_a = sorted(outa.settled)
    set_b = sorted(_to_a(x, pos) for x in outb.settled)
    if sets and outa.never == outb.never and set_a == set_b and not outs:
        return None
    for who, ex, root, out in (("a", exa, ra, outa), ("b", exb, rb, outb)):
        if out.never and not (sets and outa.never == outb.never):
            return {"kind": "never", "who": who, "order": never_settling(ex, root), "outputs": outs}
    if sets:
        only = sorted(set(set_a) ^ set(set_b))
        if only:
            x = only[0] if only[0] in set_a else set_a[0] if set_a else only[0]
            y = only[0] if only[0] in set_b else set_b[0] if set_b else only[0]
            return {"kind": "settled", "outputs": outs, "a": x, "b": y, "set_a": set_a, "set_b": set_b}
        return {"kind": "outputs", "outputs": outs, "set_a": set_a, "set_b": set_b}
    pair = next(((x, y) for x in set_a for y in set_b if x != y), None)
    if pair is None and not outs:
        return None
    x, y = pair if pair is not None else (set_a[0], set_b[0])
    return {"kind": "settled" if pair is not None else "outputs", "outputs": outs,
            "a": x, "b": y, "order_a": settling_in(exa, ra, x), "order_b": settling_in(exb, rb, _to_b(y, pos)),
            "set_a": set_a, "set_b": set_b}


def _paired(check: Check, claim: Claim, opts: Options, budget: Budget) -> Result:
    a, b = check.design, claim.other
    assert b is not None
    pos = _mapping(a, b)
    sa, sb = Settler(a), Settler(b)
    on_seq = claim.mode == "sequence"
    seq = check.sequence
    visited = 0
    for k, (state, inputs) in enumerate(paired_points(check, b, on_seq)):
        if k % 256 == 0:
            budget.check(k)
        visited += 1
        diff = first_difference(sa, sb, pos, state, inputs)
        if diff is not None:
            return _refute_paired(check, claim, b, pos, state, inputs, diff, opts)
    where = f"in every code of the sequence ({seq.describe()})" if on_seq and seq is not None else "in every state"
    return make_result(check, claim, PROVED, f"{a.name} and {b.name} settle in the same code, by every order, and "
                       f"give the same outputs {where}", details={"engine": "explicit settled", "points": visited})


def _events(check: Check, model, firings: list[Firing], idx: list[int]) -> list[dict]:
    return [{"flop": model.states[f.flop], "value": f.value, "code": unpacked(idx, f.code), "depth": f.depth}
            for f in firings]


def _order_text(model, firings: list[Firing]) -> str:
    return ", ".join(f"{model.states[f.flop]} -> {f.value}" for f in firings) or "nothing fires"


def _refute_paired(check: Check, claim: Claim, b: Design, pos: list[int], state: int, inputs: dict[str, int],
                   diff: dict, opts: Options) -> Result:
    a = check.design
    idx = list(check.code)
    bidx = [pos[i] for i in idx]
    code = unpacked(idx, state)

    def f(c: int) -> str:
        return code_and_decimal(c, check.width, opts.radix)
    where = f"at code {f(code)} under {inputs_text(None, inputs)}"
    details: dict = {"engine": "explicit settled", "outputs_differ": diff["outputs"]}
    if diff["kind"] == "never":
        d = a if diff["who"] == "a" else b
        order = diff["order"]
        summary = f"{where}: an order of {d.name}'s firings never settles"
        ev = [summary, f"  {d.name}: {_order_text(d.model, order)} (back to a cascade it has met)"]
        if d is a:
            trace = [TraceEntry(0, code, dict(inputs), events=_events(check, a.model, order, idx))]
            replay(a, check, trace)
        else:
            trace = [TraceEntry(0, code, dict(inputs), other_code=code)]
            replay(b, check, [TraceEntry(0, code, dict(inputs), events=_events(check, b.model, order, bidx))],
                   code=bidx)
        return make_result(check, claim, REFUTED, summary, trace=trace, details=details, evidence=ev)
    oa, ob = diff["order_a"], diff["order_b"]
    trace = [TraceEntry(0, code, dict(inputs), code, _events(check, a.model, oa, idx)),
             TraceEntry(1, unpacked(idx, diff["a"]), None, unpacked(idx, diff["b"]))]
    replay(a, check, trace)
    replay(b, check, [TraceEntry(0, code, dict(inputs), events=_events(check, b.model, ob, bidx)),
                      TraceEntry(1, unpacked(idx, diff["b"]))], code=bidx)
    what = []
    if diff["kind"] == "settled":
        what.append(f"{a.name} can settle in {f(trace[1].code)}, {b.name} in {f(trace[1].other_code)}")
        details.update(settled=[unpacked(idx, x) for x in diff["set_a"]],
                       other_settled=[unpacked(idx, x) for x in diff["set_b"]])
    if diff["outputs"]:
        outs = diff["outputs"]
        what.append(f"output{'s' if len(outs) > 1 else ''} {', '.join(outs[:6])} differ{'' if len(outs) > 1 else 's'}")
    summary = f"{where}: {'; '.join(what)}"
    details["other_events"] = _events(check, b.model, ob, bidx)
    ev = [summary, f"  {a.name}: {_order_text(a.model, oa)} settles in {f(trace[1].code)}",
          f"  {b.name}: {_order_text(b.model, ob)} settles in {f(trace[1].other_code)}"]
    return make_result(check, claim, REFUTED, summary, trace=trace, details=details, evidence=ev)


# --- after COND ------------------------------------------------------------------------------------

def _reset(s: Settler, cond: int, budget: Budget) -> tuple[Optional[int], list, list[str]]:
    """One clock under ``cond`` from every state: (the one settled state or None, the runs
    (state, inputs, order, settled) that show it, the flops left undetermined)."""
    m = s.model
    combos = input_rows(m, cond)
    runs: dict[int, tuple] = {}
    for state in range(1 << len(m.states)):
        budget.check(state)
        for inputs in combos:
            ex, root, out = s.settle(state, inputs)
            if out.never:
                return None, [(state, inputs, never_settling(ex, root), None)], []
            for x in out.settled:
                if x not in runs:
                    runs[x] = (state, inputs, settling_in(ex, root, x), x)
            if len(runs) > 1:
                x, y = sorted(runs)[:2]
                und = [n for i, n in enumerate(m.states) if (x >> i) & 1 != (y >> i) & 1]
                return None, [runs[x], runs[y]], und
    if not runs:
        return None, [], []
    return next(iter(runs)), list(runs.values()), []


def _after(check: Check, claim: Claim, opts: Options, budget: Budget) -> Result:
    a, b = check.design, claim.other
    assert b is not None and claim.cond is not None and claim.other_cond is not None
    sa, sb = Settler(a), Settler(b)
    resets = []
    for d, s, cond in ((a, sa, claim.cond), (b, sb, claim.other_cond)):
        r, runs, und = _reset(s, cond, budget)
        if r is None and not runs:
            raise InputError(claim.pos, f"no input meets the condition of 'equal {b.name} after'")
        if r is None:
            return _undetermined(check, claim, d, runs, und, opts)
        resets.append((r, runs[0]))
    (ra, run_a), (rb, run_b) = resets
    combos = input_rows(a.model)
    parent: dict[tuple[int, int], Optional[tuple]] = {(ra, rb): None}
    queue = deque([(ra, rb)])
    while queue:
        if len(parent) > MAX_PAIRS:
            return make_result(check, claim, OPEN, f"the product of the settled designs has more than {MAX_PAIRS:,} "
                               f"reachable pairs of states (the explicit search's limit)",
                               details={"engine": "explicit settled", "depth": None})
        x, y = queue.popleft()
        budget.check(len(parent))
        for inputs in combos:
            oa, ob = sa.outputs(x, inputs), sb.outputs(y, inputs)
            outs = [n for n in a.model.outputs if oa[n] != ob.get(n)]
            if outs:
                return _after_refute(check, claim, sa, sb, parent, (x, y), inputs, outs, run_a, run_b, opts)
            exa, rta, outa = sa.settle(x, inputs)
            exb, rtb, outb = sb.settle(y, inputs)
            if outa.never or outb.never:
                return _after_never(check, claim, sa, sb, parent, (x, y), inputs, run_a, run_b, opts,
                                    a if outa.never else b)
            for u in outa.settled:
                for v in outb.settled:
                    if (u, v) not in parent:
                        parent[(u, v)] = ((x, y), inputs)
                        queue.append((u, v))
    return make_result(check, claim, PROVED, f"after one clock with the condition, {a.name} and {b.name} give the "
                       f"same outputs under every input sequence and every order of firings "
                       f"({len(parent)} pairs of settled states)",
                       details={"engine": "explicit settled", "pairs": len(parent),
                                "reset_code": unpacked(list(check.code), ra)})


def _path(parent: dict, end: tuple[int, int]) -> list[tuple[tuple[int, int], Optional[dict]]]:
    """[(pair, inputs taken from it)], from the reset pair to ``end`` (whose inputs are None)."""
    out: list = [(end, None)]
    cur = end
    while parent[cur] is not None:
        prev, inputs = parent[cur]
        out.append((prev, inputs))
        cur = prev
    return list(reversed(out))


def _traces(check: Check, claim: Claim, sa: Settler, sb: Settler, parent: dict, end: tuple[int, int],
            last_inputs: dict[str, int], run_a: tuple, run_b: tuple) -> tuple[list[TraceEntry], list[TraceEntry], list]:
    """The traces of both designs: the condition's clock from the run that reached each reset state,
    then the path of pairs, each clock by an order that settles where the path goes; replayed."""
    a, b = check.design, claim.other
    assert b is not None
    idx = list(check.code)
    bidx = list(range(len(b.model.states)))
    path = _path(parent, end)
    ta = [TraceEntry(0, unpacked(idx, run_a[0]), dict(run_a[1]), events=_events(check, a.model, run_a[2], idx))]
    tb = [TraceEntry(0, unpacked(bidx, run_b[0]), dict(run_b[1]), events=_events(check, b.model, run_b[2], bidx))]
    for k, ((x, y), inputs) in enumerate(path):
        nxt = path[k + 1][0] if k + 1 < len(path) else None
        ins = inputs if inputs is not None else last_inputs
        if nxt is None:
            ea = eb = None
        else:
            exa, rta, _ = sa.settle(x, ins)
            exb, rtb, _ = sb.settle(y, ins)
            ea = _events(check, a.model, settling_in(exa, rta, nxt[0]), idx)
            eb = _events(check, b.model, settling_in(exb, rtb, nxt[1]), bidx)
        ta.append(TraceEntry(k + 1, unpacked(idx, x), dict(ins), unpacked(bidx, y), ea))
        tb.append(TraceEntry(k + 1, unpacked(bidx, y), dict(ins), events=eb))
    replay(a, check, ta)
    replay(b, check, tb, code=bidx)
    return ta, tb, path


def _after_refute(check, claim, sa, sb, parent, end, inputs, outs, run_a, run_b, opts) -> Result:
    b = claim.other
    ta, tb, _ = _traces(check, claim, sa, sb, parent, end, inputs, run_a, run_b)
    summary, ev = differ_lines(check, b, ta, outs, opts)
    return make_result(check, claim, REFUTED, summary, trace=ta,
                       details={"engine": "explicit settled", "outputs_differ": outs,
                                "other_trace": [t.to_json() for t in tb]}, evidence=[summary] + ev)


def _after_never(check, claim, sa, sb, parent, end, inputs, run_a, run_b, opts, who: Design) -> Result:
    ta, tb, _ = _traces(check, claim, sa, sb, parent, end, inputs, run_a, run_b)
    s = sa if who is check.design else sb
    x, y = end
    ex, root, _ = s.settle(x if who is check.design else y, inputs)
    order = never_settling(ex, root)
    summary = f"at clock {ta[-1].clock} after the condition an order of {who.name}'s firings never settles"
    ev = [summary, f"  {who.name}: {_order_text(who.model, order)} (back to a cascade it has met)"]
    return make_result(check, claim, REFUTED, summary, trace=ta,
                       details={"engine": "explicit settled", "other_trace": [t.to_json() for t in tb]},
                       evidence=ev)


def _undetermined(check: Check, claim: Claim, d: Design, runs: list, und: list[str], opts: Options) -> Result:
    idx = list(check.code) if d is check.design else list(range(len(d.model.states)))
    m = d.model
    traces = []
    for state, inputs, order, settled in runs:
        t = [TraceEntry(0, unpacked(idx, state), dict(inputs), events=_events(check, m, order, idx))]
        if settled is not None:
            t.append(TraceEntry(1, unpacked(idx, settled)))
        replay(d, check, t, code=idx)
        traces.append(t)
    if not und:
        summary = f"one clock with the condition does not settle {d.name}: an order of its firings never settles"
    else:
        summary = (f"one clock with the condition does not settle every flop ({d.name}: "
                   f"{', '.join(und[:8])}{' ...' if len(und) > 8 else ''})")
    details = {"engine": "explicit settled", "undetermined": {d.name: und}}
    if len(traces) > 1:
        details["second_trace"] = [t.to_json() for t in traces[1]]
    ev = [summary] + [f"  from code {code_and_decimal(unpacked(idx, r[0]), len(idx), opts.radix)} under "
                      f"{inputs_text(None, r[1])}: {_order_text(m, r[2])}" for r in runs]
    trace = traces[0]
    if d is not check.design:  # the other design's run: its code beside, the check's own left at 0
        trace = [TraceEntry(0, 0, trace[0].inputs, trace[0].code)]
    return make_result(check, claim, REFUTED, summary, trace=trace, details=details, evidence=ev)


# --- for compare -----------------------------------------------------------------------------------

def settled_differences(a: Design, b: Design, states: Optional[list[int]], budget: Budget,
                        limit: int = 64) -> Optional[dict]:
    """Where two designs with the same flop names can settle differently (different sets of
    settled codes, or one never settling where the other does, or different outputs), over
    ``states`` (state integers of ``a``; None: every state) under every input, in the shape of
    ``compare``'s cover: differing points as cubes of every flop and input (up to ``limit``),
    the flops whose settled values differ, the outputs that differ. None: beyond the limits."""
    n_in = len(a.model.inputs)
    count = (1 << len(a.model.states)) if states is None else len(states)
    if n_in > MAX_INPUT_BITS or count << n_in > MAX_POINTS:
        return None
    pos = _mapping(a, b)
    sa, sb = Settler(a), Settler(b)
    cubes: list[dict] = []
    flops: set[str] = set()
    outs: set[str] = set()
    combos = input_rows(a.model)
    found = 0
    for k, s in enumerate(range(1 << len(a.model.states)) if states is None else states):
        if k % 64 == 0:
            budget.check(k)
        for inputs in combos:
            d = first_difference(sa, sb, pos, s, inputs, sets=True)
            if d is None:
                continue
            found += 1
            outs.update(d["outputs"])
            if d["kind"] == "settled":
                for x in set(d["set_a"]) ^ set(d["set_b"]):
                    for y in d["set_a"] + d["set_b"]:
                        flops.update(n for i, n in enumerate(a.model.states) if (x >> i) & 1 != (y >> i) & 1)
            elif d["kind"] == "never":
                flops.add("(never settles)")
            if len(cubes) < limit:
                cube = {n: (s >> i) & 1 for i, n in enumerate(a.model.states)}
                cube.update(inputs)
                cubes.append(cube)
    return {"points": found, "cubes": cubes, "complete": found <= limit,
            "next_differs": [n for n in a.model.states if n in flops] + sorted(f for f in flops if f.startswith("(")),
            "outputs_differ": [n for n in a.model.outputs if n in outs]}

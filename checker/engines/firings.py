"""Every order of one clock's firings as one SAT problem: the cascade unrolled firing by firing.

The explicit cascade engine (:mod:`checker.engines.cascade`) walks the orders
of one (code, inputs) at a time, so it cannot visit the 2^32 starts of a
32-bit ripple divider. Here the start code and the inputs are free, and the
event model's cascade (shared/LANGUAGE.md, "The event model") is unrolled
as a transition system over (code, pending changes): at each step a free
index names the flop that fires, and a step whose index names no pending
change fires nothing, which a step may do only once nothing is pending (so L steps
cover every order of at most L firings, each order once).
This is bounded model checking (Biere, Cimatti, Clarke and Zhu 1999) of the
cascade, with the firing order as the nondeterministic input. The step is
the event model's, written as a circuit:

* the fired flop f takes its new value; a flop clocked by the edge f made
  (the right edge, its asynchronous clear and preset not holding in the code
  before the firing) samples its pins on the code *before* the firing, so a
  flop triggered late sees the code that every earlier firing, on any branch
  of the clock tree, has left;
* an asynchronous clear (preset) that holds in the code after the firing
  makes the flop's pending change "to 0 (1)", or cancels a clocked one.

Pending changes always go to the complement of the flop's present value (no
other flop writes it), so a bit per flop says what is pending. For `settle`
each pending change also carries its depth (binary, saturating one past the
bound asked about) and whether an asynchronous clear or preset made it (such
a change keeps its depth when the clear holds on; a clocked one is
replaced); with no asynchronous clear or preset a firing's depth is its
flop's place in the clock tree, so no depth is carried.

**Completeness.** An unrolling of L steps is a complete argument only if no
order has more than L firings. Two ways to know that:

* structurally: with no asynchronous clear or preset, a flop gets a pending
  change only from the system clock's edge or from a firing of its clock
  source, so by induction along the clock tree every flop fires at most once,
  and a flop whose clock chain never reaches the system clock never fires.
  L = the number of flops whose chain reaches the system clock (and the
  depth is at most the longest chain). An asynchronous clear or preset read
  from the inputs alone (a reset pin) is constant for the whole clock, so the
  same holds (:func:`structural_bound`); a SAT proof of that bound would be a
  pigeonhole argument over every order of the flops it clears, which
  resolution cannot make short;
* by SAT otherwise: no order of L firings exists (every step firing is
  unsatisfiable), so every order settles within L - 1 firings. An order of L
  firings that comes back to a cascade it has met is one that never
  settles (one more question asks for such an order when the first order
  found does not repeat). Past :data:`MAX_FIRINGS_FACTOR` times the flops the engine stops,
  and the caller says so (``open``).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Optional, Sequence

from ..model.aig import FALSE, TRUE, Aig
from ..model.circuit import Model
from ..model.events import EventModel
from .budget import Budget
from .sat import DEFAULT_SOLVER, Encoder, Sat

MAX_FIRINGS_FACTOR = 8
"""The termination search tries orders of up to this many firings per flop (plus one)."""


def system_rooted(model: Model) -> list[bool]:
    """Per flop: whether its clock chain (clock source, its source, ...) reaches the system clock."""
    n = len(model.states)
    clocks = model.clocks or [None] * n
    memo: dict[int, bool] = {}
    for g in range(n):
        path, cur = [], g
        while cur not in memo:
            if clocks[cur] is None:
                memo[cur] = True
                break
            if cur in path:
                memo[cur] = False  # a clock loop: nothing on it is ever clocked from outside
                break
            path.append(cur)
            cur = clocks[cur][1]
        for x in path:
            memo[x] = memo[cur]
    return [memo[g] for g in range(n)]


def chain_depths(model: Model) -> Optional[list[int]]:
    """Per flop, the depth of its every firing when no asynchronous clear or preset exists: 1 on
    the system clock, one more than its clock source's otherwise (a change is made only by the
    edge or by a firing of the source); 0 for a flop whose chain never reaches the system clock
    (it never fires). None when some asynchronous clear or preset exists."""
    if any(l != FALSE for l in model.async_clear) or any(l != FALSE for l in model.async_preset):
        return None
    rooted = system_rooted(model)
    clocks = model.clocks or [None] * len(model.states)
    out: list[int] = []
    for g in range(len(model.states)):
        d, cur = 0, g
        if rooted[g]:
            d = 1
            while clocks[cur] is not None:
                cur = clocks[cur][1]
                d += 1
        out.append(d)
    return out


def structural_bound(model: Model) -> Optional[int]:
    """The most firings of any order of one clock, when the clock tree alone bounds it: with no
    asynchronous clear or preset, every flop fires at most once (see the module docstring),
    so the bound is the number of flops clocked from the system clock through their chain.
    An asynchronous clear or preset read from the inputs only keeps that: the inputs hold for
    the whole clock, so it holds throughout or never; a flop it holds for fires at most once
    (to its target, its clock edges ignored) and one it never holds for is clocked as without
    it; the bound adds the flops outside the clock tree that have one. None when some
    asynchronous clear or preset reads a flop (the SAT termination search decides)."""
    lits = [l for l in list(model.async_clear) + list(model.async_preset) if l not in (FALSE, TRUE)]
    if lits:
        inputs = {l >> 1 for l in model.input_lits}
        aig = model.aig
        if any(aig.left[x] < 0 and x not in inputs for x in aig.cone(lits)):
            return None
    clr = model.async_clear or [FALSE] * len(model.states)
    pre = model.async_preset or [FALSE] * len(model.states)
    return sum(r or c != FALSE or p != FALSE for r, c, p in zip(system_rooted(model), clr, pre))


@dataclass
class Frame:
    """The cascade after some steps, as literals of :attr:`Firings.g`: code, pending changes,
    their asynchronous cause and depth (lsb first), and what the design computes at the code."""

    q: list[int]
    p: list[int]
    a: list[int]
    d: list[list[int]]
    nxt: list[int]
    clr: list[int]
    pre: list[int]
    fault: dict[int, int]
    watch: list[int]


@dataclass
class Step:
    """One step: the index leaves, the fired flop (one-hot or none), the firing's depth,
    and the SR flops that sampled s = r = 1."""

    idx: list[int]
    sel: list[int]
    fired: int
    depth: list[int]
    faults: list[int] = field(default_factory=list)


def _inc(g: Aig, bits: list[int], cap: int) -> list[int]:
    """``bits`` + 1, staying at ``cap`` once there."""
    out, carry = [], TRUE
    for b in bits:
        out.append(g.xor(b, carry))
        carry = g.and_(b, carry)
    at_cap = g.equal_const(bits, cap)
    capb = [TRUE if cap >> k & 1 else FALSE for k in range(len(bits))]
    return [g.mux(at_cap, o, c) for o, c in zip(out, capb)]


def ge_const(g: Aig, bits: Sequence[int], k: int) -> int:
    """Literal: the unsigned number ``bits`` (lsb first) is at least ``k``."""
    if k <= 0:
        return TRUE
    if k >= 1 << len(bits):
        return FALSE
    # bits >= k  <=>  bits > k - 1; compare from the most significant bit
    c = k - 1
    gt, eq = FALSE, TRUE
    for i in reversed(range(len(bits))):
        b = bits[i]
        if c >> i & 1:
            eq = g.and_(eq, b)
        else:
            gt = g.or_(gt, g.and_(eq, b))
    return gt


class Cascade:
    """The cascade of one clock of ``model`` unrolled step by step, built into the AIG ``g`` from
    the code literals ``q0`` and input literals ``ins`` (leaves, or the end of an earlier clock).
    No solver: :class:`Firings` asks questions of one clock, :mod:`checker.engines.clock_runs`
    chains clocks. ``idle``: per step, (some change pending before it, it fired); a user must
    require ``pending -> fired`` (no step idles while a change is pending).

    ``depth_cap``: track each pending change's depth, saturating at this value (0: no depths).
    ``watch``: model literals whose value is wanted at every frame (glitches).
    ``tag``: appended to the names of the index leaves, so that several clocks share one AIG.
    """

    def __init__(self, model: Model, g: Aig, q0: list[int], ins: list[int], depth_cap: int = 0,
                 watch: Sequence[int] = (), tag: str = "") -> None:
        self.model = model
        self.n = n = len(model.states)
        self.g = g
        self.q0 = q0
        self.ins = ins
        self.tag = tag
        self.clocks = model.clocks or [None] * n
        self.aclear = model.async_clear or [FALSE] * n
        self.apreset = model.async_preset or [FALSE] * n
        self.fault_of = {model.states.index(name): lit for name, lit in model.faults}
        self.watch_lits = list(watch)
        self.chain = chain_depths(model)
        self.cap = depth_cap
        # without asynchronous clears the depth of a firing is its flop's place in the clock tree
        self.dbits = depth_cap.bit_length() if depth_cap and self.chain is None else 0
        self.kbits = max(1, n.bit_length())  # the index: 0 .. n-1 a flop, n .. 2^k-1 nothing
        self.steps: list[Step] = []
        self.idle: list[tuple[int, int]] = []
        self.frames: list[Frame] = [self._frame(self.q0)]
        self._edge()

    # --- building -------------------------------------------------------
    def _leaf_map(self, q: list[int]) -> dict[int, int]:
        m = self.model
        lm = {l >> 1: v for l, v in zip(m.state_lits, q)}
        lm.update({l >> 1: v for l, v in zip(m.input_lits, self.ins)})
        return lm

    def at(self, q: list[int], alits: Sequence[int]) -> list[int]:
        """Model literals evaluated at code ``q`` (literals of :attr:`g`) under the free inputs."""
        return self.model.aig.copy_into(self.g, list(alits), self._leaf_map(q))

    def first(self, alits: Sequence[int]) -> list[int]:
        """Model literals at the start code (before the edge)."""
        return self.at(self.q0, alits)

    def _frame(self, q: list[int]) -> Frame:
        m, n = self.model, self.n
        faults = sorted(self.fault_of)
        roots = list(m.next_lits) + list(self.aclear) + list(self.apreset) + \
            [self.fault_of[i] for i in faults] + self.watch_lits
        v = self.at(q, roots)
        return Frame(q, [], [], [], v[:n], v[n:2 * n], v[2 * n:3 * n],
                     dict(zip(faults, v[3 * n:3 * n + len(faults)])), v[3 * n + len(faults):])

    def _const(self, value: int) -> list[int]:
        return [TRUE if value >> k & 1 else FALSE for k in range(self.dbits)]

    def _edge(self) -> None:
        g, f = self.g, self.frames[0]
        one = self._const(1)
        for i in range(self.n):
            hold = g.or_(f.clr[i], f.pre[i])
            need = g.xnor(f.q[i], f.clr[i])  # q differs from the clear's (preset's) target
            sampled = g.xor(f.nxt[i], f.q[i]) if self.clocks[i] is None else FALSE
            f.p.append(g.mux(hold, sampled, need))
            f.a.append(g.and_(hold, need))
            f.d.append(list(one))
        self.edge_faults = [g.and_(g.and_(f.fault[i], f.clr[i] ^ 1), f.pre[i] ^ 1)
                            for i in sorted(self.fault_of) if self.clocks[i] is None]

    def extend(self, steps: int) -> None:
        """Make ``steps`` steps exist."""
        while len(self.steps) < steps:
            self._step()

    def _step(self) -> None:
        g, n, t = self.g, self.n, len(self.steps)
        cur = self.frames[-1]
        idx = [g.leaf(f"fire{k}@{t}{self.tag}") for k in range(self.kbits)]
        sel = [g.and_(g.equal_const(idx, i), cur.p[i]) for i in range(n)]
        fired = g.or_all(sel)
        depth = [g.or_all(g.and_(s, d[k]) for s, d in zip(sel, cur.d)) for k in range(self.dbits)]
        inc = _inc(g, depth, self.cap) if self.dbits else []
        q2 = [g.xor(q, s) for q, s in zip(cur.q, sel)]
        nf = self._frame(q2)
        faults = []
        for i in range(n):
            c = self.clocks[i]
            trig = FALSE
            if c is not None:
                edge, src = c
                made = g.and_(sel[src], cur.q[src] ^ (1 if edge == "rise" else 0))
                trig = g.and_(made, g.and_(cur.clr[i] ^ 1, cur.pre[i] ^ 1))
                if i in self.fault_of:
                    faults.append(g.and_(trig, cur.fault[i]))
            p1 = g.mux(trig, g.and_(cur.p[i], sel[i] ^ 1), g.xor(cur.nxt[i], q2[i]))
            a1 = g.and_(trig ^ 1, cur.a[i])
            hold = g.or_(nf.clr[i], nf.pre[i])
            need = g.xnor(q2[i], nf.clr[i])
            nf.p.append(g.mux(hold, p1, need))
            if self.dbits:
                fresh = g.and_(g.and_(hold, need), g.and_(p1, a1) ^ 1)
                nf.a.append(g.mux(hold, a1, need))
                d1 = [g.mux(trig, a, b) for a, b in zip(cur.d[i], inc)]
                nf.d.append([g.mux(fresh, a, b) for a, b in zip(d1, inc)])
            else:
                nf.a.append(FALSE)
                nf.d.append([])
        self.steps.append(Step(idx, sel, fired, depth, faults))
        self.frames.append(nf)
        # No step is idle while a change is pending: every order is one assignment (up to the
        # indices after settling), not one per placement of idle steps.
        self.idle.append((g.or_all(cur.p), fired))

    def end(self) -> list[int]:
        """The code after the last step built (the settled code when nothing is pending there)."""
        return self.frames[-1].q

    def order_of(self, value, code: int, inputs: dict[str, int], steps: Optional[int] = None) -> list[int]:
        """The flops an assignment fires, in order (state indices), replayed through the event
        model from the edge at state ``code`` under ``inputs``: a step whose index names no pending
        change fires nothing. ``value``: a literal of :attr:`g` to its value in the assignment."""
        em = EventModel(self.model, inputs)
        state = em.edge(code)
        out = []
        for s in self.steps[:steps]:
            k = sum(value(l) << j for j, l in enumerate(s.idx))
            if any(c.flop == k for c in state.pending):
                state, _ = em.fire(state, k)
                out.append(k)
        return out

    def pending_at(self, t: int) -> int:
        """Literal: some change is still pending after ``t`` steps."""
        return self.g.or_all(self.frames[t].p)

    def lasso(self, t: int) -> int:
        """Literal: the code and pending changes after ``t`` steps equal those after some earlier step."""
        g, last = self.g, self.frames[t]

        def same(f: Frame) -> int:
            return g.and_all(g.xnor(a, b) for a, b in zip(f.q + f.p, last.q + last.p))
        return g.or_all(same(f) for f in self.frames[:t])

    def deep(self, k: int) -> int:
        """Literal: some firing within the steps built has depth at least ``k``."""
        if self.chain is not None:
            deep = [i for i, d in enumerate(self.chain) if d >= k]
            return self.g.or_all(s.sel[i] for s in self.steps for i in deep)
        assert self.dbits, "depths are tracked only when a depth cap is given"
        # a firing at step t has depth at most t + 1 (each level was made by an earlier firing)
        return self.g.or_all(self.g.and_(s.fired, ge_const(self.g, s.depth, k)) for s in self.steps[max(0, k - 1):])

    def sr_fault(self) -> tuple[int, list[tuple[int, int]]]:
        """Literal: some SR flop samples s = r = 1 (at the edge or when clocked by a firing);
        with the (flop, literal) pairs it is made of."""
        parts = [(i, l) for i, l in zip([i for i in sorted(self.fault_of) if self.clocks[i] is None],
                                        self.edge_faults)]
        srs = [i for i in sorted(self.fault_of) if self.clocks[i] is not None]
        for s in self.steps:
            parts += list(zip(srs, s.faults))
        return self.g.or_all(l for _, l in parts), parts

    def glitch(self, k: int) -> int:
        """Literal: watched signal ``k`` leaves its value at the start and comes back to it
        within the steps built (so it changes at least twice: a glitch)."""
        g = self.g
        w0 = self.frames[0].watch[k]
        left, out = FALSE, FALSE
        for f in self.frames[1:]:
            w = f.watch[k]
            out = g.or_(out, g.and_(left, g.xnor(w, w0)))
            left = g.or_(left, g.xor(w, w0))
        return out


class Firings(Cascade):
    """The cascade of one clock of ``model`` over a free start code and free inputs, in an AIG of
    its own, encoded into one incremental SAT solver on demand (see :class:`Cascade`)."""

    def __init__(self, model: Model, depth_cap: int = 0, watch: Sequence[int] = (),
                 solver: str = DEFAULT_SOLVER) -> None:
        g = Aig()
        q0 = [g.leaf(f"{s}@0") for s in model.states]
        ins = [g.leaf(i) for i in model.inputs]
        self.sat = Sat(solver)
        self.enc = Encoder(g, self.sat)
        self.env = self.enc.new_env({})
        super().__init__(model, g, q0, ins, depth_cap, watch)
        for leaf in self.q0 + self.ins:
            self.enc.lit(self.env, leaf)

    def _step(self) -> None:
        super()._step()
        for leaf in self.steps[-1].idx:
            self.enc.lit(self.env, leaf)
        pending, fired = self.idle[-1]
        self.sat.add([-self.lit(pending), self.lit(fired)])

    # --- questions ------------------------------------------------------
    def lit(self, alit: int) -> int:
        """The solver literal of a literal of :attr:`g`."""
        return self.enc.lit(self.env, alit)

    def solve(self, lits: Sequence[int], budget: Optional[Budget] = None) -> bool:
        """Whether literals of :attr:`g` can all hold at once."""
        if budget is not None:
            budget.check(len(self.steps))
        assume = [self.lit(l) for l in lits]
        if any(a == -self.sat.true for a in assume):
            return False
        return self.sat.solve([a for a in assume if a != self.sat.true])

    def try_solve(self, lits: Sequence[int], conflicts: int, budget: Optional[Budget] = None) -> Optional[bool]:
        """:meth:`solve` within ``conflicts`` conflicts; None when the solver gave up first."""
        if budget is not None:
            budget.check(len(self.steps))
        assume = [self.lit(l) for l in lits]
        if any(a == -self.sat.true for a in assume):
            return False
        return self.sat.solve_limited([a for a in assume if a != self.sat.true], conflicts)

    def any_of(self, lits: Sequence[int]) -> int:
        """A literal of :attr:`g`: some of ``lits``."""
        return self.g.or_all(lits)

    # --- reading a model -------------------------------------------------
    def value(self, alit: int) -> int:
        return self.sat.value(self.lit(alit))

    def start(self) -> tuple[int, dict[str, int]]:
        """The start code (state integer) and inputs of the last model."""
        code = sum(self.value(l) << i for i, l in enumerate(self.q0))
        return code, {name: self.value(l) for name, l in zip(self.model.inputs, self.ins)}

    def order(self, steps: Optional[int] = None) -> list[int]:
        """The flops the last model fires, in order (state indices), replayed through the event
        model: a step whose index names no pending change fires nothing."""
        code, inputs = self.start()
        return self.order_of(self.value, code, inputs, steps)

    def close(self) -> None:
        self.sat.close()


@dataclass
class Bound:
    """What the termination search found: ``steps`` that cover every order (None: not found),
    ``how`` ('structure' or 'sat'), an order that never settles (start, inputs, flops), and
    the most firings tried."""

    steps: Optional[int]
    how: str
    never: Optional[tuple[int, dict[str, int], list[int]]] = None
    tried: int = 0


def repeat_cut(model: Model, code: int, inputs: dict[str, int], flops: list[int]) -> Optional[list[int]]:
    """The order ``flops`` cut at the firing that comes back to a cascade it has met with
    changes pending, or None when it never does."""
    em = EventModel(model, inputs)
    state = em.edge(code)
    seen = {state.key()}
    for k, f in enumerate(flops):
        state, _ = em.fire(state, f)
        if state.key() in seen and state.pending:
            return flops[:k + 1]
        seen.add(state.key())
    return None


def settle_bound(fir: Firings, start: Sequence[int], budget: Optional[Budget] = None,
                 max_firings: Optional[int] = None) -> Bound:
    """How many steps cover every order from the starts that ``start`` (literals of ``fir.g``)
    admit; the unrolling is extended to that many. See the module docstring."""
    s = structural_bound(fir.model)
    if s is not None:
        fir.extend(s)
        return Bound(s, "structure", tried=s)
    limit = max_firings if max_firings is not None else MAX_FIRINGS_FACTOR * fir.n + 1
    L = fir.n + 1
    while True:
        L = min(L, limit)
        fir.extend(L)
        if budget is not None:
            budget.report(depth=L)
        if not fir.solve(list(start) + [st.fired for st in fir.steps[:L]], budget):
            return Bound(L - 1, "sat", tried=L)
        code, inputs = fir.start()
        flops = fir.order(L)
        cut = repeat_cut(fir.model, code, inputs, flops)
        if cut is None and fir.solve(list(start) + [st.fired for st in fir.steps[:L]] + [fir.lasso(L)], budget):
            code, inputs = fir.start()  # an order of L firings that ends in a cascade it met before
            flops = fir.order(L)
            cut = repeat_cut(fir.model, code, inputs, flops)
            if cut is None:
                raise AssertionError("the firings engine's repeated cascade does not repeat in the event model")
        if cut is not None:
            return Bound(None, "sat", never=(code, inputs, cut), tried=L)
        if L >= limit:
            return Bound(None, "sat", tried=L)
        L = 2 * L

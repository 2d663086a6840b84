"""Claims about the orders of one clock, and claims on asynchronous designs, as AIGER circuits.

AIGER has one clock and no orders of events, so the contract's event model
(shared/LANGUAGE.md, "The event model of an asynchronous design") is written
as a synchronous circuit in which one AIGER step is one event:

- latches ``NAME`` hold the code (each flop bit); ``pending:NAME`` says the flop
  has a pending change (its new value is always the complement of its present
  one, so one bit says all); ``held:IN`` keeps the design's inputs from the
  edge until the clock has settled.
- an *edge step* happens when nothing is pending (for a claim about one clock:
  only the first step, ``edge_done`` marks it): the design's inputs are read
  from the AIGER inputs of that step and held, and every flop on the system
  clock whose sampled value differs, or whose asynchronous clear or preset
  holds, becomes pending, as in the contract's step 2. The code does not move.
- a *firing step* happens while something is pending: the free inputs
  ``fire:pick[k]`` name one flop (a binary number); if it is pending it fires
  (its bit flips), then the flops clocked by the edge it made sample the code
  before the firing and become pending or not (step 4: the later edge wins),
  and an asynchronous clear or preset that holds in the code after the firing
  makes its flop pending or cancels its change. A pick of a flop that is not
  pending changes nothing (a stutter, harmless for reachability).
- ``settle``: ``depth:NAME[k]`` is each pending change's depth (1 at the edge,
  one more than the firing that caused it otherwise), saturating at N+1;
  ``cause:NAME`` (only for flops with an asynchronous clear or preset) says a
  pending change came from one, which keeps its depth when a later firing
  would give it the same change again.
- an order that never settles comes back to a code with the same changes
  pending; the liveness-to-safety construction of Biere, Artho and Schuppan
  (2002) finds that as a safety property: at a firing step the free input
  ``loop:save`` copies code and pending bits into ``shadow:`` latches, and
  the state meeting its copy again (with something pending throughout) is a
  cycle of firings.
- ``glitchfree``: ``changed:SIG`` marks a watched bit that has changed since the
  edge; a firing that changes it again is the pulse; an order that never
  settles refutes it too (the contract: it refutes every claim about the clock).
- ``recover`` takes clock after clock: after settling, the next step is the
  next edge with new inputs; ``run_ok`` says every clock so far started in an
  unused code under inputs meeting the condition; ``clocks`` counts edges.
  Without a bound the claim is a justice property: infinitely many edges or
  firings with ``run_ok`` (a lockout, or a clock that never settles).

The bad output can become 1 (the justice property hold on some run) exactly
when countersign refutes the claim; the test suite checks that by a search
over the written file (tests/test_aiger_events.py).
"""

from __future__ import annotations

from typing import Sequence

from ..elab import Check, Claim
from ..model import FALSE, TRUE, Aig, Model
from .netlists import Circuit

EVENT_KINDS = ("count", "settle", "glitchfree", "recover")
"""Claims written through the event encoding (count and recover: asynchronous designs only)."""


def _copy(model: Model, aig: Aig, inputs: Sequence[int], states: Sequence[int], roots: list[int]) -> list[int]:
    """``roots`` of ``model`` rebuilt in ``aig`` over the given input and state literals (model order)."""
    leaf = {l >> 1: v for l, v in zip(model.input_lits, inputs)}
    leaf.update({l >> 1: v for l, v in zip(model.state_lits, states)})
    return model.aig.copy_into(aig, roots, leaf)


def _increment(aig: Aig, bits: list[int], limit: int) -> list[int]:
    """``bits`` (least significant first) plus one, staying at ``limit``."""
    full = aig.equal_const(bits, limit)
    carry, out = TRUE, []
    for b in bits:
        out.append(aig.mux(full, aig.xor(b, carry), b))
        carry = aig.and_(carry, b)
    return out


def _differ(aig: Aig, a: Sequence[int], b: Sequence[int]) -> int:
    return aig.or_all(aig.xor(x, y) for x, y in zip(a, b))


class _Latches:
    """Latches declared before their next-state literal is known."""

    def __init__(self, c: Circuit) -> None:
        self.c = c
        self.items: list[tuple[str, int, int | None]] = []
        self.nexts: dict[int, int] = {}

    def new(self, name: str, reset: int | None) -> int:
        lit = self.c.aig.leaf(name)
        self.items.append((name, lit, reset))
        return lit

    def vector(self, prefix: str, names: Sequence[str], reset: int | None) -> list[int]:
        return [self.new(prefix + n, reset) for n in names]

    def set(self, lit: int, nxt: int) -> None:
        self.nexts[lit] = nxt

    def close(self) -> None:
        for name, lit, reset in self.items:
            self.c.latches.append((name, lit, self.nexts[lit], reset))


def event_circuit(check: Check, claim: Claim) -> tuple[Circuit, list[str]]:
    """``claim`` of ``check`` as a circuit over the event model (module docstring), with the
    comment lines that say what its bad output or justice property means."""
    m = check.design.model
    assert check.sequence is not None
    aig = Aig()
    c = Circuit(aig)
    L = _Latches(c)
    n = len(m.states)
    kind = claim.kind
    recover = kind == "recover"
    x = [aig.leaf(i) for i in m.inputs]
    c.inputs += list(zip(m.inputs, x))
    pick = [aig.leaf(f"fire:pick[{k}]") for k in range(max(1, (n - 1).bit_length()))]
    c.inputs += [(f"fire:pick[{k}]", p) for k, p in enumerate(pick)]
    q = L.vector("", m.states, None)  # every code: the claim ranges over them (a free reset)
    held = L.vector("held:", m.inputs, 0)
    pend = L.vector("pending:", m.states, 0)
    any_pend = aig.or_all(pend)
    if recover:
        edge = any_pend ^ 1
    else:
        done = L.new("edge_done", 0)
        L.set(done, TRUE)
        edge = aig.and_(any_pend ^ 1, done ^ 1)
    xin = [aig.mux(edge, h, v) for h, v in zip(held, x)]  # the AIGER input at an edge, else the held one
    for h, v in zip(held, xin):
        L.set(h, v)
    clocks = m.clocks or [None] * n
    aclear = list(m.async_clear) or [FALSE] * n
    apreset = list(m.async_preset) or [FALSE] * n
    watch = [l for _, l in claim.signals] if kind == "glitchfree" else []
    member_src = check.sequence.member(m.aig, check.code_lits())
    extra: list[int] = [member_src]
    if kind == "count":
        from ..claims.common import rule_spec
        decided_src, expected_src = rule_spec(check)
        extra += [decided_src] + expected_src
    elif kind == "recover":
        from ..claims.common import stepping
        extra.append(claim.cond if claim.cond is not None else stepping(check))
    elif kind == "glitchfree":
        extra.append(claim.cond if claim.cond is not None else TRUE)
    else:
        extra.append(TRUE)
    got = _copy(m, aig, xin, q, list(m.next_lits) + aclear + apreset + watch + extra)
    nxt_b, clr_b, pre_b = got[:n], got[n:2 * n], got[2 * n:3 * n]
    w_b = got[3 * n:3 * n + len(watch)]
    rest = got[3 * n + len(watch):]
    member_b = rest[0]

    fire = [aig.and_(pend[i], aig.equal_const(pick, i)) for i in range(n)]
    any_fire = aig.or_all(fire)
    after = [aig.xor(q[i], fire[i]) for i in range(n)]
    got_a = _copy(m, aig, xin, after, aclear + apreset + watch)
    clr_a, pre_a, w_a = got_a[:n], got_a[n:2 * n], got_a[2 * n:]

    trig, p2, async_new, he = [], [], [], []
    for g in range(n):
        if clocks[g] is None:
            t = FALSE
        else:
            edge_name, j = clocks[g]
            made = aig.and_(fire[j], q[j] ^ 1) if edge_name == "rise" else aig.and_(fire[j], q[j])
            t = aig.and_all([made, clr_b[g] ^ 1, pre_b[g] ^ 1])  # a clear or preset held: the edge is ignored
        trig.append(t)
        p1 = aig.mux(t, aig.and_(pend[g], fire[g] ^ 1), aig.xor(nxt_b[g], after[g]))
        ha = aig.or_(clr_a[g], pre_a[g])
        wrong = aig.xor(after[g], clr_a[g] ^ 1)  # clear wins: the target is 0 when the clear holds
        async_new.append(aig.and_(ha, wrong))
        p2.append(aig.mux(ha, p1, wrong))
        h = aig.or_(clr_b[g], pre_b[g])
        he.append(h)
        clocked = aig.xor(nxt_b[g], q[g]) if clocks[g] is None else FALSE
        pe = aig.mux(h, clocked, aig.xor(q[g], clr_b[g] ^ 1))
        L.set(pend[g], aig.mux(edge, aig.mux(any_fire, pend[g], p2[g]), pe))
        L.set(q[g], after[g])
    pend_next = [L.nexts[p] for p in pend]

    def never() -> int:
        """1 when the cascade is back at a code with the same changes pending (a cycle of firings)."""
        save = aig.leaf("loop:save")
        c.inputs.append(("loop:save", save))
        saved = L.new("loop:saved", 0)
        cur = q + pend
        shadow = L.vector("shadow:", list(m.states) + ["pending:" + s for s in m.states], 0)
        save_now = aig.and_all([save, saved ^ 1, any_fire])
        for s, v in zip(shadow, cur):
            L.set(s, aig.mux(save_now, s, v))
        L.set(saved, aig.and_(aig.or_(saved, save_now), aig.or_all(pend_next)))
        return aig.and_(saved, aig.and_all(aig.xnor(a, b) for a, b in zip(cur, shadow)))

    where = f"{claim.pos.file}:{claim.pos.line}"
    label = claim.text or claim.kind
    head = ["the event model as a synchronous circuit: one AIGER step is the system clock's edge "
            "(when nothing is pending) or one firing (fire:pick names the flop, a binary number); "
            "pending:NAME a pending change, held:IN the inputs held until the clock settles; "
            "see checker/tools/event_aiger.py"]
    if recover:
        cond_b = rest[1]
        run_ok = L.new("run_ok", 1)
        L.set(run_ok, aig.mux(edge, run_ok, aig.and_all([run_ok, member_b ^ 1, cond_b])))
        if claim.within is not None:
            N = claim.within
            cnt = L.vector("clocks", [f"[{k}]" for k in range(max(1, N.bit_length()))], 0)
            for b, nb in zip(cnt, _increment(aig, cnt, N)):
                L.set(b, aig.mux(edge, b, nb))
            full = aig.equal_const(cnt, N)
            bad = aig.or_(aig.and_all([run_ok, any_pend ^ 1, member_b ^ 1, full]), aig.and_(run_ok, never()))
            c.bad.append((f"{label} at {where}", bad))
            head.append(f"latches start free (every code); clocks counts edges up to {N}; the bad output can "
                        f"become 1 exactly when some unused code is still unused after {N} clocks (each settled in "
                        f"the code an order of firings reaches) under inputs meeting the condition, or a clock from "
                        f"an unused code has an order that never settles (loop: and shadow: latches): the claim is "
                        f"refuted")
        else:
            progress = aig.or_(edge, any_fire)
            c.justice.append((f"{label} at {where}", [aig.and_(L.nexts[run_ok], progress)]))
            head.append("latches start free (every code); the justice property holds on a run exactly when it "
                        "takes infinitely many edges or firings while every clock starts in an unused code under "
                        "inputs meeting the condition (a lockout, or an order that never settles): the claim is "
                        "refuted")
        L.close()
        return c, head

    start_ok = L.new("start_ok", 0)
    start = aig.and_all([member_b, rest[1]])
    L.set(start_ok, aig.mux(edge, start_ok, start))
    if kind == "count":
        w = len(check.code)
        exp_b = rest[2:2 + w]
        expected = L.vector("expected", [f"[{k}]" for k in range(w)], 0)  # least significant first
        for e, v in zip(expected, exp_b):
            L.set(e, aig.mux(edge, e, v))
        code_lsb = [q[i] for i in reversed(check.code)]
        wrong = aig.and_(any_pend ^ 1, _differ(aig, code_lsb, expected))
        bad = aig.and_(start_ok, aig.or_(wrong, never()))
        head.append("latches start free (every code); start_ok: the edge was in a code of the sequence under "
                    "inputs the rules decide; expected: the rules' next code; the bad output can become 1 exactly "
                    "when some order settles elsewhere or some order never settles (loop: and shadow: latches): "
                    "the claim is refuted")
    elif kind == "settle":
        N = claim.within
        assert N is not None
        dw = (N + 1).bit_length()
        depth = [L.vector(f"depth:{s}", [f"[{k}]" for k in range(dw)], 0) for s in m.states]
        has_async = [aclear[g] != FALSE or apreset[g] != FALSE for g in range(n)]
        cause = [L.new(f"cause:{s}", 0) if has_async[g] else FALSE for g, s in enumerate(m.states)]
        d_fire = [aig.or_all(aig.and_(fire[i], depth[i][k]) for i in range(n)) for k in range(dw)]
        d_new = _increment(aig, d_fire, N + 1)
        one = [TRUE] + [FALSE] * (dw - 1)
        for g in range(n):
            keep_old = aig.and_all([trig[g] ^ 1, pend[g], fire[g] ^ 1, cause[g]])
            for k in range(dw):
                on_fire = aig.mux(async_new[g], aig.mux(trig[g], depth[g][k], d_new[k]),
                                  aig.mux(keep_old, d_new[k], depth[g][k]))
                L.set(depth[g][k], aig.mux(edge, aig.mux(any_fire, depth[g][k], on_fire), one[k]))
            if has_async[g]:
                on_fire = aig.mux(async_new[g], aig.and_(trig[g] ^ 1, cause[g]), TRUE)
                L.set(cause[g], aig.mux(edge, aig.mux(any_fire, cause[g], on_fire), he[g]))
        deep = aig.and_(any_fire, aig.equal_const(d_fire, N + 1))
        bad = aig.and_(start_ok, aig.or_(deep, never()))
        head.append(f"latches start free (every code); depth:NAME is a pending change's depth (saturating at "
                    f"{N + 1}); the bad output can become 1 exactly when, from a code of the sequence, some order "
                    f"fires a change deeper than {N} or never settles (loop: and shadow: latches): the claim is "
                    f"refuted")
    else:  # glitchfree
        changed = L.vector("changed:", [s for s, _ in claim.signals], 0)
        glitch = FALSE
        for k, ch in enumerate(changed):
            diff = aig.and_(any_fire, aig.xor(w_b[k], w_a[k]))
            glitch = aig.or_(glitch, aig.and_(ch, diff))
            L.set(ch, aig.mux(edge, aig.or_(ch, diff), FALSE))
        bad = aig.and_(start_ok, aig.or_(glitch, never()))
        head.append("latches start free (every code); changed:SIG marks a watched bit that has changed since the "
                    "edge; the bad output can become 1 exactly when, from a code of the sequence under inputs "
                    "meeting the condition, some order of firings changes a watched bit a second time or never "
                    "settles (loop: and shadow: latches; such an order refutes every claim about the clock): the "
                    "claim is refuted")
    c.bad.append((f"{label} at {where}", bad))
    L.close()
    return c, head

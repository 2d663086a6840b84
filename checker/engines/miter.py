"""The flop-paired miter: two models over shared state and input variables.

Flops and inputs of the same name become one variable; both models are copied
into one and-inverter graph, so logic they share becomes one node and needs
no clause. One SAT question then asks for a state and an input where some
next-state bit or some output differs.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Optional

from ..model import FALSE, Aig, Model
from .sat import Encoder, Sat, any_lit


@dataclass
class PairedMiter:
    """Two designs over shared state and input variables (paired by name).

    ``diffs`` lists (kind 'flop'|'output', name, solver literal that is 1 when
    the two designs differ there); ``differ`` is their disjunction. ``restrict``
    is the solver literal of an extra condition built in A's graph (1 when none).
    """

    sat: Sat
    aig: Aig
    state_vars: dict[str, int]
    input_vars: dict[str, int]
    diffs: list[tuple[str, str, int]]
    differ: int
    restrict: int
    enc: Encoder = field(repr=False, default=None)  # type: ignore[assignment]
    env: int = 0

    def read(self) -> tuple[dict[str, int], dict[str, int]]:
        """(state, inputs) of the last model."""
        v = self.sat.value
        return ({n: v(x) for n, x in self.state_vars.items()}, {n: v(x) for n, x in self.input_vars.items()})


def paired_miter(ma: Model, mb: Model, solver: str, restrict: Optional[int] = None,
                 record: bool = False) -> PairedMiter:
    """The miter of ``ma`` and ``mb`` with flops and inputs shared by name.

    ``restrict`` is a literal of ``ma``'s graph over its flops (for example the
    sequence's membership); it becomes ``PairedMiter.restrict``. ``record``
    keeps the clauses, for a DIMACS file.
    """
    aig = Aig()
    leaves = {n: aig.leaf(n) for n in ma.inputs + [s for s in mb.inputs if s not in ma.inputs]}
    for n in ma.states + [s for s in mb.states if s not in ma.states]:
        leaves[n] = aig.leaf(n)

    def copy(m, roots):
        lm = {l >> 1: leaves[n] for n, l in zip(m.inputs + m.states, m.input_lits + m.state_lits)}
        return m.aig.copy_into(aig, roots, lm)

    extra = [] if restrict is None else [restrict]
    ca = copy(ma, ma.next_lits + ma.output_lits + extra)
    cb = copy(mb, mb.next_lits + mb.output_lits)
    na, nb = len(ma.states), len(mb.states)
    a_next, a_out = dict(zip(ma.states, ca[:na])), dict(zip(ma.outputs, ca[na:na + len(ma.outputs)]))
    b_next, b_out = dict(zip(mb.states, cb[:nb])), dict(zip(mb.outputs, cb[nb:]))
    xors = [("flop", n, aig.xor(a_next[n], b_next[n])) for n in ma.states if n in b_next]
    xors += [("output", n, aig.xor(a_out[n], b_out[n])) for n in ma.outputs if n in b_out]
    sat = Sat(solver, record=record)
    enc = Encoder(aig, sat)
    var = {n: sat.new_var(n) for n in leaves}
    env = enc.new_env({l >> 1: var[n] for n, l in leaves.items()})
    diffs = [(k, n, enc.lit(env, x)) for k, n, x in xors if x != FALSE]
    differ = any_lit(sat, [d for _, _, d in diffs]) if diffs else -sat.true
    rlit = enc.lit(env, ca[-1]) if restrict is not None else sat.true
    svars = {n: var[n] for n in ma.states}
    ivars = {n: var[n] for n in ma.inputs}
    return PairedMiter(sat, aig, svars, ivars, diffs, differ, rlit, enc, env)

"""One circuit model: state bits, inputs, next-state and output literals over one AIG.

Every engine (simulator, bit-parallel evaluator, SAT encoder, explicit
search) reads only this floor: the :class:`Model` and its graph.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from .aig import Aig, evaluate


@dataclass
class Model:
    """A circuit: state bits, inputs, next-state and output nodes, and each flop's clocking.

    ``states`` and ``inputs`` are bit names in declaration order after
    flattening (most significant first within a vector). ``state_lits[i]`` is
    the leaf literal of ``states[i]``; ``next_lits[i]`` the value it samples
    at its clock edge (pins and synchronous clear/preset). ``faults`` holds,
    per SR flop bit, the literal that is 1 when s = r = 1 with clear and preset
    both 0. ``signals`` maps every named bit of the design (inputs, flops,
    nodes, outputs) to its literal.

    Clocking, per state bit (empty lists: every flop on the system clock, no
    asynchronous clear or preset): ``clocks[i]`` is None for the system clock
    or ``(edge, j)``, edge 'rise' or 'fall' of state bit j; ``async_clear[i]``
    and ``async_preset[i]`` are literals (FALSE when there is none). A model
    whose flops all use the system clock and have no asynchronous clear or
    preset is synchronous, and ``step`` is its one clock; any other is read
    through the event model (:mod:`checker.model.events`).
    """

    name: str
    aig: Aig = field(default_factory=Aig)
    states: list[str] = field(default_factory=list)
    state_lits: list[int] = field(default_factory=list)
    next_lits: list[int] = field(default_factory=list)
    inputs: list[str] = field(default_factory=list)
    input_lits: list[int] = field(default_factory=list)
    outputs: list[str] = field(default_factory=list)
    output_lits: list[int] = field(default_factory=list)
    faults: list[tuple[str, int]] = field(default_factory=list)
    signals: dict[str, int] = field(default_factory=dict)
    clocks: list = field(default_factory=list)
    async_clear: list[int] = field(default_factory=list)
    async_preset: list[int] = field(default_factory=list)
    declared_async: bool = False  # some flop declares an asynchronous clear or preset (even a constant one)

    @property
    def synchronous(self) -> bool:
        """Every flop on the system clock, no asynchronous clear or preset (the contract's
        definition: one written as a constant 0 still makes the design asynchronous)."""
        return (all(c is None for c in self.clocks) and not self.declared_async
                and not any(self.async_clear) and not any(self.async_preset))

    def step(self, state: dict[str, int], inputs: dict[str, int]) -> tuple[dict[str, int], dict[str, int], list[str]]:
        """One clock from concrete values: (next state, outputs, SR faults hit).

        Outputs are those seen in ``state`` under ``inputs``, before the edge.
        """
        lv: dict[int, object] = {}
        for n, l in zip(self.states, self.state_lits):
            lv[l >> 1] = state[n] & 1
        for n, l in zip(self.inputs, self.input_lits):
            lv[l >> 1] = inputs.get(n, 0) & 1
        roots = self.next_lits + self.output_lits + [l for _, l in self.faults]
        vals = evaluate(self.aig, lv, roots, 1)
        ns = len(self.states)
        no = len(self.outputs)
        nxt = dict(zip(self.states, vals[:ns]))
        outs = dict(zip(self.outputs, vals[ns:ns + no]))
        hit = [f for (f, _), v in zip(self.faults, vals[ns + no:]) if v]
        return nxt, outs, hit

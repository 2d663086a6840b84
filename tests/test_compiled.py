"""The compiled evaluator (model/compiled.py) against the two evaluators it must agree with:
the graph interpreter of model/simulate.py and the syntax-tree reference of elab/reference.py,
which shares nothing with the graph (issue 11, point 12). Random designs come from the
reference test's generator: vectors, flop pieces, every flop kind, clear and preset, parts."""

from __future__ import annotations

import random

import numpy as np
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from checker.elab import load_namespace
from checker.elab.reference import Reference
from checker.model.compiled import _shape, compile_model, run_lanes, run_packed
from checker.model.aig import Aig
from checker.model.circuit import Model
from checker.model.simulate import run
from test_reference import _designs


def _reference_run(ref: Reference, start: dict, inputs: list[dict], cycles: int):
    state, out = dict(start), []
    for t in range(cycles + 1):
        inp = inputs[min(t, len(inputs) - 1)]
        nxt, outs, faults = ref.step(state, inp)
        out.append((dict(state), outs, sorted(faults)))
        state = nxt
    return out


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])
@given(text=_designs(), seed=st.integers(0, 2 ** 32 - 1), cycles=st.integers(0, 12),
       held=st.booleans(), lanes=st.integers(2, 5))
def test_compiled_agrees_with_interpreter_and_reference(tmp_path_factory, text, seed, cycles, held, lanes):
    path = tmp_path_factory.mktemp("cmp") / "r.cnl"
    path.write_text(text, encoding="utf-8")
    ns = load_namespace(str(path))
    rng = random.Random(seed)
    for name, design in ns.designs.items():
        m = design.model
        assert compile_model(m) is not None
        ref = Reference(design.source, name)
        n_rows = 1 if held else cycles + 1  # one held row is compiled as constants
        inputs = [{i: rng.randint(0, 1) for i in m.inputs} for _ in range(n_rows)]
        starts = [{s: rng.randint(0, 1) for s in m.states} for _ in range(lanes)]
        packed = run_packed(m, starts[0], inputs, cycles)
        steps = run(m, starts[0], inputs, cycles)
        expect = _reference_run(ref, starts[0], inputs, cycles)
        assert packed.states.shape == (cycles + 1, len(m.states))
        for t, (s, (rstate, routs, rfaults)) in enumerate(zip(steps, expect)):
            got_state = dict(zip(m.states, packed.states[t].tolist()))
            got_outs = dict(zip(m.outputs, packed.outputs[t].tolist()))
            got_faults = sorted(f for (f, _), hit in zip(m.faults, packed.faults[t].tolist()) if hit)
            assert got_state == s.state == rstate, (name, t, text)
            assert got_outs == s.outputs == routs, (name, t, text)
            assert got_faults == sorted(s.faults) == rfaults, (name, t, text)
        # many starts at once, one lane each: the same as one at a time
        for st_, lane in zip(starts, run_lanes(m, starts, inputs, cycles)):
            alone = run_packed(m, st_, inputs, cycles)
            assert np.array_equal(lane.states, alone.states) and np.array_equal(lane.outputs, alone.outputs)
            assert np.array_equal(lane.faults, alone.faults)


def test_the_three_shapes_are_recognised():
    # x ^ y and mux(s, a, b) as the graph builds them: three and-nodes written as one operation
    g = Aig()
    x, y, s = g.leaf("x"), g.leaf("y"), g.leaf("s")
    xo = g.xor(x, y)
    mx = g.mux(s, x, y)
    m = Model("t", g, states=[], inputs=["x", "y", "s"], input_lits=[x, y, s])
    fan = {n: 1 for n in range(len(g))}
    assert _shape(m, xo >> 1, fan)[0] == "xor"
    assert _shape(m, mx >> 1, fan)[0] == "mux"
    assert _shape(m, g.and_(x, y) >> 1, fan) is None


def test_a_million_clocks_fit_the_limits(write):
    # the run of a 64-bit counter that the issue asks for is accepted (speed: tests/perf/bench_sim.py)
    from checker.tools.simulation import MAX_CYCLES, MAX_SIM_VALUES
    assert MAX_CYCLES >= 1_000_000 and (1_000_000 + 1) * (64 + 1 + 1) <= MAX_SIM_VALUES

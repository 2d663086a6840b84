"""The always claim by SAT, against bit-parallel enumeration of every code and input."""

from __future__ import annotations

import itertools

import numpy as np
import pytest
from hypothesis import HealthCheck, event, given, settings
from hypothesis import strategies as st

from checker.engines.budget import Budget
from checker.engines.sat import DEFAULT_SOLVER
from checker.claims import always
from checker.claims.common import Options
from checker.elab import load_namespace
from checker.model.simulate import eval_states, leaf_arrays
from checker.claims.result import PROVED, REFUTED


def load(tmp_path, text: str, name: str = "t.cnl"):
    p = tmp_path / name
    p.write_text(text, encoding="utf-8")
    return load_namespace(str(p))


def prove_always(check, claim, solver: str = DEFAULT_SOLVER):
    return always.prove(check, claim, Options(solver=solver), Budget())


def enumerated_violations(check, claim) -> set[tuple[int, tuple]]:
    """Every (code, inputs) of the sequence where PROP is 0, by NumPy bit-parallel evaluation."""
    model = check.design.model
    codes = np.array(list(check.sequence.codes()), dtype=np.uint64)
    out = set()
    for bits in itertools.product((0, 1), repeat=len(model.inputs)):
        inp = dict(zip(model.inputs, bits))
        leaves = leaf_arrays(model, check.code, codes, {n: np.bool_(v) for n, v in inp.items()})
        val, = eval_states(model, [claim.prop], leaves, len(codes))
        for c in codes[~val]:
            out.add((int(c), tuple(sorted(inp.items()))))
    return out


def assert_agrees(check, claim):
    bad = enumerated_violations(check, claim)
    res = prove_always(check, claim)
    assert res.status == (REFUTED if bad else PROVED), (res.summary, sorted(bad)[:3])
    if bad:
        t, = res.trace
        assert (t.code, tuple(sorted(t.inputs.items()))) in bad
        assert res.details["code"] == t.code
    return bad


GREENHOUSE = """
design lamps
  in sun, night
  flop q[2:0] : D (d = mux(sun, q, {q[1] & !q[2] | q[2] & !q[1] & !q[0], q[0] ^ q[1] & !q[2] | q[1] & !q[0], !q[0] & !(q[2] & q[0])})) clear night
  out lamp = q[2] & q[0]
  out shade = q[1] | q[2]
end
check bank of lamps
  code q
  count 0 .. 5
  always lamp == at(5)
  always lamp == at(4)
  always q != 6
  always q != 3
  always shade != (at(0) | at(1))
  always !(sun & night)
  always (q == 0b101) == lamp
  always at(7) == 0
end
"""


def test_at_equal_and_not_equal(tmp_path):
    chk = load(tmp_path, GREENHOUSE).checks[0]
    want = [PROVED, REFUTED, PROVED, REFUTED, PROVED, REFUTED, PROVED, PROVED]
    got = []
    for claim in chk.claims:
        if claim.kind != "always":
            continue
        bad = assert_agrees(chk, claim)
        got.append(REFUTED if bad else PROVED)
    assert got == want
    by_line = {c.pos.line: c for c in chk.claims}
    lines = GREENHOUSE.splitlines()  # file line k is lines[k - 1]
    # lamp == at(4) fails at 4 (lamp 0) and 5 (lamp 1, at(4) 0); q != 3 only at 3.
    line = next(i + 1 for i, l in enumerate(lines) if "at(4)" in l)
    assert {c for c, _ in enumerated_violations(chk, by_line[line])} == {4, 5}
    line = next(i + 1 for i, l in enumerate(lines) if "q != 3" in l)
    res = prove_always(chk, by_line[line])
    assert res.trace[0].code == 3
    assert res.evidence[-1] == "the property is 0 at code 3"


def test_property_over_inputs_only(tmp_path):
    chk = load(tmp_path, GREENHOUSE).checks[0]
    claim = [c for c in chk.claims if c.kind == "always"][5]  # !(sun & night)
    res = prove_always(chk, claim)
    assert res.status == REFUTED
    assert res.trace[0].inputs == {"sun": 1, "night": 1}


@pytest.mark.parametrize("n", [16, 64])
def test_wide_always_is_symbolic(tmp_path, n):
    top = (1 << n) - 1
    text = f"""
design silo{n}
  in fill
  flop q[{n - 1}:0] : T (t = c)
  node c[{n - 1}:0] = {{c[{n - 2}:0] & q[{n - 2}:0], fill}}
  out brim = and(q[{n - 1}], q[{n - 2}], q[0])
end
check level of silo{n}
  code q
  count 0 .. {hex(top - 1)}
  always q != {hex(top)}
  always !brim | (q != {hex(top - 2)})
end
"""
    chk = load(tmp_path, text).checks[0]
    first, second = [c for c in chk.claims if c.kind == "always"]
    assert prove_always(chk, first).status == PROVED
    res = prove_always(chk, second)
    assert res.status == REFUTED and res.trace[0].code == top - 2
    assert res.details["clauses"] < 100 * n


# --- random designs and properties (hypothesis) ------------------------------------
@st.composite
def exprs(draw, atoms, depth=3):
    if depth == 0 or draw(st.integers(0, 3)) == 0:
        return draw(st.sampled_from(atoms))
    op = draw(st.sampled_from(["&", "|", "^", "!", "mux"]))
    a = draw(exprs(atoms, depth - 1))
    if op == "!":
        return f"!({a})"
    b = draw(exprs(atoms, depth - 1))
    if op == "mux":
        return f"mux({a}, {b}, {draw(exprs(atoms, depth - 1))})"
    return f"({a} {op} {b})"


@st.composite
def always_cases(draw):
    width = draw(st.integers(3, 6))
    inputs = ["vent", "mist"][:draw(st.integers(0, 2))]
    flops = [f"q[{i}]" for i in range(width)]
    atoms = flops + inputs
    node = draw(exprs(atoms, 2))
    lines = ["design bed", *(["  in " + ", ".join(inputs)] if inputs else []),
             f"  flop q[{width - 1}:0] : D (d = {{{', '.join(draw(exprs(atoms, 1)) for _ in range(width))}}})",
             f"  node wet = {node}", f"  out dry = !wet & {draw(st.sampled_from(atoms))}", "end"]
    codes = draw(st.lists(st.integers(0, (1 << width) - 1), min_size=1, max_size=min(14, 1 << width), unique=True))
    props = []
    for _ in range(3):
        kind = draw(st.integers(0, 3))
        if kind == 0:
            props.append(draw(exprs(atoms + ["wet", "dry"], 3)))
        elif kind == 1:
            props.append(f"{draw(exprs(atoms + ['wet'], 2))} | at({draw(st.sampled_from(codes))})")
        elif kind == 2:
            props.append(f"q != {draw(st.integers(0, (1 << width) - 1))}")
        else:
            props.append(f"wet == ({draw(exprs(atoms, 2))})")
    check = ["check beds of bed", "  code q", "  count " + " ".join(map(str, codes))] + \
        [f"  always {p}" for p in props] + ["end"]
    return "\n".join(lines + check) + "\n"


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(always_cases())
def test_random_always_sat_equals_enumeration(tmp_path, text):
    chk = load(tmp_path, text).checks[0]
    for claim in chk.claims:
        if claim.kind == "always":
            event("refuted" if assert_agrees(chk, claim) else "proved")


def test_an_expired_budget_gives_open_never_proved(tmp_path):
    import time

    chk = load(tmp_path, GREENHOUSE).checks[0]
    claim = next(c for c in chk.claims if c.kind == "always")
    assert always.prove(chk, claim, Options(), Budget(time.monotonic() - 1)).status == "open"

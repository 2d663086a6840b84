"""An outside BLIF reader parses every BLIF file countersign writes, and its reading means our circuit.

`blifparser` (a general BLIF library from the package registry, test-only; it
reads .model, .inputs, .outputs, .names and .latch and lists what it finds
wrong in ``problems``) parses the BLIF export of every design in cases/ that
BLIF can hold. From what it parsed, the test evaluates the covers itself (the
on-set when a cover's rows end in 1, the off-set when they end in 0, constant
0 for a cover without rows: the BLIF description's reading of `.names`, from
memory) and compares every latch's input and every output with our model on
random states and inputs. Its metadata pins old networkx and matplotlib
releases that conflict with ours, so it is installed with ``--no-deps``
(.ci/run does that); it reads BLIF with the standard library alone. Without it
the test is skipped with a message.
"""

from __future__ import annotations

import random
from pathlib import Path

import pytest

from checker.elab import load_namespace
from checker.model.aig import evaluate
from checker.tools.netlists import NoForm, write_design

ROOT = Path(__file__).resolve().parent.parent


def all_case_designs():
    out = []
    for f in sorted((ROOT / "cases").glob("*.cnl")):
        for name in load_namespace(str(f)).designs:
            out.append((f.name, name))
    return out


def parse_outside(path: Path, tmp_path: Path, monkeypatch):
    bp = pytest.importorskip("blifparser.blifparser", reason="blifparser is not installed "
                             "(pip install --no-deps blifparser==2.0.1, as .ci/run does)")
    scratch = tmp_path / "blifparser-scratch"
    scratch.mkdir(exist_ok=True)
    # it copies the file into a fresh temporary folder it never removes: keep that under tmp_path
    monkeypatch.setattr(bp.tempfile, "mkdtemp", lambda: str(scratch))
    return bp.BlifParser(str(path)).blif


def cover_value(names_by_out: dict, signal: str, values: dict[str, int]) -> int:
    """The value of ``signal`` from the parsed covers (memoised in ``values``)."""
    if signal in values:
        return values[signal]
    f = names_by_out[signal]
    ins = [cover_value(names_by_out, i, values) for i in f.inputs]
    rows = f.truthtable
    if not rows:
        v = 0
    else:
        kinds = {r[-1] for r in rows}
        assert len(kinds) == 1, f"a cover of {signal} mixes its on-set and off-set"
        hit = any(all(c == "-" or int(c) == x for c, x in zip(r[:-1], ins)) for r in rows)
        v = int(hit) if kinds == {"1"} else int(not hit)
    values[signal] = v
    return v


@pytest.mark.parametrize("case,design", all_case_designs())
def test_blifparser_reads_what_we_write(tmp_path, monkeypatch, case, design):
    d = load_namespace(str(ROOT / "cases" / case)).designs[design]
    out = tmp_path / f"{design}.blif"
    try:
        write_design(d, str(out))
    except NoForm:
        assert d.model.declared_async  # only an asynchronous clear or preset has no BLIF form
        pytest.skip("BLIF has no asynchronous clear or preset (refused with a message)")
    blif = parse_outside(out, tmp_path, monkeypatch)
    assert blif.problems == [], blif.problems
    m = d.model
    assert blif.model.name == design
    latch_of = {l.output: l for l in blif.latches}
    assert set(latch_of) == set(m.states)
    clocks = m.clocks or [None] * len(m.states)
    system_inputs = set()
    for s, k in zip(m.states, clocks):
        latch = latch_of[s]
        if k is None:
            assert latch.type == "re"
            system_inputs.add(latch.control)
        else:
            assert (latch.type, latch.control) == ({"rise": "re", "fall": "fe"}[k[0]], m.states[k[1]])
        assert latch.initval in ("0", "1", "3")
    read_inputs = blif.inputs.inputs if blif.inputs is not None else []  # no line when there are none
    read_outputs = blif.outputs.outputs if blif.outputs is not None else []
    assert set(read_inputs) == set(m.inputs) | system_inputs and len(system_inputs) <= 1
    assert set(read_outputs) == set(m.outputs)
    names_by_out = {f.output: f for f in blif.booleanfunctions}
    assert len(names_by_out) == len(blif.booleanfunctions), "a signal driven twice"
    rng = random.Random(11)
    for _ in range(30):
        state = {n: rng.randint(0, 1) for n in m.states}
        inputs = {n: rng.randint(0, 1) for n in m.inputs}
        lv = {l >> 1: state[n] for n, l in zip(m.states, m.state_lits)}
        lv.update({l >> 1: inputs[n] for n, l in zip(m.inputs, m.input_lits)})
        ours = evaluate(m.aig, lv, list(m.next_lits) + list(m.output_lits), 1)
        values = dict(state, **inputs)
        theirs = [cover_value(names_by_out, latch_of[s].input, values) for s in m.states]
        theirs += [cover_value(names_by_out, o, values) for o in m.outputs]
        assert theirs == ours


def test_blifparser_is_not_blind(tmp_path, monkeypatch):
    # the reference must see a broken file: a cover row of the wrong width, a bad latch type
    p = tmp_path / "broken.blif"
    p.write_text(".model broken\n.inputs a b\n.outputs y\n.names a b y\n1 1\n.latch y q xx c 0\n.end\n")
    blif = parse_outside(p, tmp_path, monkeypatch)
    assert len(blif.problems) >= 2

"""A trace printed by `check --json` replays through `sim --trace`, code for code."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from checker.api import load
from checker.cli import main

CASES = Path(__file__).resolve().parent.parent / "cases"
FAULTS = sorted(p.name for p in CASES.glob("*.cnl")
                if any(l.strip().startswith("# expect:") and l.strip().endswith("refuted")
                       for l in p.read_text(encoding="utf-8").splitlines()))


def test_there_are_refuted_cases():
    assert len(FAULTS) >= 5


@pytest.mark.parametrize("name", FAULTS)
def test_check_trace_replays_in_sim(name, tmp_path, capsys):
    path = str(CASES / name)
    assert main(["check", path, "--json"]) == 1
    claims = json.loads(capsys.readouterr().out)["claims"]
    designs = {c.name: c.design.name for c in load(path).namespace.checks}
    refuted = [c for c in claims if c["status"] == "refuted" and c.get("trace")]
    assert refuted
    for k, claim in enumerate(refuted):
        f = tmp_path / f"claim{k}.json"
        f.write_text(json.dumps(claim))
        assert main(["sim", path, designs[claim["check"]], "--trace", str(f), "--json"]) == 0
        replayed = json.loads(capsys.readouterr().out)["trace"]
        assert [e["code"] for e in replayed] == [e["code"] for e in claim["trace"]], claim
        assert len(replayed) == len(claim["trace"])

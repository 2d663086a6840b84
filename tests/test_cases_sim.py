"""`countersign sim` reproduces the hand-computed runs written in every case file.

Each ``# expect-sim: DESIGN from=CODE cycles=N set=NAME=VALUE,... codes=C0,...``
line of ``cases/*.cnl`` was computed by hand from the flop equations.
"""

from __future__ import annotations

import json
import re
from pathlib import Path

import pytest

from checker.cli import main

CASES = Path(__file__).resolve().parent.parent / "cases"
LINE = re.compile(r"^#\s*expect-sim:\s*(\S+)\s+from=(\S+)\s+cycles=(\d+)\s+set=(\S*)\s+codes=(\S+)\s*$")


def _expectations():
    out = []
    for f in sorted(CASES.rglob("*.cnl")):
        for n, line in enumerate(f.read_text(encoding="utf-8").splitlines(), 1):
            m = LINE.match(line.strip())
            if m:
                out.append(pytest.param(f, *m.groups(), id=f"{f.name}:{n}"))
    return out


EXPECT = _expectations()


def test_cases_carry_hand_computed_runs():
    assert len(EXPECT) >= 10


@pytest.mark.parametrize("path,design,start,cycles,sets,codes", EXPECT)
def test_sim_matches_hand_computation(capsys, path, design, start, cycles, sets, codes):
    args = ["sim", str(path), design, "--from", start, "--cycles", cycles, "--json"]
    if sets:
        args += ["--set", sets]
    assert main(args) == 0
    trace = json.loads(capsys.readouterr().out)["trace"]
    assert [e["code"] for e in trace] == [int(c, 0) for c in codes.split(",")]
    assert [e["clock"] for e in trace] == list(range(int(cycles) + 1))

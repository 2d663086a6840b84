"""`check --jobs N`: the same verdicts in the same order as one at a time; a dead worker is reported."""

from __future__ import annotations

import os
from pathlib import Path

from checker import api
from checker.claims import PROVERS

CASES = Path(__file__).resolve().parent.parent / "cases"
TIMING = {"seconds", "solve_seconds"}


def shape(run: api.CheckRun) -> list[dict]:
    return [{k: v for k, v in r.to_json().items() if k not in TIMING} for r in run.results]


def test_parallel_run_equals_the_sequential_one():
    one = api.check_files([str(CASES)], api.options(), jobs=1)
    two = api.check_files([str(CASES)], api.options(), jobs=2)
    assert len(one.results) > 50
    assert shape(one) == shape(two)


def test_a_worker_that_dies_leaves_its_claim_open(tmp_path, monkeypatch):
    # the always claim of this file kills the process proving it; the count claim is unharmed
    p = tmp_path / "tally.cnl"
    p.write_text("design t\n  in go\n  flop q : T (t = go)\nend\n"
                 "check c of t\n  code q\n  count 0 1\n  hold when !go\n  always q | !q\nend\n")
    def die(*a):
        os._exit(9)

    monkeypatch.setitem(PROVERS, "always", die)
    run = api.check_files([str(p)], api.options(), jobs=2)
    assert [r.claim for r in run.results] == ["count", "always"]
    assert run.results[0].status == "proved"
    assert run.results[1].status == "open" and "stopped" in run.results[1].summary
    # however the pool broke, each claim is answered on its own: the count claim is proved
    many = api.check_files([str(p)] * 3, api.options(), jobs=2)
    assert [r.status for r in many.results] == ["proved", "open"] * 3

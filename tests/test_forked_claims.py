"""The forked child a claim runs in (engines/budget.py, run_bounded): answers of any size come
back whole, an exception is raised again in the parent, a child that dies or overruns its time
is reported as such, and a check of one claim at a time loads no process pool."""

from __future__ import annotations

import json
import os
import subprocess
import sys
import time
from pathlib import Path

import pytest

from checker.engines.budget import Budget, run_bounded

ROOT = Path(__file__).resolve().parent.parent


def test_a_large_answer_comes_back_whole():
    # several times a pipe's buffer: the parent reads while the child writes
    big = {"codes": list(range(400_000)), "text": "hop " * 100_000}
    value, progress, finished = run_bounded(lambda b: big, timeout=None, isolate=True)
    assert finished and value == big and progress == {}


def test_progress_then_answer_in_order():
    def work(b: Budget):
        for k in range(50):
            b.report(depth=k)
        return "done"

    seen: list[dict] = []
    value, progress, finished = run_bounded(work, timeout=30, watch=seen.append)
    assert (value, finished, progress) == ("done", True, {"depth": 49})
    assert [s["depth"] for s in seen] == list(range(50))


def test_an_exception_in_the_child_is_raised_here():
    def work(b: Budget):
        raise ValueError("malt bin overflow")

    with pytest.raises(ValueError, match="malt bin overflow"):
        run_bounded(work, timeout=None, isolate=True)


def test_a_child_that_dies_is_named_with_its_exit_code():
    with pytest.raises(RuntimeError, match=r"ended without an answer \(exit code 7\)"):
        run_bounded(lambda b: os._exit(7), timeout=None, isolate=True)


def test_a_child_past_its_time_is_stopped_with_its_last_progress():
    def work(b: Budget):
        b.report(depth=3)
        time.sleep(60)  # not cooperative: the hard stop must end it

    t0 = time.monotonic()
    value, progress, finished = run_bounded(work, timeout=0.5)
    assert not finished and value is None and progress == {"depth": 3}
    assert time.monotonic() - t0 < 10


def test_no_child_is_left_behind(monkeypatch):
    forked: list[int] = []
    fork = os.fork

    def recorded() -> int:
        pid = fork()
        if pid:
            forked.append(pid)
        return pid

    monkeypatch.setattr(os, "fork", recorded)
    for _ in range(3):
        run_bounded(lambda b: 1, timeout=None, isolate=True)
    run_bounded(lambda b: time.sleep(60), timeout=0.2)
    assert len(forked) == 4
    for pid in forked:  # every child was waited for: none is left, not even as a zombie
        with pytest.raises(ChildProcessError):
            os.waitpid(pid, os.WNOHANG)


def test_a_check_of_one_claim_at_a_time_loads_no_process_pool(tmp_path):
    # a bottle-capper counter, one count claim: the claim runs in a claim runner (a forked child
    # kept for the run; it uses multiprocessing's pipe and process), without concurrent.futures,
    # NumPy or the text report
    f = tmp_path / "capper.cnl"
    f.write_text("design capper\n  in go\n  flop p[1:0] : D (d = mux(go, p, {p[1] ^ p[0], !p[0]}))\nend\n"
                 "check caps of capper\n  code p\n  count 0 .. 3\n  step when go\n  hold when !go\nend\n")
    probe = ("import io, json, sys\nfrom checker import cli\nsys.stdout = io.StringIO()\n"
             "rc = cli.main(sys.argv[1:])\nout = sys.stdout.getvalue()\nsys.stdout = sys.__stdout__\n"
             "print(json.dumps({'rc': rc, 'out': out, 'modules': sorted(sys.modules)}))\n")
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    r = subprocess.run([sys.executable, "-c", probe, "check", str(f), "--json", "--jobs", "1"],
                       capture_output=True, text=True, env=env, check=True)
    doc = json.loads(r.stdout.strip().splitlines()[-1])
    assert doc["rc"] == 0 and json.loads(doc["out"])["claims"][0]["status"] == "proved"
    roots = {m.split(".")[0] for m in doc["modules"]}
    assert not roots & {"concurrent", "numpy", "tabulate"}, sorted(roots & {"concurrent", "numpy", "tabulate"})
    assert "checker.report.text" not in doc["modules"]  # --json builds no text report

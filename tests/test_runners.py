"""Claim runners (checker/claims/runner.py): a child process proves claims one after another; a
claim that overruns its timeout, crashes its process or has it killed is open saying so, the
runner is replaced, and the claims after it still run, with the verdicts of one at a time."""

from __future__ import annotations

import ctypes
import os
import signal
import threading
import time
from pathlib import Path

import pytest

from checker import api
from checker.claims import PROVERS
from checker.claims import always as always_claim

CASES = Path(__file__).resolve().parent.parent / "cases"
TIMING = {"seconds", "solve_seconds"}
TALLY = ("design t\n  in go\n  flop q : T (t = go)\nend\n"
         "check c of t\n  code q\n  count 0 1\n  hold when !go\n  always q | !q\nend\n")


def shape(run: api.CheckRun) -> list[dict]:
    return [{k: v for k, v in r.to_json().items() if k not in TIMING} for r in run.results]


@pytest.fixture
def tally(tmp_path) -> list[str]:
    """Three files of two claims each (count, always): six claims in all."""
    out = []
    for k in range(3):
        p = tmp_path / f"tally{k}.cnl"
        p.write_text(TALLY)
        out.append(str(p))
    return out


def _first_always_does(monkeypatch, tmp_path, act) -> Path:
    """The first always claim of the run does ``act()`` in the process proving it (its pid is written
    to the returned file first); the others are proved as usual."""
    mark = tmp_path / "first.pid"

    def prove(*args):
        try:  # created by exactly one process, whichever runners race for it
            fd = os.open(mark, os.O_CREAT | os.O_EXCL | os.O_WRONLY)
        except FileExistsError:
            return always_claim.prove(*args)
        os.write(fd, str(os.getpid()).encode())
        os.close(fd)
        act()
        return always_claim.prove(*args)

    monkeypatch.setitem(PROVERS, "always", prove)
    return mark


def _record_pids(monkeypatch, tmp_path) -> Path:
    """Every always claim writes the pid of the process proving it to the returned file, a line each."""
    pids = tmp_path / "pids"

    def prove(*args):
        with open(pids, "a") as f:
            f.write(f"{os.getpid()}\n")
        return always_claim.prove(*args)

    monkeypatch.setitem(PROVERS, "always", prove)
    return pids


def the_open_one(run: api.CheckRun) -> int:
    """The index of the one open claim, an always claim (odd index); every other claim proved.
    With two runners, which always claim comes first to a runner depends on the machine's load."""
    opened = [i for i, r in enumerate(run.results) if r.status == "open"]
    assert len(opened) == 1 and opened[0] % 2 == 1, [r.status for r in run.results]
    assert all(r.status == "proved" for i, r in enumerate(run.results) if i != opened[0])
    return opened[0]


def _segfault() -> None:
    import faulthandler
    faulthandler.disable()  # pytest's would print the runner's stack to the test log
    ctypes.string_at(0)  # reads address 0: SIGSEGV


@pytest.mark.parametrize("jobs", [1, 2])
@pytest.mark.parametrize("act", [lambda: os._exit(7), _segfault], ids=["exit", "segfault"])
def test_a_claim_that_ends_its_process_is_open_and_the_next_ones_run(monkeypatch, tmp_path, tally, jobs, act):
    _first_always_does(monkeypatch, tmp_path, act)
    run = api.check_files(tally, api.options(isolate=True), jobs=jobs)
    k = the_open_one(run)
    assert "the process proving this claim stopped" in run.results[k].summary
    assert "exit code" in run.results[k].summary
    assert run.status == 3


@pytest.mark.parametrize("jobs", [1, 2])
def test_a_runner_killed_mid_claim_gives_that_claim_an_error_and_the_next_ones_run(monkeypatch, tmp_path, tally, jobs):
    mark = _first_always_does(monkeypatch, tmp_path, lambda: time.sleep(300))

    def killer():
        for _ in range(600):
            if mark.exists() and mark.read_text():
                time.sleep(0.2)
                os.kill(int(mark.read_text()), signal.SIGKILL)
                return
            time.sleep(0.05)

    t = threading.Thread(target=killer, daemon=True)
    t.start()
    t0 = time.monotonic()
    run = api.check_files(tally, api.options(isolate=True), jobs=jobs)
    t.join(5)
    assert time.monotonic() - t0 < 120  # not the 300 s the claim would sleep
    k = the_open_one(run)
    assert "stopped" in run.results[k].summary and "-9" in run.results[k].summary
    assert int(mark.read_text()) != os.getpid()  # it ran in a child, not here


@pytest.mark.parametrize("jobs", [1, 2])
def test_a_claim_past_its_timeout_is_open_and_its_runner_replaced(monkeypatch, tmp_path, tally, jobs):
    # the solver-like call below never looks at its budget: only the hard stop ends it
    _first_always_does(monkeypatch, tmp_path, lambda: time.sleep(300))
    t0 = time.monotonic()
    run = api.check_files(tally, api.options(timeout=3.0), jobs=jobs)  # room for a loaded machine
    assert time.monotonic() - t0 < 120
    k = the_open_one(run)
    assert run.results[k].summary == "ran out of time after 3 s"
    assert 3.0 <= run.results[k].seconds < 60


def test_claims_run_one_after_another_in_one_runner(monkeypatch, tmp_path, tally):
    # one child for the whole run, not one per claim
    pids = _record_pids(monkeypatch, tmp_path)
    run = api.check_files(tally, api.options(isolate=True), jobs=1)
    assert [r.status for r in run.results] == ["proved"] * 6
    seen = pids.read_text().split()
    assert len(seen) == 3 and len(set(seen)) == 1 and int(seen[0]) != os.getpid()


def test_runners_give_the_verdicts_of_one_at_a_time_with_a_timeout():
    here = api.check_files([str(CASES)], api.options(), jobs=1)  # in this process
    one = api.check_files([str(CASES)], api.options(timeout=120), jobs=1)  # one runner
    two = api.check_files([str(CASES)], api.options(timeout=120, isolate=True), jobs=2)
    assert len(here.results) > 50
    assert shape(here) == shape(one) == shape(two)
    assert here.status == one.status == two.status


def test_a_watcher_hears_every_claim_start_and_end_in_runners(tally):
    from checker.claims import run_claims

    class Heard:
        def __init__(self):
            self.events = []

        def started(self, key, label, budget):
            self.events.append(("started", key))

        def told(self, key, info):
            pass

        def finished(self, key, status):
            self.events.append(("finished", key, status))

    pairs = [(c, cl) for f in tally for c in api.load(f).namespace.checks for cl in c.claims]
    heard = Heard()
    results = run_claims(pairs, api.options(isolate=True), 2, heard)
    assert [r.status for r in results] == ["proved"] * 6
    assert sorted(e[1] for e in heard.events if e[0] == "started") == list(range(6))
    assert sorted(e[1] for e in heard.events if e[0] == "finished") == list(range(6))


@pytest.mark.parametrize("limit", ["claims", "memory"])
def test_a_runner_is_retired_after_many_claims_or_much_memory(monkeypatch, tmp_path, tally, limit):
    # a fresh runner takes over, so what claims leave behind never builds up without bound
    from checker.claims import runner

    if limit == "claims":
        monkeypatch.setattr(runner, "RUNNER_CLAIMS", 2)  # each file's two claims, then a fresh runner
    else:
        monkeypatch.setattr(runner, "RUNNER_GROWTH_BYTES", -(1 << 40))  # any runner counts as grown
    pids = _record_pids(monkeypatch, tmp_path)
    run = api.check_files(tally, api.options(isolate=True), jobs=1)
    assert [r.status for r in run.results] == ["proved"] * 6
    assert len(set(pids.read_text().split())) == 3


def test_a_runner_that_died_while_idle_is_replaced_before_its_next_claim():
    from checker.claims.runner import Runner

    r = Runner(lambda item, opts, budget: item * 2).fork()
    r.send(1, 21, None, None)
    assert r.receive() == (True, 42)
    r.proc.kill()  # from outside, between two claims
    r.proc.join()
    r.send(2, 5, None, 10.0)
    done = False
    while not done:
        done, res = r.receive()
    assert res == 10
    r.close()
    assert r.proc is None

"""`check --cluster ADDRESS`: the same verdicts, in the same order, as one claim at a time,
on a Dask LocalCluster the tests start; a lost worker leaves its claim open, never a hang."""

from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

from checker import api
from checker.errors import InputError

CASES = Path(__file__).resolve().parent.parent / "cases"
TIMING = {"seconds", "solve_seconds"}
TALLY = ("design t\n  in go\n  flop q : T (t = go)\nend\n"
         "check c of t\n  code q\n  count 0 1\n  hold when !go\n  always q | !q\nend\n")


def shape(results) -> list[dict]:
    return [{k: v for k, v in r.items() if k not in TIMING} for r in results]


def _distributed():
    return pytest.importorskip("distributed", reason="Dask distributed is not installed (pip install 'countersign[cluster]')")


def _cluster(n_workers: int):
    distributed = _distributed()
    return distributed.LocalCluster(n_workers=n_workers, threads_per_worker=1, processes=True,
                                    dashboard_address=":0", silence_logs=40)


@pytest.fixture(scope="module")
def two_workers():
    with _cluster(2) as lc:
        yield lc.scheduler_address


def _by_value():
    import cloudpickle
    cloudpickle.register_pickle_by_value(sys.modules[__name__])


def test_cluster_json_equals_one_at_a_time(two_workers):
    env = dict(os.environ)
    run = lambda *extra: subprocess.run([sys.executable, "-m", "checker", "check", str(CASES), "--json", *extra],
                                        capture_output=True, text=True, env=env, timeout=600)
    one, many = run("--jobs", "1"), run("--cluster", two_workers)
    assert one.returncode == many.returncode == 1  # the cases hold refuted claims on purpose
    a, b = json.loads(one.stdout)["claims"], json.loads(many.stdout)["claims"]
    assert len(a) > 50
    assert shape(a) == shape(b)


def test_api_cluster_equals_jobs(two_workers):
    one = api.check_files([str(CASES / "demo.cnl"), str(CASES / "keg_rack.cnl")], api.options(), jobs=1)
    far = api.check_files([str(CASES / "demo.cnl"), str(CASES / "keg_rack.cnl")], api.options(timeout=60),
                          cluster=two_workers)
    assert shape(r.to_json() for r in one.results) == shape(r.to_json() for r in far.results)
    assert one.status == far.status


def _exit_now(*args):
    os._exit(9)


def _patch_always(prover) -> None:
    from checker.claims import PROVERS, cluster
    PROVERS["always"] = prover
    cluster.retire_runners()  # runners forked before the patch would not see it


def _segfault(*args):
    import ctypes
    import faulthandler
    faulthandler.disable()
    ctypes.string_at(0)  # reads address 0: SIGSEGV


def _slow(*args):
    time.sleep(300)


def _slow_marked(mark: str):
    def prove(*args):
        with open(mark, "a") as f:
            f.write(f"{os.getpid()}\n")
        time.sleep(300)
    return prove


@pytest.mark.parametrize("end", [_exit_now, _segfault], ids=["exit", "segfault"])
def test_a_claim_that_kills_its_process_is_open_and_the_worker_lives(tmp_path, two_workers, end):
    # the always claim kills the process proving it, on every worker; each claim runs in a
    # runner (a child of its worker), so the worker survives and the count claim is proved
    distributed = _distributed()
    _by_value()
    p = tmp_path / "tally.cnl"
    p.write_text(TALLY)
    with distributed.Client(two_workers) as client:
        client.run(_patch_always, end)
        try:
            run = api.check_files([str(p)] * 2, api.options(), cluster=two_workers)
            assert [r.status for r in run.results] == ["proved", "open"] * 2
            assert "stopped" in run.results[1].summary
            assert run.status == 3
            assert len(client.scheduler_info()["workers"]) == 2
        finally:
            from checker.claims import always
            client.run(_patch_always, always.prove)


def test_a_claim_past_its_timeout_on_a_worker_is_open_and_the_next_ones_run(tmp_path, two_workers):
    # the always claims sleep without looking at their budget: only the runner's hard stop ends them
    distributed = _distributed()
    _by_value()
    p = tmp_path / "tally.cnl"
    p.write_text(TALLY)
    with distributed.Client(two_workers) as client:
        client.run(_patch_always, _slow)
        try:
            t0 = time.monotonic()
            run = api.check_files([str(p)] * 3, api.options(timeout=3.0), cluster=two_workers)
            assert time.monotonic() - t0 < 120
            assert [r.status for r in run.results] == ["proved", "open"] * 3, [r.summary for r in run.results]
            assert all(r.summary == "ran out of time after 3 s" for r in run.results[1::2])
            assert len(client.scheduler_info()["workers"]) == 2
        finally:
            from checker.claims import always
            client.run(_patch_always, always.prove)


def _alive(pid: int) -> bool:
    try:
        with open(f"/proc/{pid}/stat") as f:
            return f.read().rsplit(")", 1)[1].split()[0] != "Z"
    except OSError:
        return False


@pytest.mark.skipif(not Path("/proc").is_dir(), reason="reads /proc to see the runner end")
def test_ctrl_c_stops_a_claim_running_on_a_worker(tmp_path, two_workers):
    # Ctrl-C ends the command; the claim it left running on a worker is called off, and the
    # worker kills the runner proving it (it would otherwise sleep on for 300 s)
    distributed = _distributed()
    _by_value()
    p = tmp_path / "tally.cnl"
    p.write_text(TALLY)
    mark = tmp_path / "pids"
    with distributed.Client(two_workers) as client:
        client.run(_patch_always, _slow_marked(str(mark)))
        try:
            proc = subprocess.Popen([sys.executable, "-m", "checker", "check", str(p), "--cluster", two_workers],
                                    stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, start_new_session=True)
            deadline = time.monotonic() + 120
            while not (mark.exists() and mark.read_text().strip()) and time.monotonic() < deadline:
                time.sleep(0.1)
            pid = int(mark.read_text().split()[0])
            assert _alive(pid) and proc.poll() is None
            os.killpg(proc.pid, signal.SIGINT)  # what a terminal's Ctrl-C does
            out, err = proc.communicate(timeout=60)
            assert proc.returncode == 130 and err.strip() == "interrupted"
            deadline = time.monotonic() + 30
            while _alive(pid) and time.monotonic() < deadline:
                time.sleep(0.1)
            assert not _alive(pid)
            assert len(client.scheduler_info()["workers"]) == 2
        finally:
            from checker.claims import always
            client.run(_patch_always, always.prove)


def test_a_worker_killed_mid_claim_leaves_that_claim_open(tmp_path):
    # one worker, no retries: the worker is killed while it proves the (slowed) always claim
    distributed = _distributed()
    import dask
    _by_value()
    p = tmp_path / "tally.cnl"
    p.write_text(TALLY)
    with dask.config.set({"distributed.scheduler.allowed-failures": 0}), _cluster(1) as lc:
        with distributed.Client(lc.scheduler_address) as client:
            client.run(_patch_always, _slow)
            pid = next(iter(client.run(os.getpid).values()))

            def kill_when_busy():
                for _ in range(600):
                    busy = [k for keys in client.processing().values() for k in keys]
                    if busy and time.monotonic() - start > 2:
                        os.kill(pid, signal.SIGKILL)
                        return
                    time.sleep(0.1)

            import threading
            start = time.monotonic()
            killer = threading.Thread(target=kill_when_busy, daemon=True)
            killer.start()
            run = api.check_files([str(p)], api.options(), cluster=lc.scheduler_address)
            killer.join(5)
    assert [r.claim for r in run.results] == ["count", "always"]
    assert run.results[0].status == "proved"
    assert run.results[1].status == "open" and "lost the worker" in run.results[1].summary
    assert run.status == 3


def _slow_once(mark: str):
    def prove(*args):
        try:
            fd = os.open(mark, os.O_CREAT | os.O_EXCL | os.O_WRONLY)
        except FileExistsError:
            from checker.claims import always
            return always.prove(*args)
        os.write(fd, str(os.getpid()).encode())
        os.close(fd)
        time.sleep(300)
    return prove


def test_a_batch_whose_worker_is_killed_is_answered_claim_by_claim(tmp_path, monkeypatch):
    # six claims in one task (one batch); the worker is killed while it proves the second: the
    # cluster loses the batch, whose claims are then sent again one to a task (to the worker its
    # nanny started anew): every claim answered, none lost, no hang
    distributed = _distributed()
    import dask
    from checker.claims import cluster
    _by_value()
    monkeypatch.setattr(cluster, "BATCHES_PER_THREAD", 1)
    p = tmp_path / "tally.cnl"
    p.write_text(TALLY)
    mark = tmp_path / "first.pid"
    with dask.config.set({"distributed.scheduler.allowed-failures": 0}), _cluster(1) as lc:
        with distributed.Client(lc.scheduler_address) as client:
            client.run(_patch_always, _slow_once(str(mark)))
            pid = next(iter(client.run(os.getpid).values()))

            killed = []

            def kill_when_busy():
                for _ in range(1200):
                    if mark.exists() and mark.read_text():
                        os.kill(pid, signal.SIGKILL)
                        killed.append(pid)
                        return
                    time.sleep(0.1)

            import threading
            killer = threading.Thread(target=kill_when_busy, daemon=True)
            killer.start()
            t0 = time.monotonic()
            run = api.check_files([str(p)] * 3, api.options(), cluster=lc.scheduler_address)
            killer.join(5)
            assert time.monotonic() - t0 < 120
            assert killed and pid not in client.run(os.getpid).values()  # a new worker proved the rest
    assert cluster.batch_size(6, 1) == 6
    assert [r.status for r in run.results] == ["proved"] * 6, [r.summary for r in run.results]
    assert run.status == 0


def test_a_scheduler_that_cannot_read_the_tasks_is_one_clear_error():
    # what Dask raises when the scheduler runs another countersign (or none)
    from checker.claims import cluster
    e = RuntimeError("Error during deserialization of the task graph. This frequently\noccurs if ...")
    clear = cluster.unreadable(e, "tcp://h:8786")
    assert clear is not None and clear.pos.file == "<command line>"
    assert "install countersign" in clear.message and "\n" not in clear.message
    assert cluster.unreadable(RuntimeError("a bug"), "tcp://h:8786") is None


def test_batch_sizes():
    from checker.claims import cluster
    assert cluster.batch_size(2, 2) == 1  # a few claims: one to a task
    assert cluster.batch_size(306, 2) == cluster.BATCH_CLAIMS
    assert cluster.batch_size(40, 2) == 5  # every thread still gets BATCHES_PER_THREAD tasks
    assert cluster.batch_size(10, 0) == 2


def test_missing_dask_is_one_clear_error(monkeypatch, tmp_path):
    p = tmp_path / "tally.cnl"
    p.write_text(TALLY)
    monkeypatch.setitem(sys.modules, "distributed", None)  # import distributed now raises ImportError
    with pytest.raises(InputError) as e:
        api.check_files([str(p)], api.options(), cluster="tcp://127.0.0.1:8786")
    assert e.value.pos.file == "<command line>"
    assert "countersign[cluster]" in e.value.message and "\n" not in e.value.message


def test_a_malformed_address_is_refused_at_the_command_line(tmp_path):
    _distributed()
    p = tmp_path / "tally.cnl"
    p.write_text(TALLY)
    r = subprocess.run([sys.executable, "-m", "checker", "check", str(p), "--cluster", "tcp://nowhere"],
                       capture_output=True, text=True, timeout=120)
    assert r.returncode == 2
    assert r.stderr.startswith("<command line>:1:1: --cluster takes a scheduler address")
    assert r.stderr.count("\n") == 1 and r.stdout == ""


def test_a_scheduler_without_workers_leaves_the_claims_open(tmp_path, monkeypatch):
    # a scheduler with no worker at all: after the grace period every claim still waiting is open
    distributed = _distributed()
    import checker.claims as claims
    from checker.claims import cluster
    monkeypatch.setattr(cluster, "NO_WORKER_SECONDS", 1.0)
    monkeypatch.setattr(claims, "POLL_SECONDS", 0.2)
    p = tmp_path / "tally.cnl"
    p.write_text(TALLY)
    with distributed.LocalCluster(n_workers=0, processes=False, dashboard_address=":0", silence_logs=40) as lc:
        run = api.check_files([str(p)], api.options(), cluster=lc.scheduler_address)
    assert [r.status for r in run.results] == ["open", "open"]
    assert all("no worker for 1 s" in r.summary for r in run.results)
    assert run.status == 3

"""How the command line's process ends (cli.leave): with the status of the command, every line of
its output, and the exit handlers run, but without taking the interpreter apart object by object
(that took 0.05 to 0.2 s after the last line). Python's own exit is kept while another thread runs."""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
ENV = dict(os.environ, PYTHONPATH=str(ROOT))


def _py(code: str) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, env=ENV, timeout=120)


def test_status_output_and_exit_handlers():
    r = _py("import atexit, sys\nfrom checker.cli import leave\n"
            "atexit.register(lambda: sys.stderr.write('handler ran\\n'))\n"
            "sys.stdout.write('x' * 200000)\nleave(3)\n")
    assert r.returncode == 3
    assert r.stdout == "x" * 200000
    assert r.stderr == "handler ran\n"


def test_a_running_thread_is_waited_for():
    r = _py("import threading, time\nfrom checker.cli import leave\n"
            "t = threading.Thread(target=lambda: (time.sleep(0.3), print('thread done', flush=True)))\n"
            "t.start()\nleave(4)\n")
    assert r.returncode == 4 and r.stdout == "thread done\n"


def test_check_exit_status_and_whole_json(tmp_path):
    # a greenhouse vent stepper: a proved count claim and a refuted always claim
    f = tmp_path / "vent.cnl"
    f.write_text("design vent\n  in go\n  flop p[1:0] : D (d = mux(go, p, {p[1] ^ p[0], !p[0]}))\nend\n"
                 "check steps of vent\n  code p\n  count 0 .. 3\n  step when go\n  hold when !go\n"
                 "  always p != 3\nend\n")
    r = subprocess.run([sys.executable, "-m", "checker", "check", str(f), "--json"], capture_output=True,
                       text=True, env=ENV, timeout=120)
    assert r.returncode == 1, r.stderr
    assert [c["status"] for c in json.loads(r.stdout)["claims"]] == ["proved", "refuted"]
    r = subprocess.run([sys.executable, "-m", "checker", "check", str(f)], capture_output=True,
                       text=True, env=ENV, timeout=120)
    assert r.returncode == 1 and r.stdout.rstrip().endswith("1 proved, 1 refuted, 0 open")


def test_a_profiler_still_gets_its_numbers(tmp_path):
    # python -m cProfile writes its table after the program returns: leave() must let it
    f = tmp_path / "hop.cnl"
    f.write_text("design hop\n  flop q[1:0] : D (d = {q[0], !q[1]})\nend\ncheck steps of hop\n  code q\n"
                 "  count johnson\nend\n")
    out = tmp_path / "run.prof"
    r = subprocess.run([sys.executable, "-m", "cProfile", "-o", str(out), "-m", "checker", "check", str(f), "--json"],
                       capture_output=True, text=True, env=ENV, timeout=120)
    assert r.returncode == 0, r.stderr
    assert out.is_file() and out.stat().st_size > 0

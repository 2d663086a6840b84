"""Live progress (issue 11, point 9): a line per running claim on a terminal's stderr, and
nothing of it when stderr is piped, with --quiet or with --json.

The terminal is a pseudo-terminal (the ``pty`` module); the command runs as a user would
start it. No timing is asserted: only whether the lines appear.
"""

from __future__ import annotations

import json
import os
import pty
import re
import select
import subprocess
import sys
from pathlib import Path

import pytest

from checker.engines.budget import Budget, run_bounded
from checker.report.progress import describe

ROOT = Path(__file__).resolve().parent.parent
DEMO = str(ROOT / "cases" / "demo.cnl")
ANSI = re.compile(r"\x1b\[[0-9;?]*[A-Za-z]")
LABEL = "batch:78 recover within 4"  # a claim of the demo, as its line names it


def _env() -> dict:
    env = dict(os.environ, TERM="xterm", COLUMNS="200")
    env["PYTHONPATH"] = str(ROOT) + os.pathsep + env.get("PYTHONPATH", "")
    return env


def _run(args: list[str], tty: bool) -> tuple[int, str, str]:
    """Run countersign with stderr on a pseudo-terminal (``tty``) or a pipe; (status, stdout, stderr)."""
    cmd = [sys.executable, "-m", "checker", *args]
    if not tty:
        p = subprocess.run(cmd, capture_output=True, env=_env(), cwd=ROOT, timeout=300)
        return p.returncode, p.stdout.decode(), p.stderr.decode()
    master, slave = pty.openpty()
    p = subprocess.Popen(cmd, stdin=slave, stdout=subprocess.PIPE, stderr=slave, env=_env(), cwd=ROOT)
    os.close(slave)
    err = b""
    while True:
        ready, _, _ = select.select([master], [], [], 0.2)
        if ready:
            try:
                chunk = os.read(master, 65536)
            except OSError:  # the child closed the terminal
                break
            if not chunk:
                break
            err += chunk
        elif p.poll() is not None:
            break
    out = p.stdout.read().decode()
    p.stdout.close()
    os.close(master)
    return p.wait(timeout=300), out, ANSI.sub("", err.decode(errors="replace"))


@pytest.mark.parametrize("jobs", ["1", "2"])
def test_progress_lines_on_a_terminal(jobs):
    rc, out, err = _run(["check", DEMO, "--jobs", jobs], tty=True)
    assert rc == 1  # the demo refutes one claim on purpose
    assert LABEL in err  # its line named the running claim
    assert "limit" in err  # and the time it may take
    assert LABEL not in out and "verdict" in out  # the report itself is on stdout, untouched


def test_no_progress_when_piped_quiet_or_json():
    rc, out, err = _run(["check", DEMO, "--jobs", "1"], tty=False)
    assert rc == 1 and LABEL not in err and err.strip() == ""
    rc, out, err = _run(["check", DEMO, "--jobs", "1", "--quiet"], tty=True)
    assert rc == 1 and LABEL not in err
    rc, out, err = _run(["check", DEMO, "--jobs", "1", "--json"], tty=True)
    assert rc == 1 and LABEL not in err
    assert len(json.loads(out)["claims"]) > 0  # stdout is one JSON document, nothing else


def test_progress_reaches_the_parent_from_a_child():
    # what an engine notes in a forked child arrives at the watcher in this process
    seen: list[dict] = []

    def work(b: Budget):
        b.note(engine="explicit", searched=5, of=10)
        b.report(depth=3)
        return "done"
    value, progress, finished = run_bounded(work, timeout=None, isolate=True, watch=seen.append)
    assert finished and value == "done" and progress == {"depth": 3}
    assert {"engine": "explicit", "searched": 5, "of": 10} in seen and any(s.get("depth") == 3 for s in seen)
    # and here, without a child
    seen.clear()
    run_bounded(work, timeout=None, isolate=False, watch=seen.append)
    assert any(s.get("searched") == 5 for s in seen)


def test_a_line_says_engine_and_how_far():
    text = describe("fill:10 recover", {"engine": "explicit", "searched": 3 << 20, "of": 16 << 20})
    assert "explicit" in text and "3.0M" in text and "16.0M" in text
    assert "depth 12" in describe("x", {"engine": "sat", "depth": 12})


def test_help_does_not_load_the_display_library():
    code = ("import sys; from checker import cli\n"
            "try:\n    cli.main(['--help'])\nexcept SystemExit:\n    pass\n"
            "assert 'rich' not in sys.modules, 'rich imported for --help'")
    p = subprocess.run([sys.executable, "-c", code], capture_output=True, env=_env(), cwd=ROOT, timeout=120)
    assert p.returncode == 0, p.stderr.decode()

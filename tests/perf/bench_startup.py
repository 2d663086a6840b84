"""Benchmark of start-up: python tests/perf/bench_startup.py [--quick]

Wall time of fresh processes, best and median of N runs each, side by side in
one run of this script:

* `countersign --help` and `--version` as they are now (modules loaded on
  first use), against the same command after loading every module of the
  package first, which is what start-up cost before (the API imported the
  claims, engines, reports and their libraries at once);
* `countersign check` on a small file (one count claim), both ways;
* `python -c pass`, the floor no command can go below.

Writes tests/perf/RESULTS_startup.md.
"""

from __future__ import annotations

import os
import platform
import resource
import statistics
import subprocess
import sys
import tempfile
import time

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
RUNS = 5 if "--quick" in sys.argv else 15

EAGER = ("import importlib, pkgutil, checker\n"
         "for m in pkgutil.walk_packages(checker.__path__, 'checker.'):\n"
         "    if not m.name.endswith('__main__'):\n"
         "        importlib.import_module(m.name)\n")
CLI = "import sys\nfrom checker.cli import main\ntry:\n    sys.exit(main(sys.argv[1:]))\nexcept SystemExit as e:\n    sys.exit(e.code)\n"
VENT = ("design vent\n  in go\n  flop p[1:0] : D (d = mux(go, p, {p[1] ^ p[0], !p[0]}))\nend\n"
        "check steps of vent\n  code p\n  count 0 .. 3\n  step when go\n  hold when !go\nend\n")


def wall(code: str, argv: list[str]) -> tuple[float, float, float]:
    """(best wall time, median wall time, median CPU time: user + system, which a busy machine
    disturbs less than wall time)."""
    env = dict(os.environ, PYTHONPATH=ROOT)
    times, cpu = [], []
    for _ in range(RUNS):
        before = resource.getrusage(resource.RUSAGE_CHILDREN)
        t0 = time.perf_counter()
        subprocess.run([sys.executable, "-c", code, *argv], stdout=subprocess.DEVNULL, env=env, check=False)
        times.append(time.perf_counter() - t0)
        after = resource.getrusage(resource.RUSAGE_CHILDREN)
        cpu.append(after.ru_utime + after.ru_stime - before.ru_utime - before.ru_stime)
    return min(times), statistics.median(times), statistics.median(cpu)


def ms(s: float) -> str:
    return f"{s * 1000:.0f} ms"


def main() -> None:
    fd, vent = tempfile.mkstemp(suffix=".cnl")
    with os.fdopen(fd, "w") as f:
        f.write(VENT)
    rows = []
    floor = wall("pass", [])
    rows.append(("python -c pass", ms(floor[0]), ms(floor[1]), ms(floor[2]), "-", "-", "-", "-"))
    for label, argv in (("--help", ["--help"]), ("--version", ["--version"]), ("sim --help", ["sim", "--help"]),
                        ("check (one count claim)", ["check", vent, "--jobs", "1"])):
        lazy = wall(CLI, argv)
        eager = wall(EAGER + CLI, argv)
        rows.append((f"countersign {label}", ms(lazy[0]), ms(lazy[1]), ms(lazy[2]), ms(eager[0]), ms(eager[1]),
                     ms(eager[2]), f"{eager[2] / lazy[2]:.1f}x"))
        print(*rows[-1], sep=" | ", flush=True)
    os.unlink(vent)
    lines = ["# start-up benchmark", "",
             f"`python tests/perf/bench_startup.py` on {platform.processor() or platform.machine()}, "
             f"{os.cpu_count()} cores, Python {platform.python_version()}: {RUNS} fresh processes per cell, "
             "every cell from one run of the script (the machine is shared: the best of the runs is the "
             "least disturbed).", "",
             "| command | now: best wall | now: median wall | now: median CPU | every module loaded first "
             "(before): best wall | before: median wall | before: median CPU | CPU ratio |",
             "|---|---|---|---|---|---|---|---|"]
    lines += ["| " + " | ".join(r) + " |" for r in rows]
    out = os.path.join(os.path.dirname(os.path.abspath(__file__)), "RESULTS_startup.md")
    with open(out, "w") as f:
        f.write("\n".join(lines) + "\n")
    print("wrote", out)


if __name__ == "__main__":
    main()

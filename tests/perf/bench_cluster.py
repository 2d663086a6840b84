"""Benchmark: `check` of a folder of claims one at a time, with --jobs 2, and on a two-worker
Dask LocalCluster, side by side in one run.

Run:  python tests/perf/bench_cluster.py [--copies N]

The folder holds N copies (default 3) of every file of cases/ (with the files
they use), each copy with its `recover within` bounds raised by its copy
number, so the copies are variants rather than repeats (a raised bound proves
what the original proves; verdicts are unchanged, which the run checks).
Each configuration is one whole `countersign check FOLDER --json` process,
timed by wall clock, REPEAT times (median); the JSON of every configuration
must equal that of --jobs 1 except for timings. The cluster is started
once, before the timed runs, and its start-up time is reported on its own.
Writes tests/perf/RESULTS_cluster.md.
"""

from __future__ import annotations

import json
import os
import platform
import re
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
CASES = ROOT / "cases"
REPEAT = 3
TIMING = {"seconds", "solve_seconds"}


def make_folder(dest: Path, copies: int) -> None:
    """``copies`` variants of cases/: copy k raises every `recover within N` to N + k."""
    for k in range(copies):
        sub = dest / f"line{k}"
        shutil.copytree(CASES, sub, ignore=shutil.ignore_patterns("README.md"))
        for f in sub.rglob("*.cnl"):
            text = f.read_text(encoding="utf-8")
            f.write_text(re.sub(r"(?m)^(\s*recover within )(\d+)", lambda m: f"{m.group(1)}{int(m.group(2)) + k}", text),
                         encoding="utf-8")


def run(folder: Path, extra: list[str]) -> tuple[float, int, list[dict]]:
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    t0 = time.perf_counter()
    r = subprocess.run([sys.executable, "-m", "checker", "check", str(folder), "--json", *extra],
                       capture_output=True, text=True, env=env, timeout=3600)
    wall = time.perf_counter() - t0
    claims = json.loads(r.stdout)["claims"]
    return wall, r.returncode, [{k: v for k, v in c.items() if k not in TIMING} for c in claims]


def main(copies: int) -> None:
    from distributed import LocalCluster

    tmp = Path(tempfile.mkdtemp())
    make_folder(tmp / "lines", copies)
    folder = tmp / "lines"
    t0 = time.perf_counter()
    with LocalCluster(n_workers=2, threads_per_worker=1, processes=True, dashboard_address=":0",
                      silence_logs=40) as lc:
        start = time.perf_counter() - t0
        configs = [("--jobs 1", ["--jobs", "1"]), ("--jobs 2", ["--jobs", "2"]),
                   ("two-worker LocalCluster", ["--cluster", lc.scheduler_address])]
        walls: dict[str, list[float]] = {name: [] for name, _ in configs}
        base = None
        for _ in range(REPEAT):  # interleaved, so that load from elsewhere falls on every column alike
            for name, extra in configs:
                wall, rc, shape = run(folder, extra)
                if base is None:
                    base = (rc, shape)
                assert (rc, shape) == base, f"{name}: verdicts differ from --jobs 1"
                walls[name].append(wall)
    assert base is not None
    n = len(base[1])
    counts = {s: sum(1 for c in base[1] if c["status"] == s) for s in ("proved", "refuted", "open")}
    t1 = statistics.median(walls["--jobs 1"])
    out = ["# Claims in parallel: one at a time, --jobs 2, a two-worker Dask LocalCluster", "",
           f"Machine: 2 cores shared with other work; Python {platform.python_version()}; "
           f"medians of {REPEAT} whole `countersign check FOLDER --json` processes, the three columns interleaved.", "",
           f"Folder: {copies} variants of cases/ (each copy's `recover within` bounds raised by its number), "
           f"{n} claims: {counts['proved']} proved, {counts['refuted']} refuted, {counts['open']} open; "
           "the JSON of every run equals that of --jobs 1 except for timings.", "",
           "| run | wall s | claims/s | speed-up over --jobs 1 |", "|---|---:|---:|---:|"]
    for name, _ in configs:
        t = statistics.median(walls[name])
        out.append(f"| {name} | {t:.2f} | {n / t:.0f} | {t1 / t:.2f} |")
    out += ["", f"Starting the LocalCluster (scheduler and two worker processes) took {start:.2f} s, "
            "not counted above: a real cluster is already running when `check --cluster` connects.", "",
            "Every claim here takes milliseconds, so the run is dominated by fixed costs: "
            "starting Python and reading the files (about the whole of --jobs 1's time outside the claims), "
            "and per claim a forked child (--jobs: one pool of forked workers; cluster: the check pickled "
            "once per claim, sent to a worker, run there in a child process of its own under its timeout). "
            "The speed-up grows with the time each claim takes.", ""]
    text = "\n".join(out)
    print(text)
    (Path(__file__).parent / "RESULTS_cluster.md").write_text(text, encoding="utf-8")


if __name__ == "__main__":
    copies = int(sys.argv[sys.argv.index("--copies") + 1]) if "--copies" in sys.argv else 3
    main(copies)

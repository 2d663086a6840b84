"""Benchmark of the recover engines: python tests/perf/bench_recover.py [--quick]

Brewery batch counters `count 0 .. LAST` in T flops whose clear decodes only
the ones of LAST, so an unused code counts up until it meets a code holding
those ones:

* long tails (widths 8 to 24): LAST = 2^(w/2) - 1, worst 2^(w/2); and the
  longest, LAST = 2^(w-1) - 1, worst 2^(w-1);
* short tails (widths 8 to 128): LAST = 0b11 << (w-2) | 0b11, worst 4.

Each measurement runs in its own forked process (its own peak memory). SAT
runs get a timeout; one that runs out is shown as open with its depth. The
explicit and SAT columns of a row come from the same run of this script, so
their ratio compares like with like. Writes tests/perf/RESULTS_recover.md.
"""

from __future__ import annotations

import multiprocessing as mp
import os
import platform
import resource
import sys
import tempfile
import time

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
sys.path.insert(0, ROOT)

from checker.claims import run_claim  # noqa: E402
from checker.claims.common import Options  # noqa: E402
from checker.elab import load_namespace  # noqa: E402

sys.path.insert(0, os.path.join(ROOT, "tests"))
from test_recover import tail_counter as batch_counter  # noqa: E402  (the tests' own design)
from test_compact import pump as dosing_pump  # noqa: E402  (a greenhouse dosing pump: two rows)


def _child(conn, text: str, engine: str, timeout):
    fd, path = tempfile.mkstemp(suffix=".cnl")
    with os.fdopen(fd, "w") as f:
        f.write(text)
    check = load_namespace(path).checks[0]
    os.unlink(path)
    claim = [c for c in check.claims if c.kind == "recover"][0]
    t0 = time.perf_counter()
    r = run_claim(check, claim, Options(engine=engine, timeout=timeout))
    dt = time.perf_counter() - t0
    rss = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss // 1024
    conn.send((r.status, r.details.get("worst"), r.details.get("engine"), r.details.get("depth"), dt, rss))
    conn.close()


def measure(text: str, engine: str, timeout=None):
    ctx = mp.get_context("fork")
    a, b = ctx.Pipe(duplex=False)
    p = ctx.Process(target=_child, args=(b, text, engine, timeout))
    p.start()
    b.close()
    out = a.recv()
    p.join()
    return out


def cell(m) -> str:
    status, worst, engine, depth, dt, rss = m
    if status == "open":
        return f"open at depth {depth} ({dt:.1f} s)"
    return f"{dt:.2f} s"


def main() -> None:
    quick = "--quick" in sys.argv
    sat_timeout = 20.0 if quick else 60.0
    rows: list[str] = []

    def out(line: str = "") -> None:
        print(line, flush=True)
        rows.append(line)

    out("## Long recovery tails (LAST = 2^(w/2) - 1, worst 2^(w/2))")
    out()
    out("| width | worst | auto engine | explicit | explicit peak MiB | SAT | SAT / explicit |")
    out("|---:|---:|---|---:|---:|---:|---:|")
    widths = [8, 12, 16, 20] if quick else [8, 12, 16, 20, 24]
    for w in widths:
        text = batch_counter(w, (1 << (w // 2)) - 1)
        auto = measure(text, "auto")
        ex = measure(text, "explicit")
        sat = measure(text, "sat", sat_timeout if w >= 16 else None)
        ratio = f"{sat[4] / ex[4]:.1f}" if sat[0] != "open" else f"> {sat[4] / ex[4]:.0f}"
        out(f"| {w} | {ex[1]} | {auto[2]} | {cell(ex)} | {ex[5]} | {cell(sat)} | {ratio} |")
    out()
    out("## Longest tails (LAST = 2^(w-1) - 1, worst 2^(w-1)): explicit only")
    out()
    out("| width | worst | explicit | peak MiB |")
    out("|---:|---:|---:|---:|")
    for w in ([16, 20] if quick else [16, 20, 24]):
        ex = measure(batch_counter(w, (1 << (w - 1)) - 1), "explicit")
        out(f"| {w} | {ex[1]} | {cell(ex)} | {ex[5]} |")
    out()
    out("## Short tails (LAST = 0b11 << (w-2) | 0b11, worst 4)")
    out()
    out("| width | worst | auto engine | auto | explicit | SAT | SAT / explicit |")
    out("|---:|---:|---|---:|---:|---:|---:|")
    for w in [8, 16, 20, 24, 32, 48, 64, 96, 128]:
        text = batch_counter(w, (0b11 << (w - 2)) | 0b11)
        auto = measure(text, "auto")
        if w <= 24:
            ex = measure(text, "explicit")
            sat = measure(text, "sat")
            out(f"| {w} | {auto[1]} | {auto[2]} | {cell(auto)} | {cell(ex)} | {cell(sat)} | {sat[4] / ex[4]:.3f} |")
        else:
            out(f"| {w} | {auto[1]} | {auto[2]} | {cell(auto)} | - | {cell(auto)} | - |")
    out()
    out("## Several successors per code (dosing pump, +1 or +2 by a free input; worst about 2^n)")
    out()
    out("| width | worst | explicit | peak MiB | SAT |")
    out("|---:|---:|---:|---:|---:|")
    for n in [8, 12, 16, 20]:
        text = dosing_pump(n)
        ex = measure(text, "explicit")
        sat = measure(text, "sat", 10.0 if n >= 12 else None)
        out(f"| {n} | {ex[1]} | {cell(ex)} | {ex[5]} | {cell(sat)} |")
    head = [
        "# Recover engines: benchmark results",
        "",
        f"Written by `python tests/perf/bench_recover.py{' --quick' if quick else ''}` on "
        f"{platform.machine()}, Python {platform.python_version()}, {os.cpu_count()} cores "
        "(shared with other work while it ran, so times are indicative; ratios come from the same run).",
        "Times are per claim, including the successor table, traces, replay and repair hints; "
        f"SAT runs get a timeout ({sat_timeout:g} s for the long tails from 16 bits, 10 s for the dosing pump "
        "from 12 bits); one that runs out is open at the depth shown. Peak memory is the measuring process's "
        "maximum resident set (interpreter and libraries included).",
        "",
    ]
    with open(os.path.join(os.path.dirname(os.path.abspath(__file__)), "RESULTS_recover.md"), "w") as f:
        f.write("\n".join(head + rows) + "\n")


if __name__ == "__main__":
    main()

"""Benchmark: countersign's whole process against a standalone SAT solver on the same question.

Run:  python tests/perf/bench_solver_ratio.py

For the largest count, recover (SAT) and equal claims of the other benchmarks
(a 256-bit bottling-line counter, as a carry chain and with 4-bit group
carries; a 128-bit batch counter's `recover within 4`; the 256-bit tallies'
flop-paired `equal`), each alone in a file:

* total: wall time of `countersign check FILE --json`, the whole process;
* solver: wall time of a standalone solver program (Debian's cadical and
  minisat, where installed) on the DIMACS that `countersign export FILE CHECK
  --claim LINE -o Q.cnf` writes for each claim of the file, the same
  questions (the recover claim's check has its count line, itself a claim,
  so that file holds two);
* where the rest goes: starting Python and importing countersign (a process
  that only imports it), reading and elaborating the file, and the claim as
  the JSON reports it (encoding and solving; `solve` is the time inside the
  solver calls where the claim reports it).

Medians of REPEAT runs, the columns of a row measured in turn, in one run.
A missing solver program leaves its column as "not installed".
Writes tests/perf/RESULTS_solver_ratio.md.
"""

from __future__ import annotations

import json
import os
import platform
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "tests"))
sys.path.insert(0, str(ROOT / "tests" / "perf"))

from bench_count import counter_text, lookahead_text  # noqa: E402
from bench_equal import tally  # noqa: E402
from test_recover import tail_counter  # noqa: E402

REPEAT = 5
ENV = dict(os.environ, PYTHONPATH=str(ROOT))


def questions() -> list[tuple[str, str, str]]:
    """(label, file text, check name), one claim each."""
    w = 128
    drop = ("  count ", "  load ", "  step ", "  hold ", "  equal tally_d on", "  equal tally_d after")
    eq = "".join(l for l in tally(256).splitlines(keepends=True) if not l.startswith(drop))
    return [
        ("count, 256-bit counter, carry chain", counter_text(256), "bottles"),
        ("count, 256-bit counter, 4-bit group carries", lookahead_text(256), "caps"),
        (f"recover within 4, {w}-bit batch counter", tail_counter(w, (0b11 << (w - 2)) | 0b11, "recover within 4"), "batches"),
        ("equal (flop-paired), 256-bit tallies", eq, "bottles"),
    ]


def wall(args: list[str]) -> tuple[float, subprocess.CompletedProcess]:
    t0 = time.perf_counter()
    r = subprocess.run(args, capture_output=True, text=True, env=ENV, timeout=600)
    return time.perf_counter() - t0, r


def median(xs: list[float]) -> float:
    return statistics.median(xs)


def main() -> None:
    tmp = Path(tempfile.mkdtemp())
    solvers = {name: shutil.which(name) for name in ("cadical", "minisat")}
    py = sys.executable
    rows = []
    for label, text, check in questions():
        src = tmp / f"q{len(rows)}.cnl"
        src.write_text(text, encoding="utf-8")
        from checker.elab import load_namespace
        chk = next(c for c in load_namespace(str(src)).checks if c.name == check)
        cnfs, nvars, nclauses = [], 0, 0
        for k, claim in enumerate(chk.claims):  # a recover claim needs its count line, itself a claim
            cnf = tmp / f"q{len(rows)}_{k}.cnf"
            t, r = wall([py, "-m", "checker", "export", str(src), check, "--claim", str(claim.pos.line), "-o", str(cnf), "--json"])
            assert r.returncode == 0, r.stderr
            info = json.loads(r.stdout)
            nvars, nclauses = nvars + info["vars"], nclauses + info["clauses"]
            cnfs.append(cnf)
        totals, imports, loads, claims, solves = [], [], [], [], []
        solver_t: dict[str, list[float]] = {n: [] for n in solvers}
        status = None
        for _ in range(REPEAT):
            t, r = wall([py, "-m", "checker", "check", str(src), "--json"])
            docs = json.loads(r.stdout)["claims"]
            statuses = [d["status"] for d in docs]
            status = "proved" if all(x == "proved" for x in statuses) else "/".join(statuses)
            totals.append(t)
            claims.append(sum(d["seconds"] for d in docs))
            if any("solve_seconds" in d for d in docs):
                solves.append(sum(d.get("solve_seconds", 0.0) for d in docs))
            t, _ = wall([py, "-c", "import checker.cli"])
            imports.append(t)
            t, r = wall([py, "-c", f"import time, checker.cli; from checker.elab import load_namespace; t = time.perf_counter(); "
                               f"load_namespace({str(src)!r}); print(time.perf_counter() - t)"])
            loads.append(float(r.stdout))
            for name, prog in solvers.items():
                if prog:
                    spent = 0.0
                    for cnf, st in zip(cnfs, statuses):
                        args = [prog, "-q", str(cnf)] if name == "cadical" else [prog, "-verb=0", str(cnf)]
                        t, r = wall(args)
                        assert r.returncode == (20 if st == "proved" else 10), (name, r.returncode, st)
                        spent += t
                    solver_t[name].append(spent)
        tot = median(totals)
        cells = {n: (median(v) if v else None) for n, v in solver_t.items()}
        best = min((v for v in cells.values() if v), default=None)
        rows.append([f"{label} ({len(cnfs)} claim{'s' if len(cnfs) > 1 else ''})", status, f"{nvars} / {nclauses}", f"{tot:.3f}",
                     *(f"{v:.3f}" if v else "not installed" for v in cells.values()),
                     f"{tot / best:.1f}" if best else "-",
                     f"{median(imports):.3f}", f"{median(loads):.3f}", f"{median(claims):.3f}",
                     f"{median(solves):.4f}" if solves else "-"])
        print(rows[-1], flush=True)
    head = ["question", "verdict", "DIMACS vars / clauses", "countersign total s",
            *(f"{n} s" for n in solvers), "total / best solver", "python + import s", "read + elaborate s",
            "claim s", "inside solver calls s"]
    out = ["# The limit: countersign's whole process against a standalone solver on the same DIMACS", "",
           f"Machine: 2 cores shared with other work (load average {os.getloadavg()[0]:.1f} at the end); "
           f"Python {platform.python_version()}; medians of {REPEAT} runs, the columns of a row measured in turn. "
           "Solvers: Debian's `cadical` and `minisat` programs (wall time of the whole program, reading the file "
           "included); countersign uses CaDiCaL 1.9.5 through python-sat in-process.", "",
           "| " + " | ".join(head) + " |", "|" + "---|" * len(head)]
    out += ["| " + " | ".join(map(str, r)) + " |" for r in rows]
    out += ["", "Target: total / solver at most 2. Not met: each question is easy for a SAT solver "
            "(the solver programs take milliseconds, mostly reading the file), so the ratio is the fixed cost of "
            "countersign's process. It goes, in order, to starting Python and importing countersign "
            "(numpy, lark, python-sat and our modules), reading and elaborating the file (the lark parser and "
            "building the and-inverter graph), and the claim itself (building the question, with structural "
            "hashing, in a forked child; inside the solver calls is the last column). "
            "The `python + import` and `read + elaborate` columns are separate processes, so they are measured "
            "beside the total rather than subtracted from it.", ""]
    text = "\n".join(out)
    print(text)
    (Path(__file__).parent / "RESULTS_solver_ratio.md").write_text(text, encoding="utf-8")


if __name__ == "__main__":
    main()

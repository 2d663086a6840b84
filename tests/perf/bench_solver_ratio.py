"""Benchmark: countersign's whole process against a standalone SAT solver on the same question.

Run:  python tests/perf/bench_solver_ratio.py        (REPEAT=3 in the environment for a quicker run)

Questions, each alone in a file:

* the largest count, recover and equal claims of the other benchmarks, which
  a solver answers in milliseconds (a 256-bit bottling-line counter as a
  carry chain and with 4-bit group carries; a 128-bit batch counter's
  `recover within 4`; the 256-bit tallies' flop-paired `equal`);
* questions where the solver's own time counts, of the kind a designer asks:
  `recover within 128` and `within 256` of a 64-bit batch counter whose
  unused codes count up to the clear (the unrolling is 129 or 257 clocks
  deep); `equal` between a grain weigher's accumulator (a w-bit register
  adding the scale's reading each clock) built with a ripple-carry adder and
  with 4-bit group carries, a real combinational equivalence question at
  1024 and 2048 bits; `count` of a 1024-bit counter with 4-bit group carries.

Columns:

* total: wall time of `countersign check FILE --json --jobs 1`, the whole process;
* solver: wall time of a standalone solver program (Debian's cadical and
  minisat, where installed) on the DIMACS that `countersign export FILE CHECK
  --claim LINE -o Q.cnf` writes for each claim of the file, the same
  questions (a recover claim's check has its count line, itself a claim, so
  those files hold two). The count claim asks its rules' questions one by one
  in-process (`questions` in its JSON); the export joins them into one formula
  with a selector variable per question. The recover claim asks the exported
  question first and, when it is unsatisfiable, a few more on the same
  unrolling to find the exact worst recovery (bisection);
* where the time of the process goes, from a separate process that does what
  `check` does step by step with a clock between the steps: starting Python
  (before the first line runs), importing what the check path imports,
  parsing (`parse_text`: lark today; another helper is writing a hand parser),
  the rest of reading and elaborating, importing the claim kinds' modules,
  the claims (building each question and solving it, in a forked child per
  claim), the JSON report, and the end of the process (exit handlers and
  leaving); `solve` is the time inside the solver calls where a claim reports it.

Child processes run without PYTHONDONTWRITEBYTECODE: this machine sets it,
users' machines do not, and with it every process compiles every module
again (about 0.1 s). Medians of REPEAT runs, the columns of a row measured
in turn, in one run. A missing solver program leaves its column as "not installed".
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

REPEAT = int(os.environ.get("REPEAT", "5"))
ENV = {k: v for k, v in os.environ.items() if k != "PYTHONDONTWRITEBYTECODE"}
ENV["PYTHONPATH"] = str(ROOT)

# What `check FILE --json --jobs 1` does (checker/cli.py, checker/api.py), step by step with a clock.
PROBE = r"""
import time
first = time.time()
import json, sys
p0 = time.perf_counter()
from checker import api, cli
from checker.claims import PROVERS, run_claims
from checker.tools.loading import load_within
from checker.lang import parse as P
opts = api.options(isolate=True)
p1 = time.perf_counter()
parse = [0.0]
if hasattr(P, "parse_text"):
    plain = P.parse_text
    def timed(*a, **k):
        t = time.perf_counter()
        try:
            return plain(*a, **k)
        finally:
            parse[0] += time.perf_counter() - t
    P.parse_text = timed
prog = api.Program(load_within(sys.argv[1], None))
p2 = time.perf_counter()
pairs = [(c, cl) for c in prog.namespace.checks for cl in c.claims]
for _, cl in pairs:
    PROVERS[cl.kind]
p3 = time.perf_counter()
res = run_claims(pairs, opts, 1)
p4 = time.perf_counter()
sys.stdout.write(api.json_check(api.CheckRun(results=res, files=[sys.argv[1]])))
sys.stdout.flush()
p5 = time.perf_counter()
sys.stderr.write(json.dumps({"first": first, "import": p1 - p0, "parse": parse[0], "elaborate": p2 - p1 - parse[0],
                             "provers": p3 - p2, "claims": p4 - p3, "report": p5 - p4, "last": time.time()}) + "\n")
sys.stderr.flush()
cli.leave(0)
"""

STAGES = ["start", "import", "parse", "elaborate", "provers", "claims", "report", "exit"]


def weigher_text(w: int) -> str:
    """A grain weigher: a ``w``-bit register adding the scale's reading ``a`` (and ``cin``) each
    clock, as a ripple-carry adder (weigh_r) and with 4-bit group carries (weigh_g: each carry
    of a group from the group's carry-in by generate and propagate terms); `equal` pairs their
    flops by name, so the question is whether the two adders agree on every input."""
    r = ["design weigh_r", f"  in cin, a[{w - 1}:0]", f"  flop s[{w - 1}:0] : D (d = s ^ a ^ c[{w - 1}:0])",
         f"  node c[{w}:0] = {{s[{w - 1}:0] & a[{w - 1}:0] | c[{w - 1}:0] & (s[{w - 1}:0] ^ a[{w - 1}:0]), cin}}",
         f"  out co = c[{w}]", "end"]
    g = ["design weigh_g", f"  in cin, a[{w - 1}:0]", f"  node gen[{w - 1}:0] = s & a", f"  node pro[{w - 1}:0] = s ^ a"]
    carry = {0: "cin"}
    for grp in range(w // 4):
        base = 4 * grp
        for k in range(1, 5):
            terms = [" & ".join([f"pro[{base + m}]" for m in range(k - 1, j, -1)] + [f"gen[{base + j}]"])
                     for j in range(k - 1, -1, -1)]
            terms.append(" & ".join([f"pro[{base + m}]" for m in range(k - 1, -1, -1)] + [carry[base]]))
            carry[base + k] = f"k{base + k}"
            g.append(f"  node k{base + k} = " + " | ".join(f"({t})" if "&" in t else t for t in terms))
    bits = ", ".join(carry[i] for i in reversed(range(w)))
    g += [f"  flop s[{w - 1}:0] : D (d = pro ^ {{{bits}}})", f"  out co = {carry[w]}", "end"]
    return "\n".join([f"# grain weigher, {w} bits: two adders"] + r + g
                     + ["check scale of weigh_r", "  code s", "  equal weigh_g", "end"]) + "\n"


def deep_recover(w: int, k: int) -> str:
    """A ``w``-bit batch counter 0 .. 0b11 0...0 1..1 (k ones) that clears at its last code: its
    unused codes count up to a clear or to the wrap, within 2^k clocks (`recover within 2^k`)."""
    return tail_counter(w, (0b11 << (w - 2)) | ((1 << k) - 1), f"recover within {1 << k}")


def questions() -> list[tuple[str, str, str]]:
    """(label, file text, check name)."""
    w = 128
    drop = ("  count ", "  load ", "  step ", "  hold ", "  equal tally_d on", "  equal tally_d after")
    eq = "".join(l for l in tally(256).splitlines(keepends=True) if not l.startswith(drop))
    return [
        ("count, 256-bit counter, carry chain", counter_text(256), "bottles"),
        ("count, 256-bit counter, 4-bit group carries", lookahead_text(256), "caps"),
        (f"recover within 4, {w}-bit batch counter", tail_counter(w, (0b11 << (w - 2)) | 0b11, "recover within 4"), "batches"),
        ("equal (flop-paired), 256-bit tallies", eq, "bottles"),
        ("recover within 128, 64-bit batch counter", deep_recover(64, 7), "batches"),
        ("recover within 256, 64-bit batch counter", deep_recover(64, 8), "batches"),
        ("equal, 1024-bit weigher, ripple vs group carries", weigher_text(1024), "scale"),
        ("equal, 2048-bit weigher, ripple vs group carries", weigher_text(2048), "scale"),
        ("count, 1024-bit counter, 4-bit group carries", lookahead_text(1024), "caps"),
    ]


def wall(args: list[str]) -> tuple[float, subprocess.CompletedProcess]:
    t0 = time.perf_counter()
    r = subprocess.run(args, capture_output=True, text=True, env=ENV, timeout=900)
    return time.perf_counter() - t0, r


def probe(py: str, src: Path) -> dict[str, float]:
    """One run of PROBE: seconds per stage."""
    t0 = time.time()
    r = subprocess.run([py, "-c", PROBE, str(src)], capture_output=True, text=True, env=ENV, timeout=900)
    end = time.time()
    assert r.returncode == 0, r.stderr
    doc = json.loads(r.stderr.strip().splitlines()[-1])
    doc["start"] = doc.pop("first") - t0
    doc["exit"] = end - doc.pop("last")
    return doc


def solver_args(name: str, prog: str, cnf: Path) -> list[str]:
    return [prog, "-q", str(cnf)] if name == "cadical" else [prog, "-verb=0", str(cnf)]


def main() -> None:
    tmp = Path(tempfile.mkdtemp())
    solvers = {name: shutil.which(name) for name in ("cadical", "minisat")}
    py = sys.executable
    rows: list[list[str]] = []
    summary: list[tuple[str, float, float | None, dict[str, float]]] = []
    bare = [wall([py, "-c", "pass"])[0] for _ in range(REPEAT)]
    imp = [wall([py, "-c", "import checker.cli"])[0] for _ in range(REPEAT)]
    for label, text, check in questions():
        src = tmp / f"q{len(rows)}.cnl"
        src.write_text(text, encoding="utf-8")
        from checker.elab import load_namespace
        chk = next(c for c in load_namespace(str(src)).checks if c.name == check)
        cnfs, nvars, nclauses, exported = [], 0, 0, []
        for k, claim in enumerate(chk.claims):  # a recover claim needs its count line, itself a claim
            cnf = tmp / f"q{len(rows)}_{k}.cnf"
            t, r = wall([py, "-m", "checker", "export", str(src), check, "--claim", str(claim.pos.line), "-o", str(cnf), "--json"])
            assert r.returncode == 0, r.stderr
            info = json.loads(r.stdout)
            nvars, nclauses = nvars + info["vars"], nclauses + info["clauses"]
            exported.append(info.get("questions", 1))
            cnfs.append(cnf)
        totals, claims, solves, stages = [], [], [], []
        solver_t: dict[str, list[float]] = {n: [] for n in solvers}
        status, asked = None, "-"
        for _ in range(REPEAT):
            t, r = wall([py, "-m", "checker", "check", str(src), "--json", "--jobs", "1"])
            docs = json.loads(r.stdout)["claims"]
            statuses = [d["status"] for d in docs]
            status = "proved" if all(x == "proved" for x in statuses) else "/".join(statuses)
            asked = " + ".join(str(d.get("questions", "-")) for d in docs)
            totals.append(t)
            claims.append(sum(d["seconds"] for d in docs))
            if all("solve_seconds" in d for d in docs):
                solves.append(sum(d["solve_seconds"] for d in docs))
            stages.append(probe(py, src))
            for name, prog in solvers.items():
                if prog:
                    spent = 0.0
                    for cnf, st in zip(cnfs, statuses):
                        t, r = wall(solver_args(name, prog, cnf))
                        assert r.returncode == (20 if st == "proved" else 10), (name, r.returncode, st)
                        spent += t
                    solver_t[name].append(spent)
        tot = statistics.median(totals)
        cells = {n: (statistics.median(v) if v else None) for n, v in solver_t.items()}
        best = min((v for v in cells.values() if v), default=None)
        ms = {s: 1000 * statistics.median(d[s] for d in stages) for s in STAGES}
        rows.append([label, status, asked, " + ".join(map(str, exported)), f"{nvars} / {nclauses}", f"{tot:.3f}",
                     *(f"{v:.3f}" if v else "not installed" for v in cells.values()),
                     f"{tot / best:.1f}" if best else "-",
                     f"{(tot - ms['parse'] / 1000) / best:.1f}" if best else "-",
                     *(f"{ms[s]:.0f}" for s in STAGES),
                     f"{statistics.median(solves):.3f}" if solves else "-"])
        summary.append((label, tot, best, ms))
        print(rows[-1], flush=True)
    head = ["question", "verdict", "questions asked in-process", "questions in the DIMACS", "DIMACS vars / clauses",
            "countersign total s", *(f"{n} s" for n in solvers), "total / best solver",
            "(total - parse) / best solver",
            *(f"{s} ms" for s in STAGES), "inside solver calls s"]
    load = os.getloadavg()[0]
    out = ["# The limit: countersign's whole process against a standalone solver on the same DIMACS", "",
           f"Machine: 2 cores shared with other work (load average {load:.1f} at the end); "
           f"Python {platform.python_version()}; medians of {REPEAT} runs, the columns of a row measured in turn; "
           "child processes without PYTHONDONTWRITEBYTECODE (as on a user's machine: compiled modules are kept). "
           "Solvers: Debian's `cadical` and `minisat` programs (wall time of the whole program, reading the file "
           "included); countersign uses CaDiCaL 1.9.5 through python-sat in-process, `check --json --jobs 1`.", "",
           f"Floor: `python -c pass` takes {1000 * statistics.median(bare):.0f} ms here and `python -c 'import checker.cli'` "
           f"{1000 * statistics.median(imp):.0f} ms; no countersign process can be faster than the first.", "",
           "| " + " | ".join(head) + " |", "|" + "---|" * len(head)]
    out += ["| " + " | ".join(map(str, r)) + " |" for r in rows]
    out += ["", "The stage columns come from a separate process that does what `check` does with a clock between "
            "the steps (start: before Python runs the first line; import: what the check path imports, lark and "
            "python-sat included; parse: `parse_text`; elaborate: the rest of reading; provers: the claim kinds' "
            "modules; claims: building and solving, a forked child per claim; report: the JSON; exit: exit "
            "handlers and leaving), so they add up to about the total rather than exactly. "
            "Inside solver calls: the `solve_seconds` of the claims' JSON, where every claim of the file reports it "
            "(count does; recover and equal do not). (total - parse) / best solver: the ratio without the parser's time (the parse column; "
            "lark's where the hand-written reader declines a text). Questions asked in-process: the `questions` of each claim's JSON where it reports them (count), "
            "else `-`; in the DIMACS: how many the exported formula joins with selector variables.", ""]
    met = [f"{l} ({t / b:.1f})" for l, t, b, _ in summary if b and t / b <= 2]
    unmet = [f"{l} ({t / b:.1f})" for l, t, b, _ in summary if b and t / b > 2]
    label, tot, best, ms = summary[0]
    fixed = ", ".join(f"{s} {ms[s]:.0f}" for s in STAGES)
    out += [f"Target total / solver at most 2: met by {'; '.join(met) or 'none'}. Not met by {'; '.join(unmet) or 'none'}.", "",
            f"Fixed cost, from the smallest question ({label}: {1000 * tot:.0f} ms in all, the solver program "
            f"{1000 * best:.0f} ms): {fixed} ms. Starting Python alone is the floor above; importing what the check "
            "path needs (lark, python-sat, countersign's modules) comes next, and the claims stage includes "
            "forking the child each claim runs in.", "",
            "Why each row stands where it does, and what was cut to get there: README.md, "
            "\"The limit: a standalone solver on the same question\".", ""]
    text = "\n".join(out)
    print(text)
    (Path(__file__).parent / "RESULTS_solver_ratio.md").write_text(text, encoding="utf-8")


if __name__ == "__main__":
    main()

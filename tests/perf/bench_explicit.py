"""Benchmark of the explicit engine: python tests/perf/bench_explicit.py [--quick]

The compact engine (uint32 tables, run-contracted ranking, walks between
hashed codes, input rows folded per code and decided by strategy
improvement) against the engines before it, side by side in one run:

* one input row, on the recover claim of brewery batch counters
  (tests/test_recover.py ``tail_counter``) at 20, 24 and 28 bits: long
  tails (LAST = 2^(w/2) - 1, up to 2^(w/2) clocks) and longest tails
  (LAST = 2^(w-1) - 1, up to 2^(w-1) clocks); and a greenhouse noise source,
  a shift register with feedback that locks (no runs: every code ranked,
  most on cycles of 2^21 codes at 24 bits);
* several input rows: a kiln tray counter whose pause input is honoured
  in the sequence only (``recover when run | drop``: two rows, a tail of
  2^w - 2^(w/2) clocks) at 24, 26 and 28 bits, and the dosing pump of
  tests/test_explicit.py (one or two steps up: the rows differ at every
  code); a 16-bit Johnson counter whose hold input also holds unused codes
  (about 65,000 self-locking codes, 2,047 locked sets).

Columns: *old* is ``compact=False`` (one byte per bit while building, at
most 2^25 edges, pointer jumping over every code, retrograde rounds);
*retrograde* is the compact table analysed by the retrograde rounds the
compact engine used for several rows before (a reversed table, 73 bytes a
code with two rows).

Each measurement runs in its own forked process: wall time of the whole
claim (explicit engine, trace replay and evidence included) or of the
exploration alone, the process's peak resident set (``getrusage``, the
interpreter included) and the peak of traced allocations (``tracemalloc``:
NumPy's arrays), beside the bound the engine states before it starts.
Then `auto` against the engines it chooses from, on the claims issue 13
found left open (tests/test_auto.py), with a 30 s timeout.
Writes tests/perf/RESULTS_explicit.md.
"""

from __future__ import annotations

import multiprocessing as mp
import os
import platform
import resource
import subprocess
import sys
import tempfile
import time
import tracemalloc

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
sys.path.insert(0, ROOT)
sys.path.insert(0, os.path.join(ROOT, "tests"))

from checker.claims import run_claim  # noqa: E402
from checker.claims.common import Options, stepping  # noqa: E402
from checker.engines import compact as C  # noqa: E402
from checker.engines import explicit as X  # noqa: E402
from test_recover import tail_counter  # noqa: E402
from test_auto import misting_timers  # noqa: E402
from test_explicit import load_text as _load  # noqa: E402  (a check from its text)


def shift_register(w: int) -> str:
    """A greenhouse noise source: w-bit shift register fed by the xor of its two top bits (locks at 0)."""
    return f"""
design noise
  flop q[{w - 1}:0] : D (d = {{q[{w - 2}:0], q[{w - 1}] ^ q[{w - 2}]}})
end
check n of noise
  code q
  count 1
  recover
end
"""


def paused_counter(w: int) -> str:
    """A kiln tray counter 0 .. 2^(w/2)-1 whose pause input holds it only inside that range
    (above it the trays keep counting to the wrap); the claim lets the pause come at any clock."""
    half = w // 2
    last = (1 << half) - 1
    above = " | ".join(f"q[{i}]" for i in range(half, w))
    return f"""
design kiln
  in run, drop
  flop q[{w - 1}:0] : T (t = c) clear full & run
  node c[{w - 1}:0] = {{c[{w - 2}:0] & q[{w - 2}:0], run | above}}
  node above = {above}
  node full = and({", ".join(f"q[{i}]" for i in range(half))})
end
check trays of kiln
  code q
  count 0 .. {last}
  hold when !run
  recover when run | drop
end
"""


def dosing_pump(w: int) -> str:
    """The dosing pump of tests/test_explicit.py: one or two steps up as the inputs say, to the top two codes."""
    top = (1 << w) - 1
    return f"""
design pump
  in gust, frost
  flop q[{w - 1}:0] : T (t = (c1 & !(gust ^ frost)) | (c2 & (gust ^ frost)))
  node c1[{w - 1}:0] = {{c1[{w - 2}:0] & q[{w - 2}:0], 1}}
  node c2[{w - 1}:0] = {{c2[{w - 2}:1] & q[{w - 2}:1], 1, 0}}
end
check dose of pump
  code q
  count {top - 1} {top}
  recover when gust
end
"""


def held_johnson(w: int) -> str:
    """A greenhouse vent phase ring (Johnson) whose hold input also holds unused codes."""
    return f"""
design vent
  in run, drop
  flop p[{w - 1}:0] : D (d = mux(run, p, {{p[{w - 2}:0], !p[{w - 1}]}}))
end
check phases of vent
  code p
  count johnson
  hold when !run
  recover when run | drop
end
"""


def _child(conn, text: str, what: str, engine: str, timeout):
    check = _load(text)
    claim = [c for c in check.claims if c.kind in ("recover", "equal")][-1]
    tracemalloc.start()
    t0 = time.perf_counter()
    cond = claim.cond if claim.cond is not None else stepping(check)
    if what == "claim":
        r = run_claim(check, claim, Options(engine=engine, timeout=timeout))
        out = (r.status, r.details.get("worst"), r.details.get("engine"), r.details.get("depth"))
    elif what == "retro":  # the compact table, analysed by the retrograde rounds used before for several rows
        with C.small_pages():
            g = X.build_graph(check.space, X.admissible_rows(check.space, cond))
            a = X.analyse(g, compact=False)
        out = ("proved" if a.worst is not None else "refuted", a.worst, what, None)
    else:
        a = X.explore(check.space, cond, compact=(what == "new"))
        out = ("proved" if a.worst is not None else "refuted", a.worst, a.graph.succ.shape[0], None)
    dt = time.perf_counter() - t0
    traced = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    rss = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024
    conn.send(out + (dt, rss, traced))
    conn.close()


def measure(text: str, what: str, engine: str = "explicit", timeout=None, limit=None):
    """(status, worst, engine, depth, seconds, peak RSS bytes, traced peak bytes) in a fresh child;
    a child still running after ``limit`` seconds is stopped: ("stopped", ..., limit, ...)."""
    ctx = mp.get_context("fork")
    a, b = ctx.Pipe(duplex=False)
    p = ctx.Process(target=_child, args=(b, text, what, engine, timeout))
    p.start()
    b.close()
    if limit is not None and not a.poll(limit):
        p.kill()
        p.join()
        return ("stopped", None, what, None, float(limit), 0, 0)
    try:
        out = a.recv()
    except EOFError:
        out = ("killed", None, what, None, float("nan"), 0, 0)
    p.join()
    return out


SLOW = 90
"""Seconds after which a run of an engine before this one is stopped (the row says so)."""


def _rows(text: str) -> int:
    check = _load(text)
    claim = [c for c in check.claims if c.kind == "recover"][-1]
    cond = claim.cond if claim.cond is not None else stepping(check)
    return len(X.admissible_rows(check.space, cond))


def mib(n: float) -> str:
    return f"{n / (1 << 20):,.0f}"


def process_seconds(text: str, engine: str) -> float:
    """Wall time of the whole `countersign check` process on ``text`` (one job)."""
    fd, path = tempfile.mkstemp(suffix=".cnl")
    with os.fdopen(fd, "w") as f:
        f.write(text)
    env = dict(os.environ, PYTHONPATH=ROOT)
    t0 = time.perf_counter()
    subprocess.run([sys.executable, "-m", "checker", "check", path, "--engine", engine, "--jobs", "1"],
                   env=env, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    dt = time.perf_counter() - t0
    os.unlink(path)
    return dt


def main() -> None:
    quick = "--quick" in sys.argv
    load_before = os.getloadavg()[0]
    widths = [20, 24] if quick else [20, 24, 28]
    rows: list[str] = []

    def out(line: str = "") -> None:
        print(line, flush=True)
        rows.append(line)

    cases = [("long tail", lambda w: tail_counter(w, (1 << (w // 2)) - 1), widths),
             ("longest tail", lambda w: tail_counter(w, (1 << (w - 1)) - 1), widths),
             ("no runs (locks)", shift_register, [20, 24])]
    out("## One input row: the compact engine against the engine before it")
    out()
    out("| case | width | worst | claim | explore (new) | explore (old) | old / new | codes per second (claim) "
        "| peak RSS MiB (new) | traced MiB (new) | stated bound MiB | peak RSS MiB (old) |")
    out("|---|---:|---:|---:|---:|---:|---:|---:|---:|---:|---:|---:|")
    for name, gen, ws in cases:
        for w in ws:
            text = gen(w)
            claim = measure(text, "claim")
            new = measure(text, "new")
            old = measure(text, "old") if w <= 24 else None
            worst = claim[1] if claim[1] is not None else "locked"
            bound = C.memory_needed(w, 1)
            old_t = f"{old[4]:.2f} s" if old else "does not fit"
            ratio = f"{old[4] / new[4]:.1f}" if old else "-"
            old_m = mib(old[5]) if old else "-"
            out(f"| {name} | {w} | {worst} | {claim[4]:.2f} s | {new[4]:.2f} s | {old_t} | {ratio} | "
                f"{(1 << w) / claim[4] / 1e6:.1f} M | {mib(claim[5])} | {mib(claim[6])} | {mib(bound)} | {old_m} |")
    out()
    out("No runs: the shift register's codes are ranked, and their cycles found, by walks between hashed "
        "codes; before this, pointer jumping over every code took about log2(2^w) passes for each: 28 s for "
        "the ranking and 40 s for the cycles at 24 bits (a separate run of the previous version).")
    out()
    out("## Several input rows: folded per code, strategy improvement, against the retrograde analysis")
    out()
    out("| case | width | rows kept | worst | claim | explore (new) | retrograde | retrograde / new | old | "
        "peak RSS MiB (new) | peak RSS MiB (retrograde) | peak RSS MiB (old) | stated bound MiB |")
    out("|---|---:|---:|---:|---:|---:|---:|---:|---:|---:|---:|---:|---:|")
    several = [("pause in the sequence only", paused_counter, [24, 26] if quick else [24, 26, 28]),
               ("one or two steps (rows differ everywhere)", dosing_pump, [20, 24]),
               ("Johnson, hold holds unused codes (locks)", held_johnson, [16])]
    for name, gen, ws in several:
        for w in ws:
            text = gen(w)
            claim = measure(text, "claim")
            new = measure(text, "new")
            fits = 73 * (1 << w) + C.base_bytes(w) <= C.MEMORY_LIMIT
            retro = measure(text, "retro", limit=SLOW) if fits else None
            old = measure(text, "old", limit=SLOW) if w <= 24 else None
            worst = claim[1] if claim[1] is not None else "locked"
            bound = C.memory_needed(w, 2)
            kept = f"{new[2]} of {_rows(text)}"

            def t(m) -> str:
                if m is None:
                    return "does not fit"
                return f"over {SLOW} s" if m[0] == "stopped" else f"{m[4]:.2f} s"

            def rss(m) -> str:
                return "-" if m is None or m[0] == "stopped" else mib(m[5])
            ratio = "-" if retro is None else f"{'over ' if retro[0] == 'stopped' else ''}{retro[4] / new[4]:.1f}"
            out(f"| {name} | {w} | {kept} | {worst} | {t(claim)} | {t(new)} | {t(retro)} | {ratio} | {t(old)} | "
                f"{mib(claim[5])} | {rss(retro)} | {rss(old)} | {mib(bound)} |")
    out()
    out("Rows kept: the input rows that lead somewhere new from some unused code (a row that only changes "
        "what a sequence code does is folded away). The retrograde analysis held a reversed table (73 bytes "
        "a code with two rows: 2^28 codes did not fit); strategy improvement ranks one-successor tables, "
        "one ranking a round (one round for the pause, three for the pump). Johnson with a hold: the claim "
        "took 31 s before (a smallest set of codes to redirect searched by SAT one locked set at a time, "
        "with the codes that hold themselves not taken first), measured in this session before the change.")
    out()
    out("## The whole process at 24 bits (long tail), `countersign check --jobs 1`")
    out()
    out("| engine | wall time |")
    out("|---|---:|")
    text = tail_counter(24, (1 << 12) - 1)
    for engine in ("auto", "explicit"):
        out(f"| {engine} | {process_seconds(text, engine):.2f} s |")
    out()
    out("## `auto` against the engines it chooses from (timeout 30 s)")
    out()
    out("| claim | auto | engine auto chose | explicit | sat |")
    out("|---|---:|---|---:|---:|")
    probes = [("equal after: misting timers, equal (104 product states)", misting_timers(False)),
              ("equal after: misting timers, one step early (first difference at clock 103)", misting_timers(True)),
              ("recover: 16-bit batch counter, tail of 256 clocks", tail_counter(16, 255))]
    for label, text in probes:
        got = {e: measure(text, "claim", e, 30.0) for e in ("auto", "explicit", "sat")}

        def cell(m) -> str:
            return f"{m[0]} in {m[4]:.2f} s" if m[0] != "open" else f"open at depth {m[3]} ({m[4]:.1f} s)"
        out(f"| {label} | {cell(got['auto'])} | {got['auto'][2]} | {cell(got['explicit'])} | {cell(got['sat'])} |")
    out()
    header = (f"Written by `python tests/perf/bench_explicit.py` on {platform.machine()}, Python "
              f"{platform.python_version()}, {os.cpu_count()} cores (shared with other work while it ran, so "
              "times are indicative; ratios come from the same run). Each cell is a fresh forked process. "
              "*claim*: the whole recover claim with `--engine explicit` (table, analysis, the worst run "
              "replayed); *explore*: the table and the analysis alone, compact (new) and `compact=False` (old, "
              "which takes at most 2^25 edges). Peak RSS is the process's maximum resident set, interpreter and "
              "libraries included; traced is the peak of allocations `tracemalloc` saw during the claim "
              "(NumPy's arrays); the stated bound is what the engine says before it starts and refuses above "
              f"{C.gib(C.MEMORY_LIMIT)}. Load average (1 min) {load_before:.1f} when the run started and "
              f"{os.getloadavg()[0]:.1f} when it ended.")
    with open(os.path.join(ROOT, "tests", "perf", "RESULTS_explicit.md"), "w") as f:
        f.write("# Explicit engine: benchmark results\n\n" + header + "\n\n" + "\n".join(rows) + "\n")


if __name__ == "__main__":
    main()

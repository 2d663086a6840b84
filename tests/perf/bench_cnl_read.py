"""Reading large generated .cnl files: the lark route against the fast hand-written reader, side by side.

Files, as netlist generators write them (one statement per bit, every gate spelt out):

* the 256-bit brewery tally of bench_equal.py: each T flop toggles on the AND
  of every lower bit (33,000 AND terms, 285 KB), with its D-flop twin and one
  claim, that the two are equal flop by flop;
* a 1,024-bit palletiser crate counter, one T flop and one carry node per bit;
* the 1,024-bit capping-line counter of bench_count.py, 4-bit group carries.

Columns: the text read to a syntax tree by lark (``parse_text_lark``: the LALR
parse, its post-lexer and the tree-to-dataclass walk) and by ``parse_text``
(the reader of checker/lang/cnl_fast.py, which takes all three), the ratio,
and what the fast read leaves of loading: elaborating the file's designs and
checks (``load_namespace`` less the fast read). Medians of REPEAT runs, the two
readers interleaved in one process, each run started on a collected heap;
the two readers' trees are compared first. The last two columns are whole
``countersign check FILE --json`` processes (Python starting, importing, reading,
elaborating, proving every claim of the file) with lark reading the file (the
fast reader turned away) and with the fast reader, interleaved too; for the
tally only, whose one claim takes a fraction of a second.

Run: python tests/perf/bench_cnl_read.py   (prints a table, writes RESULTS_cnl_read.md)
"""

from __future__ import annotations

import gc
import os
import platform
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parents[1]))
sys.path.insert(0, str(HERE))

from bench_count import lookahead_text  # noqa: E402
from bench_equal import tally  # noqa: E402

from checker.elab import load_namespace  # noqa: E402
from checker.lang import parse as P  # noqa: E402

REPEAT = 5


def ripple_counter(n: int) -> str:
    """A palletiser crate counter of ``n`` bits written bit by bit: T flops, one carry node each."""
    lines = [f"# palletiser crate counter, {n} bits, one flop and one carry per bit", f"design crates{n}",
             "  in en, clr", "  node c0 = en"]
    for i in range(n):
        lines.append(f"  flop q[{i}] : T (t = c{i}) clear clr")
        lines.append(f"  node c{i + 1} = c{i} & q[{i}]")
    lines += ["  out full = c%d" % n, "end", f"check crates of crates{n}", "  code q",
              f"  count 0 .. {hex((1 << n) - 1)}", "  load 0 when clr", "  hold when !en", "end"]
    return "\n".join(lines) + "\n"


def tally_equal(w: int) -> str:
    """The tally file with one claim, the flop-paired ``equal`` (the question of bench_solver_ratio.py)."""
    drop = ("  count ", "  load ", "  step ", "  hold ", "  equal tally_d on", "  equal tally_d after")
    return "".join(line for line in tally(w).splitlines(keepends=True) if not line.startswith(drop))


# (label, text, whether a whole check process is timed on it: the counters' 1,024-bit count claims
# would time the solver, not the reading)
FILES = [
    ("tally, 256 bits, AND of every lower bit", lambda: tally_equal(256), True),
    ("crate counter, 1,024 bits, a carry per bit", lambda: ripple_counter(1024), False),
    ("capping counter, 1,024 bits, group carries", lambda: lookahead_text(1024), False),
]


def check_process(path: str, lark_only: bool) -> float:
    """Wall time of a whole ``countersign check PATH --json`` process; ``lark_only``: the fast
    reader turned away, so that lark reads the file as it did before the fast reader."""
    patch = "import checker.lang.parse as P; P.read_fast = lambda path, text: None; " if lark_only else ""
    code = f"import sys; {patch}from checker.cli import entry; sys.exit(entry())"
    env = {k: v for k, v in os.environ.items() if k != "PYTHONDONTWRITEBYTECODE"}  # as on a user's machine
    env["PYTHONPATH"] = str(HERE.parents[1])
    t0 = time.perf_counter()
    r = subprocess.run([sys.executable, "-c", code, "check", path, "--json"], capture_output=True, env=env)
    took = time.perf_counter() - t0
    assert r.returncode == 0, r.stderr
    return took


def main() -> None:
    rows = [("file", "lines", "bytes", "lark read", "fast read", "lark / fast", "elaborate after the read",
             "check process, lark", "check process, fast")]
    with tempfile.TemporaryDirectory() as tmp:
        for label, make, whole in FILES:
            text = make()
            path = os.path.join(tmp, "f.cnl")
            Path(path).write_text(text, encoding="utf-8")
            assert P.parse_text_lark(path, text) == P.parse_text(path, text), label
            slow, fast, load, whole_lark, whole_fast = [], [], [], [], []
            for _ in range(REPEAT):  # each timed from a clean heap: no earlier tree for the collector to walk
                for reader, times in ((P.parse_text_lark, slow), (P.parse_text, fast)):
                    gc.collect()
                    t0 = time.perf_counter()
                    reader(path, text)
                    times.append(time.perf_counter() - t0)
                gc.collect()
                t0 = time.perf_counter()
                load_namespace(path)
                load.append(time.perf_counter() - t0)
                for lark_only, times in ((True, whole_lark), (False, whole_fast)):
                    if whole:
                        times.append(check_process(path, lark_only))
            s, f, ld = statistics.median(slow), statistics.median(fast), statistics.median(load)
            rows.append((label, str(text.count("\n")), f"{len(text.encode()):,}", f"{1000 * s:.0f} ms",
                         f"{1000 * f:.0f} ms", f"{s / f:.1f}x", f"{1000 * max(0.0, ld - f):.0f} ms",
                         f"{statistics.median(whole_lark):.2f} s" if whole else "-",
                         f"{statistics.median(whole_fast):.2f} s" if whole else "-"))
    widths = [max(len(r[k]) for r in rows) for k in range(len(rows[0]))]
    table = ["| " + " | ".join(c.ljust(widths[k]) for k, c in enumerate(r)) + " |" for r in rows]
    table.insert(1, "|" + "|".join("-" * (w + 2) for w in widths) + "|")
    text = "\n".join(table)
    print(text)
    load = os.getloadavg()[0] if hasattr(os, "getloadavg") else float("nan")
    (HERE / "RESULTS_cnl_read.md").write_text(
        "# Reading large .cnl files: lark against the fast reader\n\n"
        f"Median of {REPEAT} runs, the two readers interleaved in one process "
        f"(`python tests/perf/bench_cnl_read.py`; Python {platform.python_version()}, "
        f"load average {load:.1f} at the end). Each read starts on a collected heap; the two trees are "
        "compared first. *Elaborate after the read*: `load_namespace` less the fast read. *Check process*: "
        "a whole `countersign check FILE --json` process (Python starting, importing, reading, elaborating, "
        "proving the file's claims), with lark reading the file (the fast reader turned away) and with the "
        "fast reader, interleaved; on the tally only (its file keeps one claim, the flop-paired `equal`), "
        "since the counters' 1,024-bit count claims would time the solver.\n\n" + text + "\n")


if __name__ == "__main__":
    main()

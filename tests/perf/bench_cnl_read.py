"""Reading large generated .cnl files: the lark route against the fast hand-written reader, side by side.

Files, as netlist generators write them (one statement per bit, every gate spelt out):

* the 256-bit brewery tally of bench_equal.py: each T flop toggles on the AND
  of every lower bit (33,000 AND terms, 285 KB), with its D-flop twin;
* a 1,024-bit palletiser crate counter, one T flop and one carry node per bit;
* the 1,024-bit capping-line counter of bench_count.py, 4-bit group carries.

Columns: the text read to a syntax tree by lark (``parse_text_lark``: the LALR
parse, its post-lexer and the tree-to-dataclass walk) and by ``parse_text``
(the reader of checker/lang/cnl_fast.py, which takes all three), the ratio,
and what the fast read leaves of loading: elaborating the file's designs and
checks (``load_namespace`` less the read). Medians of REPEAT runs, the two
readers interleaved in one process; each read is compared with the other.

Run: python tests/perf/bench_cnl_read.py   (prints a table, writes RESULTS_cnl_read.md)
"""

from __future__ import annotations

import os
import platform
import statistics
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


FILES = [
    ("tally, 256 bits, AND of every lower bit", lambda: tally(256)),
    ("crate counter, 1,024 bits, a carry per bit", lambda: ripple_counter(1024)),
    ("capping counter, 1,024 bits, group carries", lambda: lookahead_text(1024)),
]


def main() -> None:
    rows = [("file", "lines", "bytes", "lark read", "fast read", "lark / fast", "elaborate after the read")]
    with tempfile.TemporaryDirectory() as tmp:
        for label, make in FILES:
            text = make()
            path = os.path.join(tmp, "f.cnl")
            Path(path).write_text(text, encoding="utf-8")
            slow, fast, load = [], [], []
            for _ in range(REPEAT):
                t0 = time.perf_counter()
                a = P.parse_text_lark(path, text)
                t1 = time.perf_counter()
                b = P.parse_text(path, text)
                t2 = time.perf_counter()
                load_namespace(path)
                t3 = time.perf_counter()
                assert a == b, label
                slow.append(t1 - t0)
                fast.append(t2 - t1)
                load.append(t3 - t2)
            s, f, ld = statistics.median(slow), statistics.median(fast), statistics.median(load)
            rows.append((label, str(text.count("\n")), f"{len(text.encode()):,}", f"{1000 * s:.0f} ms",
                         f"{1000 * f:.0f} ms", f"{s / f:.1f}x", f"{1000 * max(0.0, ld - f):.0f} ms"))
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
        f"load average {load:.1f} at the end).\n\n" + text + "\n")


if __name__ == "__main__":
    main()

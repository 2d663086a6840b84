"""Reading and writing netlists: a bottling-line counter of N bits written to every format,
read back and checked from .cnl; and an N-bit behavioural Verilog counter (q <= q + 1),
whose adder the reader bit-blasts. The gate-level .v is also read through lark alone (the
fast hand-written reader of checker/lang/verilog_fast.py stepping aside), side by side.

Run: python tests/perf/bench_netlists.py   (prints a table, writes RESULTS_netlists.md)
"""

from __future__ import annotations

import os
import statistics
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))

from checker.claims import run_check  # noqa: E402
from checker.claims.common import Options  # noqa: E402
from checker.elab import load_namespace  # noqa: E402
from checker.lang import verilog  # noqa: E402
from checker.tools.netlists import FORMATS, write_design  # noqa: E402

HERE = Path(__file__).resolve().parent
SIZES = (64, 256, 1024)
REPEAT = 3


def counter_cnl(n: int) -> str:
    return f"""design filler{n}
  in en, clr
  flop q[{n - 1}:0] : T (t = c) clear clr
  node c[{n - 1}:0] = {{c[{n - 2}:0] & q[{n - 2}:0], en}}
end
"""


def check_cnl(n: int, used: str, design: str) -> str:
    return f"""use "{used}"
check bottles of {design}
  code q
  count 0 .. {hex((1 << n) - 1)}
  load 0 when clr
  hold when !en
end
"""


def verilog_counter(n: int) -> str:
    return f"""module vcount{n} (input clk, input en, input clr, output [{n - 1}:0] n);
  reg [{n - 1}:0] q;
  assign n = q;
  always @(posedge clk)
    if (clr) q <= {n}'d0;
    else if (en) q <= q + {n}'d1;
endmodule
"""


def timed(fn) -> float:
    times = []
    for _ in range(REPEAT):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return statistics.median(times)


def main() -> None:
    rows = [("bits", "format", "bytes", "read + elaborate", "count claim via use")]
    with tempfile.TemporaryDirectory() as tmp:
        for n in SIZES:
            src = os.path.join(tmp, f"filler{n}.cnl")
            Path(src).write_text(counter_cnl(n))
            design = load_namespace(src).designs[f"filler{n}"]
            for ext in FORMATS:
                out = os.path.join(tmp, f"filler{n}{ext}")
                write_design(design, out)
                read = timed(lambda: load_namespace(out))
                chk = os.path.join(tmp, f"check_{n}_{ext[1:]}.cnl")
                Path(chk).write_text(check_cnl(n, os.path.basename(out), f"filler{n}"))

                def prove():
                    ns = load_namespace(chk)
                    rs = run_check(ns.checks[0], Options())
                    assert [r.status for r in rs] == ["proved"], rs

                rows.append((str(n), ext, str(os.path.getsize(out)), f"{1000 * read:.0f} ms",
                             f"{1000 * timed(prove):.0f} ms"))
                if ext == ".v":  # the same file through lark alone (the fast reader stepping aside)
                    fast = verilog.parse_fast
                    verilog.parse_fast = lambda text: None
                    try:
                        slow = timed(lambda: load_namespace(out))
                        slow_prove = timed(prove)
                    finally:
                        verilog.parse_fast = fast
                    rows.append((str(n), ".v, lark only", str(os.path.getsize(out)),
                                 f"{1000 * slow:.0f} ms ({slow / read:.1f}x)", f"{1000 * slow_prove:.0f} ms"))
            v = os.path.join(tmp, f"vcount{n}.v")
            Path(v).write_text(verilog_counter(n))
            chk = os.path.join(tmp, f"vcheck{n}.cnl")
            Path(chk).write_text(check_cnl(n, f"vcount{n}.v", f"vcount{n}"))

            def prove_v():
                ns = load_namespace(chk)
                rs = run_check(ns.checks[0], Options())
                assert [r.status for r in rs] == ["proved"], rs

            rows.append((str(n), ".v (q <= q + 1)", str(os.path.getsize(v)), f"{1000 * timed(lambda: load_namespace(v)):.0f} ms",
                         f"{1000 * timed(prove_v):.0f} ms"))
    widths = [max(len(r[k]) for r in rows) for k in range(len(rows[0]))]
    table = ["| " + " | ".join(c.ljust(widths[k]) for k, c in enumerate(r)) + " |" for r in rows]
    table.insert(1, "|" + "|".join("-" * (w + 2) for w in widths) + "|")
    text = "\n".join(table)
    print(text)
    (HERE / "RESULTS_netlists.md").write_text(
        "# Netlists: read, elaborate, check\n\nMedian of 3 runs, one process, side by side "
        "(`python tests/perf/bench_netlists.py`).\n\n" + text + "\n")


if __name__ == "__main__":
    main()

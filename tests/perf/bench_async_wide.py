"""Benchmark of recover and equal-after on asynchronous designs: python tests/perf/bench_async_wide.py [--quick]

* `recover`, `recover within 5` (proved) and `recover within 4` (refuted) on
  the wrap-catching ripple tally of tests/test_recover_wide.py (its top stage
  cleared asynchronously by the decode of itself and stage 2; worst 5
  clocks, from all-ones): the chained firings engine (every clock a SAT
  cascade with a proved number of firings) against the explicit engine,
  which explores every order of every clock from every code (up to 16 bits).
* `equal steady after rst`: a ripple counter with an asynchronous reset
  against the synchronous counter it replaces (proved), and against one
  with a miswired stage (refuted at clock 3), tests/test_equal_wide.py:
  the firings miter against the explicit product search.

Both engines run in the same process, interleaved (explicit, firings,
explicit, firings, ...); each cell is the median of the runs (3, or 1 when
the first run of that cell took more than 10 s). Writes
tests/perf/RESULTS_async_wide.md.
"""

from __future__ import annotations

import os
import platform
import statistics
import sys
import time

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
sys.path.insert(0, ROOT)
sys.path.insert(0, os.path.join(ROOT, "tests"))

from checker.claims import run_claim  # noqa: E402
from checker.claims.common import Options  # noqa: E402
from test_equal_wide import counters  # noqa: E402  (the tests' own designs)
from test_recover_wide import catcher  # noqa: E402
from test_explicit import load_text as load  # noqa: E402  (a check from its text)

TIMEOUT = 120.0
REPS = 3


def timed(check, claim, engine: str):
    t0 = time.perf_counter()
    r = run_claim(check, claim, Options(engine=engine, timeout=TIMEOUT))
    return r, time.perf_counter() - t0


def side_by_side(check, claim, explicit: bool):
    """(firings result, its median seconds, explicit result or None, its median seconds)."""
    times: dict[str, list[float]] = {"sat": [], "explicit": []}
    res: dict[str, object] = {}
    for rep in range(REPS):
        for engine in (("explicit", "sat") if explicit else ("sat",)):
            if rep and (times[engine][0] > 10 or res[engine].status == "open"):
                continue
            r, dt = timed(check, claim, engine)
            res[engine] = r
            times[engine].append(dt)
    ex = res.get("explicit")
    return res["sat"], statistics.median(times["sat"]), ex, statistics.median(times["explicit"]) if ex else 0.0


def fmt(r, dt) -> str:
    return f"{r.status} in {dt * 1000:.0f} ms" if r.status != "open" else f"open after {dt:.0f} s"


def row(name: str, n: int, claim, a, ta, b, tb) -> str:
    if b is not None:
        assert a.status == b.status or "open" in (a.status, b.status), (name, n, claim.text)
        ex = fmt(b, tb)
        ratio = f"{tb / ta:.1f}x" if "open" not in (a.status, b.status) else "-"
    else:
        ex, ratio = "past its limit (16 bits)", "-"
    f = a.details.get("firings")
    return f"| {name} | {n} | `{claim.text}` | {fmt(a, ta)} | {f} | {ex} | {ratio} |"


def main() -> None:
    quick = "--quick" in sys.argv
    widths = [8, 12, 16, 24, 32] if not quick else [8, 24]
    out = ["# recover and equal after on asynchronous designs", "",
           f"Machine: 2 cores shared with other jobs; Python {platform.python_version()}; solver cadical195; "
           f"median of {REPS} interleaved runs (1 when a run took more than 10 s); timeout {TIMEOUT:g} s.", "",
           "`firings`: the firings each clock is unrolled to (proved: no order of one clock has more), "
           "per design for `equal`.", "",
           "## recover: the chained firings engine against the explicit engine", "",
           "| design | bits | claim | firings engine | firings | explicit engine | ratio |",
           "|---|---|---|---|---|---|---|"]
    for n in widths:
        chk = load(catcher(n, 2, "  recover\n  recover within 5\n  recover within 4"))
        for claim in chk.claims[1:]:
            a, ta, b, tb = side_by_side(chk, claim, n <= 16)
            out.append(row("wrap-catching tally", n, claim, a, ta, b, tb))
            print(out[-1], flush=True)
    out += ["", "## equal after: the firings miter against the explicit product search", "",
            "| design | bits | claim | firings miter | firings | explicit search | ratio |",
            "|---|---|---|---|---|---|---|"]
    for miswired in (False, True):
        for n in widths:
            chk = load(counters(n, miswired))
            claim = chk.claims[-1]
            a, ta, b, tb = side_by_side(chk, claim, n <= 16)
            name = "ripple vs synchronous" + (", miswired" if miswired else "")
            out.append(row(name, n, claim, a, ta, b, tb))
            print(out[-1], flush=True)
    with open(os.path.join(os.path.dirname(__file__), "RESULTS_async_wide.md"), "w", encoding="utf-8") as f:
        f.write("\n".join(out) + "\n")


if __name__ == "__main__":
    main()

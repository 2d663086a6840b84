"""Benchmark of settle and glitchfree: python tests/perf/bench_events.py [--quick]

* Synchronous binary counters (T flops with enable, `count 0 .. 2^n-1`) with a
  decoded top code, `glitchfree` refuted; and synchronous Gray counters with a
  decoded code, `glitchfree` proved: the one SAT question of the synchronous
  engine against the explicit cascade engine, side by side where both finish.
* Ripple up counters of n stages, `settle within n` (proved) and `count`,
  by the explicit cascade engine, with the cascade states it visited.
* Asynchronous designs of 16 to 64 bits: a ripple divider with an enable,
  and one that clears itself asynchronously on a decoded code; `count`,
  `settle within n` and `glitchfree` by the firings engine (every start and
  order in one SAT problem), against the explicit cascade engine where it
  can visit every start (16 bits).

Every row of a table comes from the same run of this script; the explicit
engine gets a timeout, and a run past it is shown as open. Writes
tests/perf/RESULTS_events.md.
"""

from __future__ import annotations

import os
import platform
import sys
import time

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
sys.path.insert(0, ROOT)
sys.path.insert(0, os.path.join(ROOT, "tests"))

from checker.claims import run_claim  # noqa: E402
from checker.claims.common import Options  # noqa: E402
from test_events import binary_counter as binary, gray_design  # noqa: E402  (the tests' own counters)
from test_firings import ripple as ripple_divider  # noqa: E402
from test_explicit import load_text as load  # noqa: E402  (a check from its text)

TIMEOUT = 60.0


def ripple(n: int) -> str:
    lines = ["design ripple", "  in en", "  flop q[0] : T (t = en)"]
    lines += [f"  flop q[{i}] : T (t = 1) clock fall q[{i - 1}]" for i in range(1, n)]
    code = ", ".join(f"q[{i}]" for i in reversed(range(n)))
    lines += ["end", "check r of ripple", f"  code {{{code}}}", f"  count 0 .. {2 ** n - 1}", "  hold when !en",
              f"  settle within {n}", "end"]
    return "\n".join(lines) + "\n"


def timed(check, kind: str, engine: str):
    claim = next(c for c in check.claims if c.kind == kind)
    t0 = time.perf_counter()
    r = run_claim(check, claim, Options(engine=engine, timeout=TIMEOUT))
    return r, time.perf_counter() - t0


def fmt(r, dt) -> str:
    return f"{r.status} in {dt * 1000:.1f} ms" if r.status != "open" else f"open after {dt:.0f} s"


def main() -> None:
    quick = "--quick" in sys.argv
    widths = [4, 8, 12, 16, 32, 64] if not quick else [4, 8, 16]
    out = ["# settle and glitchfree", "",
           f"Machine: 2 cores shared; Python {platform.python_version()}; solver cadical195; one run each.", "",
           "## Synchronous glitchfree: one SAT question against every order", "",
           "| counter | bits | SAT question | explicit orders | ratio |", "|---|---|---|---|---|"]
    for family, make in (("binary, top decode", binary), ("Gray, 16 decodes", gray_design)):
        for n in widths:
            chk = load(make(n))
            a, ta = timed(chk, "glitchfree", "auto")
            if n <= 16:
                b, tb = timed(chk, "glitchfree", "explicit")
                assert a.status == b.status or "open" in (a.status, b.status), (family, n)
                ratio = f"{tb / ta:.0f}x" if b.status != "open" else "-"
                ex = fmt(b, tb)
            else:
                ex, ratio = "not run (2^n codes)", "-"
            out.append(f"| {family} | {n} | {fmt(a, ta)} | {ex} | {ratio} |")
            print(out[-1], flush=True)
    out += ["", "## Ripple counters: every order of every clock, by the explicit cascade engine", "",
            "| stages | settle within n | count | cascade states |", "|---|---|---|---|"]
    for n in ([2, 4, 8, 12, 16] if not quick else [2, 4, 8]):
        chk = load(ripple(n))
        s, ts = timed(chk, "settle", "explicit")
        c, tc = timed(chk, "count", "explicit")
        out.append(f"| {n} | {fmt(s, ts)} | {fmt(c, tc)} | {s.details.get('cascade_states', '-')} |")
        print(out[-1], flush=True)
    out += ["", "## Wide asynchronous designs: the firings engine against the explicit one", "",
            "Ripple divider: n toggle stages, the first with an enable. With clear: every stage cleared "
            "asynchronously on the decoded code 2^(n-1) + 2 (its `count` is refuted: a short pulse of the clear "
            "lets a falling stage clock the next one). `firings` is the most firings of any order, and how that "
            "bound was known (structure: no asynchronous clear, each flop fires at most once; sat: no longer "
            "order exists).", "",
            "| design | bits | claim | firings engine | firings | explicit engine | ratio |",
            "|---|---|---|---|---|---|---|"]
    for clear in (False, True):
        for n in ([16, 24, 32, 64] if not quick else [16, 32]):
            chk = load(ripple_divider(n, clear=clear, extra_checks=f"  settle within {n}\n  glitchfree full"))
            for kind in ("count", "settle", "glitchfree"):
                a, ta = timed(chk, kind, "sat")
                if n <= 16:
                    b, tb = timed(chk, kind, "explicit")
                    assert a.status == b.status or "open" in (a.status, b.status), (n, kind)
                    ex = fmt(b, tb)
                    ratio = f"{tb / ta:.0f}x" if b.status != "open" and a.status != "open" else "-"
                else:
                    ex, ratio = "cannot visit 2^n starts", "-"
                bound = f"{a.details.get('firings')} ({a.details.get('bound')})" if "firings" in a.details else "-"
                name = "ripple, decoded async clear" if clear else "ripple, enable"
                out.append(f"| {name} | {n} | {kind} | {fmt(a, ta)} | {bound} | {ex} | {ratio} |")
                print(out[-1], flush=True)
    with open(os.path.join(os.path.dirname(__file__), "RESULTS_events.md"), "w", encoding="utf-8") as f:
        f.write("\n".join(out) + "\n")


if __name__ == "__main__":
    main()

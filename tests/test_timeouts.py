"""``--timeout`` bounds map and compare too, through the same hard stop as check.

Each case here would run for minutes without its deadline: a 40-bit counter
whose unused codes take up to 2^20 clocks to recover (the SAT engine unrolls
frame after frame), and two 12-bit multipliers that differ only in the order
of their operands (a miter that is hard for CDCL solvers: multiplier
equivalence is a known hard family for SAT, a fact of the trade). The
assertions are on the verdicts (open, never proved or equal); the elapsed
time is checked only against a bound ten times the deadline plus start-up,
to catch a deadline that is ignored, not to measure speed.
"""

from __future__ import annotations

import time

from checker import api
from checker.cli import main
from test_recover import tail_counter


def multiplier(name: str, n: int, swap: bool) -> str:
    """``p`` loads a * b (or b * a), formed by shift-and-add rows of ripple adders."""
    x, y = ("b", "a") if swap else ("a", "b")
    lines = [f"design {name}", f"  in a[{n - 1}:0], b[{n - 1}:0]"]
    w = 2 * n
    acc = ["0"] * w  # the running sum, bit i at index i
    for r in range(n):
        row = ["0"] * w
        for i in range(n):
            row[i + r] = f"{x}[{i}] & {y}[{r}]"
        carry = "0"
        new = []
        for i in range(w):
            s, c = f"s{r}_{i}", f"k{r}_{i}"
            lines.append(f"  node {s} = {acc[i] if acc[i] != '0' else '0'} ^ ({row[i]}) ^ {carry}")
            lines.append(f"  node {c} = ({acc[i]}) & ({row[i]}) | ({acc[i]}) & {carry} | ({row[i]}) & {carry}")
            new.append(s)
            carry = c
        acc = new
    lines.append(f"  flop p[{w - 1}:0] : D (d = {{{', '.join(reversed(acc))}}})")
    lines.append("end")
    return "\n".join(lines) + "\n"


def test_map_honours_timeout(tmp_path):
    p = tmp_path / "tail.cnl"
    p.write_text(tail_counter(40, (1 << 20) - 1))  # recover: worst 2^20 clocks
    t0 = time.monotonic()
    m = api.map_check(str(p), "batches", opts=api.options(timeout=2.0))
    assert m.doc["status"] == "open" and m.doc["worst"] is None and m.status == 3
    assert time.monotonic() - t0 < 30


def test_compare_honours_timeout(tmp_path):
    old, new = tmp_path / "old.cnl", tmp_path / "new.cnl"
    old.write_text(multiplier("mul", 12, swap=False))
    new.write_text(multiplier("mul", 12, swap=True))
    t0 = time.monotonic()
    doc = api.compare_files(str(old), str(new), api.options(timeout=2.0))
    assert doc["open"] is True and doc["differs"] is False
    # on a busy machine even reading the multipliers can run out of the time given: open all the same
    assert doc.get("unread") or doc["designs"][0]["status"].startswith("open")
    assert time.monotonic() - t0 < 30
    assert main(["compare", str(old), str(new), "--timeout", "1"]) == 3


def test_multiplier_generator_multiplies(tmp_path):
    # the slow case must be the circuit it claims to be: check it by simulation on a small width
    from checker.api import load
    from checker.model.simulate import run

    p = tmp_path / "m.cnl"
    p.write_text(multiplier("mul", 4, swap=True))
    d = load(str(p)).designs["mul"]
    for a, b in [(0, 0), (3, 5), (15, 15), (9, 7), (12, 1)]:
        ins = {f"a[{i}]": (a >> i) & 1 for i in range(4)} | {f"b[{i}]": (b >> i) & 1 for i in range(4)}
        nxt = run(d.model, {s: 0 for s in d.model.states}, [ins], 1)[1].state
        assert sum(nxt[f"p[{i}]"] << i for i in range(8)) == a * b


def test_timeout_values_are_checked():
    for bad in ("0", "-1", "inf", "nan", "1e10"):
        assert main(["map", "x.cnl", "c", "--timeout", bad]) == 2


def test_sim_and_export_honour_timeout(tmp_path):
    # a 64-bit shift-and-add multiplier takes seconds to read; with a short --timeout the command
    # is open (exit 3) and writes nothing
    big = tmp_path / "mul.cnl"
    big.write_text(multiplier("mul", 64, swap=False))
    out = tmp_path / "mul.v"
    assert main(["export", str(big), "mul", "-o", str(out), "--timeout", "0.3"]) == 3
    assert not out.exists() and not any(p.name.endswith(".part") for p in tmp_path.iterdir())
    vcd = tmp_path / "run.vcd"
    assert main(["sim", str(big), "mul", "--cycles", "2", "--vcd", str(vcd), "--timeout", "0.3"]) == 3
    assert not vcd.exists()


def test_sim_and_export_within_their_timeout_write_as_usual(tmp_path, capsys):
    small = tmp_path / "mul.cnl"
    small.write_text(multiplier("mul", 3, swap=False))
    out = tmp_path / "mul.blif"
    assert main(["export", str(small), "mul", "-o", str(out), "--timeout", "60"]) == 0
    assert out.read_text().startswith(".model") or ".model mul" in out.read_text()
    assert main(["sim", str(small), "mul", "--cycles", "1", "--set", "a=3,b=5", "--json", "--timeout", "60"]) == 0
    assert '"trace"' in capsys.readouterr().out

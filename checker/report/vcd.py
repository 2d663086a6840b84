"""Runs as IEEE 1364 value change dumps, written with the pyvcd library."""

from __future__ import annotations

from datetime import datetime, timezone
from typing import Sequence

from vcd import VCDWriter

from ..elab import Design
from ..fileio import atomic_output
from ..model.simulate import Step


def write_vcd(design: Design, steps: Sequence[Step], path: str, period_ns: int = 10) -> None:
    """Write ``steps`` of ``design`` to ``path``: inputs, flops and outputs, one clock per period.

    Vectors are dumped as vectors; a part's signals sit in a scope named after
    the part. A signal ``clk`` is added so a viewer shows the edges; when the
    design has a signal of that name, the dump's own clock takes the first of
    ``clk_``, ``clk__``, ... that it does not have. The file appears whole or
    not at all.
    """
    groups: list[tuple[str, str, list[str]]] = []  # scope, name, bits msb first
    for name, sym in design.vectors.items():
        if sym.kind not in ("in", "out", "flop"):
            continue
        if "." in name and sym.kind != "flop":
            continue
        scope, _, short = name.rpartition(".")
        groups.append((scope, short, sym.bits))
    taken = {short for scope, short, _ in groups if not scope}
    clock_name = "clk"
    while clock_name in taken:
        clock_name += "_"
    with atomic_output(path) as f, VCDWriter(f, timescale="1 ns", date=_now(), version="countersign") as w:
        top = design.name
        clk = w.register_var(top, clock_name, "wire", size=1, init=0)
        vars_ = []
        for scope, short, bits in groups:
            full = top + ("." + scope if scope else "")
            v = w.register_var(full, short, "wire", size=len(bits))
            vars_.append((v, bits))
        # an asynchronous design: its firings follow the edge, one nanosecond per depth,
        # so the period is long enough for the deepest cascade of the run
        deepest = max((t for s in steps for t, _ in s.events), default=0)
        period = max(period_ns, 2 * (deepest + 2))
        names = design.model.states

        def dump(t: int, values: dict) -> None:
            for v, bits in vars_:
                val = 0
                for b in bits:
                    val = (val << 1) | (values.get(b, 0) & 1)
                w.change(v, t, val)

        # clock k >= 1 begins with the rising edge at k * period; flops change one
        # nanosecond after it (after the last firing of an asynchronous cascade), and the
        # inputs of clock k with them, so they are steady at the next rising edge
        prev: dict = {}
        for s, fired in zip(steps, [[]] + [s.events for s in steps[:-1]]):
            edge = s.clock * period
            if s.clock > 0:
                w.change(clk, edge, 1)
            settled = 0
            if fired:
                values = {**prev}
                for when, fl in fired:
                    values[names[fl.flop]] = fl.value
                    dump(edge + when, values)
                settled = max(when for when, _ in fired)
            prev = {**s.state, **s.inputs, **s.outputs}
            dump(edge + (settled + 1 if s.clock > 0 else 0), prev)
            if s.clock > 0:
                w.change(clk, edge + period // 2, 0)


def _now() -> str:
    """The dump's ``$date``: when it was written, in UTC."""
    return datetime.now(timezone.utc).strftime("%Y-%m-%d %H:%M:%S UTC")

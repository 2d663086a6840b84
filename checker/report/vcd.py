"""Runs as IEEE 1364 value change dumps, written with the pyvcd library."""

from __future__ import annotations

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
    with atomic_output(path) as f, VCDWriter(f, timescale="1 ns", date="today", version="countersign") as w:
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

        for s in steps:
            t = s.clock * period
            values = {**s.state, **s.inputs, **s.outputs}
            dump(t, values)
            w.change(clk, t, 0)
            w.change(clk, t + period // 2, 1)
            for when, f in s.events:
                values[names[f.flop]] = f.value
                dump(t + period // 2 + when, values)

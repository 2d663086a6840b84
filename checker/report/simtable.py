"""The text table of ``sim``: one row per clock, vectors shown as values.

Written for long runs: every column is formatted as a list of strings and the
rows are joined once (a million clocks format in seconds), in the same plain
layout as the other tables (header, a rule of dashes, columns two spaces apart).
"""

from __future__ import annotations

from typing import Optional, Sequence

from ..claims.common import code_radix, code_text, shows_decimal

Column = tuple[str, int, Sequence[int]]
"""A signal of the table: its name, its width in bits, its value at each clock."""


def value_text(v: int, width: int, radix: str) -> str:
    """A vector's value as the language writes a literal (a single bit as 0 or 1)."""
    if width == 1:
        return str(v)
    return code_text(v, width, radix)


def _format(width: int, radix: str) -> str:
    """A format string for values of ``width`` bits in ``radix`` (as :func:`code_text` writes them)."""
    r = code_radix(width, radix)
    if r == "dec" or width == 1:
        return "{}"
    if r == "bin":
        return "0b{:0%db}" % max(width, 1)
    return "0x{:0%dX}" % max(1, (width + 3) // 4)


def _signals(cols: Sequence[Column], rows: int, radix: str) -> list[str]:
    if not cols:
        return ["-"] * rows
    parts = []
    for name, width, values in cols:
        if width == 1:
            texts = {0: f"{name}=0", 1: f"{name}=1"}
            parts.append([texts[v] for v in values])
        else:
            fmt = name.replace("{", "{{").replace("}", "}}") + "=" + _format(width, radix)
            parts.append(list(map(fmt.format, values)))
    return [" ".join(p) for p in zip(*parts)] if len(parts) > 1 else parts[0]


def sim_table(codes: Sequence[int], width: int, inputs: Sequence[Column], outputs: Sequence[Column],
              radix: str = "auto", notes: Optional[dict[int, str]] = None,
              events: Optional[dict[int, list[str]]] = None) -> str:
    """A run as a table: clock, code (in ``radix``, with its decimal unless that is decimal),
    inputs and outputs (each vector one value), a note where a clock has one (SR faults, a
    cascade that did not settle); ``events`` adds rows of their own under a clock."""
    n = len(codes)
    r = code_radix(width, radix)
    if r == "dec":
        code_col = list(map(str, codes))
    else:
        digits = "0b{0:0%db}" % max(width, 1) if r == "bin" else "0x{0:0%dX}" % max(1, (width + 3) // 4)
        fmt = digits + (" ({0})" if shows_decimal(width, radix) else "")  # the value, then its decimal
        code_col = list(map(fmt.format, codes))
    ins = _signals(inputs, n, radix)
    outs = _signals(outputs, n, radix)
    clock_col = [str(i) for i in range(n)]
    notes = notes or {}
    headers = ["clock", "code", "inputs", "outputs"] + (["note"] if notes else [])
    widths = [max(len(headers[0]), len(clock_col[-1]) if n else 0),
              max([len(headers[1])] + [len(c) for c in code_col]),
              max([len(headers[2])] + [len(c) for c in ins]),
              max([len(headers[3])] + [len(c) for c in outs])]
    events = events or {}
    ev_texts = [t for evs in events.values() for t in evs]
    if ev_texts:
        widths[1] = max(widths[1], max(len(t) for t in ev_texts))
    if notes:
        widths.append(max([len(headers[4])] + [len(t) for t in notes.values()]))
    w0, w1, w2 = widths[0], widths[1], widths[2]
    head = "  ".join(h.rjust(w) if i == 0 else h.ljust(w) for i, (h, w) in enumerate(zip(headers, widths)))
    rule = "  ".join("-" * w for w in widths)
    lines = [head.rstrip(), rule]
    if not notes and not events:
        lines += [f"{c:>{w0}}  {k:<{w1}}  {i:<{w2}}  {o}" for c, k, i, o in zip(clock_col, code_col, ins, outs)]
    else:
        w3 = widths[3]
        for t, (c, k, i, o) in enumerate(zip(clock_col, code_col, ins, outs)):
            note = notes.get(t)
            lines.append((f"{c:>{w0}}  {k:<{w1}}  {i:<{w2}}  " + (f"{o:<{w3}}  {note}" if note else o)).rstrip())
            for e in events.get(t, []):
                lines.append(f"{'':>{w0}}  {e}")
    return "\n".join(lines)

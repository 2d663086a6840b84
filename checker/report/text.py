"""The readable report of ``countersign check``: one line per claim, then evidence."""

from __future__ import annotations

import os
from typing import Sequence

from tabulate import tabulate

from ..claims.result import OPEN, PROVED, REFUTED, Result

_MARK = {PROVED: "proved", REFUTED: "REFUTED", OPEN: "open"}


def _short(path: str) -> str:
    try:
        rel = os.path.relpath(path)
    except ValueError:
        return path
    return rel if not rel.startswith("..") else path


def bits(code: int, width: int) -> str:
    """``code`` in binary with ``width`` digits."""
    return format(code, f"0{width}b") if width else ""


def inputs_text(inputs: dict[str, int] | None) -> str:
    if not inputs:
        return "-"
    return " ".join(f"{k}={v}" for k, v in inputs.items())


def trace_table(trace, width: int) -> list[str]:
    """A counterexample trace as table lines: clock, code (binary and decimal), inputs."""
    rows = []
    has_other = any(t.other_code is not None for t in trace)
    for t in trace:
        row = [t.clock, f"{bits(t.code, width)} ({t.code})"]
        if has_other:
            row.append("" if t.other_code is None else str(t.other_code))
        row.append(inputs_text(t.inputs))
        rows.append(row)
    head = ["clock", "code"] + (["other"] if has_other else []) + ["inputs"]
    return tabulate(rows, headers=head, tablefmt="plain").splitlines()


def summary_counts(results: Sequence[Result]) -> dict[str, int]:
    counts = {PROVED: 0, REFUTED: 0, OPEN: 0}
    for r in results:
        counts[r.status] = counts.get(r.status, 0) + 1
    return counts


def format_results(results: Sequence[Result], widths: dict[tuple[str, str], int] | None = None) -> str:
    """The whole readable report; ``widths`` gives each (file, check)'s code width for traces."""
    widths = widths or {}
    rows = [[_MARK.get(r.status, r.status), _short(r.file), r.check, r.claim, r.line,
             f"{r.seconds:.2f} s", r.summary] for r in results]
    out: list[str] = []
    if rows:
        out.extend(tabulate(rows, headers=["verdict", "file", "check", "claim", "line", "time", ""],
                            tablefmt="simple").splitlines())
    for r in results:
        if r.status == PROVED and not r.evidence and not r.advice:
            continue
        if not (r.evidence or r.trace or r.advice):
            continue
        out.append("")
        out.append(f"{_short(r.file)}:{r.line}: {r.check}, {r.claim}: {r.status}" + (f": {r.summary}" if r.summary else ""))
        for line in r.evidence:
            out.append("    " + line)
        if r.trace and not r.evidence:
            w = widths.get((r.file, r.check), max(1, max(t.code for t in r.trace).bit_length()))
            out.extend("    " + l for l in trace_table(r.trace, w))
        for line in r.advice:
            out.append("    | " + line)
    c = summary_counts(results)
    out.append("")
    out.append(f"{len(results)} claim{'s' if len(results) != 1 else ''}: {c[PROVED]} proved, {c[REFUTED]} refuted, {c[OPEN]} open")
    return "\n".join(out)

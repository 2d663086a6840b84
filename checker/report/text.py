"""Readable reports: the claims of ``check`` (a line each, then evidence), the map, a run."""

from __future__ import annotations

import os
from typing import Sequence

from tabulate import tabulate

from ..claims.common import code_radix, code_text, inputs_text, trace_lines
from ..claims.recover import set_lines
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


def summary_counts(results: Sequence[Result]) -> dict[str, int]:
    counts = {PROVED: 0, REFUTED: 0, OPEN: 0}
    for r in results:
        counts[r.status] = counts.get(r.status, 0) + 1
    return counts


def format_results(results: Sequence[Result], widths: dict[tuple[str, str], int] | None = None,
                   radix: str = "dec") -> str:
    """The whole readable report; ``widths`` gives each (file, check)'s code width for traces,
    ``radix`` how their codes are shown (see ``claims.common.code_text``)."""
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
            out.extend("    " + line for line in trace_lines(None, r.trace, w, radix))
        for line in r.advice:
            out.append("    | " + line)
    c = summary_counts(results)
    out.append("")
    out.append(f"{len(results)} claim{'s' if len(results) != 1 else ''}: {c[PROVED]} proved, {c[REFUTED]} refuted, {c[OPEN]} open")
    return "\n".join(out)


PATH_SHOWN = 12
"""Codes of one recovery run a map's text table shows."""


def map_lines(doc: dict, radix: str = "dec") -> list[str]:
    """The map as a readable table (text report of the `map` command); codes in ``radix``."""
    if doc.get("width") is None:  # the file was not read in the time given
        return [f"check {doc['check']}: open: {doc.get('summary', 'undecided in the time given')}"]
    lines = [f"check {doc['check']}: {doc['width']}-bit code, {doc['sequence_length']} codes in the sequence, "
             f"{doc['unused_count']} unused"]
    if doc.get("status") == "open":
        lines.append("undecided in the time given: worst unknown")
    elif doc["locked"]:
        lines.append(f"locked: {len(doc['locked'])} set(s) of unused codes hold a cycle")
        lines.extend(set_lines(doc["locked"], lambda c: code_text(c, doc["width"], radix)))
    else:
        lines.append(f"worst: {doc['worst']} clock(s)")
    if doc["unused"]:
        w = doc["width"]

        def fmt(c: int) -> str:
            return code_text(c, w, radix)
        dec = code_radix(w, radix) != "dec"
        cw = max(10, len(fmt(0)))
        lines.append(f"{'code':>{cw}}  " + (f"{'decimal':>10}  " if dec else "") + f"{'steps':>7}  {'next':>{cw}}  run")
        for e in doc["unused"]:
            steps = "locked" if e["steps"] is None else str(e["steps"])
            run = " -> ".join(map(fmt, e["path"][:PATH_SHOWN]))
            if len(e["path"]) > PATH_SHOWN or e.get("path_truncated"):
                run += f" -> ... ({PATH_SHOWN} of {e['steps'] + 1} codes shown; --json gives the path)" \
                    if e["steps"] is not None else " -> ... (--json gives the path)"
            nxt = "" if e["next"] is None else fmt(e["next"])
            lines.append(f"{fmt(e['code']):>{cw}}  " + (f"{e['code']:>10}  " if dec else "") + f"{steps:>7}  {nxt:>{cw}}  {run}")
        if len(doc["unused"]) < doc["unused_count"]:
            lines.append(f"({len(doc['unused'])} of {doc['unused_count']} unused codes listed; "
                         "--limit N lists more)")
    return lines


def map_text(doc: dict, radix: str = "dec") -> str:
    """The map as one string."""
    return "\n".join(map_lines(doc, radix))


def sim_table(entries: list[dict], width: int, faults: Sequence[list[str]], events: bool = False,
              radix: str = "bin") -> str:
    """A simulated run as a table: clock, code (in ``radix``, with its decimal unless that is
    decimal), inputs, outputs, SR faults; with ``events``, each clock's firings (time, flop,
    value, code after) in rows of their own."""

    def shown(c: int) -> str:
        if code_radix(width, radix) == "dec":
            return str(c)
        return f"{code_text(c, width, radix)} ({c})"
    rows = []
    for e, f in zip(entries, faults):
        note = ["SR fault: " + ", ".join(f)] if f else []
        if e.get("settled") is False:
            note.append("the cascade after this clock did not settle")
        rows.append([e["clock"], shown(e["code"]), inputs_text(None, e["inputs"]),
                     inputs_text(None, e["outputs"])] + (["; ".join(note)] if note else []))
        if events:
            for ev in e.get("events", []):
                rows.append(["", f"  t+{ev['time']}: {ev['flop']} -> {ev['value']}  "
                                 f"{shown(ev['code'])}", "", ""])
    return tabulate(rows, headers=["clock", "code", "inputs", "outputs"], tablefmt="simple")

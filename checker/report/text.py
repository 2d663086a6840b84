"""Readable reports: the claims of ``check`` (a line each, then evidence), the map, a run."""

from __future__ import annotations

import os
from typing import Optional, Sequence

from tabulate import tabulate

from ..claims.common import code_text, inputs_text, set_lines, shows_decimal, trace_lines
from ..claims.result import OPEN, PROVED, REFUTED, Result
from ..words import count, plural

_MARK = {PROVED: "proved", REFUTED: "REFUTED", OPEN: "open"}


def _short(path: str) -> str:
    """``path`` relative to the current folder when it lies within it (or near it)."""
    try:
        rel = os.path.relpath(path)
    except ValueError:
        return path
    return rel if not rel.startswith(os.path.join("..", "..", "..")) else path


def short_names(paths: Sequence[str]) -> dict[str, str]:
    """How the result table names each file: relative to the current folder when it lies within
    it or close by; otherwise (an installed example under site-packages, say) the fewest trailing
    path components that tell it apart from every other file of the run."""
    out: dict[str, str] = {}
    far = []
    for p in dict.fromkeys(paths):
        q = _short(p)
        if q == p and os.path.isabs(p):
            far.append(p)
        else:
            out[p] = q
    parts = {p: os.path.normpath(p).split(os.sep) for p in far}
    for p in far:
        for k in range(1, len(parts[p]) + 1):
            tail = parts[p][-k:]
            if all(parts[o][-k:] != tail for o in far if o != p) and os.path.join(*tail) not in out.values():
                out[p] = os.path.join(*tail)
                break
        else:
            out[p] = p
    return out


def _cut(text: str, room: int) -> str:
    return text if len(text) <= room else text[:max(room - 3, 0)] + "..."


TABLE_HEADERS = ["verdict", "file", "check", "claim", "line", "time", "summary"]
LABEL_MIN = 20
"""The narrowest the claim column is cut to when the terminal is narrow."""
SUMMARY_MIN = 20
"""The narrowest summary column; below it, each summary goes on a line of its own under its row."""


def _tabulate(rows: list[list[str]], headers: list[str]) -> list[str]:
    return [line.rstrip() for line in
            tabulate(rows, headers=headers, tablefmt="simple", disable_numparse=True).splitlines()]


def result_table(results: Sequence[Result], columns: Optional[int] = None) -> tuple[list[str], bool]:
    """The table of verdicts, a row per claim, and whether any cell was cut to fit.

    Claims are labelled as written (``recover within 4``, ``equal d after reset``), so two
    claims of one kind differ. With ``columns`` (a terminal's width) no row is wider than the
    terminal: the summary is shortened, then the claim labels (down to :data:`LABEL_MIN`),
    and when even then the summary would be narrower than :data:`SUMMARY_MIN`, each summary
    is printed on a line of its own under its row."""
    if not results:
        return [], False
    names = short_names([r.file for r in results])
    rows = [[_MARK.get(r.status, r.status), names[r.file], r.check, r.text or r.claim, str(r.line),
             f"{r.seconds:.2f} s", r.summary] for r in results]
    if columns is None:
        return _tabulate(rows, TABLE_HEADERS), False
    cut = False
    bare = _tabulate([row[:6] + [""] for row in rows], TABLE_HEADERS[:6] + [""])
    room = columns - max(len(line) for line in bare) - 2  # the summary column's room
    if room < SUMMARY_MIN:
        label = max(len(row[3]) for row in rows)
        shorter = max(LABEL_MIN, label - (SUMMARY_MIN - room))
        if shorter < label:
            for row in rows:
                if len(row[3]) > shorter:
                    row[3], cut = _cut(row[3], shorter), True
            room += label - max(shorter, len(TABLE_HEADERS[3]) + 2)
    if room >= SUMMARY_MIN:
        for row in rows:
            if len(row[6]) > room:
                row[6], cut = _cut(row[6], room), True
        return _tabulate(rows, TABLE_HEADERS), cut
    # too narrow for a summary column: the summary under its row, indented
    lines = _tabulate([row[:6] for row in rows], TABLE_HEADERS[:6])
    out = lines[:2]
    for line, row in zip(lines[2:], rows):
        out.append(line)
        if row[6]:
            summary = _cut(row[6], columns - 4)
            cut = cut or summary != row[6]
            out.append("    " + summary)
    return out, cut


def bits(code: int, width: int) -> str:
    """``code`` in binary with ``width`` digits."""
    return format(code, f"0{width}b") if width else ""


def summary_counts(results: Sequence[Result]) -> dict[str, int]:
    counts = {PROVED: 0, REFUTED: 0, OPEN: 0}
    for r in results:
        counts[r.status] = counts.get(r.status, 0) + 1
    return counts


def format_results(results: Sequence[Result], widths: dict[tuple[str, str], int] | None = None,
                   radix: str = "dec", columns: Optional[int] = None) -> str:
    """The whole readable report; ``widths`` gives each (file, check)'s code width for traces,
    ``radix`` how their codes are shown (see ``claims.common.code_text``), ``columns`` the
    terminal's width that the table of verdicts must fit (None: no limit)."""
    widths = widths or {}
    out, cut = result_table(results, columns)
    if cut:
        out.append(f"(cells cut to fit {columns} columns; the claims below and --json give them whole)")
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
    lines = [f"check {doc['check']}: {doc['width']}-bit code, {count(doc['sequence_length'], 'code')} in the sequence, "
             f"{doc['unused_count']} unused"]
    if doc.get("status") == "open":
        lines.append("undecided in the time given: worst unknown")
    elif doc["locked"]:
        n = len(doc['locked'])
        lines.append(f"locked: {count(n, 'set of unused codes')} {plural('holds', n, 'hold')} a cycle")
        lines.extend(set_lines(doc["locked"], lambda c: code_text(c, doc["width"], radix)))
    else:
        lines.append(f"worst: {count(doc['worst'], 'clock')}")
    unstable = [e["code"] for e in doc.get("unused", []) if e.get("unstable")]
    if unstable:
        lines.append("not stable (an asynchronous clear or preset holds there): " + ", ".join(map(str, unstable)))
    if doc["unused"]:
        w = doc["width"]

        def fmt(c: int) -> str:
            return code_text(c, w, radix)
        dec = shows_decimal(w, radix)
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
        if not shows_decimal(width, radix):
            return code_text(c, width, radix)
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

"""Inputs that change per clock for ``sim --inputs FILE``: a CSV or a JSON file, one row per clock.

CSV: a header row naming inputs (bits such as ``n[3]``, or whole input vectors
such as ``n``), then one row of values per clock: decimal, ``0b`` binary or
``0x`` hex, a vector's value filling its bits most significant first. Empty
lines and lines starting with ``#`` are skipped. JSON: a list of objects, one
per clock, each mapping input names to numbers the same way (an input an object
leaves out is 0, or what ``--set`` holds). Every mistake is an
``InputError`` at the line and column of the offending field.
"""

from __future__ import annotations

import csv
import io
import json
from typing import Optional

from ..elab import Design
from ..errors import InputError, Pos
from ..fileio import read_limited

MAX_INPUT_FILE_BYTES = 64 * 1024 * 1024
"""Largest ``--inputs`` file read."""


def _bits_of(design: Design, name: str) -> Optional[list[str]]:
    if name in design.input_vectors:
        return design.input_vectors[name]
    if name in design.model.inputs:
        return [name]
    return None


def _value(text: str, where: Pos, name: str, width: int) -> int:
    t = text.strip()
    if len(t) > 4 + width:  # wider than any value of the input: refused before conversion
        raise InputError(where, f"'{t[:20]}...' does not fit input {name} ({width} bit{'s' if width != 1 else ''})")
    try:
        v = int(t, 0)
    except ValueError:
        raise InputError(where, f"'{t}' is not a number (decimal, 0b binary or 0x hex) for input {name}") from None
    if v < 0 or v >> width:
        raise InputError(where, f"{t} does not fit input {name} ({width} bit{'s' if width != 1 else ''})")
    return v


def _spread(bits: list[str], v: int, row: dict[str, int]) -> None:
    for k, b in enumerate(bits):
        row[b] = (v >> (len(bits) - 1 - k)) & 1


def _unknown(design: Design, name: str) -> str:
    known = ", ".join(design.input_vectors) or "none"
    return f"design {design.name} has no input '{name}' (inputs: {known})"


def _csv_rows(path: str, text: str, design: Design) -> list[dict[str, int]]:
    header: Optional[list[tuple[list[str], str, int]]] = None  # bits, name, column
    rows: list[dict[str, int]] = []
    for lineno, line in enumerate(text.splitlines(), start=1):
        if not line.strip() or line.lstrip().startswith("#"):
            continue
        fields = next(csv.reader(io.StringIO(line)))
        cols, col = [], 1
        for f in fields:  # the column where each field starts (fields without quotes)
            cols.append(col)
            col += len(f) + 1
        if header is None:
            header, seen = [], set()
            for f, c in zip(fields, cols):
                name = f.strip()
                bits = _bits_of(design, name)
                if bits is None:
                    raise InputError(Pos(path, lineno, c), _unknown(design, name))
                if set(bits) & seen:
                    raise InputError(Pos(path, lineno, c), f"input {name} is named twice in the header")
                seen.update(bits)
                header.append((bits, name, c))
            continue
        if len(fields) != len(header):
            raise InputError(Pos(path, lineno, 1), f"this row has {len(fields)} field{'s' if len(fields) != 1 else ''}; "
                                                   f"the header names {len(header)}")
        row: dict[str, int] = {}
        for (bits, name, _), f, c in zip(header, fields, cols):
            _spread(bits, _value(f, Pos(path, lineno, c), name, len(bits)), row)
        rows.append(row)
    if header is None:
        raise InputError(Pos(path, 1, 1), "an inputs file in CSV begins with a header row naming the inputs")
    return rows


def _line_col(text: str, index: int) -> tuple[int, int]:
    line = text.count("\n", 0, index) + 1
    return line, index - (text.rfind("\n", 0, index) + 1) + 1


def _json_rows(path: str, text: str, design: Design) -> list[dict[str, int]]:
    try:
        data = json.loads(text)
    except json.JSONDecodeError as e:
        raise InputError(Pos(path, e.lineno, e.colno), f"not JSON: {e.msg}") from None
    if not isinstance(data, list):
        raise InputError(Pos(path, 1, 1), "an inputs file in JSON holds a list with one object per clock")
    # where each row starts and ends, for positions of what is wrong in it
    dec = json.JSONDecoder()
    spans, i = [], text.index("[") + 1
    for _ in data:
        while text[i] in " \t\r\n,":
            i += 1
        _, end = dec.raw_decode(text, i)
        spans.append((i, end))
        i = end
    rows: list[dict[str, int]] = []
    for k, (item, (a, b)) in enumerate(zip(data, spans)):
        if not isinstance(item, dict):
            raise InputError(Pos(path, *_line_col(text, a)), f"row {k} is not an object of input values")
        row: dict[str, int] = {}
        for name, v in item.items():
            at = text.find(json.dumps(name), a, b)
            where = Pos(path, *_line_col(text, a if at < 0 else at))
            bits = _bits_of(design, name)
            if bits is None:
                raise InputError(where, _unknown(design, name))
            if isinstance(v, bool) or not isinstance(v, (int, str)):
                raise InputError(where, f"input {name}: a value is a number (or a string such as \"0b101\")")
            _spread(bits, _value(str(v), where, name, len(bits)), row)
        rows.append(row)
    return rows


def read_inputs(path: str, design: Design) -> list[dict[str, int]]:
    """The input bits of each clock from ``path`` (CSV, or JSON when it starts with ``[``)."""
    raw = read_limited(path, MAX_INPUT_FILE_BYTES, Pos(path, 1, 1), "inputs file")
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as e:
        raise InputError(Pos(path, 1, 1), f"cannot read '{path}': not UTF-8 text (byte {e.start})") from None
    rows = _json_rows(path, text, design) if text.lstrip().startswith("[") else _csv_rows(path, text, design)
    if not rows:
        raise InputError(Pos(path, 1, 1), "the inputs file holds no row of values")
    return rows


def choose_claim(data: dict, line: Optional[int], path: str) -> dict:
    """The claim of a whole ``check --json`` document that ``sim --trace`` replays: the one on
    ``line`` (``--claim LINE``), or the only claim with a trace."""
    claims = [c for c in data["claims"] if isinstance(c, dict)]
    traced = [c for c in claims if c.get("trace")]
    if line is not None:
        on_line = [c for c in claims if c.get("line") == line]
        with_trace = [c for c in on_line if c.get("trace")]
        if not on_line:
            lines = ", ".join(str(c.get("line")) for c in traced) or "none"
            raise InputError(Pos(path, 1, 1), f"the document has no claim on line {line} "
                                              f"(claims with a trace on lines: {lines})")
        if not with_trace:
            raise InputError(Pos(path, 1, 1), f"the claim on line {line} has no trace "
                                              f"(it is {on_line[0].get('status', 'not refuted')})")
        if len({(c.get('file'), c.get('check')) for c in with_trace}) > 1:
            where = ", ".join(f"{c.get('file')} check {c.get('check')}" for c in with_trace)
            raise InputError(Pos(path, 1, 1), f"claims of several checks are on line {line} ({where}): "
                                              f"save the one to replay in a file of its own")
        return with_trace[0]
    if len(traced) == 1:
        return traced[0]
    if not traced:
        raise InputError(Pos(path, 1, 1), "the document holds no claim with a trace")
    lines = ", ".join(str(c.get("line")) for c in traced)
    raise InputError(Pos(path, 1, 1), f"the document holds {len(traced)} claims with a trace (lines {lines}): "
                                      f"choose one with --claim LINE")

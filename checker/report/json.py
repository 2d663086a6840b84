"""The JSON documents the command line prints: one place for their outer shapes.

A claim's own object is :meth:`checker.claims.result.Result.to_json`; the map
and comparison documents are built as JSON-ready dicts by their tools. This
module wraps them into the documents the contract names and writes them.
"""

from __future__ import annotations

import json
from typing import Iterable, Optional

from ..claims.result import Result
from ..errors import InputError
from ..fileio import shown


def claims(results: Iterable[Result]) -> dict:
    """``check --json``: ``{"claims": [...]}``, one object per claim in report order."""
    return {"claims": [r.to_json() for r in results]}


def sim(entries: list[dict]) -> dict:
    """``sim --json``: ``{"trace": [...]}``."""
    return {"trace": entries}


def error(e: InputError) -> dict:
    """The error document: ``{"error": {"file", "line", "col", "message"}}``."""
    return e.to_json()


def _printable(x):
    """``x`` with every string made valid Unicode (a non-UTF-8 file name's bytes as ``\\xNN``)."""
    if isinstance(x, str):
        return shown(x)
    if isinstance(x, dict):
        return {_printable(k): _printable(v) for k, v in x.items()}
    if isinstance(x, (list, tuple)):
        return [_printable(v) for v in x]
    return x


def dumps(doc: dict) -> str:
    """One JSON document as text, newline-terminated; strings are always valid Unicode."""
    return json.dumps(_printable(doc), indent=1) + "\n"


def dumps_sim(runs: list[tuple[Optional[int], Iterable[dict]]]) -> str:
    """``sim --json`` as text: ``{"trace": [...]}`` for one run, ``{"runs": [{"from", "trace"}]}``
    for several; one trace entry a line, written by the C encoder (a million clocks in
    seconds). Names in a trace are the design's, already valid Unicode."""
    def trace(entries: Iterable[dict]) -> str:
        enc = json.JSONEncoder(separators=(", ", ": ")).encode
        return "[\n" + ",\n".join("  " + enc(e) for e in entries) + "\n ]"
    if len(runs) == 1 and runs[0][0] is None:
        return '{"trace": ' + trace(runs[0][1]) + "}\n"
    parts = [f' {{"from": {start}, "trace": {trace(entries)}}}' for start, entries in runs]
    return '{"runs": [\n' + ",\n".join(parts) + "\n]}\n"

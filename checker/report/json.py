"""The JSON documents the command line prints: one place for their outer shapes.

A claim's own object is :meth:`checker.claims.result.Result.to_json`; the map
and comparison documents are built as JSON-ready dicts by their tools. This
module wraps them into the documents the contract names and writes them.
"""

from __future__ import annotations

import json
from typing import Iterable

from ..claims.result import Result
from ..errors import InputError


def claims(results: Iterable[Result]) -> dict:
    """``check --json``: ``{"claims": [...]}``, one object per claim in report order."""
    return {"claims": [r.to_json() for r in results]}


def sim(entries: list[dict]) -> dict:
    """``sim --json``: ``{"trace": [...]}``."""
    return {"trace": entries}


def error(e: InputError) -> dict:
    """The error document: ``{"error": {"file", "line", "col", "message"}}``."""
    return e.to_json()


def dumps(doc: dict) -> str:
    """One JSON document as text, newline-terminated."""
    return json.dumps(doc, indent=1) + "\n"

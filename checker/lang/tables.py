"""Parser tables kept between runs: lark's LALR analysis, cached per user.

Building the LALR tables of a grammar takes a quarter of a second, more than
reading a small netlist. lark can store them; we keep them in the user's own
cache folder (``$XDG_CACHE_HOME/countersign`` or ``~/.cache/countersign``),
not in the shared temporary folder, because the cache is read back with
pickle. lark checks a hash of the grammar, the options, its own version and
Python's before using a stored table, and rebuilds on any mismatch or damage.
``COUNTERSIGN_NO_CACHE=1`` turns the cache off.
"""

from __future__ import annotations

import hashlib
import os
from pathlib import Path
from typing import Any, Union

from lark import Lark


def cache_folder() -> Path | None:
    """The folder for stored parser tables, created if needed; None when unusable or turned off."""
    if os.environ.get("COUNTERSIGN_NO_CACHE"):
        return None
    base = os.environ.get("XDG_CACHE_HOME") or os.path.join(os.path.expanduser("~"), ".cache")
    folder = Path(base) / "countersign"
    try:
        folder.mkdir(parents=True, exist_ok=True, mode=0o700)
        if not os.access(folder, os.W_OK | os.R_OK):
            return None
        if hasattr(os, "getuid") and folder.stat().st_uid != os.getuid():
            return None  # somebody else's folder: do not unpickle from it
    except OSError:
        return None
    return folder


def build_lark(grammar: str, **options: Any) -> Lark:
    """A LALR lark parser for GRAMMAR, its tables read from the cache when stored there."""
    folder = cache_folder()
    cache: Union[bool, str] = False
    if folder is not None:
        tag = hashlib.sha256(grammar.encode("utf-8")).hexdigest()[:16]
        cache = str(folder / f"lalr-{tag}.tables")
    return Lark(grammar, parser="lalr", cache=cache, **options)

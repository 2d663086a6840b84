"""Counted nouns for messages: ``1 clock``, ``4 clocks``, never ``clock(s)``."""

from __future__ import annotations

from typing import Optional

_IRREGULAR = {"is": "are", "was": "were", "has": "have", "does": "do", "index": "indices"}


def plural(noun: str, n: int, many: Optional[str] = None) -> str:
    """``noun`` in the number ``n`` calls for: the singular for exactly one, else ``many``
    (default: the noun with ``s``, or ``es`` after s, x, z, ch, sh; a few irregular words)."""
    if n == 1:
        return noun
    if many is not None:
        return many
    if noun in _IRREGULAR:
        return _IRREGULAR[noun]
    if noun.endswith(("s", "x", "z", "ch", "sh")):
        return noun + "es"
    return noun + "s"


def count(n: int, noun: str, many: Optional[str] = None) -> str:
    """``n`` and the noun in its number: ``count(1, "clock") == "1 clock"``, ``count(4, "unused code")
    == "4 unused codes"``. A phrase with ``of`` takes its plural before the ``of``: ``count(2, "set of
    codes") == "2 sets of codes"``; ``many`` gives the plural phrase outright."""
    if many is not None or n == 1:
        return f"{n} {plural(noun, n, many)}"
    head, sep, tail = noun.partition(" of ")
    words = head.split(" ")
    words[-1] = plural(words[-1], n)
    return f"{n} {' '.join(words)}{sep}{tail}"

"""Reports: results and documents to text, JSON, VCD, DOT and JUnit XML.

Each report module is imported when first used (``report.vcd`` loads the VCD
writer only for a command that writes one), so a command loads only what its
output needs.
"""

from __future__ import annotations

import importlib

__all__ = ["dot", "json", "junit", "simtable", "text", "vcd"]


def __getattr__(name: str):
    """A report module, imported on first use (PEP 562)."""
    if name in __all__:
        return importlib.import_module(f"{__name__}.{name}")
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")

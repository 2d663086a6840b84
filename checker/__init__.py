"""countersign: a formal checker for counter netlists.

The public API is :func:`load` and the command functions of :mod:`checker.api`;
the command line in :mod:`checker.cli` is a thin layer over it.
"""

from .about import __version__
from .api import Program, load
from .errors import InputError

__all__ = ["load", "Program", "InputError", "__version__"]

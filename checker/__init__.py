"""countersign: a formal checker for counter netlists.

The public API is :func:`load` (see :mod:`checker.api`); the command line in
:mod:`checker.cli` is a thin layer over it.
"""

__version__ = "0.1.0"

from .api import Program, load  # noqa: E402
from .errors import InputError  # noqa: E402

__all__ = ["load", "Program", "InputError", "__version__"]

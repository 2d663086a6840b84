"""Reading and elaborating a file within a time limit, through the same hard stop as claims.

Loading is Python code that normally takes milliseconds, but a file inside
every size limit can still ask for a lot of work (deep part trees,
long expressions); under ``--timeout`` it runs in a forked child that is
killed at the deadline, and the file is then refused with a message that
says so.
"""

from __future__ import annotations

from typing import Optional

from ..elab import Namespace, load_namespace
from ..engines.budget import run_bounded
from ..errors import InputError, Pos


def load_within(path: str, timeout: Optional[float]) -> Namespace:
    """``load_namespace(path)``, stopped after ``timeout`` seconds (an InputError at the file)."""
    if timeout is None:
        return load_namespace(path)
    ns, _, finished = run_bounded(lambda _budget: load_namespace(path), timeout)
    if not finished:
        raise InputError(Pos(path, 1, 1), f"reading and elaborating the file took longer than --timeout "
                                          f"{timeout:g} s; nothing in it was checked")
    return ns

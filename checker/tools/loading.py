"""Reading and elaborating a file within a time limit, through the same hard stop as claims.

Loading is Python code that normally takes milliseconds, but a file inside
every size limit can still ask for a lot of work (deep part trees,
long expressions); under ``--timeout`` it runs in a forked child that is
killed at the deadline. What ran out is open, like a claim that runs out:
:class:`LoadTimeout` says which file; it is an InputError, so a caller that
does not handle it reports it at the file and exits 2.
"""

from __future__ import annotations

from typing import Optional

from ..elab import Namespace, load_namespace
from ..engines.budget import run_bounded
from ..errors import InputError, Pos


class LoadTimeout(InputError):
    """Reading and elaborating a file ran past ``--timeout``."""

    def __reduce__(self):
        return (LoadTimeout, (self.pos, self.message))


def load_within(path: str, timeout: Optional[float]) -> Namespace:
    """``load_namespace(path)``, stopped after ``timeout`` seconds (:class:`LoadTimeout`)."""
    if timeout is None:
        return load_namespace(path)
    ns, _, finished = run_bounded(lambda _budget: load_namespace(path), timeout)
    if not finished:
        raise LoadTimeout(Pos(path, 1, 1), f"reading and elaborating the file took longer than --timeout "
                                           f"{timeout:g} s; nothing in it was checked")
    return ns

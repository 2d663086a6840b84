"""Claims to verdicts: each claim kind turns into engine calls and a Result.

``run_check`` runs every claim of a check; each claim gets its own budget
(``Options.timeout``), and one that runs out is ``open``, never ``proved``.
"""

from __future__ import annotations

import time
from typing import Callable

from ..elab import Check, Claim
from ..engines.budget import Budget, run_bounded
from . import always, count, equal, glitchfree, recover, settle
from .common import Options, make_result
from .result import OPEN, Result

PROVERS: dict[str, Callable[[Check, Claim, Options, Budget], Result]] = {
    "count": count.prove, "always": always.prove, "recover": recover.prove, "equal": equal.prove,
    "settle": settle.prove, "glitchfree": glitchfree.prove,
}


def run_claim(check: Check, claim: Claim, opts: Options) -> Result:
    """Prove or refute one claim within ``opts.timeout`` seconds."""
    prove = PROVERS[claim.kind]
    t0 = time.perf_counter()
    res, progress, finished = run_bounded(lambda b: prove(check, claim, opts, b), opts.timeout, opts.isolate)
    if not finished:
        res = make_result(check, claim, OPEN, f"ran out of time after {opts.timeout:g} s",
                          details={k: v for k, v in progress.items()})
        res.details.setdefault("depth", progress.get("depth"))
        if claim.kind == "recover":
            res.details.setdefault("worst", None)
            res.details.setdefault("locked", None)
    res.seconds = time.perf_counter() - t0
    return res


def run_check(check: Check, opts: Options | None = None) -> list[Result]:
    """Every claim of ``check``, in the order written."""
    opts = opts or Options()
    return [run_claim(check, c, opts) for c in check.claims]

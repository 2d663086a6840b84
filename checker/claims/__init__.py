"""Claims to verdicts: each claim kind turns into engine calls and a Result.

``run_check`` runs every claim of a check; each claim gets its own budget
(``Options.timeout``), and one that runs out is ``open``, never ``proved``.
"""

from __future__ import annotations

import multiprocessing as mp
import time
from dataclasses import replace
from concurrent.futures import ProcessPoolExecutor
from concurrent.futures.process import BrokenProcessPool
from typing import Callable

from ..elab import Check, Claim
from ..engines.budget import Budget, run_bounded
from .common import Options, make_result
from .result import OPEN, Result

Prover = Callable[[Check, Claim, Options, Budget], Result]


def _load(kind: str) -> Prover:
    """The ``prove`` of claim kind ``kind``, its module (and the engines it uses) imported now:
    a check loads only what the kinds of claim it runs need."""
    if kind == "count":
        from .count import prove
    elif kind == "always":
        from .always import prove
    elif kind == "recover":
        from .recover import prove
    elif kind == "equal":
        from .equal import prove
    elif kind == "settle":
        from .settle import prove
    elif kind == "glitchfree":
        from .glitchfree import prove
    else:
        raise KeyError(kind)
    return prove


class _Provers(dict):
    """Claim kind -> prove, each filled in on first use."""

    def __missing__(self, kind: str) -> Prover:
        prove = _load(kind)
        self[kind] = prove
        return prove


PROVERS: dict[str, Prover] = _Provers()


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


_WORK: list[tuple[Check, Claim]] = []  # the claims a pool's forked workers read by index


def _pool_claim(index: int, opts: Options) -> Result:
    check, claim = _WORK[index]
    return run_claim(check, claim, opts)


def run_claims(pairs: list[tuple[Check, Claim]], opts: Options, jobs: int = 1) -> list[Result]:
    """Every (check, claim) of ``pairs``, up to ``jobs`` at once, results in the order given.

    Workers are forked from this process, so the files are read and elaborated
    once, here; each claim still runs under its own budget. A worker that dies
    breaks the pool; every claim it left without an answer then runs again on
    its own, in a child process of its own, so only the claim whose process
    dies is reported ``open`` with what happened: never a hang or a lost result.
    """
    if jobs <= 1 or len(pairs) <= 1:
        return [run_claim(c, cl, opts) for c, cl in pairs]
    global _WORK
    _WORK = list(pairs)
    results: list[Result] = []
    try:
        with ProcessPoolExecutor(max_workers=min(jobs, len(pairs)), mp_context=mp.get_context("fork")) as pool:
            futures = [pool.submit(_pool_claim, i, opts) for i in range(len(pairs))]
            for (check, claim), f in zip(pairs, futures):
                try:
                    results.append(f.result())
                except BrokenProcessPool:
                    results.append(_alone(check, claim, opts))
    finally:
        _WORK = []
    return results


def _alone(check: Check, claim: Claim, opts: Options) -> Result:
    """One claim again, in a child process of its own (its pool broke): open if that child dies too."""
    try:
        return run_claim(check, claim, replace(opts, isolate=True))
    except RuntimeError as e:  # run_bounded: the child ended without an answer
        return make_result(check, claim, OPEN, f"the process proving this claim stopped: {e}",
                           details={"depth": None})


def run_check(check: Check, opts: Options | None = None) -> list[Result]:
    """Every claim of ``check``, in the order written."""
    opts = opts or Options()
    return [run_claim(check, c, opts) for c in check.claims]

"""Claims to verdicts: each claim kind turns into engine calls and a Result.

``run_check`` runs every claim of a check; each claim gets its own budget
(``Options.timeout``), and one that runs out is ``open``, never ``proved``.
"""

from __future__ import annotations

import multiprocessing as mp
import threading
import time
from dataclasses import replace
from concurrent.futures import ProcessPoolExecutor
from concurrent.futures.process import BrokenProcessPool
from typing import Callable, Optional, Protocol

from ..elab import Check, Claim
from ..engines.budget import Budget, run_bounded
from . import always, count, equal, glitchfree, recover, settle
from .common import Options, check_radix, make_result
from .result import OPEN, Result

PROVERS: dict[str, Callable[[Check, Claim, Options, Budget], Result]] = {
    "count": count.prove, "always": always.prove, "recover": recover.prove, "equal": equal.prove,
    "settle": settle.prove, "glitchfree": glitchfree.prove,
}


class Watcher(Protocol):
    """What a live display of running claims is told (the report floor provides one; claims
    and engines only call it). ``key`` tells claims apart; ``info`` is what an engine reported
    or noted (``engine``, ``depth``, ``searched`` of ``of`` ...)."""

    def started(self, key: int, label: str, budget: Optional[float]) -> None: ...

    def told(self, key: int, info: dict) -> None: ...

    def finished(self, key: int, status: str) -> None: ...


def claim_label(check: Check, claim: Claim) -> str:
    """How a live display names a claim: ``check:line claim as written``."""
    return f"{check.name}:{claim.pos.line} {claim.text or claim.kind}"


def run_claim(check: Check, claim: Claim, opts: Options,
              watch: Optional[Callable[[dict], None]] = None) -> Result:
    """Prove or refute one claim within ``opts.timeout`` seconds; ``watch`` (if any) hears
    what the engines report as they go."""
    prove = PROVERS[claim.kind]
    opts = replace(opts, radix=check_radix(check, opts.radix))
    t0 = time.perf_counter()
    res, progress, finished = run_bounded(lambda b: prove(check, claim, opts, b), opts.timeout, opts.isolate,
                                          watch)
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
_EVENTS = None  # a queue the forked workers tell a live display through (None: no display)


def _pool_claim(index: int, opts: Options) -> Result:
    check, claim = _WORK[index]
    events = _EVENTS
    if events is None:
        return run_claim(check, claim, opts)
    events.put(("started", index, claim_label(check, claim), opts.timeout))
    res = run_claim(check, claim, opts, lambda info: events.put(("told", index, info)))
    events.put(("finished", index, res.status))
    return res


def _watched(watcher: Optional[Watcher], key: int, check: Check, claim: Claim, opts: Options) -> Result:
    """One claim here, with the display (if any) told when it starts, what it reports, and its end."""
    if watcher is None:
        return run_claim(check, claim, opts)
    watcher.started(key, claim_label(check, claim), opts.timeout)
    res = run_claim(check, claim, opts, lambda info: watcher.told(key, info))
    watcher.finished(key, res.status)
    return res


def _relay(events, watcher: Watcher) -> None:
    """Pass the workers' events to the display until the ``None`` that ends them."""
    while True:
        ev = events.get()
        if ev is None:
            return
        getattr(watcher, ev[0])(*ev[1:])


def run_claims(pairs: list[tuple[Check, Claim]], opts: Options, jobs: int = 1,
               watcher: Optional[Watcher] = None) -> list[Result]:
    """Every (check, claim) of ``pairs``, up to ``jobs`` at once, results in the order given.

    Workers are forked from this process, so the files are read and elaborated
    once, here; each claim still runs under its own budget. A worker that dies
    breaks the pool; every claim it left without an answer then runs again on
    its own, in a child process of its own, so only the claim whose process
    dies is reported ``open`` with what happened: never a hang or a lost result.
    With a ``watcher``, the workers tell it through a queue that a thread here
    reads (when each claim starts, what its engines report, when it ends).
    """
    if jobs <= 1 or len(pairs) <= 1:
        return [_watched(watcher, i, c, cl, opts) for i, (c, cl) in enumerate(pairs)]
    global _WORK, _EVENTS
    _WORK = list(pairs)
    ctx = mp.get_context("fork")
    relay = None
    if watcher is not None:
        _EVENTS = ctx.SimpleQueue()
        relay = threading.Thread(target=_relay, args=(_EVENTS, watcher), daemon=True)
        relay.start()
    results: list[Result] = []
    try:
        with ProcessPoolExecutor(max_workers=min(jobs, len(pairs)), mp_context=ctx) as pool:
            futures = [pool.submit(_pool_claim, i, opts) for i in range(len(pairs))]
            for i, ((check, claim), f) in enumerate(zip(pairs, futures)):
                try:
                    results.append(f.result())
                except BrokenProcessPool:
                    results.append(_alone(check, claim, opts))
                    if watcher is not None:
                        watcher.finished(i, results[-1].status)
    finally:
        if relay is not None:
            _EVENTS.put(None)
            relay.join(5)
        _WORK = []
        _EVENTS = None
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

"""Claims to verdicts: each claim kind turns into engine calls and a Result.

``run_check`` runs every claim of a check; each claim gets its own budget
(``Options.timeout``), and one that runs out is ``open``, never ``proved``.
"""

from __future__ import annotations

import multiprocessing as mp
import threading
import time
from dataclasses import replace
from concurrent.futures import FIRST_COMPLETED, Executor, ProcessPoolExecutor, wait
from concurrent.futures.process import BrokenProcessPool
from typing import Callable, Optional, Protocol

from ..elab import Check, Claim
from ..engines.budget import Budget, run_bounded
from .common import Options, check_radix, make_result
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

POLL_SECONDS = 5.0
"""How often a cluster run, while no claim finishes, asks whether the scheduler still has workers."""


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
               watcher: Optional[Watcher] = None, cluster: Optional[str] = None) -> list[Result]:
    """Every (check, claim) of ``pairs``, up to ``jobs`` at once (or on the Dask
    scheduler at ``cluster``), results in the order given.

    Local workers are forked from this process, so the files are read and
    elaborated once, here; each claim still runs under its own budget. A
    worker that dies breaks the pool; every claim it left without an answer
    then runs again on its own, in a child process of its own, so only the
    claim whose process dies is reported ``open`` with what happened: never a
    hang or a lost result. With a ``watcher``, local workers tell it through a
    queue that a thread here reads (when each claim starts, what its engines
    report, when it ends). On a cluster (``claims/cluster.py``) each claim
    runs in a child of its worker; a claim whose worker the cluster loses, or
    that waits while the scheduler has had no worker for
    ``cluster.NO_WORKER_SECONDS``, is ``open`` with what happened.
    """
    if cluster is not None:
        return _on_cluster(pairs, opts, cluster)
    if jobs <= 1 or len(pairs) <= 1:
        return [_watched(watcher, i, c, cl, opts) for i, (c, cl) in enumerate(pairs)]
    global _WORK, _EVENTS
    opts = replace(opts, parallel=min(jobs, len(pairs)))  # the engines share this machine's memory
    _WORK = list(pairs)
    ctx = mp.get_context("fork")
    relay = None
    if watcher is not None:
        _EVENTS = ctx.SimpleQueue()
        relay = threading.Thread(target=_relay, args=(_EVENTS, watcher), daemon=True)
        relay.start()

    def again(check: Check, claim: Claim, _e: BaseException) -> Result:
        res = run_alone(check, claim, opts)
        if watcher is not None:
            key = next(i for i, (c, cl) in enumerate(pairs) if c is check and cl is claim)
            watcher.finished(key, res.status)
        return res

    try:
        with ProcessPoolExecutor(max_workers=min(jobs, len(pairs)), mp_context=ctx) as pool:
            tasks = [(_pool_claim, (i, opts)) for i in range(len(pairs))]
            return _gather(pool, tasks, pairs, (BrokenProcessPool,), again)
    finally:
        if relay is not None:
            _EVENTS.put(None)
            relay.join(5)
        _WORK = []
        _EVENTS = None


def _on_cluster(pairs: list[tuple[Check, Claim]], opts: Options, address: str) -> list[Result]:
    from . import cluster  # imports Dask: only when a cluster is asked for
    client = cluster.connect(address)
    try:
        pool = client.get_executor(pure=False)
        return _gather(pool, cluster.cluster_tasks(pairs, opts, cluster_claim), pairs, cluster.lost_errors(), cluster.lost_result,
                       alive=lambda: cluster.worker_count(client) > 0, grace=cluster.NO_WORKER_SECONDS)
    finally:
        client.close()


def _gather(pool: Executor, tasks: list[tuple[Callable, tuple]], pairs: list[tuple[Check, Claim]],
            lost: tuple[type, ...], on_lost: Callable[[Check, Claim, BaseException], Result],
            alive: Optional[Callable[[], bool]] = None, grace: float = 0.0) -> list[Result]:
    """Submit every task to ``pool`` (a process pool or a cluster's executor) and collect the
    results in the order of ``pairs``; a task that fails with one of ``lost`` gets ``on_lost``.
    With ``alive``, claims still waiting after ``alive()`` has been false for ``grace`` seconds
    are open: a pool with no worker left never hangs the run."""
    futures = {pool.submit(fn, *args): i for i, (fn, args) in enumerate(tasks)}
    results: list[Optional[Result]] = [None] * len(tasks)
    pending = set(futures)
    idle_since: Optional[float] = None
    while pending:
        done, pending = wait(pending, timeout=None if alive is None else POLL_SECONDS, return_when=FIRST_COMPLETED)
        for f in done:
            i = futures[f]
            try:
                results[i] = f.result()
            except lost as e:
                results[i] = on_lost(*pairs[i], e)
        if alive is None or done or alive():
            idle_since = None
            continue
        idle_since = idle_since or time.monotonic()
        if time.monotonic() - idle_since >= grace:
            for f in pending:
                f.cancel()
                results[futures[f]] = on_lost(*pairs[futures[f]], TimeoutError(f"no worker for {grace:g} s"))
            pending = set()
    return [r for r in results if r is not None]


def cluster_claim(version: str, blob: bytes, index: int, opts: Options) -> Result:
    """On a cluster worker: claim ``index`` of the pickled check ``blob``, in a child process of its own."""
    from . import cluster
    check, claim, why = cluster.worker_check(version, blob, index)
    if why is not None:
        return make_result(check, claim, OPEN, why, details={"depth": None})
    return run_alone(check, claim, opts)


def run_alone(check: Check, claim: Claim, opts: Options) -> Result:
    """One claim in a child process of its own (its pool broke, or on a cluster worker):
    open, saying so, if that child dies."""
    try:
        return run_claim(check, claim, replace(opts, isolate=True))
    except RuntimeError as e:  # run_bounded: the child ended without an answer
        return make_result(check, claim, OPEN, f"the process proving this claim stopped: {e}",
                           details={"depth": None})


def run_check(check: Check, opts: Options | None = None) -> list[Result]:
    """Every claim of ``check``, in the order written."""
    opts = opts or Options()
    return [run_claim(check, c, opts) for c in check.claims]

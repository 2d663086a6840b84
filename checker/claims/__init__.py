"""Claims to verdicts: each claim kind turns into engine calls and a Result.

``run_check`` runs every claim of a check; each claim gets its own budget
(``Options.timeout``), and one that runs out is ``open``, never ``proved``.
"""

from __future__ import annotations

import time
from dataclasses import replace
from multiprocessing.connection import wait as mp_wait
from typing import TYPE_CHECKING, Callable, Optional, Protocol

from ..elab import Check, Claim
from ..engines.budget import Budget, run_bounded
from .common import Options, check_radix, make_result
from .result import OPEN, Result
from .runner import Runner, Stopped

if TYPE_CHECKING:
    from concurrent.futures import Executor

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


def _prove(check: Check, claim: Claim, opts: Options, budget: Budget) -> Result:
    """Claim ``claim`` of ``check`` under ``budget``, here (in whatever process runs it)."""
    return PROVERS[claim.kind](check, claim, replace(opts, radix=check_radix(check, opts.radix)), budget)


def _ran_out(check: Check, claim: Claim, opts: Options, progress: dict) -> Result:
    """The result of a claim stopped at its hard stop: open, with the progress it last reported."""
    res = make_result(check, claim, OPEN, f"ran out of time after {opts.timeout:g} s", details=dict(progress))
    res.details.setdefault("depth", progress.get("depth"))
    if claim.kind == "recover":
        res.details.setdefault("worst", None)
        res.details.setdefault("locked", None)
    return res


def _stopped(check: Check, claim: Claim, why: BaseException) -> Result:
    """The result of a claim whose process ended without an answer: open, saying so."""
    return make_result(check, claim, OPEN, f"the process proving this claim stopped: {why}", details={"depth": None})


def run_claim(check: Check, claim: Claim, opts: Options,
              watch: Optional[Callable[[dict], None]] = None) -> Result:
    """Prove or refute one claim within ``opts.timeout`` seconds; ``watch`` (if any) hears
    what the engines report as they go."""
    t0 = time.perf_counter()
    res, progress, finished = run_bounded(lambda b: _prove(check, claim, opts, b), opts.timeout, opts.isolate,
                                          watch)
    if not finished:
        res = _ran_out(check, claim, opts, progress)
    res.seconds = time.perf_counter() - t0
    return res


POLL_SECONDS = 5.0
"""How often a cluster run, while no claim finishes, asks whether the scheduler still has workers."""


def _watched(watcher: Optional[Watcher], key: int, check: Check, claim: Claim, opts: Options) -> Result:
    """One claim here, with the display (if any) told when it starts, what it reports, and its end."""
    if watcher is None:
        return run_claim(check, claim, opts)
    watcher.started(key, claim_label(check, claim), opts.timeout)
    res = run_claim(check, claim, opts, lambda info: watcher.told(key, info))
    watcher.finished(key, res.status)
    return res


def run_claims(pairs: list[tuple[Check, Claim]], opts: Options, jobs: int = 1,
               watcher: Optional[Watcher] = None, cluster: Optional[str] = None) -> list[Result]:
    """Every (check, claim) of ``pairs``, up to ``jobs`` at once (or on the Dask
    scheduler at ``cluster``), results in the order given.

    With no timeout, no ``opts.isolate`` and one job, claims run here. Otherwise
    they run in ``jobs`` claim runners (``claims/runner.py``) forked from this
    process, so the files are read and elaborated once, here; each runner
    proves claims one after another, each under its own budget. A claim that
    overruns its hard stop, or whose runner dies, is ``open`` saying so, and
    its runner is replaced: never a hang or a lost result, and the claims
    after it still run. A ``watcher`` is told, here, when each claim starts,
    what its engines report, and when it ends. On a cluster
    (``claims/cluster.py``) each worker keeps runners of its own; a claim
    whose worker the cluster loses, or that waits while the scheduler has had
    no worker for ``cluster.NO_WORKER_SECONDS``, is ``open`` with what happened.
    """
    if cluster is not None:
        return _on_cluster(pairs, opts, cluster)
    if jobs <= 1 and opts.timeout is None and not opts.isolate:
        return [_watched(watcher, i, c, cl, opts) for i, (c, cl) in enumerate(pairs)]
    opts = replace(opts, parallel=min(jobs, len(pairs)))  # the engines share this machine's memory
    return _in_runners(pairs, opts, min(jobs, len(pairs)), watcher)


def _in_runners(pairs: list[tuple[Check, Claim]], opts: Options, jobs: int,
                watcher: Optional[Watcher]) -> list[Result]:
    """``run_claims`` on ``jobs`` runners forked from here, each given the next claim when it is free."""
    work = lambda index, o, b: _prove(*pairs[index], o, b)  # noqa: E731  (inherited by fork)
    runners = [Runner(work) for _ in range(max(1, jobs))]
    results: list[Optional[Result]] = [None] * len(pairs)
    todo = iter(range(len(pairs)))

    def finish(i: int, res: Result, seconds: float) -> None:
        res.seconds = seconds
        results[i] = res
        if watcher is not None:
            watcher.finished(i, res.status)

    for kind in dict.fromkeys(claim.kind for _, claim in pairs):
        PROVERS[kind]  # imported here once: every runner forked after inherits it, a replaced one too
    try:
        for r in runners:
            r.fork()
        while True:
            for r in runners:
                if r.key is None:
                    i = next(todo, None)
                    if i is None:
                        continue
                    if watcher is not None:
                        watcher.started(i, claim_label(*pairs[i]), opts.timeout)
                    r.send(i, i, opts, opts.timeout)
            busy = [r for r in runners if r.key is not None]
            if not busy:
                break
            hards = [r.hard for r in busy if r.hard is not None]
            left = None if not hards else max(0.0, min(hards) - time.monotonic())
            for conn in mp_wait([r.conn for r in busy], left):
                r = next(r for r in busy if r.conn is conn)
                i = r.key
                tell = None if watcher is None else (lambda info, i=i: watcher.told(i, info))
                done = False
                while not done and (r.conn is not None and r.conn.poll(0)):  # all it sent, its end included
                    try:
                        done, res = r.receive(tell)
                    except Stopped as e:
                        done, res = True, _stopped(*pairs[i], e)
                    if done:
                        finish(i, res, time.monotonic() - r.start)
                        if r.retire:
                            r.close()  # the next claim sent to it forks a fresh one
            now = time.monotonic()
            for r in busy:
                if r.overdue(now):
                    i, progress, start = r.key, r.progress, r.start
                    r.kill()
                    finish(i, _ran_out(*pairs[i], opts, progress), now - start)
    finally:
        for r in runners:
            r.close()
    return [r for r in results if r is not None]


def _on_cluster(pairs: list[tuple[Check, Claim]], opts: Options, address: str) -> list[Result]:
    from . import cluster  # imports Dask: only when a cluster is asked for
    client = cluster.connect(address)
    pool = client.get_executor(pure=False)
    try:
        tasks = cluster.Tasks(pairs, opts)
        batches = tasks.batches(cluster.batch_size(len(pairs), cluster.thread_count(client)))
        return _gather(pool, cluster_batch, tasks.args, batches, pairs, cluster.lost_errors(), cluster.lost_result,
                       alive=lambda: cluster.worker_count(client) > 0, grace=cluster.NO_WORKER_SECONDS)
    except BaseException as e:  # an interrupt: call off every claim not answered, the running ones too
        pool.shutdown(wait=False)
        clear = cluster.unreadable(e, address)
        if clear is not None:
            raise clear from None
        raise
    finally:
        client.close()


def _gather(pool: Executor, task: Callable, args: Callable[[list[int]], tuple], batches: list[list[int]],
            pairs: list[tuple[Check, Claim]], lost: tuple[type, ...],
            on_lost: Callable[[Check, Claim, BaseException], Result],
            alive: Callable[[], bool], grace: float) -> list[Result]:
    """Submit ``task(*args(batch))`` to ``pool`` (a cluster's executor) for every batch of
    indices into ``pairs``, and collect the results in the order of ``pairs``. A batch that fails
    with one of ``lost`` is sent again a claim to a task; a claim whose own task is lost gets
    ``on_lost``. Claims still waiting after ``alive()`` has been false for ``grace`` seconds are
    open: a cluster with no worker left never hangs the run."""
    from concurrent.futures import FIRST_COMPLETED, wait  # here: a local run never needs them
    futures = {pool.submit(task, *args(b)): b for b in batches}
    results: list[Optional[Result]] = [None] * len(pairs)
    pending = set(futures)
    idle_since: Optional[float] = None
    while pending:
        done, pending = wait(pending, timeout=POLL_SECONDS, return_when=FIRST_COMPLETED)
        for f in done:
            batch = futures.pop(f)
            try:
                for i, res in zip(batch, f.result(), strict=True):
                    results[i] = res
            except lost as e:
                if len(batch) == 1:
                    results[batch[0]] = on_lost(*pairs[batch[0]], e)
                    continue
                for i in batch:  # each on its own now: only a claim that loses its own worker is open
                    g = pool.submit(task, *args([i]))
                    futures[g] = [i]
                    pending.add(g)
        if done or alive():
            idle_since = None
            continue
        idle_since = idle_since or time.monotonic()
        if time.monotonic() - idle_since >= grace:
            for f in pending:
                f.cancel()
                for i in futures[f]:
                    results[i] = on_lost(*pairs[i], TimeoutError(f"no worker for {grace:g} s"))
            pending = set()
    return [r for r in results if r is not None]


def cluster_batch(version: str, opts: Options, items: list[tuple[bytes, int]]) -> list[Result]:
    """On a cluster worker: the claims ``items`` (a pickled check and the index of a claim in it),
    one after another, each in one of the worker's runners under its own timeout."""
    return [cluster_claim(version, blob, index, opts) for blob, index in items]


def cluster_claim(version: str, blob: bytes, index: int, opts: Options) -> Result:
    """On a cluster worker: claim ``index`` of the pickled check ``blob``, in one of the worker's runners."""
    from . import cluster
    check, claim, why = cluster.worker_check(version, blob, index)
    if why is not None:
        return make_result(check, claim, OPEN, why, details={"depth": None})
    PROVERS[claim.kind]  # imported in the worker, so that every runner it forks inherits it
    t0 = time.perf_counter()
    try:
        res, progress, finished = cluster.on_worker(_worker_claim, (blob, index), opts)
    except Stopped as e:
        res, finished = _stopped(check, claim, e), True
    if not finished:
        res = _ran_out(check, claim, opts, progress)
    res.seconds = time.perf_counter() - t0
    return res


def _worker_claim(item: tuple[bytes, int], opts: Options, budget: Budget) -> Result:
    """In a cluster worker's runner: claim ``index`` of the pickled check ``blob``."""
    from . import cluster
    blob, index = item
    check, claim, _ = cluster.worker_check(None, blob, index)
    return _prove(check, claim, opts, budget)


def run_check(check: Check, opts: Options | None = None) -> list[Result]:
    """Every claim of ``check``, in the order written."""
    opts = opts or Options()
    return run_claims([(check, c) for c in check.claims], opts)

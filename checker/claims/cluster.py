"""Claims on a Dask distributed cluster (``check --cluster ADDRESS``).

The Dask ``distributed`` package is an optional extra (``countersign[cluster]``)
and is imported only here, only when a cluster is asked for. A client's
executor (``Client.get_executor``) is a ``concurrent.futures.Executor`` like
any other, so ``run_claims`` hands it tasks and collects their results. A
task carries up to :data:`BATCH_CLAIMS` claims, each as its check pickled
(read and elaborated once, here) with the index of the claim; a batch whose
worker the cluster loses is sent again a claim to a task, so that only a
claim whose own task is lost is reported open. A worker proves each claim in
one of its claim runners (``claims/runner.py``: a child process per worker
thread, kept from claim to claim) under the claim's timeout, so a claim that
crashes its process never takes the worker down with it. A claim called off
(the run was interrupted, or its client went away) has its runner killed
within :data:`CANCEL_POLL_SECONDS`.
"""

from __future__ import annotations

import logging
import multiprocessing as mp
import pickle
import threading
import time
from concurrent.futures import CancelledError
from dataclasses import replace
from functools import lru_cache
from typing import Any, Callable, Optional

from ..about import __version__
from ..elab import Check, Claim
from ..errors import InputError, Pos
from .common import Options, make_result
from .result import OPEN, Result
from .runner import Runner, Work

CANCEL_POLL_SECONDS = 0.2
"""How often a worker waiting on a claim's runner asks whether the claim was called off."""

CONNECT_SECONDS = 10.0
"""How long connecting to a scheduler may take before the address is reported unreachable."""

NO_WORKER_SECONDS = 60.0
"""How long a run waits while the scheduler has no worker at all before the claims left are reported open."""

INSTALL_HINT = 'pip install "countersign[cluster]"'


def _where() -> Pos:
    return Pos("<command line>", 1, 1)


def connect(address: str, timeout: float = CONNECT_SECONDS) -> Any:
    """A ``distributed.Client`` connected to the scheduler at ``address``.

    An InputError (exit 2, one line) when the Dask distributed package is
    not installed or the scheduler cannot be reached within ``timeout``.
    """
    try:
        import distributed  # noqa: F401  (the optional extra)
    except ImportError:
        raise InputError(_where(), f"--cluster needs the Dask distributed package: {INSTALL_HINT}") from None
    from distributed import Client
    from distributed.comm.addressing import parse_address, parse_host_port
    logging.getLogger("distributed").setLevel(logging.ERROR)
    try:  # a malformed address is refused before a client exists (a half-made one hangs when collected)
        scheme, where = parse_address(address)
        if scheme in ("tcp", "tls"):
            parse_host_port(where)
    except ValueError as e:
        raise InputError(_where(), f"--cluster takes a scheduler address such as tcp://HOST:8786 ({e})") from None
    try:
        return Client(address, timeout=timeout, set_as_default=False)
    except (OSError, TimeoutError, ValueError, TypeError) as e:
        msg = " ".join(str(e).split()) or type(e).__name__
        raise InputError(_where(), f"cannot reach a Dask scheduler at '{address}': {msg[:200]}") from None


def lost_errors() -> tuple[type, ...]:
    """Exceptions by which a cluster says it lost a task (a dead worker, a lost scheduler)."""
    from distributed import KilledWorker
    from distributed.comm.core import CommClosedError
    return (KilledWorker, CancelledError, CommClosedError, OSError, TimeoutError)


def worker_count(client: Any) -> int:
    """Workers the scheduler has now (0 when it cannot be asked)."""
    try:
        return len(client.scheduler_info().get("workers", {}))
    except Exception:  # a scheduler that is gone has no workers
        return 0


@lru_cache(maxsize=64)
def _unpickled(blob: bytes) -> Check:
    return pickle.loads(blob)


def worker_check(version: Optional[str], blob: bytes, index: int) -> tuple[Check, Claim, Optional[str]]:
    """On a cluster worker: the check pickled in ``blob`` (unpickled once per worker), its claim
    ``index``, and why it must not run here (another countersign version; None: not asked), or None."""
    # Dask starts its worker processes as daemons, and multiprocessing refuses
    # children to a daemon. The child a claim runs in is killed with its
    # worker (engines/budget.py asks Linux for that), which is what the flag guards.
    mp.current_process()._config["daemon"] = False  # type: ignore[attr-defined]
    check = _unpickled(blob)
    why = None if version in (None, __version__) else \
        f"the worker runs countersign {__version__}, this machine {version}: install one version on both"
    return check, check.claims[index], why


BATCH_CLAIMS = 8
"""Most claims one cluster task carries. Each task costs the scheduler and a worker a few
milliseconds of their own work, more than most claims take, so small claims travel in batches."""

BATCHES_PER_THREAD = 4
"""Batches stay small enough that every worker thread gets at least this many (the load evens out)."""


def batch_size(claims: int, threads: int) -> int:
    """Claims per task for ``claims`` claims on a cluster of ``threads`` worker threads."""
    return max(1, min(BATCH_CLAIMS, claims // (BATCHES_PER_THREAD * max(1, threads))))


def thread_count(client: Any) -> int:
    """Worker threads the scheduler has now (0 when it cannot be asked)."""
    try:
        return sum(client.nthreads().values())
    except Exception:  # a scheduler that is gone has no threads
        return 0


class Tasks:
    """The cluster tasks of a run: each check pickled once, each claim by the index in its check;
    ``args(indices)`` are the arguments of one task proving the claims ``pairs[i]`` for ``i`` in
    ``indices``, in that order: ``claims.cluster_batch(version, opts, [(blob, index), ...])``."""

    def __init__(self, pairs: list[tuple[Check, Claim]], opts: Options) -> None:
        blobs: dict[int, bytes] = {}
        self.items: list[tuple[bytes, int]] = []
        for check, claim in pairs:
            if id(check) not in blobs:
                blobs[id(check)] = pickle.dumps(check, protocol=pickle.HIGHEST_PROTOCOL)
            index = next(i for i, c in enumerate(check.claims) if c is claim)
            self.items.append((blobs[id(check)], index))
        self.opts = replace(opts, isolate=True)

    def args(self, indices: list[int]) -> tuple:
        return (__version__, self.opts, [self.items[i] for i in indices])

    def batches(self, size: int) -> list[list[int]]:
        """The claims in order, ``size`` to a task."""
        n = len(self.items)
        return [list(range(i, min(n, i + size))) for i in range(0, n, size)]


def unreadable(error: BaseException, address: str) -> Optional[InputError]:
    """The one-line error for a scheduler that could not read our tasks (it imports countersign
    to read them, and runs another version of it, or none), or None for any other error."""
    if isinstance(error, RuntimeError) and "deserialization of the task graph" in str(error):
        return InputError(_where(), f"the Dask scheduler at '{address}' cannot read countersign's tasks: "
                                    f"install countersign {__version__} where the scheduler and its workers run")
    return None


def lost_result(check: Check, claim: Claim, error: BaseException) -> Result:
    """The result of a claim whose task the cluster lost: open, saying what happened."""
    what = " ".join(str(error).split())[:200] or type(error).__name__
    return make_result(check, claim, OPEN, f"the cluster lost the worker proving this claim ({type(error).__name__}: {what})",
                       details={"depth": None})


_IDLE: list[Runner] = []  # this worker's runners not proving a claim now
_IDLE_LOCK = threading.Lock()


def _called_off() -> Callable[[], bool]:
    """On a worker, inside a task: whether the scheduler has since called the task off."""
    try:
        from distributed import get_worker
        worker = get_worker()
        key = worker.get_current_task()
    except (ImportError, ValueError, AttributeError, KeyError):  # not on a worker (tests call this directly)
        return lambda: False

    def gone() -> bool:
        ts = worker.state.tasks.get(key)
        return ts is None or ts.state == "cancelled"
    return gone


def on_worker(work: Work, item: Any, opts: Options) -> tuple[Any, dict, bool]:
    """On a worker: ``work(item, opts, budget)`` in one of this worker's runners under
    ``opts.timeout``; (result, progress, finished) as ``engines.budget.run_bounded`` returns.
    Raises ``runner.Stopped`` when the runner died. A runner is taken from the idle ones
    (a new one forked when none is) and put back after, unless it was killed."""
    with _IDLE_LOCK:
        runner = _IDLE.pop() if _IDLE else None
    if runner is None or runner.work is not work:
        runner = Runner(work)
    off = _called_off()
    runner.send(0, item, opts, opts.timeout)
    try:
        while True:
            left = None if runner.hard is None else runner.hard - time.monotonic()
            wait = CANCEL_POLL_SECONDS if left is None else max(0.0, min(left, CANCEL_POLL_SECONDS))
            assert runner.conn is not None
            if runner.conn.poll(wait):
                done, res = runner.receive()
                if done:
                    if runner.retire:
                        runner.close()
                    else:
                        with _IDLE_LOCK:
                            _IDLE.append(runner)
                    runner = None
                    return res, {}, True
            elif runner.overdue(time.monotonic()):
                progress = runner.progress
                runner.kill()
                return None, progress, False
            elif off():
                raise CancelledError("the claim was called off")
    finally:
        if runner is not None:  # killed, died, called off, or the claim raised: never reused
            runner.kill()


def retire_runners() -> int:
    """On a worker: end its idle runners, so that claims after this run in runners forked from
    the worker as it is now (a test that changes a worker's code asks for this); how many ended."""
    with _IDLE_LOCK:
        idle = list(_IDLE)
        _IDLE.clear()
    for r in idle:
        r.close()
    return len(idle)

"""Claims on a Dask distributed cluster (``check --cluster ADDRESS``).

The Dask ``distributed`` package is an optional extra (``countersign[cluster]``)
and is imported only here, only when a cluster is asked for. A client's
executor (``Client.get_executor``) is a ``concurrent.futures.Executor`` like
the local process pool, so ``run_claims`` drives both with one loop; what
differs is what a task carries. A forked local worker already holds every
elaborated check; a cluster worker gets each check pickled (read and
elaborated once, here) with the index of its claim, and runs the claim in a
child process of its own under the claim's timeout, so a claim that crashes
its process never takes the worker down with it.
"""

from __future__ import annotations

import logging
import multiprocessing as mp
import pickle
from concurrent.futures import CancelledError
from dataclasses import replace
from functools import lru_cache
from typing import Any, Callable, Optional

from ..about import __version__
from ..elab import Check, Claim
from ..errors import InputError, Pos
from .common import Options, make_result
from .result import OPEN, Result

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


def worker_check(version: str, blob: bytes, index: int) -> tuple[Check, Claim, Optional[str]]:
    """On a cluster worker: the check pickled in ``blob`` (unpickled once per worker), its claim
    ``index``, and why it must not run here (another countersign version), or None."""
    # Dask starts its worker processes as daemons, and multiprocessing refuses
    # children to a daemon. The child a claim runs in is killed with its
    # worker (engines/budget.py asks Linux for that), which is what the flag guards.
    mp.current_process()._config["daemon"] = False  # type: ignore[attr-defined]
    check = _unpickled(blob)
    why = None if version == __version__ else \
        f"the worker runs countersign {__version__}, this machine {version}: install one version on both"
    return check, check.claims[index], why


def cluster_tasks(pairs: list[tuple[Check, Claim]], opts: Options, task: Callable) -> list[tuple[Callable, tuple]]:
    """(``task``, arguments) of one task per claim: each check pickled once, the claim by index;
    ``task(version, blob, index, opts)`` runs on a worker (``claims.cluster_claim``)."""
    blobs: dict[int, bytes] = {}
    tasks = []
    isolated = replace(opts, isolate=True)
    for check, claim in pairs:
        if id(check) not in blobs:
            blobs[id(check)] = pickle.dumps(check, protocol=pickle.HIGHEST_PROTOCOL)
        index = next(i for i, c in enumerate(check.claims) if c is claim)
        tasks.append((task, (__version__, blobs[id(check)], index, isolated)))
    return tasks


def lost_result(check: Check, claim: Claim, error: BaseException) -> Result:
    """The result of a claim whose task the cluster lost: open, saying what happened."""
    what = " ".join(str(error).split())[:200] or type(error).__name__
    return make_result(check, claim, OPEN, f"the cluster lost the worker proving this claim ({type(error).__name__}: {what})",
                       details={"depth": None})

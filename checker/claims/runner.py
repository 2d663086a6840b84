"""Claim runners: child processes that prove claims one after another.

A claim's hard stop (its ``--timeout``) and the guard against a claim that
crashes its process both need the claim to run in a process that can be
killed. Forking a child per claim paid that guard on every claim (about
20 ms here, 140 to 175 ms on a loaded Dask worker) while most claims take
under a millisecond. A runner is forked once and proves the claims sent to
it in turn; only when a claim overruns its hard stop, or its process dies,
is the runner killed, that claim answered ``open`` saying so, and a fresh
runner forked for the claims after it.

The runner leaves the terminal's process group, so a Ctrl-C reaches only
the process that started it, which kills it (a solver is never interrupted
half-way through its own bookkeeping), and Linux kills it when that process
dies (``engines/budget.py``).
"""

from __future__ import annotations

import multiprocessing as mp
import os
import time
from dataclasses import dataclass, field
from multiprocessing.connection import Connection
from typing import Any, Callable, Optional

from ..engines.budget import Budget, _die_with_parent

RUNNER_CLAIMS = 1000
"""Claims a runner proves before it is retired (a fresh one forked for the next), so that what
claims leave behind (caches, a grown heap) never builds up without bound."""

RUNNER_GROWTH_BYTES = 1 << 30
"""A runner whose resident memory grew by more than this since it was forked is retired too."""

Work = Callable[[Any, Any, Budget], Any]
"""What a runner does with one item: ``work(item, opts, budget)`` -> a result (picklable)."""


def hard_stop(start: float, timeout: Optional[float]) -> Optional[float]:
    """When a claim started at ``start`` with ``timeout`` is killed: shortly after its
    cooperative deadline (the rule of ``engines.budget.run_bounded``), or never."""
    return None if timeout is None else start + timeout + min(2.0, 0.1 * timeout + 0.2)


def _resident() -> int:
    """This process's resident memory in bytes (0 where /proc cannot tell)."""
    try:
        with open("/proc/self/statm", "rb") as f:
            return int(f.read().split()[1]) * os.sysconf("SC_PAGE_SIZE")
    except (OSError, ValueError, IndexError):
        return 0


def _serve(conn: Connection, work: Work, parent_pid: int) -> None:
    os.setpgid(0, 0)
    _die_with_parent()
    if os.getppid() != parent_pid:  # the parent died before we asked
        os._exit(1)
    base = _resident()
    while True:
        try:
            msg = conn.recv()
        except (EOFError, OSError):
            os._exit(0)
        if msg is None:
            os._exit(0)
        item, opts, deadline = msg
        b = Budget(deadline, {}, conn)
        try:
            res = work(item, opts, b)
            conn.send(("done", (res, _resident() - base > RUNNER_GROWTH_BYTES)))
        except BaseException as e:  # passed to the parent, which re-raises it
            conn.send(("error", e))


class Stopped(RuntimeError):
    """The runner proving a claim ended without an answer (it crashed or was killed)."""


@dataclass
class Runner:
    """One runner child and the claim it proves now (if any)."""

    work: Work
    proc: Any = None
    conn: Optional[Connection] = None
    key: Any = None  # the claim being proved (None: idle)
    start: float = 0.0
    hard: Optional[float] = None
    progress: dict = field(default_factory=dict)
    served: int = 0  # claims proved since the fork
    retire: bool = False  # true once the runner should make way for a fresh one

    def fork(self) -> "Runner":
        """Start the child (``work`` is inherited through fork, never pickled)."""
        ctx = mp.get_context("fork")
        here, there = ctx.Pipe(duplex=True)
        self.proc = ctx.Process(target=_serve, args=(there, self.work, os.getpid()), daemon=True)
        self.proc.start()
        there.close()
        self.conn, self.served, self.retire = here, 0, False
        return self

    def send(self, key: Any, item: Any, opts: Any, timeout: Optional[float]) -> None:
        """Give the runner claim ``item`` (known here as ``key``) under ``timeout`` seconds."""
        if self.proc is None:
            self.fork()
        self.key, self.start, self.progress = key, time.monotonic(), {}
        self.hard = hard_stop(self.start, timeout)
        deadline = None if timeout is None else self.start + timeout
        assert self.conn is not None
        try:
            self.conn.send((item, opts, deadline))
        except OSError:  # it died while idle (killed from outside): a fresh one takes the claim
            self.kill()
            self.fork()
            self.key = key
            assert self.conn is not None
            self.conn.send((item, opts, deadline))

    def receive(self, watch: Optional[Callable[[dict], None]] = None) -> tuple[bool, Any]:
        """Read one message of the claim being proved: (True, result) at its end, else (False, None)
        after passing progress and notes to ``watch``. Raises :class:`Stopped` when the child
        died (the runner is then gone), and re-raises what the claim raised."""
        assert self.conn is not None
        try:
            kind, payload = self.conn.recv()
        except (EOFError, OSError):
            self.proc.join(5)
            code = self.proc.exitcode
            self.kill()
            raise Stopped(f"the worker process ended without an answer (exit code {code})") from None
        if kind in ("progress", "note"):
            if kind == "progress":
                self.progress = payload
            if watch is not None:
                watch(dict(payload))
            return False, None
        self.key = None
        if kind == "done":
            res, grown = payload
            self.served += 1
            self.retire = grown or self.served >= RUNNER_CLAIMS
            return True, res
        raise payload

    def overdue(self, now: float) -> bool:
        return self.key is not None and self.hard is not None and now >= self.hard

    def kill(self) -> None:
        """End the child now (a claim overran, or the run stops); the next ``send`` forks anew."""
        if self.proc is not None:
            if self.proc.is_alive():
                self.proc.kill()
            self.proc.join()
        if self.conn is not None:
            self.conn.close()
        self.proc, self.conn, self.key = None, None, None

    def close(self) -> None:
        """Let an idle child end on its own (it reads the end), else kill it."""
        if self.proc is not None and self.key is None and self.conn is not None:
            try:
                self.conn.send(None)
                self.proc.join(1)
            except (OSError, ValueError):
                pass
        self.kill()

"""Time budgets for claims: cooperative deadlines and a hard stop.

An engine reads ``Budget.expired()`` between solver calls and reports how far
it got with ``Budget.report(depth=...)``. ``run_bounded`` runs a claim in a
forked child when a timeout is set, so a solver call that cannot be
interrupted (python-sat's CaDiCaL cannot) is still stopped: the claim is then
``open`` with the progress last reported, never ``proved``.

The child is forked with ``os.fork`` and answers through a pipe (pickles,
each behind its length), not through ``multiprocessing``: importing that
package and its pipes took 30 to 45 ms of every command's start, longer
than a small claim takes to prove.
"""

from __future__ import annotations

import os
import pickle
import select
import signal
import sys
import time
from dataclasses import dataclass, field
from typing import Any, Callable, Optional


NOTE_INTERVAL = 0.1
"""Seconds between two progress notes passed on to a display."""


class OutOfBudget(Exception):
    """A budget ran out inside an engine; ``depth`` says how far it got (None: not measured)."""

    def __init__(self, depth: Optional[int] = None) -> None:
        super().__init__("out of time" if depth is None else f"out of time at depth {depth}")
        self.depth = depth


@dataclass
class Budget:
    """A deadline (``time.monotonic()`` seconds, or None) and the progress reported so far."""

    deadline: Optional[float] = None
    progress: dict = field(default_factory=dict)
    _conn: Any = None
    watch: Optional[Callable[[dict], None]] = None
    """Called with what an engine tells (:meth:`report`, :meth:`note`), for a live display;
    engines never see the display itself, only this callable."""
    _noted: float = 0.0

    @classmethod
    def seconds(cls, s: Optional[float]) -> "Budget":
        return cls(None if s is None else time.monotonic() + s)

    def left(self) -> Optional[float]:
        return None if self.deadline is None else max(0.0, self.deadline - time.monotonic())

    def expired(self) -> bool:
        return self.deadline is not None and time.monotonic() >= self.deadline

    def check(self, depth: Optional[int] = None) -> None:
        """Raise :class:`OutOfBudget` (at ``depth``) when the deadline has passed."""
        if self.expired():
            raise OutOfBudget(depth)

    def share(self, fraction: float, at_least: float, unbounded: float) -> "Budget":
        """A budget for a first try within this one: ``fraction`` of the time left, at least
        ``at_least`` seconds (never past this deadline), or ``unbounded`` seconds when this
        budget has no deadline. Progress is not shared."""
        now = time.monotonic()
        if self.deadline is None:
            return Budget(now + unbounded)
        left = max(0.0, self.deadline - now)
        return Budget(now + min(left, max(at_least, fraction * left)))

    def report(self, **kv: Any) -> None:
        """Record progress (for example ``depth=k``); it survives a hard stop, and a live
        display sees it too."""
        self.progress.update(kv)
        if self._conn is not None:
            try:
                self._conn.send(("progress", dict(self.progress)))
            except (OSError, ValueError):
                pass
        elif self.watch is not None:
            self.watch(dict(kv))

    def note(self, **kv: Any) -> None:
        """Tell a live display how far the work got (``engine="explicit", codes=n, of=m``);
        unlike :meth:`report` it is not part of the verdict. At most ten a second are passed on."""
        now = time.monotonic()
        if now - self._noted < NOTE_INTERVAL:
            return
        self._noted = now
        if self._conn is not None:
            try:
                self._conn.send(("note", dict(kv)))
            except (OSError, ValueError):
                pass
        elif self.watch is not None:
            self.watch(dict(kv))


def _die_with_parent() -> None:
    """Ask Linux to kill this child when its parent dies (prctl PR_SET_PDEATHSIG); elsewhere a no-op."""
    try:
        import ctypes
        libc = ctypes.CDLL(None, use_errno=True)
        libc.prctl(1, signal.SIGKILL, 0, 0, 0)  # 1 = PR_SET_PDEATHSIG
    except (OSError, AttributeError):
        pass


class _Sender:
    """The child's end of the pipe: ``send`` writes one pickle behind its length."""

    def __init__(self, fd: int) -> None:
        self.fd = fd

    def send(self, obj: Any) -> None:
        data = pickle.dumps(obj, protocol=pickle.HIGHEST_PROTOCOL)
        view = memoryview(len(data).to_bytes(8, "little") + data)
        while view:
            view = view[os.write(self.fd, view):]

    def close(self) -> None:
        os.close(self.fd)


def _read_exactly(fd: int, n: int) -> Optional[bytes]:
    """``n`` bytes from ``fd``, or None at the end of the stream (the child is gone)."""
    parts, got = [], 0
    while got < n:
        chunk = os.read(fd, n - got)
        if not chunk:
            return None
        parts.append(chunk)
        got += len(chunk)
    return b"".join(parts)


def _receive(fd: int) -> Optional[Any]:
    """The next message of the child, or None when the pipe ended before a whole one."""
    head = _read_exactly(fd, 8)
    if head is None:
        return None
    data = _read_exactly(fd, int.from_bytes(head, "little"))
    return None if data is None else pickle.loads(data)


def _child(conn, fn, deadline, parent_pid):
    # A terminal's Ctrl-C goes to its foreground process group. The child
    # leaves that group, so an interrupt reaches only the parent, which kills
    # the child: a solver is never interrupted half-way through its own
    # bookkeeping (python-sat's interrupt handler can leave its heap corrupt).
    os.setpgid(0, 0)
    _die_with_parent()
    if os.getppid() != parent_pid:  # the parent died before we asked
        os._exit(1)
    b = Budget(deadline, {}, conn)
    try:
        res = fn(b)
        conn.send(("done", res))
    except BaseException as e:  # passed to the parent, which re-raises it
        conn.send(("error", e))
    finally:
        conn.close()


def _forked(fn: Callable[[Budget], Any], deadline: Optional[float]) -> tuple[int, int]:
    """Fork a child that runs ``fn`` and sends what it reports; returns (its pid, the pipe to read)."""
    for stream in (sys.stdout, sys.stderr):  # what the parent buffered is printed once, by the parent
        try:
            stream.flush()
        except (OSError, ValueError, AttributeError):
            pass
    parent_pid = os.getpid()
    r, w = os.pipe()
    pid = os.fork()
    if pid == 0:  # the child never returns from here
        code = 1
        try:
            os.close(r)
            _child(_Sender(w), fn, deadline, parent_pid)
            code = 0
        except BaseException:  # the parent sees the pipe end without an answer
            pass
        finally:
            os._exit(code)
    os.close(w)
    return pid, r


def _end(pid: int, kill: bool) -> int:
    """Wait for the child (killed first when ``kill``); its exit code, negative for a signal."""
    if kill:
        try:
            os.kill(pid, signal.SIGKILL)
        except ProcessLookupError:
            pass
    while True:
        try:
            _, status = os.waitpid(pid, 0)
            return os.waitstatus_to_exitcode(status)
        except ChildProcessError:
            return 0
        except InterruptedError:
            continue


def run_bounded(fn: Callable[[Budget], Any], timeout: Optional[float],
                isolate: bool = False, watch: Optional[Callable[[dict], None]] = None) -> tuple[Any, dict, bool]:
    """Run ``fn(budget)``; returns (result, progress, finished).

    With no timeout and no ``isolate``, ``fn`` runs here. Otherwise it runs
    in a forked child, with a cooperative deadline at the timeout (if any),
    killed shortly after it; a killed run returns (None, last progress,
    False). ``watch``, when given, is called here (in this process) with what
    the work reports or notes as it goes, for a live display. An interrupt (Ctrl-C, KeyboardInterrupt) in the parent kills the
    child and is raised in the parent, whether or not there is a timeout.
    """
    if timeout is None and not isolate:
        b = Budget(watch=watch)
        return fn(b), b.progress, True
    start = time.monotonic()
    pid, fd = _forked(fn, None if timeout is None else start + timeout)
    progress: dict = {}
    hard = None if timeout is None else start + timeout + min(2.0, 0.1 * timeout + 0.2)
    reaped = False
    try:
        while True:
            left = None if hard is None else hard - time.monotonic()
            if left is not None and left <= 0 or not select.select([fd], [], [], left)[0]:
                break
            msg = _receive(fd)
            if msg is None:
                if hard is None:  # no deadline killed it: the child died on its own
                    code = _end(pid, kill=False)
                    reaped = True
                    raise RuntimeError(f"the worker process ended without an answer (exit code {code})") from None
                break
            kind, payload = msg
            if kind == "progress":
                progress = payload
                if watch is not None:
                    watch(dict(payload))
            elif kind == "note":
                if watch is not None:
                    watch(dict(payload))
            elif kind == "done":
                return payload, progress, True
            else:
                raise payload
    finally:
        if not reaped:
            _end(pid, kill=True)
        os.close(fd)
    return None, progress, False

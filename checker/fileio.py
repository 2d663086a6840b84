"""Files in and out, within bounds: inputs read only when they are regular files of a
size we accept, outputs written whole or not at all.

``read_limited`` looks at what a path is before reading it: a device such as
``/dev/zero``, a FIFO (which would block until someone writes into it), a
socket or a folder is refused, and a regular file's size is checked against
the limit before its first byte is read.

``atomic_output`` writes an output to a temporary file in the target's own
folder and renames it into place only when the writing finished. Inside an
``output_transaction`` the renames wait until the whole command succeeded, so
a command that fails half-way (a second output that cannot be written, an
interrupt) leaves none of its outputs behind. Every error names the path the
user gave, never the temporary file.
"""

from __future__ import annotations

import contextlib
import io
import errno
import os
import stat
from typing import IO, Iterator, Optional

from .errors import InputError, Pos

_pending: Optional[list[tuple[str, str]]] = None  # (temporary, target) renames waiting for the command's end
_collect: Optional[list[tuple[str, str | bytes]]] = None  # outputs kept in memory (see collected)


def shown(text: str) -> str:
    """``text`` as printable Unicode: bytes of a non-UTF-8 file name become ``\\xNN``."""
    try:
        return text.encode("utf-8", "surrogateescape").decode("utf-8", "backslashreplace")
    except UnicodeEncodeError:  # a lone surrogate that no file name decoding made
        return text.encode("utf-8", "backslashreplace").decode("utf-8")


def _kind(mode: int) -> str:
    if stat.S_ISDIR(mode):
        return "a folder"
    if stat.S_ISFIFO(mode):
        return "a pipe (FIFO)"
    if stat.S_ISCHR(mode) or stat.S_ISBLK(mode):
        return "a device"
    if stat.S_ISSOCK(mode):
        return "a socket"
    return "not a regular file"


def read_limited(path: str, limit: int, where: Optional[Pos] = None, what: str = "file") -> bytes:
    """The bytes of the regular file ``path``, at most ``limit`` of them; else an InputError at ``where``.

    The file is opened without blocking and examined before it is read: a
    FIFO, a device, a socket or a folder is refused, and so is a file larger
    than ``limit`` (checked from its size, and again while reading, in case it grows).
    """
    where = where or Pos(path, 1, 1)
    mib = f"{limit / (1024 * 1024):g} MiB"
    try:
        fd = os.open(path, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) | getattr(os, "O_CLOEXEC", 0))
    except FileNotFoundError:
        raise InputError(where, f"no such file '{shown(path)}'") from None
    except IsADirectoryError:
        raise InputError(where, f"'{shown(path)}' is a folder, not a file") from None
    except PermissionError:
        raise InputError(where, f"cannot read '{shown(path)}': permission denied") from None
    except OSError as e:
        raise InputError(where, f"cannot read '{shown(path)}': {e.strerror or e}") from None
    except ValueError:  # a NUL character: no file system has such a name
        raise InputError(where, f"no such file {shown(path)!r}: a file name holds no NUL character") from None
    try:
        st = os.fstat(fd)
        if not stat.S_ISREG(st.st_mode):
            kind = _kind(st.st_mode)
            if kind == "a folder":
                raise InputError(where, f"'{shown(path)}' is a folder, not a file")
            raise InputError(where, f"'{shown(path)}' is {kind}, not a regular file; a {what} must be a regular file")
        if st.st_size > limit:
            raise InputError(where, f"'{shown(path)}' is larger than {mib} (the limit for a {what})")
        chunks: list[bytes] = []
        total = 0
        while True:
            try:
                chunk = os.read(fd, min(1 << 20, limit + 1 - total))
            except BlockingIOError:  # cannot happen on a regular file; refuse rather than spin
                raise InputError(where, f"cannot read '{shown(path)}' without waiting") from None
            if not chunk:
                break
            chunks.append(chunk)
            total += len(chunk)
            if total > limit:
                raise InputError(where, f"'{shown(path)}' is larger than {mib} (the limit for a {what})")
        return b"".join(chunks)
    except OSError as e:
        raise InputError(where, f"cannot read '{shown(path)}': {e.strerror or e}") from None
    finally:
        os.close(fd)


def _named(e: OSError, path: str) -> OSError:
    """The same error, naming ``path`` (the user's name for the file, not a temporary one)."""
    return OSError(e.errno or errno.EIO, e.strerror or str(e), path)


def _umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask


@contextlib.contextmanager
def atomic_output(path: str, binary: bool = False) -> Iterator[IO]:
    """An open file whose contents land at ``path`` only when the ``with`` block finishes.

    A path that exists and is not a regular file (``/dev/null``, a FIFO, a
    terminal) is written directly, since renaming over it would replace it. A
    symbolic link is followed: the file it points to is replaced. Any OSError
    names ``path``. Inside :func:`collected` the contents are kept in memory
    for the caller to write instead.
    """
    if _collect is not None:
        buf: IO = io.BytesIO() if binary else io.StringIO()
        yield buf
        _collect.append((path, buf.getvalue()))
        return
    target = os.path.realpath(path)
    try:
        st = os.stat(target)
    except OSError:
        st = None
    mode = "wb" if binary else "w"
    kw = {} if binary else {"encoding": "utf-8", "newline": "", "errors": "backslashreplace"}
    if st is not None and not stat.S_ISREG(st.st_mode):
        if stat.S_ISDIR(st.st_mode):
            raise OSError(errno.EISDIR, "it is a folder", path)
        try:
            with open(target, mode, **kw) as f:
                yield f
        except OSError as e:
            raise _named(e, path) from None
        return
    if st is not None and not os.access(target, os.W_OK):  # a read-only file stays as it is
        raise OSError(errno.EACCES, "permission denied", path)
    folder, name = os.path.split(target)
    try:
        import tempfile  # here: the command line starts without it (and what it loads)
        fd, tmp = tempfile.mkstemp(dir=folder or ".", prefix=f".{name}.", suffix=".part")
    except OSError as e:
        raise _named(e, path) from None
    try:
        try:
            with os.fdopen(fd, mode, **kw) as f:
                yield f
            os.chmod(tmp, (st.st_mode & 0o7777) if st is not None else (0o666 & ~_umask()))
        except OSError as e:
            raise _named(e, path) from None
        if _pending is not None:
            _pending.append((tmp, target))
        else:
            _rename(tmp, target, path)
    except BaseException:
        with contextlib.suppress(OSError):
            os.unlink(tmp)
        raise


def _rename(tmp: str, target: str, path: str) -> None:
    try:
        os.replace(tmp, target)
    except OSError as e:
        with contextlib.suppress(OSError):
            os.unlink(tmp)
        raise _named(e, path) from None


@contextlib.contextmanager
def collected() -> Iterator[list[tuple[str, str | bytes]]]:
    """Outputs written inside the block are kept as (path, contents) in the list it gives,
    not written: work run in a child process hands them to its parent, which writes them
    (:func:`write_output`) only when the work finished in time."""
    global _collect
    outer, _collect = _collect, []
    try:
        yield _collect
    finally:
        _collect = outer


@contextlib.contextmanager
def output_transaction() -> Iterator[None]:
    """Outputs written inside the block appear at their paths together, when it ends without an
    exception; otherwise none of them does."""
    global _pending
    outer, _pending = _pending, []
    mine = _pending
    try:
        yield
    except BaseException:
        for tmp, _ in mine:
            with contextlib.suppress(OSError):
                os.unlink(tmp)
        raise
    finally:
        _pending = outer
    for k, (tmp, target) in enumerate(mine):
        try:
            _rename(tmp, target, target)
        except BaseException:
            for t, _ in mine[k + 1:]:
                with contextlib.suppress(OSError):
                    os.unlink(t)
            raise


def write_output(path: str, data: str | bytes) -> None:
    """Write ``data`` to ``path`` whole or not at all (see :func:`atomic_output`)."""
    with atomic_output(path, binary=isinstance(data, bytes)) as f:
        f.write(data)

"""Atomic file writes, and reading input files that refuse anything but a regular file.

A report is either the complete previous version or the complete new one, never a
half-written file: data goes to a temporary file in the target's own folder (so the final
rename stays on one file system), is flushed to disk, then renamed over the target.
"""

from __future__ import annotations

import os
import stat
import tempfile
from pathlib import Path

FILE_TYPES = ((stat.S_ISDIR, "a folder"), (stat.S_ISFIFO, "a FIFO (named pipe)"),
              (stat.S_ISCHR, "a character device"), (stat.S_ISBLK, "a block device"),
              (stat.S_ISSOCK, "a socket"))


def file_kind(mode: int) -> str:
    """What a file of ``st_mode`` ``mode`` is, in words ("a FIFO (named pipe)", ...)."""
    if stat.S_ISREG(mode):
        return "a regular file"
    return next((name for test, name in FILE_TYPES if test(mode)), "not a regular file")


class NotRegularFile(OSError):
    """An input path that is not a regular file (or a link to one); ``kind`` says what it
    is ("a FIFO (named pipe)", ...) and ``link`` whether the path is a symbolic link."""

    def __init__(self, path, kind: str, link: bool):
        super().__init__(f"{path}: {kind}, not a regular file")
        self.kind, self.link = kind, link

    def describe(self) -> str:
        """``"a FIFO (named pipe)"`` or ``"a symbolic link to a FIFO (named pipe)"``."""
        return ("a symbolic link to " if self.link else "") + self.kind


def read_regular(path: str | os.PathLike, limit: int = -1) -> bytes:
    """The bytes of a regular file (at most ``limit`` bytes when it is not negative),
    without ever blocking on a FIFO or a device.

    The file is opened non-blocking (a FIFO then opens at once, even with no writer) and
    checked with ``fstat`` on the open descriptor, so nothing can swap it in between.

    Raises
    ------
    NotRegularFile
        The path is a FIFO, a device, a socket or a folder (or a link to one).
    OSError
        FileNotFoundError and the other errors of ``open``.
    """
    flags = os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) | getattr(os, "O_BINARY", 0)
    fd = os.open(path, flags)
    try:
        mode = os.fstat(fd).st_mode
        if not stat.S_ISREG(mode):
            raise NotRegularFile(path, file_kind(mode), os.path.islink(path))
        if hasattr(os, "set_blocking"):
            os.set_blocking(fd, True)
        with os.fdopen(fd, "rb", closefd=False) as fh:
            return fh.read(limit)
    finally:
        os.close(fd)


def _default_mode() -> int:
    """Permission bits a plain ``open()`` would give a new file (0o666 less the umask)."""
    mask = os.umask(0)
    os.umask(mask)
    return 0o666 & ~mask


def _fsync_dir(folder: Path) -> None:
    """Make the rename itself durable where the platform allows it (best effort)."""
    if os.name != "posix":
        return
    try:
        fd = os.open(folder, os.O_RDONLY)
    except OSError:
        return
    try:
        os.fsync(fd)
    except OSError:
        pass
    finally:
        os.close(fd)


def stage_atomic(path: str | os.PathLike, data: bytes) -> str:
    """Write ``data`` to a temporary file beside ``path``, flushed and fsynced, with the
    permission bits ``path`` has (or would get); the target is not touched yet.

    Parameters
    ----------
    path
        Target file. Its folder must exist.
    data
        The complete new contents.

    Returns
    -------
    str
        The temporary file's name (``.<target name>.<random>.tmp`` in the target's
        folder); move it over the target with `commit_atomic`. On any exception the
        temporary file is removed and the exception re-raised.
    """
    path = Path(path)
    try:
        mode = path.stat().st_mode & 0o7777
    except FileNotFoundError:
        mode = _default_mode()
    tmp = tempfile.NamedTemporaryFile(dir=path.parent, prefix=f".{path.name}.",
                                      suffix=".tmp", delete=False)
    tmp_name = tmp.name
    try:
        with tmp:
            tmp.write(data)
            tmp.flush()
            os.fsync(tmp.fileno())
        os.chmod(tmp_name, mode)
    except BaseException:
        discard(tmp_name)
        raise
    return tmp_name


def commit_atomic(tmp_name: str, path: str | os.PathLike) -> None:
    """Move a staged temporary file over ``path`` (``os.replace``: atomic on one file
    system); on failure the temporary file is removed and the exception re-raised."""
    try:
        os.replace(tmp_name, path)
    except BaseException:
        discard(tmp_name)
        raise
    _fsync_dir(Path(path).parent)


def discard(tmp_name: str) -> None:
    """Remove a temporary file if it is still there."""
    try:
        os.unlink(tmp_name)
    except FileNotFoundError:
        pass


def write_atomic(path: str | os.PathLike, data: bytes) -> None:
    """Replace ``path`` with ``data`` atomically.

    Parameters
    ----------
    path
        Target file. Its folder must exist.
    data
        The complete new contents.

    Notes
    -----
    The temporary file is created beside the target, flushed and fsynced, then moved over
    the target with ``os.replace``. On any exception (including KeyboardInterrupt) the
    temporary file is removed and the exception re-raised; the previous target, if any,
    is left untouched. The new file keeps the previous file's permission bits, or gets
    the usual umask-based bits when it is new.
    """
    commit_atomic(stage_atomic(path, data), path)


def write_text_atomic(path: str | os.PathLike, text: str, encoding: str = "utf-8") -> None:
    """Replace ``path`` with ``text`` atomically (see `write_atomic`).

    Parameters
    ----------
    path
        Target file.
    text
        Contents; written as given (no newline translation).
    encoding
        Text encoding, UTF-8 by default.
    """
    write_atomic(path, text.encode(encoding))

"""Atomic file writes.

A report is either the complete previous version or the complete new one, never a
half-written file: data goes to a temporary file in the target's own folder (so the final
rename stays on one file system), is flushed to disk, then renamed over the target.
"""

from __future__ import annotations

import os
import tempfile
from pathlib import Path


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

"""Atomic file writes and checksums.

Every writer of suitmap writes to a temporary name in the destination folder
and moves the finished file into place with :func:`os.replace`, so a reader
never sees a half-written file and a failed write leaves nothing behind.
Whether an existing file may be replaced at all is decided by the caller.
"""

from __future__ import annotations

import contextlib
import glob
import hashlib
import os
import tempfile
from collections.abc import Iterator
from pathlib import Path

from suitmap.errors import OutputError, SuitmapError

__all__ = ["atomic_path", "atomic_write_bytes", "atomic_write_text", "sha256_file",
           "TEMP_MARK", "share_mode", "current_umask"]

#: Every temporary name contains this mark (``.<name>.<random>.part<suffix>``).
TEMP_MARK = ".part"

_CHUNK = 1 << 20


def _remove_quietly(path: str) -> None:
    with contextlib.suppress(FileNotFoundError):
        os.remove(path)


def current_umask() -> int:
    """The process umask, read without changing it where the system allows.

    Linux reports it in ``/proc/self/status``; elsewhere it is read by setting
    and restoring it (``os.umask`` has no read-only form).
    """
    try:
        with open("/proc/self/status", encoding="ascii") as fh:
            for line in fh:
                if line.startswith("Umask:"):
                    return int(line.split()[1], 8)
    except (OSError, ValueError, IndexError):
        pass
    mask = os.umask(0o022)
    os.umask(mask)
    return mask


def share_mode(path: str | os.PathLike) -> None:
    """Give a finished file the mode a plain ``open()`` would: 0666 less the umask.

    :func:`tempfile.mkstemp` creates files 0600 whatever the umask; an output
    that keeps that mode cannot be read by colleagues or a map server.
    """
    os.chmod(path, 0o666 & ~current_umask())


def _fsync_file(path: str) -> None:
    fd = os.open(path, os.O_RDONLY)
    try:
        os.fsync(fd)
    finally:
        os.close(fd)


def _fsync_dir(folder: Path) -> None:
    if os.name != "posix":  # directories cannot be opened for fsync on Windows
        return
    with contextlib.suppress(OSError):
        fd = os.open(folder, os.O_RDONLY)
        try:
            os.fsync(fd)
        finally:
            os.close(fd)


@contextlib.contextmanager
def atomic_path(path: str | os.PathLike, *, durable: bool = True) -> Iterator[Path]:
    """Yield a temporary path beside *path*; move it onto *path* on success.

    The temporary file is created empty (which reserves its unique name) in
    the same folder, so the final :func:`os.replace` is atomic on one file
    system.  The writer may overwrite or recreate it.  If the ``with`` block
    raises, the temporary file and any sidecar GDAL made from its name
    (``.aux.xml``, ``.ovr``...) are removed and *path* is left untouched.

    Parameters
    ----------
    path
        Final file name.  Its folder must exist.
    durable
        ``fsync`` the file before, and the folder after, the move.

    Raises
    ------
    OutputError
        If the folder does not exist, or writing fails for a reason other
        than a :class:`~suitmap.errors.SuitmapError` (which passes through).
    """
    final = Path(path)
    folder = final.parent
    if not folder.is_dir():
        raise OutputError(f"cannot write {final}: folder {folder} does not exist; "
                          "create it first")
    if final.is_dir():
        raise OutputError(f"cannot write {final}: a folder has that name; "
                          "remove it or choose another output name")
    try:
        fd, tmp = tempfile.mkstemp(prefix=f".{final.name}.", suffix=f"{TEMP_MARK}{final.suffix}",
                                   dir=folder)
    except OSError as exc:
        raise OutputError(f"cannot write in {folder}: {exc.strerror}; "
                          "check that the folder is writable") from exc
    os.close(fd)
    try:
        yield Path(tmp)
        if not os.path.isfile(tmp):
            raise OutputError(f"writing {final} produced no file; this is a bug in suitmap")
        share_mode(tmp)
        if durable:
            _fsync_file(tmp)
        os.replace(tmp, final)
    except BaseException as exc:
        _remove_quietly(tmp)
        for sidecar in glob.glob(glob.escape(tmp) + ".*"):
            _remove_quietly(sidecar)
        if isinstance(exc, (SuitmapError, KeyboardInterrupt, SystemExit, GeneratorExit)) \
                or not isinstance(exc, Exception):
            raise
        raise OutputError(f"cannot write {final}: {type(exc).__name__}: {exc}; "
                          "nothing was written (check disk space, permissions and the "
                          "layer data)") from exc
    if durable:
        _fsync_dir(folder)


def atomic_write_bytes(path: str | os.PathLike, data: bytes) -> Path:
    """Write *data* to *path* atomically; return the path."""
    final = Path(path)
    with atomic_path(final) as tmp:
        tmp.write_bytes(data)
    return final


def atomic_write_text(path: str | os.PathLike, text: str, encoding: str = "utf-8") -> Path:
    """Write *text* to *path* atomically; return the path."""
    return atomic_write_bytes(path, text.encode(encoding))


def sha256_file(path: str | os.PathLike) -> str:
    """SHA-256 of a file's bytes, as 64 lowercase hex digits."""
    digest = hashlib.sha256()
    with open(path, "rb") as fh:
        for block in iter(lambda: fh.read(_CHUNK), b""):
            digest.update(block)
    return digest.hexdigest()

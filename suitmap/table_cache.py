"""On-disk cache of the fast daily kernels' tables (``suitmap.kernels.tables``).

A rate-summation table takes 1–12 s to build. It depends only on the rate
curve, its parameters, the diurnal curve and the range of day lengths. The
pipeline therefore keeps each one it builds as a file and reads it back in
later runs, where a small grid would otherwise spend most of its time
rebuilding the same table.

Folder, first that applies:

* ``$SUITMAP_CACHE_DIR``, where ``off`` (or empty) turns the cache off;
* ``$XDG_CACHE_HOME/suitmap``;
* ``~/.cache/suitmap``.

A file is named by a SHA-256 over the build arguments, the suitmap version
and the source of ``suitmap/kernels/*.py``. Editing a kernel therefore never
reads a table made by other code. Files are written under a temporary name
and then renamed, so a crash or a concurrent run leaves no partial file. A
file that cannot be read, or holds something else, is rebuilt and replaced.
If the folder cannot be written, the table is built and used without the
cache. Files are pickles, read only from this folder, which is the user's
own. A Parton–Logan table takes 10–40 MB. Once the folder holds more than
``MAX_BYTES`` (2 GB), the least recently used tables are deleted. The folder
can be deleted at any time to clear the cache.
"""

from __future__ import annotations

import hashlib
import os
import pickle
import tempfile
import time
from collections.abc import Callable
from functools import lru_cache
from pathlib import Path

import numpy as np

__all__ = ["cache_dir", "cached_table"]

_FORMAT = 1          # bump when the stored layout changes
MAX_BYTES = 2_000_000_000   # the oldest files go once the folder holds more (reading one renews it)


def cache_dir() -> Path | None:
    """The cache folder (module notes), or None when the cache is off."""
    env = os.environ.get("SUITMAP_CACHE_DIR")
    if env is not None:
        return None if env.strip().lower() in ("", "off") else Path(env).expanduser()
    base = os.environ.get("XDG_CACHE_HOME") or str(Path.home() / ".cache")
    return Path(base) / "suitmap"


@lru_cache(maxsize=1)
def _code_digest() -> str:
    """SHA-256 of the suitmap version and the kernels' source files."""
    from . import __version__

    h = hashlib.sha256(f"suitmap {__version__} format {_FORMAT}".encode())
    kernels = Path(__file__).resolve().parent / "kernels"
    for path in sorted(kernels.glob("*.py")):
        h.update(path.name.encode())
        h.update(path.read_bytes())
    return h.hexdigest()


def _arrays(obj) -> list[np.ndarray]:
    """The numpy arrays inside nested tuples and lists, in order."""
    if isinstance(obj, np.ndarray):
        return [obj]
    if isinstance(obj, (tuple, list)):
        return [a for item in obj for a in _arrays(item)]
    if isinstance(obj, dict):
        return [a for k in sorted(obj, key=str) for a in _arrays(obj[k])]
    return []


def _frozen(table) -> list[bool]:
    """Which of the table's arrays are read-only: numba types a read-only
    array apart from a writeable one, and pickling drops the flag."""
    return [not a.flags.writeable for a in _arrays(vars(table))]


def _load(path: Path, key: str):
    with open(path, "rb") as f:
        stored = pickle.load(f)
    if not (isinstance(stored, dict) and stored.get("key") == key):
        raise ValueError("not this table")
    table = stored["table"]
    arrays = _arrays(vars(table))
    if len(arrays) != len(stored["frozen"]):
        raise ValueError("layout differs")
    for a, ro in zip(arrays, stored["frozen"]):
        if ro:
            a.flags.writeable = False
    return table


def _save(folder: Path, path: Path, key: str, table) -> None:
    folder.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=".tmp-", suffix=".pkl", dir=folder)
    try:
        with os.fdopen(fd, "wb") as f:
            pickle.dump({"key": key, "frozen": _frozen(table), "table": table}, f,
                        protocol=pickle.HIGHEST_PROTOCOL)
        os.replace(tmp, path)
        _touch(path)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise
    _prune(folder, keep=path)


def _touch(path: Path) -> None:
    """Set the modification time from the fine clock: a file's own time comes
    from the kernel's coarse one, which ties within a few milliseconds."""
    now = time.time_ns()
    os.utime(path, ns=(now, now))


def _prune(folder: Path, keep: Path) -> None:
    """Delete the least recently used tables while the folder holds over MAX_BYTES."""
    files = []
    for p in folder.glob("table-*.pkl"):
        try:
            st = p.stat()
        except OSError:
            continue
        files.append((st.st_mtime, st.st_size, p))
    total = sum(size for _, size, _ in files)
    for _, size, p in sorted(files, key=lambda f: f[0]):
        if total <= MAX_BYTES:
            break
        if p != keep:
            p.unlink(missing_ok=True)
            total -= size


def cached_table(args: tuple, build: Callable[[], object]):
    """The table that ``build()`` makes for ``args`` (a tuple of plain values
    naming it), read from the cache folder if there, else built and stored."""
    folder = cache_dir()
    if folder is None:
        return build()
    key = hashlib.sha256(repr((args, _code_digest())).encode()).hexdigest()
    path = folder / f"table-{key[:32]}.pkl"
    if path.is_file():
        try:
            table = _load(path, key)
            _touch(path)    # recently used: pruned last
            return table
        except Exception:   # unreadable, truncated by hand, or another layout: rebuild
            pass
    table = build()
    try:
        _save(folder, path, key, table)
    except OSError:         # read-only or full disk: use the table uncached
        pass
    return table

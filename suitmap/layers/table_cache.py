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
and the source of ``suitmap/kernels/**/*.py``. Editing a kernel therefore never
reads a table made by other code. Files are written under a temporary name
and then renamed, so a crash or a concurrent run leaves no partial file. A
file that cannot be read, or holds something else, is rebuilt and replaced.
If the folder cannot be written, the table is built and used without the
cache. A file is an ``.npz`` of the table's arrays plus a JSON description of
the rest, read with ``allow_pickle=False``, so loading one runs no code; only
the two table classes of ``suitmap.kernels`` are rebuilt from it. A
Parton–Logan table takes 10–40 MB. Once the folder holds more than
``MAX_BYTES`` (2 GB), the least recently used tables are deleted. The folder
can be deleted at any time to clear the cache.
"""

from __future__ import annotations

import hashlib
import os
import json
import tempfile
import time
from collections.abc import Callable
from functools import lru_cache
from pathlib import Path

import numpy as np

__all__ = ["cache_dir", "cached_table"]

_FORMAT = 2          # bump when the stored layout changes
MAX_BYTES = 2_000_000_000   # the oldest files go once the folder holds more (reading one renews it)


def cache_dir() -> Path | None:
    """The cache folder (module notes), or None when the cache is off."""
    env = os.environ.get("SUITMAP_CACHE_DIR")
    if env is not None:
        return None if env.strip().lower() in ("", "off") else Path(env).expanduser()
    base = os.environ.get("XDG_CACHE_HOME")
    if not base:
        try:
            base = str(Path.home() / ".cache")
        except (RuntimeError, KeyError):   # no home folder (some batch systems): no cache
            return None
    return Path(base) / "suitmap"


@lru_cache(maxsize=1)
def _code_digest() -> str:
    """SHA-256 of the suitmap version and the kernels' source files."""
    from suitmap._version import __version__

    h = hashlib.sha256(f"suitmap {__version__} format {_FORMAT}".encode())
    kernels = Path(__file__).resolve().parent.parent / "kernels"
    for path in sorted(kernels.rglob("*.py")):
        h.update(path.relative_to(kernels).as_posix().encode())
        h.update(path.read_bytes())
    return h.hexdigest()


def _classes() -> dict:
    from suitmap.kernels.tables import DailyTable
    from suitmap.kernels.tables.daylength import PartonLoganTable

    return {"DailyTable": DailyTable, "PartonLoganTable": PartonLoganTable}


def _encode(value, arrays: list) -> list:
    """``value`` as JSON-able [tag, body]; numpy arrays go to ``arrays``, with
    their read-only flag (numba types a read-only array apart from a
    writeable one, and a loaded array is writeable)."""
    if isinstance(value, np.ndarray):
        arrays.append(value)
        return ["array", [len(arrays) - 1, not value.flags.writeable]]
    if isinstance(value, np.generic):
        return ["scalar", [value.dtype.str, value.item()]]
    if isinstance(value, (tuple, list)):
        return ["tuple" if isinstance(value, tuple) else "list",
                [_encode(v, arrays) for v in value]]
    if isinstance(value, dict):
        return ["dict", [[_encode(k, arrays), _encode(v, arrays)] for k, v in value.items()]]
    if value is None or isinstance(value, (bool, int, float, str)):
        return ["plain", value]
    raise TypeError(f"cannot store a {type(value).__name__} in the table cache")


def _decode(data: list, arrays: dict):
    tag, body = data
    if tag == "array":
        a = arrays[f"a{body[0]}"]
        a.flags.writeable = not body[1]
        return a
    if tag == "scalar":
        return np.array(body[1], dtype=np.dtype(body[0]))[()]
    if tag in ("tuple", "list"):
        items = [_decode(v, arrays) for v in body]
        return tuple(items) if tag == "tuple" else items
    if tag == "dict":
        return {_decode(k, arrays): _decode(v, arrays) for k, v in body}
    if tag == "plain":
        return body
    raise ValueError(f"unknown entry {tag!r}")


def _load(path: Path, key: str):
    with np.load(path, allow_pickle=False) as z:
        meta = json.loads(str(z["meta"]))
        if meta.get("key") != key:
            raise ValueError("not this table")
        cls = _classes()[meta["class"]]
        arrays = {name: np.array(z[name]) for name in z.files if name != "meta"}
    table = cls.__new__(cls)
    table.__dict__.update(_decode(meta["attrs"], arrays))
    return table


def _save(folder: Path, path: Path, key: str, table) -> None:
    arrays: list[np.ndarray] = []
    name = type(table).__name__
    if name not in _classes():
        raise TypeError(f"cannot store a {name} in the table cache")
    meta = {"key": key, "class": name, "attrs": _encode(dict(vars(table)), arrays)}
    folder.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=".tmp-", suffix=".npz", dir=folder)
    try:
        with os.fdopen(fd, "wb") as f:
            np.savez(f, meta=np.array(json.dumps(meta)),
                     **{f"a{i}": a for i, a in enumerate(arrays)})
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
    for p in folder.glob("table-*.npz"):
        try:
            st = p.stat()
        except OSError:
            continue
        files.append((st.st_mtime_ns, st.st_size, p))
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
    path = folder / f"table-{key[:32]}.npz"
    if path.is_file():
        try:
            table = _load(path, key)
        except Exception:   # unreadable, truncated by hand, or another layout: rebuild
            pass
        else:
            try:
                _touch(path)    # recently used: pruned last
            except OSError:     # a read-only cache folder is still read
                pass
            return table
    table = build()
    try:
        _save(folder, path, key, table)
    except (OSError, TypeError, ValueError):   # read-only or full disk: use it uncached
        pass
    return table

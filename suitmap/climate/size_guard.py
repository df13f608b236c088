"""Size guard: refuse an input too large for this machine before any value is read.

From the declared sizes of an opened (lazy) array only:

* **tasks** — the number of chunks; past :data:`MAX_CHUNKS` the task graph
  alone would take gigabytes of memory (a grid with huge declared dimensions);
* **memory** — the largest chunk, in values, times :data:`BYTES_PER_VALUE`
  (the float64 working copies the checks and the season passes make), times
  the number of threads working at once, must fit in the memory available
  now (``MemAvailable`` of ``/proc/meminfo``; not checked where unknown).

The message gives the grid, the estimate and what to change
(``[compute] chunk_cells``, ``threads``, or a smaller region).
"""

from __future__ import annotations

import math
import os

import xarray as xr

from suitmap.errors import InputError

__all__ = ["BYTES_PER_VALUE", "MAX_CHUNKS", "available_memory", "check_size"]

MAX_CHUNKS = 200_000
BYTES_PER_VALUE = 32  # float64 copy, mask and reduction temporaries of one chunk, with margin


def available_memory() -> int | None:
    """Bytes of memory available now (Linux), else None."""
    try:
        with open("/proc/meminfo", encoding="ascii") as fh:
            for line in fh:
                if line.startswith("MemAvailable:"):
                    return int(line.split()[1]) * 1024
    except (OSError, ValueError, IndexError):
        pass
    return None


def _gb(n: float) -> str:
    return f"{n / 2**30:.1f} GB"


def check_size(da: xr.DataArray, where: str, threads: int | None = None) -> None:
    """Raise :class:`InputError` when ``da`` (lazy) is too large to process here."""
    chunks = getattr(da, "chunks", None)
    if not chunks:
        return
    n_chunks = math.prod(len(c) for c in chunks)
    shape = " × ".join(str(s) for s in da.shape)
    if n_chunks > MAX_CHUNKS:
        raise InputError(f"{where}: {shape} values ({_gb(da.size * 4)} as float32) in {n_chunks} chunks, "
                         f"more than {MAX_CHUNKS} tasks can be planned; cut the region or the years, "
                         "or set a larger [compute] chunk_cells")
    largest = math.prod(max(c) for c in chunks)
    workers = threads or (os.cpu_count() or 1) + 1
    need = largest * BYTES_PER_VALUE * workers
    avail = available_memory()
    if avail is not None and need > avail:
        raise InputError(f"{where}: chunks of {largest} values need about {_gb(need)} with {workers} "
                         f"threads but {_gb(avail)} of memory is available; set a smaller [compute] "
                         "chunk_cells or fewer [compute] threads")

"""Where the dask graph runs: the threaded scheduler (default), a local
dask.distributed cluster (``--workers N``) or an existing one (``--scheduler ADDRESS``)."""

from __future__ import annotations

import contextlib
import os
from typing import Iterator

from suitmap.errors import InputError


@contextlib.contextmanager
def scheduler(workers: int | None = None, address: str | None = None) -> Iterator[object | None]:
    """Yield a ``distributed.Client`` (or ``None`` for the threaded scheduler).

    Parameters
    ----------
    workers : int, optional
        Start a local cluster of this many single-threaded worker processes.
    address : str, optional
        Connect to an existing scheduler, e.g. ``tcp://10.0.0.5:8786``.
    """
    if workers is None and address is None:
        yield None
        return
    if workers is not None and address is not None:
        raise InputError("give either --workers or --scheduler, not both")
    try:
        from dask.distributed import Client, LocalCluster
    except ImportError:  # pragma: no cover - distributed is a dependency
        raise InputError("dask.distributed is not installed; pip install distributed") from None
    if address is not None:
        try:
            client = Client(address, timeout="10s")
        except (OSError, TimeoutError) as exc:
            raise InputError(f"cannot reach the dask scheduler at {address} ({exc}); "
                             "check the address or start the scheduler") from None
        with client:
            yield client
        return
    if workers < 1:
        raise InputError(f"--workers must be at least 1, got {workers}")
    with LocalCluster(n_workers=workers, threads_per_worker=1, processes=True,
                      dashboard_address=None, silence_logs=40) as cluster, Client(cluster) as client:
        yield client


EXTRA_THREADS = 1
"""Threads beyond the core count in the threaded scheduler (see :func:`threads`)."""


def threads(requested: int | None = None) -> int:
    """Threads for dask's threaded scheduler: ``requested``, else cores + ``EXTRA_THREADS``.

    NetCDF-4/HDF5 reads run one at a time behind a library-wide lock; a thread
    waiting on that lock leaves its core idle, so one thread more than there
    are cores keeps both the reader and the kernels busy (measured in
    ``benchmarks/bench_scale.py``; see DEVELOPERS.md, "Chunks and threads").
    """
    if requested is not None:
        return int(requested)
    return (os.cpu_count() or 1) + EXTRA_THREADS

"""Throughput of the daily degree-day kernels on a synthetic grid.

Run:  python benchmarks/bench_kernels.py

Builds a fixed, seeded float32 (time=365, y=200, x=200) grid of daily minimum
and maximum temperature in memory, then times (best of 3, after a numba
warm-up):

* the plain read: ``np.add(tmin, tmax, out=buffer, dtype=float64)``.  It
  reads the same two float32 arrays and writes the same float64 array as a
  kernel does, with one addition per cell-day.  The ratio column is against
  it.  For context also a compiled read: the same sum in a parallel numba
  loop, which is closer to the memory-bandwidth floor than numpy's casting
  loop (so a cheap kernel can beat the plain read).
* every method with the horizontal cutoff, and both sine methods with every
  cutoff, through ``degree_days_block`` into a preallocated output (the double
  methods with the next day's minimum);
* the sine methods again in float32 arithmetic
  (``degree_days32.sine_degree_days32``, the fast path: the default of
  ``tables.degree_day_table`` and of the pipeline with ``fast_tables``);
* ``daily_degree_days_along_time`` end to end (it allocates its output);
* for information, degree-days over the Parton-Logan day
  (``degree_days_diurnal``, the cross-check of the sine methods; daylength of
  30-60 deg N by row), every cutoff, float64.

Prints million cell-days per second, the ratio to the plain read, and whether
every degree-day case meets the 400 Mcell-days/s target, with the fast path
(float32 for the sines) and with the float64 closed forms alone.
"""

from __future__ import annotations

import os
import sys
import time

import numba
import numpy as np

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), ".."))
from suitmap.kernels.degree_days import (  # noqa: E402
    CUTOFFS, METHODS, daily_degree_days_along_time, degree_days_block)
from suitmap.kernels.degree_days32 import sine_degree_days32  # noqa: E402
from suitmap.kernels.degree_days_diurnal import degree_days_parton_logan_block  # noqa: E402
from suitmap.kernels.diurnal import daylength  # noqa: E402

SHAPE = (365, 200, 200)
LOWER, UPPER = 10.0, 30.0      # deg C
TARGET = 400.0                 # Mcell-days/s, every method and cutoff timed
REPEATS = 3


def synthetic_grid(seed: int = 20240101, shape: tuple[int, int, int] = SHAPE
                   ) -> tuple[np.ndarray, np.ndarray]:
    """Seasonal cycle + north-south gradient + weather noise; 10 % NaN cells."""
    rng = np.random.default_rng(seed)
    nt, ny, nx = shape
    day = np.arange(nt, dtype=np.float64)[:, None, None]
    lat = np.linspace(0.0, 1.0, ny)[None, :, None]
    mean = 24.0 - 16.0 * lat - (8.0 + 6.0 * lat) * np.cos(2 * np.pi * (day - 15) / 365)
    tmin = (mean - 6.0 + rng.normal(0.0, 3.0, shape)).astype(np.float32)
    tmax = (tmin + rng.gamma(4.0, 3.0, shape)).astype(np.float32)
    sea = rng.random((ny, nx)) < 0.10
    tmin[:, sea] = np.nan
    tmax[:, sea] = np.nan
    return tmin, tmax


@numba.njit(parallel=True, cache=True)
def compiled_read(a: np.ndarray, b: np.ndarray, out: np.ndarray) -> None:
    """out = a + b in float64, over flat arrays, on all numba threads."""
    for i in numba.prange(out.size):
        out[i] = np.float64(a[i]) + np.float64(b[i])


def best_of(fn, repeats: int = REPEATS) -> float:
    times = []
    for _ in range(repeats):
        start = time.perf_counter()
        fn()
        times.append(time.perf_counter() - start)
    return min(times)


def main() -> int:
    tmin, tmax = synthetic_grid()
    cells = tmin.size
    out = np.empty(SHAPE, dtype=np.float64)
    nxt = tmin[1:]                       # next day's minimum, a view (no copy)

    def kernel(method, cutoff):
        if method.startswith("double"):
            return lambda: degree_days_block(tmin[:-1], tmax[:-1], nxt, LOWER, UPPER,
                                             method, cutoff, out[:-1])
        return lambda: degree_days_block(tmin, tmax, None, LOWER, UPPER, method, cutoff, out)

    def kernel32(method, cutoff):
        m, c = METHODS.index(method), CUTOFFS.index(cutoff)
        if method.startswith("double"):
            a, b, n, o = (x.reshape(-1) for x in (tmin[:-1], tmax[:-1], nxt, out[:-1]))
            return lambda: sine_degree_days32(a, b, n, LOWER, UPPER, m, c, o)
        a, b, o = tmin.reshape(-1), tmax.reshape(-1), out.reshape(-1)
        return lambda: sine_degree_days32(a, b, None, LOWER, UPPER, m, c, o)

    cases = [(m, "horizontal") for m in METHODS]
    cases += [(m, c) for m in ("single_sine", "double_sine") for c in CUTOFFS
              if c != "horizontal"]

    print(f"grid (time, y, x) = {SHAPE} float32, {cells / 1e6:.1f} M cell-days; "
          f"L = {LOWER}, U = {UPPER} deg C; numba {numba.__version__}, "
          f"{numba.get_num_threads()} threads, {os.cpu_count()} CPUs; best of {REPEATS}")
    sines = [(m, c) for m, c in cases if m.endswith("sine")]
    for m, c in cases:                   # warm-up: compile (or load the cache) and touch memory
        kernel(m, c)()
    for m, c in sines:
        kernel32(m, c)()
    daily_degree_days_along_time(tmin[:3], tmax[:3], LOWER, UPPER, "double_sine")

    flat = (tmin.reshape(-1), tmax.reshape(-1), out.reshape(-1))
    compiled_read(*flat)
    plain = best_of(lambda: np.add(tmin, tmax, out=out, dtype=np.float64))
    plain_rate = cells / plain / 1e6
    print(f"{'case':40s} {'s':>8s} {'Mcell-days/s':>13s} {'x plain read':>13s}")
    print(f"{'plain read (np.add -> float64)':40s} {plain:8.4f} {plain_rate:13.1f} {1.0:13.2f}")
    t = best_of(lambda: compiled_read(*flat))
    r = cells / t / 1e6
    print(f"{'compiled read (numba a + b -> float64)':40s} {t:8.4f} {r:13.1f} {r / plain_rate:13.2f}")
    rates = {}
    for m, c in cases:
        t = best_of(kernel(m, c))
        n = cells - (tmin[0].size if m.startswith("double") else 0)
        rates[(m, c)] = n / t / 1e6
        r = rates[(m, c)]
        print(f"{m + ' / ' + c:40s} {t:8.4f} {r:13.1f} {r / plain_rate:13.2f}")
    fast = dict(rates)
    for m, c in sines:
        t = best_of(kernel32(m, c))
        n = cells - (tmin[0].size if m.startswith("double") else 0)
        fast[(m, c)] = r = n / t / 1e6
        print(f"{m + ' / ' + c + ' float32':40s} {t:8.4f} {r:13.1f} {r / plain_rate:13.2f}")
    for m in ("single_sine", "double_sine"):
        t = best_of(lambda: daily_degree_days_along_time(tmin, tmax, LOWER, UPPER, m,
                                                         "horizontal"))
        r = cells / t / 1e6
        name = f"along_time {m} (allocates out)"
        print(f"{name:40s} {t:8.4f} {r:13.1f} {r / plain_rate:13.2f}")

    rows = daylength(np.linspace(30.0, 60.0, SHAPE[1])[None, :],
                     np.arange(1, SHAPE[0] + 1)[:, None])[:, :, None]
    for c in CUTOFFS:
        def pl(c=c):
            return degree_days_parton_logan_block(tmin[:-1], tmax[:-1], nxt, rows[:-1], LOWER,
                                                  UPPER, c, out[:-1])
        pl()
        t = best_of(pl)
        r = (cells - tmin[0].size) / t / 1e6
        print(f"{'Parton-Logan day / ' + c + ' (info)':40s} {t:8.4f} {r:13.1f} {r / plain_rate:13.2f}")
    for label, rr in (("fast path (float32 sines)", fast), ("float64 closed forms", rates)):
        slowest = min(rr, key=rr.get)
        missed = [f"{m} / {c} ({r:.1f})" for (m, c), r in rr.items() if r < TARGET]
        verdict = "MET" if not missed else "NOT MET: " + ", ".join(missed)
        print(f"target, {label}: every method / cutoff >= {TARGET:.0f} Mcell-days/s: "
              f"{verdict} (slowest {slowest[0]} / {slowest[1]}: {rr[slowest]:.1f})")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())

"""Throughput and accuracy of the fast daily kernels (suitmap.kernels.tables).

Run:  python benchmarks/bench_tables.py [--quick] [--rounds N]

Builds a fixed, seeded float32 (time=365, y=400, x=400) grid of daily minimum
and maximum temperature in memory (58.4 million cell-days; --quick: 100 x 100
cells), then, after a warm-up, times best of 3:

* the plain read: a parallel numba loop out = float64(tmin) + float64(tmax)
  over the same arrays into a preallocated float64 output, the memory-bound
  reference for the ratio column;
* every degree-day method with the horizontal cutoff and the sine methods
  with every cutoff (thresholds 10 / 30 deg C), through ``DailyTable.evaluate``
  (double methods with the next day's minimum): the exact closed form, for
  the sine methods their float32 closed form (``strategy="float32"``, their
  default), and for the sine and triangle methods a lookup table
  (``strategy="table"``) beside it;
* rate summation (daily development) with every rate curve of
  tests/test_tables.py, sine day: table, and the exact quadrature on the
  first 5 days;
* the same curves with the Parton-Logan day (daylength from the latitude of
  each row) on the first 30 days: fast quadrature and exact;
* the same curves with the Parton-Logan day-length tables
  (``development_table(..., diurnal="parton_logan", daylength_range=...)``,
  the range of the grid's day lengths) on the first ``PL_DAYS`` days
  (every day with --quick).

Columns: build time (s), table nodes per axis and size, the share of values
the evaluation computed exactly (marked cells, out of range), best time,
million cell-days per second, ratio to the plain read, "cpu": million
cell-days per CPU-second times the number of threads (what the run would
give with every thread on an idle core; on a loaded machine the wall-clock
figures fall below it), and the accuracy
against the exact kernel measured here on 2000 cells x 365 days: largest
relative error where the exact value is above 1 % of its peak, and largest
relative error of the 365-day sums.  The numbers depend on the machine and
its load (load average printed); run on an idle machine.  ``--rounds N``
(default 3) times the fast cases N - 1 more times, interleaved with the plain
read, and checks the targets on the medians.
"""

from __future__ import annotations

import argparse
import os
import sys
import time
from pathlib import Path

import numba
import numpy as np

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), ".."))
from suitmap.kernels.degree_days import CUTOFFS, METHODS, degree_days_block  # noqa: E402
from suitmap.kernels.development import daily_development  # noqa: E402
from suitmap.kernels.diurnal import daylength  # noqa: E402
from suitmap.kernels.tables import degree_day_table, development_table  # noqa: E402

sys.path.insert(0, str(Path(__file__).resolve().parent))
from bench_kernels import synthetic_grid as _kernel_grid  # noqa: E402  (same synthetic grid)

# the published parameter sets of the tests (their sources are cited there)
sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "tests"))
from test_development import CURVES  # noqa: E402

LOWER, UPPER = 10.0, 30.0
TARGET = 400.0                      # Mcell-days/s
TABLED = ("single_triangle", "double_triangle", "single_sine", "double_sine")
SINES = ("single_sine", "double_sine")
REPEATS = 3
PL_DAYS = 120                       # Parton-Logan tables, full grid: first 120 days


def synthetic_grid(shape: tuple[int, int, int], seed: int = 20240101):
    """The degree-day benchmark's grid (bench_kernels.synthetic_grid) plus a daylength
    for latitudes 30-60 N."""
    nt, ny, _ = shape
    tmin, tmax = _kernel_grid(seed, shape)
    dl = daylength(np.linspace(30.0, 60.0, ny)[None, :], np.arange(1, nt + 1)[:, None])
    dl = np.ascontiguousarray(np.broadcast_to(dl[:, :, None], shape), dtype=np.float32)
    return tmin, tmax, dl


@numba.njit(parallel=True, cache=True)
def plain_read(a: np.ndarray, b: np.ndarray, out: np.ndarray) -> None:
    """out = a + b in float64, over flat arrays, on all numba threads."""
    for i in numba.prange(out.size):
        out[i] = np.float64(a[i]) + np.float64(b[i])


def best_of(fn, repeats: int = REPEATS) -> tuple[float, float]:
    """Best wall time and the CPU time (all threads) of that run."""
    runs = []
    for _ in range(repeats):
        start, cpu = time.perf_counter(), time.process_time()
        fn()
        runs.append((time.perf_counter() - start, time.process_time() - cpu))
    return min(runs)


def accuracy(fast: np.ndarray, exact: np.ndarray) -> tuple[float, float]:
    """Largest relative error above 1 % of the peak; largest relative error
    of the sums over axis 0 (days) where the sum is above 1 % of its peak."""
    ok = np.isfinite(exact)
    big = ok & (np.abs(exact) > 0.01 * np.nanmax(np.abs(exact)))
    daily = float(np.max(np.abs(fast[big] - exact[big]) / np.abs(exact[big]), initial=0.0))
    fs, es = np.nansum(fast, axis=0), np.nansum(exact, axis=0)
    sel = np.abs(es) > 0.01 * np.max(np.abs(es))
    season = float(np.max(np.abs(fs[sel] - es[sel]) / np.abs(es[sel]), initial=0.0))
    return daily, season


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="100 x 100 cells")
    parser.add_argument("--rounds", type=int, default=3,
                        help="interleaved rounds of the fast cases after the first pass "
                             "(median and range; the targets are checked on the medians)")
    opts = parser.parse_args()
    quick, rounds = opts.quick, max(1, opts.rounds)
    shape = (365, 100, 100) if quick else (365, 400, 400)
    tmin, tmax, dl = synthetic_grid(shape)
    cells = tmin.size
    out = np.empty(shape, dtype=np.float64)
    nxt = tmin[1:]
    rng = np.random.default_rng(7)
    pick = rng.choice(shape[1] * shape[2], 2000, replace=False)      # accuracy sample
    sample = [a.reshape(shape[0], -1)[:, pick].copy() for a in (tmin, tmax, dl)]
    s_next = np.concatenate([sample[0][1:], sample[0][-1:]])

    ncpu = numba.get_num_threads()
    print(f"grid (time, y, x) = {shape} float32, {cells / 1e6:.1f} M cell-days; "
          f"numba {numba.__version__}, {numba.get_num_threads()} threads, {os.cpu_count()} "
          f"CPUs; load average {os.getloadavg()[0]:.2f}; best of {REPEATS}")
    flat = (tmin.reshape(-1), tmax.reshape(-1), out.reshape(-1))
    plain_read(*flat)
    t_read, c_read = best_of(lambda: plain_read(*flat))
    r_read = cells / t_read / 1e6
    head = (f"{'case':34s} {'build s':>7s} {'nodes':>5s} {'MB':>5s} {'exact%':>6s} "
            f"{'s':>7s} {'Mc-d/s':>7s} {'x read':>6s} {'cpu':>6s} {'rel err':>8s} {'season':>8s}")
    print(head)
    print(f"{'plain read (numba a+b -> float64)':34s} {'':7s} {'':5s} {'':5s} {'':6s} "
          f"{t_read:7.4f} {r_read:7.0f} {1.0:6.2f} {ncpu * cells / c_read / 1e6:6.0f}")
    rows = []

    def report(name, table, fn, n, err, build, key=None):
        fn()                                           # warm-up (compile or load cache)
        t, cpu = best_of(fn)
        rate = n / t / 1e6
        pct = 100.0 * table.last_exact_count / n if table is not None else 0.0
        nodes = f"{table.nodes:5d}" if table is not None and table.nodes else f"{'-':>5s}"
        mb = table.nbytes / 1e6 if table is not None else 0.0
        print(f"{name:34s} {build:7.2f} {nodes} {mb:5.1f} {pct:6.2f} {t:7.4f} {rate:7.0f} "
              f"{rate / r_read:6.2f} {ncpu * n / cpu / 1e6:6.0f} {err[0]:8.1e} {err[1]:8.1e}")
        rows.append((key or name, rate, fn, n))

    defaults = []                  # keys of the default strategy of each method/cutoff
    cases = [(m, "horizontal") for m in METHODS]
    cases += [(m, c) for m in ("single_sine", "double_sine") for c in CUTOFFS[1:]]
    for method, cutoff in cases:
        double = method.startswith("double")
        ex = degree_days_block(sample[0], sample[1], s_next if double else None, LOWER,
                               UPPER, method, cutoff)
        n = cells - (tmin[0].size if double else 0)
        strategies = (["closed_form"] + (["float32"] if method in SINES else [])
                      + (["table"] if method in TABLED else []))
        for strategy in strategies:
            start = time.perf_counter()
            table = degree_day_table(LOWER, UPPER, method, cutoff, strategy=strategy)
            build = time.perf_counter() - start
            err = accuracy(table.evaluate(sample[0], sample[1], tmin_next=s_next), ex)
            if double:   # (defaults bind this table: the rounds call fn again later)
                fn = lambda t=table: t.evaluate(tmin[:-1], tmax[:-1], out[:-1],  # noqa: E731
                                                tmin_next=nxt)
            else:
                fn = lambda t=table: t.evaluate(tmin, tmax, out)  # noqa: E731
            name = f"{method}/{cutoff}" if strategy == "closed_form" else f"  {strategy}"
            report(name, table if strategy == "table" else None, fn, n, err, build,
                   key=f"{method}/{cutoff}" + ("" if strategy == "closed_form" else
                                               f" {strategy}"))
            if strategy == ("float32" if method in SINES else "closed_form"):
                defaults.append(f"{method}/{cutoff}" + (" float32" if method in SINES else ""))

    few = 5 * tmin[0].size          # exact quadrature: first 5 days only
    for model, params in CURVES.items():
        start = time.perf_counter()
        table = development_table(model, params)
        build = time.perf_counter() - start
        ex = daily_development(sample[0], sample[1], model, params)
        err = accuracy(table.evaluate(sample[0], sample[1]), ex)
        report(f"dev sine {model}", table, lambda t=table: t.evaluate(tmin, tmax, out), cells,
               err, build)
        a, b = tmin[:5], tmax[:5]
        report("  exact quadrature (5 days)", None,
               lambda: daily_development(a, b, model, params), few, (0.0, 0.0), 0.0)

    def pl_rows(label, pl, **table_kw):
        """Each curve's Parton-Logan table: built, checked on the sample, timed on ``pl``."""
        days = pl[0].shape[0]
        for model, params in CURVES.items():
            start = time.perf_counter()
            table = development_table(model, params, diurnal="parton_logan", **table_kw)
            build = time.perf_counter() - start
            ex = daily_development(sample[0], sample[1], model, params, diurnal="parton_logan",
                                   daylength=sample[2], tmin_next=s_next)
            err = accuracy(table.evaluate(sample[0], sample[1], tmin_next=s_next,
                                          daylength=sample[2]), ex)
            report(f"{label} {model} ({days} d)", table,
                   lambda t=table: t.evaluate(pl[0], pl[1], out[:days], tmin_next=pl[2],
                                              daylength=pl[3]), pl[0].size, err, build,
                   key=f"{label} {model}")
            yield model, params

    days = 30                       # Parton-Logan: first 30 days
    pl = [x[:days] for x in (tmin, tmax, tmin[1:days + 1], dl)]
    for model, params in pl_rows("dev PL", pl):
        a, b, c, d = (x[:2] for x in pl)
        report("  exact quadrature (2 days)", None,
               lambda: daily_development(a, b, model, params, diurnal="parton_logan",
                                         daylength=d, tmin_next=c),
               2 * tmin[0].size, (0.0, 0.0), 0.0)


    # Parton-Logan day-length tables over the grid's day lengths
    days = shape[0] if quick else PL_DAYS
    following = np.concatenate([tmin[1:], tmin[-1:]])      # next day's minimum
    pl = [x[:days] for x in (tmin, tmax, following, dl)]
    y_range = (float(dl.min()), float(dl.max()))
    for _ in pl_rows("dev PL table", pl, daylength_range=y_range):
        pass

    # the same fast cases again in interleaved rounds, each beside a plain read: a
    # shared machine's speed drifts by minutes, so the targets use the medians
    timed = [(k, fn, n) for k, _, fn, n in rows
             if not k.startswith(("  ", "dev PL ")) or k.startswith("dev PL table")]
    rates = {k: [r] for k, r, _, _ in rows}
    reads = [r_read]
    for _ in range(rounds - 1):
        t, _ = best_of(lambda: plain_read(*flat))
        reads.append(cells / t / 1e6)
        for k, fn, n in timed:
            t, _ = best_of(fn)
            rates[k].append(n / t / 1e6)
    med_read = float(np.median(reads))
    if rounds > 1:
        print(f"\n{rounds} rounds (the pass above and {rounds - 1} more, interleaved): "
              "median (min-max) Mcell-days/s, ratio of the median to the plain read's")
        print(f"{'plain read':34s} {med_read:7.0f} ({min(reads):.0f}-{max(reads):.0f})")
        for k, _, _ in timed:
            v = rates[k]
            print(f"{k:34s} {np.median(v):7.0f} ({min(v):.0f}-{max(v):.0f}) "
                  f"{np.median(v) / med_read:6.2f}")
    med = {k: float(np.median(v)) for k, v in rates.items()}
    what = "median" if rounds > 1 else "best"
    low = [f"{k} ({med[k]:.0f})" for k, _, _ in timed
           if (k in defaults or k.startswith("dev sine")) and med[k] < TARGET]
    print(f"target >= {TARGET:.0f} Mcell-days/s ({what}) for every degree-day method (default "
          f"strategy: float32 for the sines) and sine rate summation: "
          f"{'MET' if not low else 'NOT MET: ' + ', '.join(low)}")
    low = [f"{k.split()[3]} ({med[k]:.0f})" for k, _, _ in timed
           if k.startswith("dev PL table") and med[k] < TARGET]
    print(f"target >= {TARGET:.0f} Mcell-days/s ({what}) for Parton-Logan rate summation (tables): "
          f"{'MET' if not low else 'NOT MET: ' + ', '.join(low)}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())

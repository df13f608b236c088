"""One pass over a season's days: totals, first day a threshold is reached, lethal-day counts.

Pure numba, no I/O.  Replaces five numpy passes (cumsum, threshold test,
argmax, two counts, mean) by one loop over each cell's days.
"""

from __future__ import annotations

import numba
import numpy as np


@numba.njit(cache=True, nogil=True)  # nogil: dask threads run blocks at once
def _reduce(daily, tn, tx, threshold, lethal_cold, lethal_heat, total, first, cold, heat, mtx):
    ny, nx, nt = daily.shape
    for j in range(ny):
        for i in range(nx):
            acc = 0.0
            day = np.nan
            nc = 0.0
            nh = 0.0
            sx = 0.0
            bad = False
            for t in range(nt):
                v = daily[j, i, t]
                a = tn[j, i, t]
                b = tx[j, i, t]
                if v != v or a != a or b != b:
                    bad = True
                    break
                acc += v
                if day != day and acc >= threshold:
                    day = t + 1.0
                if a <= lethal_cold:
                    nc += 1.0
                if b >= lethal_heat:
                    nh += 1.0
                sx += b
            if bad:
                total[j, i] = np.nan
                first[j, i] = np.nan
                cold[j, i] = np.nan
                heat[j, i] = np.nan
                mtx[j, i] = np.nan
            else:
                total[j, i] = acc
                first[j, i] = day
                cold[j, i] = nc
                heat[j, i] = nh
                mtx[j, i] = sx / nt


def season_reduce(daily: np.ndarray, tmin: np.ndarray, tmax: np.ndarray, threshold: float,
                  lethal_cold: float | None, lethal_heat: float | None):
    """Season figures of (y, x, day) arrays in one pass.

    Returns ``(total, first_day, cold_days, heat_days, mean_tmax)``, each (y, x)
    float64: the sum of ``daily``; the 1-based day on which the running sum first
    reaches ``threshold`` (NaN if never); days with ``tmin <= lethal_cold`` and
    ``tmax >= lethal_heat`` (0 when the limit is None); the mean of ``tmax``.
    A cell with any NaN day is NaN in every figure.
    """
    ny, nx, _ = daily.shape
    out = [np.empty((ny, nx)) for _ in range(5)]
    lc = -np.inf if lethal_cold is None else float(lethal_cold)
    lh = np.inf if lethal_heat is None else float(lethal_heat)
    _reduce(np.ascontiguousarray(daily, dtype=np.float64), np.ascontiguousarray(tmin),
            np.ascontiguousarray(tmax), float(threshold), lc, lh, *out)
    return tuple(out)

"""One pass over a season's days: totals, first day a threshold is reached, lethal-day counts.

Pure numba, no I/O.  Replaces five numpy passes (cumsum, threshold test,
argmax, two counts, mean) by one loop over each cell's days.
"""

from __future__ import annotations

import numba
import numpy as np

from suitmap.kernels.degree_days import CUTOFFS, METHODS, _check_code, _fill_range, _thresholds
from suitmap.kernels.degree_days_diurnal import _coefficients
from suitmap.kernels.diurnal import daylength
from suitmap.kernels.degree_days_diurnal import _fill_range as _pl_fill_range
from suitmap.kernels.degree_days32 import _range32


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


# ------------------------------------------------ time-major stream (degree-days)
_TILE = 1024   # cells per tile: a tile's running figures and day rows stay in L1/L2


@numba.njit(cache=True, nogil=True, error_model="numpy")
def _stream(tmin, tmax, i0, i1, lower, upper, method, cutoff, threshold, lethal_cold,
            lethal_heat, dl_rows, cell_row, pl, fast32, total, first, cold, heat, mtx):
    """Days i0..i1-1 of (day, cell) arrays, a tile of cells and one day at a time.

    Each day's row of the tile is swapped (Tmin > Tmax), turned into
    degree-days by the vectorised loop of ``degree_days._fill_range`` and
    folded into the tile's running figures, so nothing of the size of the
    block is allocated and the block is read once.  With a non-empty
    ``dl_rows`` (daylength, hours, of each distinct latitude ``cell_row[j]``
    on each day) the day is Parton & Logan's with coefficients ``pl`` =
    (a, b, c) instead of the method's.  A NaN day makes the sum (degree-days
    are NaN where an input is) or the Tmax sum NaN, and then every figure.
    ``fast32`` (sine methods): the float32 loop of ``degree_days32``.
    """
    nt, nc = tmin.shape
    lo = np.empty(_TILE, tmin.dtype)
    hi = np.empty(_TILE, tmin.dtype)
    lo_next = np.empty(_TILE, tmin.dtype)
    hi_next = np.empty(_TILE, tmin.dtype)
    dd = np.empty(_TILE, np.float64)
    dl = np.empty(_TILE, np.float64)
    parton_logan = dl_rows.shape[0] > 0
    for c0 in range(0, nc, _TILE):
        m = min(nc, c0 + _TILE) - c0
        tot = total[c0:c0 + m]
        fst = first[c0:c0 + m]
        cld = cold[c0:c0 + m]
        hot = heat[c0:c0 + m]
        sx = mtx[c0:c0 + m]
        rows = cell_row[c0:c0 + m]
        for j in range(m):
            tot[j] = 0.0
            fst[j] = np.nan
            cld[j] = 0.0
            hot[j] = 0.0
            sx[j] = 0.0
            a, b = tmin[i0, c0 + j], tmax[i0, c0 + j]
            lo_next[j] = b if b < a else a
            hi_next[j] = a if b < a else b
        for t in range(i0, i1):
            lo, lo_next = lo_next, lo
            hi, hi_next = hi_next, hi
            if t + 1 < nt:                   # the next day's minimum, swapped too
                ra, rb = tmin[t + 1, c0:c0 + m], tmax[t + 1, c0:c0 + m]
                for j in range(m):
                    a, b = ra[j], rb[j]
                    lo_next[j] = b if b < a else a
                    hi_next[j] = a if b < a else b
            else:                            # the last day of the data: its own minimum
                lo_next[:m] = lo[:m]
                hi_next[:m] = hi[:m]
            if parton_logan:
                for j in range(m):
                    dl[j] = dl_rows[rows[j], t]
                _pl_fill_range(lo, hi, lo_next, dl, dd, 0, m, 1, lower, upper, cutoff,
                               pl[0], pl[1], pl[2])
            elif fast32:
                _range32(lo, hi, lo_next, dd, 0, m, np.float32(lower), np.float32(upper),
                         method, cutoff)
            else:
                _fill_range(lo, hi, lo_next, dd, 0, m, lower, upper, method, cutoff)
            day = t - i0 + 1.0
            for j in range(m):
                x, y = lo[j], hi[j]
                acc = tot[j] + dd[j]
                tot[j] = acc
                f = fst[j]
                fst[j] = day if (f != f) & (acc >= threshold) else f
                cld[j] += 1.0 if x <= lethal_cold else 0.0
                hot[j] += 1.0 if y >= lethal_heat else 0.0
                sx[j] += y
    n = i1 - i0
    for j in range(nc):
        if total[j] != total[j] or mtx[j] != mtx[j]:
            total[j] = np.nan
            first[j] = np.nan
            cold[j] = np.nan
            heat[j] = np.nan
            mtx[j] = np.nan
        else:
            mtx[j] = mtx[j] / n


def season_degree_days(tmin: np.ndarray, tmax: np.ndarray, start: int, stop: int,
                       lower: float, upper: float, method: int | str, cutoff: int | str,
                       dd_per_generation: float, lethal_cold: float | None,
                       lethal_heat: float | None, *, latitude: np.ndarray | None = None,
                       doy: np.ndarray | None = None, coefficients: dict | None = None,
                       fast: bool = False):
    """Season figures straight from (day, ...) Tmin/Tmax, without daily arrays.

    The same figures as ``degree_days_block`` followed by ``season_reduce``
    on the swapped days ``start..stop-1`` (the day after ``stop - 1``, when
    there is one, gives the last day's next minimum), in one pass over the
    arrays in their own (day-major) order.

    Parameters
    ----------
    tmin, tmax : numpy.ndarray
        Same shape ``(day, ...)``, float32 or float64; days with Tmin > Tmax
        are swapped.
    start, stop : int
        The season's days along axis 0.
    lower, upper, method, cutoff
        As in :func:`suitmap.kernels.degree_days.degree_days_block`.
    dd_per_generation : float
        Degree-days of one generation (the ``first_day`` threshold).
    lethal_cold, lethal_heat : float or None
        Day counts of ``tmin <= lethal_cold`` and ``tmax >= lethal_heat``.
    latitude, doy : numpy.ndarray, optional
        Cell latitudes (degrees north, broadcastable to ``tmin.shape[1:]``)
        and the day of year of every day along axis 0: integrate degree-days
        over the Parton & Logan (1981) day with Forsythe et al. (1995)
        daylength (``method`` is then not used), as
        :func:`suitmap.kernels.degree_days_diurnal.degree_days_parton_logan`.
        Daylength is computed once per distinct latitude and day.
    coefficients : dict, optional
        Parton-Logan a, b, c (default: the 150-cm air temperature values).
    fast : bool
        Single and double sine without ``latitude``: the float32 closed form
        of :mod:`suitmap.kernels.degree_days32` (input rounded to float32;
        within about 1e-5 °C·day a day) instead of the float64 one.

    Returns
    -------
    tuple of numpy.ndarray
        ``(total, first_day, cold_days, heat_days, mean_tmax)``, each of shape
        ``tmin.shape[1:]``, float64; NaN in every figure where any day used
        (including the next minimum) is NaN.

    References
    ----------
    See :mod:`suitmap.kernels.degree_days` (Baskerville & Emin 1969; Zalom et
    al. 1983).
    """
    m = _check_code(method, METHODS, "degree-day method")
    c = _check_code(cutoff, CUTOFFS, "cutoff")
    lower, upper = _thresholds(lower, upper)
    if tmin.shape != tmax.shape or not 0 <= start < stop <= tmin.shape[0]:
        raise ValueError(f"tmin {tmin.shape}/tmax {tmax.shape} must match and hold days "
                         f"{start}..{stop - 1}")
    fast32 = bool(fast) and latitude is None and METHODS[m] in ("single_sine", "double_sine")
    both32 = tmin.dtype == tmax.dtype == np.float32
    dtype = np.float32 if fast32 or both32 else np.float64
    shape = tmin.shape[1:]
    a = np.ascontiguousarray(tmin, dtype=dtype).reshape(tmin.shape[0], -1)
    b = np.ascontiguousarray(tmax, dtype=dtype).reshape(tmax.shape[0], -1)
    out = [np.empty(a.shape[1]) for _ in range(5)]
    lc = -np.inf if lethal_cold is None else float(lethal_cold)
    lh = np.inf if lethal_heat is None else float(lethal_heat)
    if latitude is None:
        dl_rows, cell_row = np.empty((0, 0)), np.zeros(a.shape[1], np.int64)
        pl = np.zeros(3)
    else:
        if doy is None or np.shape(doy) != (tmin.shape[0],):
            raise ValueError(f"doy must give the day of year of each of the {tmin.shape[0]} days")
        lat = np.broadcast_to(np.asarray(latitude, dtype=np.float64), shape).reshape(-1)
        lat_u, cell_row = np.unique(lat, return_inverse=True)     # usually one per grid row
        dl_rows = np.ascontiguousarray(
            daylength(lat_u[:, None], np.asarray(doy, dtype=np.float64)[None, :]))
        cell_row = np.ascontiguousarray(cell_row.reshape(-1), dtype=np.int64)
        pl = np.array(_coefficients(coefficients))
    _stream(a, b, int(start), int(stop), lower, upper, m, c, float(dd_per_generation),
            lc, lh, dl_rows, cell_row, pl, fast32, *out)
    return tuple(o.reshape(shape) for o in out)

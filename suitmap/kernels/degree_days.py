"""Daily degree-days from the daily minimum and maximum temperature.

Six daily methods (``METHODS``) and three behaviours above the upper
threshold (``CUTOFFS``); formulas and sources in ``degree_days``.  Compiled,
vectorised numba loops over flattened arrays, float64 arithmetic whatever
the input precision; the per-day parts are in ``suitmap.kernels._day_parts``.
No I/O.

References
----------
Baskerville & Emin (1969) Ecology 50:514-517; Allen (1976) Environmental
Entomology 5:388-396; Zalom et al. (1983) University of California DANR
Leaflet 21373; McMaster & Wilhelm (1997) Agricultural and Forest
Meteorology 87:291-300.
"""

from __future__ import annotations

import math

import numba
import numpy as np
from numpy.typing import ArrayLike

# The per-day parts, also imported from here by other kernels (development,
# degree_days_diurnal, season, tables): keep these names.
from suitmap.kernels._day_parts import (  # noqa: F401
    _HALF_PI, _HORIZONTAL, _INLINE, _INTERMEDIATE, _INV_PI, _JIT, _Q, _VERTICAL, _asin, _finish,
    _halves, _sin, _point_parts, _settle, _sine_gv, _sine_parts, _triangle_parts, _unit_clip)

__all__ = ["METHODS", "CUTOFFS", "METHOD_CODES", "CUTOFF_CODES", "degree_days",
           "degree_days_block", "daily_degree_days_along_time"]

METHODS = ("average", "modified_average", "single_triangle", "double_triangle",
           "single_sine", "double_sine")
CUTOFFS = ("horizontal", "vertical", "intermediate")
METHOD_CODES = {name: i for i, name in enumerate(METHODS)}
CUTOFF_CODES = {name: i for i, name in enumerate(CUTOFFS)}

_AVERAGE, _MODIFIED, _TRI1, _TRI2, _SINE1, _SINE2 = range(6)
_DOUBLE_TO_SINGLE = {_TRI2: _TRI1, _SINE2: _SINE1}
_CHUNK = 16384          # elements per parallel work item
_PARALLEL_MIN = 65536   # below this many elements the serial loop is used


# ------------------------------------------------------------------------ loops
# Slices, and loops from 0, let LLVM prove every index non-negative: no
# wraparound code, and an exact overlap test before the vector loop.
@numba.njit(**_INLINE)
def _sine2_loop(tmin: np.ndarray, tmax: np.ndarray, tnext: np.ndarray, out: np.ndarray,
                lower: float, upper: float, cutoff: int) -> None:
    for i in range(out.size):
        x, y, w = np.float64(tmin[i]), np.float64(tmax[i]), np.float64(tnext[i])
        h = v = a = 0.0
        for k in range(2):       # unrolled by LLVM; one copy of the parts to compile
            p = _sine_parts(x if k == 0 else w, y, lower, upper)
            h, v, a = h + p[0], v + p[1], a + p[2]
        out[i] = _finish((0.5 * h, 0.5 * v, 0.5 * a), cutoff, x == x and y == y and w == w)


# The double sine once per cutoff: a constant cutoff lets LLVM drop the parts
# it does not use (measured 10 % faster on one core for H and V, none for the
# other methods, which keep one loop with the cutoff chosen per value); the
# intermediate cutoff from (h - a, v) directly (10 % faster again), and so
# the single sine's too.
@numba.njit(**_JIT)
def _sine2_h(tmin: np.ndarray, tmax: np.ndarray, tnext: np.ndarray, out: np.ndarray,
             lower: float, upper: float) -> None:
    _sine2_loop(tmin, tmax, tnext, out, lower, upper, _HORIZONTAL)


@numba.njit(**_JIT)
def _sine2_v(tmin: np.ndarray, tmax: np.ndarray, tnext: np.ndarray, out: np.ndarray,
             lower: float, upper: float) -> None:
    _sine2_loop(tmin, tmax, tnext, out, lower, upper, _VERTICAL)


@numba.njit(**_JIT)
def _sine2_i(tmin: np.ndarray, tmax: np.ndarray, tnext: np.ndarray, out: np.ndarray,
             lower: float, upper: float) -> None:
    for i in range(out.size):
        x, y, w = np.float64(tmin[i]), np.float64(tmax[i]), np.float64(tnext[i])
        g = v = 0.0
        for k in range(2):
            p = _sine_gv(x if k == 0 else w, y, lower, upper)
            g, v = g + p[0], v + p[1]
        out[i] = 0.5 * max(v, g) if x == x and y == y and w == w else math.nan


@numba.njit(**_JIT)
def _sine1_i(tmin: np.ndarray, tmax: np.ndarray, out: np.ndarray, lower: float,
             upper: float) -> None:
    # as the double sine: a double day of two equal half-days is bit for bit
    # the single day (degree_days_block turns one without tmin_next into it)
    for i in range(out.size):
        x, y = np.float64(tmin[i]), np.float64(tmax[i])
        g, v = _sine_gv(x, y, lower, upper)
        out[i] = max(v, g) if x == x and y == y else math.nan


@numba.njit(**_JIT)
def _fill_range(tmin: np.ndarray, tmax: np.ndarray, tnext: np.ndarray, out: np.ndarray,
                start: int, stop: int, lower: float, upper: float, method: int,
                cutoff: int) -> None:
    """out[start:stop] for flat arrays; one vectorisable loop per method."""
    tmin = tmin[start:stop]
    tmax = tmax[start:stop]
    tnext = tnext[start:stop]
    out = out[start:stop]
    lo, up = lower, upper
    if method == _SINE1 and cutoff == _INTERMEDIATE:
        _sine1_i(tmin, tmax, out, lo, up)
    elif method == _SINE1:
        for i in range(out.size):
            x, y = np.float64(tmin[i]), np.float64(tmax[i])
            out[i] = _finish(_sine_parts(x, y, lo, up), cutoff, x == x and y == y)
    elif method == _SINE2:
        if cutoff == _HORIZONTAL:
            _sine2_h(tmin, tmax, tnext, out, lo, up)
        elif cutoff == _VERTICAL:
            _sine2_v(tmin, tmax, tnext, out, lo, up)
        else:
            _sine2_i(tmin, tmax, tnext, out, lo, up)
    elif method == _TRI1:
        for i in range(out.size):
            x, y = np.float64(tmin[i]), np.float64(tmax[i])
            out[i] = _finish(_triangle_parts(x, y, lo, up), cutoff, x == x and y == y)
    elif method == _TRI2:
        for i in range(out.size):
            x, y, w = np.float64(tmin[i]), np.float64(tmax[i]), np.float64(tnext[i])
            p = _halves(_triangle_parts(x, y, lo, up), _triangle_parts(w, y, lo, up))
            out[i] = _finish(p, cutoff, x == x and y == y and w == w)
    elif method == _AVERAGE:
        for i in range(out.size):
            x, y = np.float64(tmin[i]), np.float64(tmax[i])
            out[i] = _finish(_point_parts(0.5 * (x + y), lo, up), cutoff, x == x and y == y)
    else:  # _MODIFIED: each extreme stands for half of the day
        for i in range(out.size):
            x, y = np.float64(tmin[i]), np.float64(tmax[i])
            p = _halves(_point_parts(x, lo, up), _point_parts(y, lo, up))
            out[i] = _finish(p, cutoff, x == x and y == y)


@numba.njit(parallel=True, **_JIT)
def _fill_parallel(tmin: np.ndarray, tmax: np.ndarray, tnext: np.ndarray, out: np.ndarray,
                   lower: float, upper: float, method: int, cutoff: int) -> None:
    n = out.size
    nchunks = (n + _CHUNK - 1) // _CHUNK
    for k in numba.prange(nchunks):
        start = k * _CHUNK
        _fill_range(tmin, tmax, tnext, out, start, min(n, start + _CHUNK),
                    lower, upper, method, cutoff)


# ------------------------------------------------------------------- validation
def _check_code(value: int | str, names: tuple[str, ...], what: str) -> int:
    """Index of a name in ``names``; an int index is checked and returned."""
    if isinstance(value, (int, np.integer)) and not isinstance(value, bool):
        if 0 <= int(value) < len(names):
            return int(value)
    elif isinstance(value, str) and value in names:
        return names.index(value)
    raise ValueError(f"unknown {what} {value!r}; use one of: {', '.join(names)}")


def _thresholds(lower: float, upper: float) -> tuple[float, float]:
    lower, upper = float(lower), float(upper)
    if not math.isfinite(lower):
        raise ValueError(f"lower threshold must be a finite temperature, got {lower}")
    if not upper > lower:
        raise ValueError(f"upper threshold ({upper}) must be greater than the lower "
                         f"threshold ({lower}); use np.inf for no upper threshold")
    return lower, upper


def _float_dtype(*arrays: np.ndarray) -> np.dtype:
    """float32 when every array is float32, else float64."""
    return np.dtype(np.float32 if all(a.dtype == np.float32 for a in arrays) else np.float64)


def _output_array(out: np.ndarray | None, shape: tuple[int, ...]) -> np.ndarray:
    """``out``, checked to be a writeable C-contiguous float64 array of ``shape``, or a new one."""
    if out is None:
        return np.empty(shape, dtype=np.float64)
    if (not isinstance(out, np.ndarray) or out.dtype != np.float64 or out.shape != shape
            or not out.flags.c_contiguous or not out.flags.writeable):
        raise ValueError(f"out must be a writeable C-contiguous float64 array of shape {shape}")
    return out


# ----------------------------------------------------------------------- public
def degree_days_block(tmin: np.ndarray, tmax: np.ndarray, tmin_next: np.ndarray | None,
                      lower: float, upper: float, method_code: int | str,
                      cutoff_code: int | str, out: np.ndarray | None = None, *,
                      parallel: bool = True) -> np.ndarray:
    """Daily degree-days of same-shape arrays (the block-level entry point).

    Parameters
    ----------
    tmin, tmax : numpy.ndarray
        Daily minimum and maximum temperature, same shape.  C-contiguous
        float32 or float64 arrays are used without copying (both the same
        dtype); anything else is converted first.
    tmin_next : numpy.ndarray or None
        Next day's minimum, same shape; used by the double methods only.
        None: the day's own minimum is used (the day is symmetric).
    lower, upper : float
        Lower and upper developmental thresholds, same unit as the
        temperatures; ``upper`` may be ``np.inf`` (no upper threshold).
    method_code, cutoff_code : int or str
        A name from ``METHODS`` / ``CUTOFFS`` or its index in that tuple.
    out : numpy.ndarray, optional
        C-contiguous float64 array of the same shape to write into.
    parallel : bool
        Run on all numba threads (default).  Turn off when the caller already
        runs blocks in parallel threads (e.g. dask's threaded scheduler).

    Returns
    -------
    numpy.ndarray
        float64 degree-days, ``out`` if given.

    Raises
    ------
    ValueError
        Unknown method or cutoff, ``lower >= upper``, shapes that differ,
        or an unusable ``out``.

    See Also
    --------
    degree_days : the broadcasting, name-based front end; its Notes give
        the formulas.

    References
    ----------
    .. [1] Baskerville & Emin (1969) Ecology 50:514-517.
    .. [2] Allen (1976) Environmental Entomology 5:388-396.
    .. [3] Zalom et al. (1983) University of California DANR Leaflet 21373.
    .. [4] McMaster & Wilhelm (1997) Agricultural and Forest Meteorology
       87:291-300.
    """
    m = _check_code(method_code, METHODS, "degree-day method")
    c = _check_code(cutoff_code, CUTOFFS, "cutoff")
    lower, upper = _thresholds(lower, upper)
    tmin = np.asarray(tmin)
    tmax = np.asarray(tmax)
    if tmin.shape != tmax.shape:
        raise ValueError(f"tmin {tmin.shape} and tmax {tmax.shape} must have the same shape")
    arrays = [tmin, tmax]
    if m in _DOUBLE_TO_SINGLE and tmin_next is not None:
        tmin_next = np.asarray(tmin_next)
        if tmin_next.shape != tmin.shape:
            raise ValueError(f"tmin_next {tmin_next.shape} must have the shape of "
                             f"tmin {tmin.shape}")
        arrays.append(tmin_next)
    elif m in _DOUBLE_TO_SINGLE:
        m = _DOUBLE_TO_SINGLE[m]   # both half-days equal: exactly the single method
    dtype = _float_dtype(*arrays)
    flat = [np.asarray(a, dtype=dtype, order="C").reshape(-1) for a in arrays]
    if len(flat) == 2:
        flat.append(flat[0])       # placeholder, never read by single methods
    out = _output_array(out, tmin.shape)
    out_flat = out.reshape(-1)
    if parallel and out_flat.size >= _PARALLEL_MIN:
        _fill_parallel(flat[0], flat[1], flat[2], out_flat, lower, upper, m, c)
    else:
        _fill_range(flat[0], flat[1], flat[2], out_flat, 0, out_flat.size, lower, upper, m, c)
    return out


def degree_days(tmin: ArrayLike, tmax: ArrayLike, lower: float, upper: float, *,
                method: str = "single_sine", cutoff: str = "horizontal",
                tmin_next: ArrayLike | None = None) -> np.ndarray:
    """Daily degree-days from daily minimum and maximum temperature.

    Parameters
    ----------
    tmin, tmax : array_like
        Daily minimum and maximum temperature (scalars or arrays that
        broadcast together).  float32 input is computed in float64.
    lower, upper : float
        Lower and upper developmental thresholds, in the unit of the
        temperatures; ``upper`` may be ``np.inf`` (no upper threshold).
    method : str
        One of ``METHODS``: ``average``, ``modified_average``,
        ``single_triangle``, ``double_triangle``, ``single_sine``,
        ``double_sine``.
    cutoff : str
        One of ``CUTOFFS``: ``horizontal``, ``vertical``, ``intermediate``.
    tmin_next : array_like, optional
        The next day's minimum, for the double methods (ignored by the
        others).  None: the day's own minimum is used, which makes a double
        method equal to its single method.  A caller with a time axis passes
        the next day's minimum (see ``daily_degree_days_along_time``).

    Returns
    -------
    numpy.ndarray
        float64 degree-days per day (°C·day for °C input), of the broadcast
        shape; a float64 scalar when every input is a scalar.  NaN where an
        input the method uses is NaN.

    Raises
    ------
    ValueError
        Unknown method or cutoff (the message lists the allowed names), or
        ``lower >= upper``.

    Notes
    -----
    M = (Tmax+Tmin)/2, α = (Tmax−Tmin)/2, L, U the thresholds.  Every method
    gives three numbers per day: H (horizontal cutoff: above U development
    goes on at the rate of U), V (vertical cutoff: none above U) and A, the
    degree-days above U.  Intermediate cutoff = max(V, H − A): development
    above U is reduced by the amount the temperature exceeds U, never below
    the vertical value, so a day wholly above U gives max(0, 2U − L − M).

    * ``single_sine`` [1]_, [3]_ (Table 5): the day is one period of
      M + α·sin(t); H, V and A are its integrals in closed form with
      θ1 = asin((L−M)/α), θ2 = asin((U−M)/α).
    * ``single_triangle`` [3]_ (Table 3): a linear rise from Tmin to Tmax
      and fall back, e.g. (Tmax−L)²/(2(Tmax−Tmin)) when Tmin < L < Tmax ≤ U.
    * ``double_sine``, ``double_triangle`` [2]_, [3]_ (Tables 4, 6): the day
      is two half-days, Tmin→Tmax and Tmax→next day's Tmin; H, V and A are
      ½·F(Tmin, Tmax) + ½·F(Tmin_next, Tmax), so the intermediate clamp acts
      on the whole day.  A next-day minimum above Tmax is allowed (the
      half-day then rises; its integral is the same).
    * ``average`` [4]_ (method 1): the day is constant at M: H =
      max(0, min(M, U) − L); V = H, or 0 when M > U; intermediate
      max(0, 2U − L − M) when M > U.
    * ``modified_average`` [4]_ (method 2): Tmin and Tmax are raised to L
      when below L and each extreme stands for half of the day:
      H = ½[g(Tmin) + g(Tmax)] with g(T) = min(max(T, L), U) − L, i.e. both
      raised to L and capped at U before averaging (with L = 50 °F,
      U = 86 °F the US corn modified growing-degree-day rule).  Vertical: a
      half-day whose extreme is above U develops nothing,
      V = ½[g_V(Tmin) + g_V(Tmax)], g_V(T) = max(T, L) − L for T ≤ U and
      0 for T > U.  Intermediate: the excess of
      each extreme above U is taken off, A = ½[(Tmin−U)⁺ + (Tmax−U)⁺], and
      the result is max(V, H − A) as for the other methods.

    A constant day (Tmin == Tmax) needs no division: it is the ``average``
    rule at that temperature for every method.  Swapping the two
    temperatures of a day (or of a half-day) does not change its value.

    References
    ----------
    .. [1] Baskerville, G.L. & Emin, P. (1969) Rapid estimation of heat
       accumulation from maximum and minimum temperatures. Ecology
       50:514-517.
    .. [2] Allen, J.C. (1976) A modified sine wave method for calculating
       degree days. Environmental Entomology 5:388-396.
    .. [3] Zalom, F.G., Goodell, P.B., Wilson, L.T., Barnett, W.W. &
       Bentley, W.J. (1983) Degree-days: the calculation and use of heat
       units in pest management. University of California DANR Leaflet
       21373.
    .. [4] McMaster, G.S. & Wilhelm, W.W. (1997) Growing degree-days: one
       equation, two interpretations. Agricultural and Forest Meteorology
       87:291-300.

    Examples
    --------
    >>> float(degree_days(12.0, 24.0, 12.0, 30.0))
    6.0
    """
    m = _check_code(method, METHODS, "degree-day method")
    c = _check_code(cutoff, CUTOFFS, "cutoff")
    arrays = [np.asarray(tmin), np.asarray(tmax)]
    if m in _DOUBLE_TO_SINGLE and tmin_next is not None:
        arrays.append(np.asarray(tmin_next))
    dtype = _float_dtype(*arrays)
    scalar = all(a.ndim == 0 for a in arrays)
    arrays = [np.asarray(a, dtype=dtype, order="C") for a in np.broadcast_arrays(*arrays)]
    nxt = arrays[2] if len(arrays) == 3 else None
    out = degree_days_block(arrays[0], arrays[1], nxt, lower, upper, m, c)
    return out[()] if scalar else out


def daily_degree_days_along_time(tmin: np.ndarray, tmax: np.ndarray, lower: float,
                                 upper: float, method: str = "single_sine",
                                 cutoff: str = "horizontal", axis: int = 0, *,
                                 parallel: bool = True) -> np.ndarray:
    """Daily degree-days of a series of days, e.g. a (time, y, x) block.

    The double methods take the next day's minimum from the next step along
    ``axis``; the last day has no next day and uses its own minimum.  A
    caller that splits the time axis into chunks gives each chunk one day of
    overlap (or calls ``degree_days_block`` with ``tmin_next`` itself).

    Parameters
    ----------
    tmin, tmax : numpy.ndarray
        Daily minimum and maximum temperature, same shape, consecutive days
        along ``axis``.
    lower, upper : float
        Lower and upper developmental thresholds (``upper`` may be np.inf).
    method, cutoff : str
        Names from ``METHODS`` and ``CUTOFFS``.
    axis : int
        The time axis.  With ``axis=0`` and C-contiguous input nothing is
        copied.
    parallel : bool
        As in ``degree_days_block``.

    Returns
    -------
    numpy.ndarray
        float64 degree-days, the shape of ``tmin``.

    Raises
    ------
    ValueError
        As ``degree_days_block``, or a bad ``axis``.

    See Also
    --------
    degree_days : formulas and their sources.

    References
    ----------
    .. [1] Allen (1976) Environmental Entomology 5:388-396.
    .. [2] Zalom et al. (1983) University of California DANR Leaflet 21373,
       Tables 4 and 6 (double methods with the next day's minimum).
    """
    m = _check_code(method, METHODS, "degree-day method")
    c = _check_code(cutoff, CUTOFFS, "cutoff")
    tmin = np.asarray(tmin)
    tmax = np.asarray(tmax)
    if tmin.shape != tmax.shape:
        raise ValueError(f"tmin {tmin.shape} and tmax {tmax.shape} must have the same shape")
    if tmin.ndim == 0:
        raise ValueError("tmin and tmax need a time axis; for a single day use degree_days")
    axis = int(axis)
    if not -tmin.ndim <= axis < tmin.ndim:
        raise ValueError(f"axis {axis} is out of range for arrays of {tmin.ndim} dimensions")
    dtype = _float_dtype(tmin, tmax)
    tmin = np.ascontiguousarray(np.moveaxis(tmin, axis, 0), dtype=dtype)
    tmax = np.ascontiguousarray(np.moveaxis(tmax, axis, 0), dtype=dtype)
    out = np.empty(tmin.shape, dtype=np.float64)
    if m not in _DOUBLE_TO_SINGLE or tmin.shape[0] < 2:
        degree_days_block(tmin, tmax, None, lower, upper, m, c, out, parallel=parallel)
    else:
        degree_days_block(tmin[:-1], tmax[:-1], tmin[1:], lower, upper, m, c, out[:-1],
                          parallel=parallel)
        degree_days_block(tmin[-1:], tmax[-1:], None, lower, upper, m, c, out[-1:],
                          parallel=parallel)
    return np.moveaxis(out, 0, axis)

"""Daily degree-days from the daily minimum and maximum temperature.

Six daily methods (``METHODS``) and three behaviours above the upper
threshold (``CUTOFFS``); formulas and sources in ``degree_days``.  Compiled,
vectorised numba loops over flattened arrays, float64 arithmetic whatever
the input precision.  No I/O.

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

__all__ = ["METHODS", "CUTOFFS", "METHOD_CODES", "CUTOFF_CODES", "degree_days",
           "degree_days_block", "daily_degree_days_along_time"]

METHODS = ("average", "modified_average", "single_triangle", "double_triangle",
           "single_sine", "double_sine")
CUTOFFS = ("horizontal", "vertical", "intermediate")
METHOD_CODES = {name: i for i, name in enumerate(METHODS)}
CUTOFF_CODES = {name: i for i, name in enumerate(CUTOFFS)}

_AVERAGE, _MODIFIED, _TRI1, _TRI2, _SINE1, _SINE2 = range(6)
_HORIZONTAL, _VERTICAL, _INTERMEDIATE = range(3)
_DOUBLE_TO_SINGLE = {_TRI2: _TRI1, _SINE2: _SINE1}
_HALF_PI = 0.5 * math.pi
_INV_PI = 1.0 / math.pi
_CHUNK = 16384          # elements per parallel work item
_PARALLEL_MIN = 65536   # below this many elements the serial loop is used


# ----------------------------------------------------------------- scalar parts
# Written without early returns (every value computed, then chosen with
# conditional expressions) so that LLVM vectorises the loops; error_model
# "numpy": a division by zero gives inf/nan in a value that is never chosen.
_JIT = dict(cache=True, nogil=True, error_model="numpy")  # nogil: dask threads run kernels at once
_INLINE = dict(_JIT, inline="always")

# asin(x) = x + x*z*Q(z), z = x*x, |x| <= 1/2: least-squares Chebyshev fit of
# degree 11 on [0, 1/4] to the Taylor series of asin, sum over k of
# C(2k, k) x^(2k+1) / (4^k (2k+1)), converted to powers of z.  |error| <= 2.3e-16 against numpy.arcsin
# on [-1, 1] (checked in tests/test_degree_days.py).
_Q = (0.16666666666666644, 0.07500000000022296, 0.04464285710119162,
      0.03038194749989369, 0.022372043512243936, 0.017355335155521026,
      0.01392879278779328, 0.011881831750882983, 0.007772895784963765,
      0.01612412297421581, -0.010896805266938904, 0.028275669163721096)
_Q0, _Q1, _Q2, _Q3, _Q4, _Q5, _Q6, _Q7, _Q8, _Q9, _Q10, _Q11 = _Q


@numba.njit(**_INLINE)
def _asin(x: float) -> float:
    """Arcsine of x in [-1, 1], vectorisable; asin(+-1) = +-pi/2 exactly."""
    ax = abs(x)
    big = ax > 0.5           # asin(ax) = pi/2 - 2 asin(sqrt((1 - ax)/2))
    z = 0.5 * (1.0 - ax) if big else ax * ax
    r = math.sqrt(z) if big else ax
    q = _Q0 + z * (_Q1 + z * (_Q2 + z * (_Q3 + z * (_Q4 + z * (_Q5 + z * (
        _Q6 + z * (_Q7 + z * (_Q8 + z * (_Q9 + z * (_Q10 + z * _Q11))))))))))
    p = r + r * z * q
    res = _HALF_PI - 2.0 * p if big else p
    return res if x >= 0.0 else -res


@numba.njit(**_INLINE)
def _unit_clip(x: float) -> float:
    x = x if x < 1.0 else 1.0
    return x if x > -1.0 else -1.0


@numba.njit(**_INLINE)
def _settle(lo: float, hi: float, h: float, v: float, a: float, lower: float,
            upper: float) -> tuple[float, float, float]:
    """Override (h, v, a) for days wholly below L, above U, or between them.

    These cases include every constant day, so the general formulas are only
    used where hi > lo.  A constant day at exactly U counts as not above U.
    """
    mean = 0.5 * (lo + hi)
    hot = lo >= upper
    cold = hi <= lower
    inside = lo >= lower and hi <= upper     # takes precedence: a day at U is inside
    h = mean - lower if inside else (0.0 if cold else (upper - lower if hot else h))
    v = mean - lower if inside else (0.0 if cold or hot else v)
    a = 0.0 if inside or cold else (mean - upper if hot else a)
    return h, v, a


@numba.njit(**_INLINE)
def _sine_parts(t1: float, t2: float, lower: float, upper: float) -> tuple[float, float, float]:
    """(h, v, a) of a sine day between ``t1`` and ``t2`` (either order).

    Baskerville & Emin (1969); cases of Zalom et al. (1983), Table 5, in one
    expression: theta = asin(clip((threshold - M)/alpha, -1, 1)).
    """
    lo = t1 if t1 < t2 else t2
    hi = t2 if t1 < t2 else t1
    mean = 0.5 * (lo + hi)
    amp = 0.5 * (hi - lo)
    s1 = _unit_clip((lower - mean) / amp)
    s2 = _unit_clip((upper - mean) / amp)
    th1 = _asin(s1)
    th2 = _asin(s2)
    c1 = math.sqrt(1.0 - s1 * s1)                # cos(theta1)
    c2 = math.sqrt(1.0 - s2 * s2)                # cos(theta2)
    v = ((mean - lower) * (th2 - th1) + amp * (c1 - c2)) * _INV_PI
    crosses = hi > upper                         # never true for upper = inf
    rest = _HALF_PI - th2
    h = v + (upper - lower) * rest * _INV_PI if crosses else v
    a = ((mean - upper) * rest + amp * c2) * _INV_PI if crosses else 0.0
    return _settle(lo, hi, h, v, a, lower, upper)


@numba.njit(**_INLINE)
def _triangle_parts(t1: float, t2: float, lower: float, upper: float) -> tuple[float, float, float]:
    """(h, v, a) of a triangle day between ``t1`` and ``t2`` (either order).

    Zalom et al. (1983), Table 3.  Over a linear rise (and fall) the time is
    spread evenly over [lo, hi], so each part is an integral over T / d.
    """
    lo = t1 if t1 < t2 else t2
    hi = t2 if t1 < t2 else t1
    d = hi - lo
    p = (hi if hi < upper else upper) - lower    # top of the part in (L, U]
    q = (lo if lo > lower else lower) - lower    # its bottom
    inv_d = 1.0 / d
    v = 0.5 * (p - q) * (p + q) * inv_d
    crosses = hi > upper
    above = hi - upper
    h = v + (upper - lower) * above * inv_d if crosses else v
    a = 0.5 * above * above * inv_d if crosses else 0.0
    return _settle(lo, hi, h, v, a, lower, upper)


@numba.njit(**_INLINE)
def _point_parts(t: float, lower: float, upper: float) -> tuple[float, float, float]:
    """(h, v, a) of a constant temperature ``t`` raised to ``lower``."""
    t = t if t > lower else lower
    above = t > upper
    h = upper - lower if above else t - lower
    v = 0.0 if above else t - lower
    a = t - upper if above else 0.0
    return h, v, a


@numba.njit(**_INLINE)
def _finish(p: tuple[float, float, float], cutoff: int, ok: bool) -> float:
    """The cutoff's choice from p = (h, v, a); NaN where an input was NaN."""
    h, v, a = p
    r = h if cutoff == _HORIZONTAL else (v if cutoff == _VERTICAL else max(v, h - a))
    return r if ok else math.nan


@numba.njit(**_INLINE)
def _halves(p: tuple[float, float, float], q: tuple[float, float, float]) -> tuple[float, float, float]:
    """(h, v, a) of a day made of two half-days."""
    return 0.5 * (p[0] + q[0]), 0.5 * (p[1] + q[1]), 0.5 * (p[2] + q[2])


# ------------------------------------------------------------------------ loops
@numba.njit(**_JIT)
def _fill_range(tmin: np.ndarray, tmax: np.ndarray, tnext: np.ndarray, out: np.ndarray,
                start: int, stop: int, lower: float, upper: float, method: int,
                cutoff: int) -> None:
    """out[start:stop] for flat arrays; one vectorisable loop per method."""
    # Slices, and loops from 0, let LLVM prove every index non-negative: no
    # wraparound code, and an exact overlap test before the vector loop.
    tmin = tmin[start:stop]
    tmax = tmax[start:stop]
    tnext = tnext[start:stop]
    out = out[start:stop]
    lo, up = lower, upper
    if method == _SINE1:
        for i in range(out.size):
            x, y = np.float64(tmin[i]), np.float64(tmax[i])
            out[i] = _finish(_sine_parts(x, y, lo, up), cutoff, x == x and y == y)
    elif method == _TRI1:
        for i in range(out.size):
            x, y = np.float64(tmin[i]), np.float64(tmax[i])
            out[i] = _finish(_triangle_parts(x, y, lo, up), cutoff, x == x and y == y)
    elif method == _SINE2:
        for i in range(out.size):
            x, y, w = np.float64(tmin[i]), np.float64(tmax[i]), np.float64(tnext[i])
            p = _halves(_sine_parts(x, y, lo, up), _sine_parts(w, y, lo, up))
            out[i] = _finish(p, cutoff, x == x and y == y and w == w)
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
    if out is None:
        out = np.empty(tmin.shape, dtype=np.float64)
    elif (not isinstance(out, np.ndarray) or out.dtype != np.float64 or out.shape != tmin.shape
          or not out.flags.c_contiguous or not out.flags.writeable):
        raise ValueError("out must be a writeable C-contiguous float64 array of shape "
                         f"{tmin.shape}")
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

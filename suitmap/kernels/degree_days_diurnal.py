"""Daily degree-days over the Parton & Logan (1981) day, in closed form.

A cross-check of the sine methods of ``suitmap.kernels.degree_days``: the
same three cutoffs, but the day is the Parton-Logan curve of
``suitmap.kernels.diurnal.parton_logan_hourly`` (a day sine between sunrise
and sunset, an exponential night toward the next day's minimum) instead of
a symmetric sine.  Every integral is analytic (arcsine crossings on the day
sine, logarithmic crossings on the night), so no quadrature error.  Compiled
numba loops, float64 arithmetic whatever the input precision.  No I/O.

References
----------
Parton & Logan (1981) Agric. Meteorol. 23:205-216; Baskerville & Emin (1969)
Ecology 50:514-517; Zalom et al. (1983) University of California DANR
Leaflet 21373.
"""

from __future__ import annotations

import math
from collections.abc import Mapping

import numba
import numpy as np
from numpy.typing import ArrayLike

from suitmap.kernels.degree_days import (CUTOFFS, _asin, _check_code, _finish, _float_dtype, _output_array,
                          _point_parts, _sin, _thresholds, _unit_clip)
from suitmap.kernels.diurnal import PARTON_LOGAN_150CM

__all__ = ["degree_days_parton_logan", "degree_days_parton_logan_block"]

_JIT = dict(cache=True, nogil=True, error_model="numpy")  # nogil: dask threads run kernels at once
_INLINE = dict(_JIT, inline="always")   # without it the loop calls them: no vectors
_HALF_PI = 0.5 * math.pi
_INV_24 = 1.0 / 24.0
_CHUNK = 16384          # elements per parallel work item
_PARALLEL_MIN = 65536   # below this many elements the serial loop is used


# ----------------------------------------------------------------- scalar parts
# As in degree_days.py: no early returns, every value computed and then chosen
# with conditional expressions; error_model "numpy" lets a value that is never
# chosen be inf or nan (a division by a zero amplitude, a log of r <= 0).
#
# For a threshold theta each piece of the day gives two numbers: Q, the time
# (in the piece's own variable) during which T > theta, and S, the integral of
# the piece's shape function over that time.  With T = base + amp * shape,
# the integral of (T - theta) over the time above theta is (base - theta) Q +
# amp S, and the degree-day parts follow from Q and S at L and U alone.

# ln x = e ln 2 + ln m, m = x 2^-e in [1/sqrt 2, sqrt 2), and
# ln m = 2 sum_k z^(2k+1)/(2k + 1), z = (m - 1)/(m + 1), |z| <= 0.1716
# (Abramowitz & Stegun 1964, 4.1.27); to k = 9 the remainder is < 3e-17
# relative.  Selects only, so the loops vectorise (math.log is a library
# call and halved the speed); checked against numpy.log in
# tests/test_degree_days_diurnal.py.
_ATANH = tuple(1.0 / (2 * k + 1) for k in range(10))
_A0, _A1, _A2, _A3, _A4, _A5, _A6, _A7, _A8, _A9 = _ATANH
_LN2 = math.log(2.0)
_LN_STEPS = tuple((2.0 ** -k, 2.0 ** k, float(k))
                  for k in (512, 256, 128, 64, 32, 16, 8, 4, 2, 1))
_SQRT_HALF = math.sqrt(0.5)


@numba.njit(**_INLINE)
def _ln(x: float) -> float:
    """Natural logarithm of x in (0, 1], vectorisable (relative error < 1e-15)."""
    e = 0.0
    # As a loop over a constant tuple (LLVM unrolls it); written out as ten
    # explicit selects it compiled to branches and the loop did not vectorise.
    # The powers of two are constants in the tuple: computed as 2.0 ** k in
    # the loop they stopped LLVM from vectorising a freshly compiled loop.
    for lim, scale, k in _LN_STEPS:          # then x in [1/2, 1]
        small = x < lim
        x = x * scale if small else x
        e = e - k if small else e
    small = x < _SQRT_HALF
    x = x + x if small else x
    e = e - 1.0 if small else e
    z = (x - 1.0) / (x + 1.0)
    w = z * z
    p = _A0 + w * (_A1 + w * (_A2 + w * (_A3 + w * (_A4 + w * (_A5 + w * (
        _A6 + w * (_A7 + w * (_A8 + w * _A9))))))))
    return e * _LN2 + 2.0 * z * p


@numba.njit(**_INLINE)
def _sin_cos(p: float) -> tuple[float, float]:
    """(sin p, cos p) for p in [-pi/2, 3pi/2], reduced to [-pi/2, pi/2]:
    sin p = sin(pi - p); cos p = sin(pi/2 - p), folded the same way."""
    u = p if p <= _HALF_PI else math.pi - p
    v = _HALF_PI - p                         # in [-pi, pi]
    v = (-math.pi - v) if v < -_HALF_PI else ((math.pi - v) if v > _HALF_PI else v)
    return _sin(u), _sin(v)


@numba.njit(**_INLINE)
def _day_shape(daylength: float, a: float, c: float) -> tuple:
    """Day-sine constants that depend on the daylength only.

    psi = pi (tau - c) / (Y + 2a) runs from p0 (sunrise) to p1 (sunset).  The
    rising branch [r0, r1] = [p0, p1] clipped to psi <= pi/2 and the falling
    branch mirrored onto [f0, f1] = [pi - p1, pi - p0] clipped likewise (sin is
    the same there), each with the cosines of its ends; an absent branch is
    the empty interval [pi/2, pi/2].  Returns (hours per radian, r0, r1,
    cos r0, cos r1, f0, f1, cos f0, cos f1, sin p1, night hours).
    """
    y = 0.0 if daylength < 0.0 else (24.0 if daylength > 24.0 else daylength)  # NaN kept
    g = y + 2.0 * a
    p0 = -math.pi * c / g
    p1 = math.pi * (y - c) / g
    _, cp0 = _sin_cos(p0)                    # p0, p1 in [-pi/2, 3pi/2] for
    sp1, cp1 = _sin_cos(p1)                  # -3a <= c <= a (_coefficients)
    r0 = p0 if p0 < _HALF_PI else _HALF_PI
    r1 = p1 if p1 < _HALF_PI else _HALF_PI
    cr0 = cp0 if p0 < _HALF_PI else 0.0
    cr1 = cp1 if p1 < _HALF_PI else 0.0
    f0 = math.pi - (p1 if p1 > _HALF_PI else _HALF_PI)
    f1 = math.pi - (p0 if p0 > _HALF_PI else _HALF_PI)
    cf0 = -cp1 if p1 > _HALF_PI else 0.0
    cf1 = -cp0 if p0 > _HALF_PI else 0.0
    return (g / math.pi, r0, r1, cr0, cr1, f0, f1, cf0, cf1, sp1, 24.0 - y)


@numba.njit(**_INLINE)
def _arc(rises: bool, w: float, cw: float, u0: float, u1: float, cu0: float,
         cu1: float) -> tuple[float, float]:
    """(Q, S) on one monotone branch [u0, u1] of sin, crossing at psi = w.

    ``rises``: T grows with sin psi (amp > 0), so T > theta on [w, u1];
    otherwise on [u0, w].  w is clipped to the branch; S = int sin psi dpsi =
    cos(start) - cos(end), with cos w = ``cw`` (Baskerville & Emin 1969).
    """
    m = w if w > u0 else u0
    m = m if m < u1 else u1
    cm = cu0 if w <= u0 else (cu1 if w >= u1 else cw)
    q = u1 - m if rises else m - u0
    s = cm - cu1 if rises else cu0 - cm
    return q, s


@numba.njit(**_INLINE)
def _day_above(tn: float, amp: float, inv_amp: float, theta: float,
               d: tuple) -> tuple[float, float]:
    """(Q, S) of the day sine T = tn + amp sin psi above ``theta`` (radians)."""
    x = _unit_clip((theta - tn) * inv_amp)   # sin psi at the crossing
    w = _asin(x)
    cw = math.sqrt(1.0 - x * x)
    rises = amp > 0.0
    q1, s1 = _arc(rises, w, cw, d[1], d[2], d[3], d[4])
    q2, s2 = _arc(rises, w, cw, d[5], d[6], d[7], d[8])
    flat = amp == 0.0                        # a constant day sine
    q = ((d[2] - d[1]) + (d[6] - d[5]) if tn > theta else 0.0) if flat else q1 + q2
    s = 0.0 if flat else s1 + s2
    return q, s


@numba.njit(**_INLINE)
def _night_above(tnn: float, k: float, inv_k: float, theta: float, eb: float,
                 inv_b: float) -> tuple[float, float]:
    """(Q, S) of the night T = tnn + k exp(-b s), s in [0, 1], above ``theta``.

    T = theta at s_c = -ln(r)/b, r = (theta - tnn)/k; k > 0 (cooling): above
    on [0, s_c], S = (1 - e^(-b s_c))/b; k < 0 (warming): above on [s_c, 1],
    S = (e^(-b s_c) - e^(-b))/b; s_c clipped to [0, 1].
    """
    r = (theta - tnn) * inv_k
    low = r <= eb                            # never crossed before s = 1
    high = r >= 1.0                          # crossed before s = 0
    sc = 1.0 if low else (0.0 if high else -_ln(r) * inv_b)
    qc = eb if low else (1.0 if high else r)  # exp(-b s_c)
    cooling = k > 0.0
    q = sc if cooling else 1.0 - sc
    s = (1.0 - qc) * inv_b if cooling else (qc - eb) * inv_b
    flat = k == 0.0
    q = (1.0 if tnn > theta else 0.0) if flat else q
    s = 0.0 if flat else s
    return q, s


@numba.njit(**_INLINE)
def _pl_parts(tn: float, tx: float, tnn: float, d: tuple, eb: float, inv_b: float,
              lower: float, upper: float) -> tuple[float, float, float]:
    """(h, v, a) of one Parton-Logan day, sunrise to next sunrise, in days.

    h, v: the horizontal and vertical cutoff integrals, a: the integral of
    T - U above U, all / 24 h, as the (h, v, a) of ``degree_days._sine_parts``.
    A constant day (tn == tx == tnn) takes the exact point rule.
    """
    amp = tx - tn
    k = tn + amp * d[9] - tnn                # sunset temperature - next minimum
    inv_amp = 1.0 / amp
    inv_k = 1.0 / k
    qdl, sdl = _day_above(tn, amp, inv_amp, lower, d)
    qdu, sdu = _day_above(tn, amp, inv_amp, upper, d)
    qnl, snl = _night_above(tnn, k, inv_k, lower, eb, inv_b)
    qnu, snu = _night_above(tnn, k, inv_k, upper, eb, inv_b)
    wd = d[0] * _INV_24                      # days per radian of the day sine
    wn = d[10] * _INV_24                     # days per unit of s in the night
    v = (wd * ((tn - lower) * (qdl - qdu) + amp * (sdl - sdu))
         + wn * ((tnn - lower) * (qnl - qnu) + k * (snl - snu)))
    above = wd * qdu + wn * qnu              # fraction of the day above U
    a = wd * ((tn - upper) * qdu + amp * sdu) + wn * ((tnn - upper) * qnu + k * snu)
    capped = upper < math.inf                # else above = 0 and inf * 0 is avoided
    h = v + (upper - lower) * above if capped else v
    a = a if capped else 0.0
    const = tn == tx and tx == tnn
    ph, pv, pa = _point_parts(tn, lower, upper)
    return (ph if const else h), (pv if const else v), (pa if const else a)


# ------------------------------------------------------------------------ loops
@numba.njit(**_JIT)
def _fill_cells(tmin: np.ndarray, tmax: np.ndarray, tnext: np.ndarray, dl: np.ndarray,
                step: int, out: np.ndarray, eb: float, inv_b: float, lower: float,
                upper: float, cutoff: int, a: float, c: float) -> None:
    """out[i] for (sliced) arrays; element i has daylength dl[i * step]."""
    for i in range(out.size):
        x, y, w = np.float64(tmin[i]), np.float64(tmax[i]), np.float64(tnext[i])
        z = dl[i * step]
        p = _pl_parts(x, y, w, _day_shape(z, a, c), eb, inv_b, lower, upper)
        out[i] = _finish(p, cutoff, x == x and y == y and w == w and z == z)


@numba.njit(**_JIT)
def _fill_range(tmin: np.ndarray, tmax: np.ndarray, tnext: np.ndarray, dl: np.ndarray,
                out: np.ndarray, start: int, stop: int, rep: int, lower: float,
                upper: float, cutoff: int, a: float, b: float, c: float) -> None:
    """out[start:stop] for flat arrays; element i has daylength dl[i // rep]."""
    eb = math.exp(-b)
    inv_b = 1.0 / b
    if rep == 1:                             # a daylength per element
        _fill_cells(tmin[start:stop], tmax[start:stop], tnext[start:stop], dl[start:stop], 1,
                    out[start:stop], eb, inv_b, lower, upper, cutoff, a, c)
        return
    i = start
    while i < stop:                          # rows of rep elements, one daylength each
        row = i // rep
        end = min(stop, (row + 1) * rep)
        _fill_cells(tmin[i:end], tmax[i:end], tnext[i:end], dl[row:row + 1], 0, out[i:end],
                    eb, inv_b, lower, upper, cutoff, a, c)
        i = end


@numba.njit(parallel=True, **_JIT)
def _fill_parallel(tmin: np.ndarray, tmax: np.ndarray, tnext: np.ndarray, dl: np.ndarray,
                   out: np.ndarray, rep: int, lower: float, upper: float, cutoff: int,
                   a: float, b: float, c: float) -> None:
    n = out.size
    for k in numba.prange((n + _CHUNK - 1) // _CHUNK):
        start = k * _CHUNK
        _fill_range(tmin, tmax, tnext, dl, out, start, min(n, start + _CHUNK), rep,
                    lower, upper, cutoff, a, b, c)


# ------------------------------------------------------------------- validation
def _coefficients(coefficients: Mapping[str, float] | None) -> tuple[float, float, float]:
    """(a, b, c) from a mapping with keys among a, b, c (missing: 150-cm values)."""
    coef = dict(PARTON_LOGAN_150CM)
    if coefficients is not None:
        unknown = sorted(set(coefficients) - set(coef))
        if unknown:
            raise ValueError(f"unknown Parton-Logan coefficient(s) {unknown}; "
                             "use the keys 'a', 'b', 'c'")
        coef.update({key: float(val) for key, val in coefficients.items()})
    a, b, c = coef["a"], coef["b"], coef["c"]
    if not (math.isfinite(a) and math.isfinite(b) and math.isfinite(c)
            and a > 0.0 and b > 0.0 and -3.0 * a <= c <= a):
        raise ValueError(f"Parton-Logan coefficients a={a}, b={b}, c={c} must be finite "
                         "with a > 0, b > 0 and -3a <= c <= a")
    return a, b, c


def _daylength_rows(daylength: ArrayLike, shape: tuple[int, ...]) -> tuple[np.ndarray, int]:
    """Daylength as flat rows and the number of consecutive elements per row.

    A daylength constant along the trailing axes of ``shape`` (shape
    (time, y, 1) for a (time, y, x) block, or a scalar) is not expanded.
    """
    d = np.asarray(daylength, dtype=np.float64)
    padded = (1,) * (len(shape) - d.ndim) + d.shape
    if d.ndim > len(shape) or any(p not in (1, s) for p, s in zip(padded, shape)):
        raise ValueError(f"daylength {d.shape} does not broadcast to the temperature "
                         f"shape {tuple(shape)}")
    k = len(shape)
    while k > 0 and padded[k - 1] == 1:
        k -= 1
    rows = np.broadcast_to(d.reshape(padded[:k]), tuple(shape[:k]))
    # a fresh writeable copy (small): one compiled signature for every layout
    return np.array(rows, dtype=np.float64, order="C").reshape(-1), max(1, math.prod(shape[k:]))


# ----------------------------------------------------------------------- public
def degree_days_parton_logan_block(tmin: np.ndarray, tmax: np.ndarray,
                                   tmin_next: np.ndarray | None, daylength: ArrayLike,
                                   lower: float, upper: float,
                                   cutoff_code: int | str = "horizontal",
                                   out: np.ndarray | None = None, *,
                                   coefficients: Mapping[str, float] | None = None,
                                   parallel: bool = True) -> np.ndarray:
    """Parton-Logan daily degree-days of same-shape arrays (block entry point).

    Parameters
    ----------
    tmin, tmax : numpy.ndarray
        Daily minimum and maximum temperature, any same shape.  C-contiguous
        float32 or float64 arrays (all temperatures the same dtype) are used
        without copying; anything else is converted first.
    tmin_next : numpy.ndarray or None
        Next day's minimum, the shape of ``tmin``; None: ``tmin`` (the night
        falls back toward the day's own minimum).
    daylength : array_like
        Daylength in hours (clipped to [0, 24]), of the block's shape or
        broadcastable to it.  One that is constant along trailing axes (e.g.
        (time, y, 1) for a (time, y, x) block, or a scalar) is read per row,
        not expanded to the block's size.
    lower, upper : float
        Lower and upper developmental thresholds, in the unit of the
        temperatures; ``upper`` may be ``np.inf``.
    cutoff_code : int or str
        A name from ``degree_days.CUTOFFS`` or its index there.
    out : numpy.ndarray, optional
        C-contiguous float64 array of the block's shape to write into.
    coefficients : mapping, optional
        Parton-Logan ``a``, ``b``, ``c``; missing keys take
        ``diurnal.PARTON_LOGAN_150CM``.  Must satisfy a > 0, b > 0,
        -3a <= c <= a (the day sine then stays within one rise and fall).
    parallel : bool
        Run on all numba threads (default); turn off inside threaded callers.

    Returns
    -------
    numpy.ndarray
        float64 degree-days, ``out`` if given; NaN where a temperature or
        the daylength is NaN.

    Raises
    ------
    ValueError
        Unknown cutoff, ``lower >= upper``, bad coefficients, shapes that
        differ, or an unusable ``out``.

    See Also
    --------
    degree_days_parton_logan : the broadcasting front end; its Notes give
        the formulas.

    References
    ----------
    .. [1] Parton, W.J. & Logan, J.A. (1981) A model for diurnal variation in
       soil and air temperature. Agricultural Meteorology 23:205-216.
    .. [2] Baskerville, G.L. & Emin, P. (1969) Ecology 50:514-517.
    .. [3] Zalom, F.G. et al. (1983) University of California DANR Leaflet
       21373.
    """
    cut = _check_code(cutoff_code, CUTOFFS, "cutoff")
    lower, upper = _thresholds(lower, upper)
    a, b, c = _coefficients(coefficients)
    tmin = np.asarray(tmin)
    tmax = np.asarray(tmax)
    tnext = tmin if tmin_next is None else np.asarray(tmin_next)
    if tmin.shape != tmax.shape or tnext.shape != tmin.shape:
        raise ValueError(f"tmin {tmin.shape}, tmax {tmax.shape} and tmin_next {tnext.shape} "
                         "must have the same shape")
    dl, rep = _daylength_rows(daylength, tmin.shape)
    dtype = _float_dtype(tmin, tmax, tnext)
    flat = [np.asarray(x, dtype=dtype, order="C").reshape(-1) for x in (tmin, tmax, tnext)]
    out = _output_array(out, tmin.shape)
    out_flat = out.reshape(-1)
    if out_flat.size == 0:
        return out
    if parallel and out_flat.size >= _PARALLEL_MIN:
        _fill_parallel(flat[0], flat[1], flat[2], dl, out_flat, rep, lower, upper, cut, a, b, c)
    else:
        _fill_range(flat[0], flat[1], flat[2], dl, out_flat, 0, out_flat.size, rep,
                    lower, upper, cut, a, b, c)
    return out


def degree_days_parton_logan(tmin: ArrayLike, tmax: ArrayLike, tmin_next: ArrayLike | None,
                             daylength: ArrayLike, lower: float, upper: float, *,
                             cutoff: str = "horizontal",
                             coefficients: Mapping[str, float] | None = None) -> np.ndarray:
    """Daily degree-days over the Parton & Logan (1981) day, in closed form.

    Parameters
    ----------
    tmin, tmax : array_like
        Daily minimum Tn and maximum Tx (broadcast together with the other
        inputs).  Tn > Tx is not repaired here (the caller repairs); the
        curve is integrated as given.
    tmin_next : array_like or None
        Next day's minimum Tn', toward which the night falls; None: ``tmin``.
    daylength : array_like
        Daylength Y in hours, e.g. ``diurnal.daylength(lat, doy)``; clipped
        to [0, 24].
    lower, upper : float
        Lower and upper developmental thresholds L < U; ``upper`` may be
        ``np.inf``.
    cutoff : str
        ``horizontal``, ``vertical`` or ``intermediate`` (``degree_days.CUTOFFS``).
    coefficients : mapping, optional
        Parton-Logan ``a``, ``b``, ``c`` (default: the 150-cm air values,
        ``diurnal.PARTON_LOGAN_150CM``).

    Returns
    -------
    numpy.ndarray
        float64 degree-days per day (°C·day for °C input), the broadcast
        shape (0-d for scalars); NaN where any input is NaN.

    Raises
    ------
    ValueError
        Unknown cutoff, ``lower >= upper``, or bad coefficients.

    Notes
    -----
    The day runs from sunrise to the next sunrise, as the curve of
    ``diurnal.parton_logan_hourly`` [1]_: for τ in [0, Y] hours after sunrise
    T = Tn + (Tx − Tn) sin ψ, ψ = π(τ − c)/(Y + 2a); then for the night of
    Z = 24 − Y hours, s = hours after sunset / Z in [0, 1],
    T = Tn' + (Ts − Tn') e^(−b s), Ts the day sine at sunset.  Degree-days are
    (1/24 h) ∫ g(T(t)) dt with g the cutoff's integrand, split like the sine
    methods of ``degree_days`` into H = ∫ min((T − L)⁺, U − L), V = ∫ (T − L)
    over L < T ≤ U, and A = ∫ (T − U)⁺ (all / 24 h); horizontal = H,
    vertical = V, intermediate = max(V, H − A) on the daily parts, as for
    the sine day [3]_.

    On the day sine the threshold θ is crossed where sin ψ = (θ − Tn)/(Tx − Tn);
    split at ψ = π/2 into a rising and a (mirrored) falling branch, the time
    above θ is an arcsine difference and ∫ sin ψ dψ a cosine difference, as
    in Baskerville & Emin's single sine [2]_ but on the partial interval
    [ψ(sunrise), ψ(sunset)].  On the night, monotone in s, θ is crossed at
    s = −ln((θ − Tn')/(Ts − Tn'))/b, and ∫ e^(−bs) ds = (e^(−b s₁) − e^(−b s₂))/b.
    A constant day (Tn = Tx = Tn') gives g(Tn) exactly; a temperature
    exactly at U counts as not above U, as in ``degree_days``.

    References
    ----------
    .. [1] Parton, W.J. & Logan, J.A. (1981) A model for diurnal variation in
       soil and air temperature. Agricultural Meteorology 23:205-216.
    .. [2] Baskerville, G.L. & Emin, P. (1969) Rapid estimation of heat
       accumulation from maximum and minimum temperatures. Ecology
       50:514-517.
    .. [3] Zalom, F.G., Goodell, P.B., Wilson, L.T., Barnett, W.W. &
       Bentley, W.J. (1983) Degree-days: the calculation and use of heat
       units in pest management. University of California DANR Leaflet
       21373.

    Examples
    --------
    >>> float(degree_days_parton_logan(20.0, 20.0, 20.0, 14.0, 10.0, 30.0))
    10.0
    """
    arrays = [np.asarray(tmin), np.asarray(tmax),
              np.asarray(tmin if tmin_next is None else tmin_next)]
    d = np.asarray(daylength, dtype=np.float64)
    shape = np.broadcast_shapes(*(x.shape for x in arrays), d.shape)
    dtype = _float_dtype(*arrays)
    # an array already of the shape is used as is (a broadcast view of it would
    # be read-only, a different compiled signature)
    temps = [np.asarray(x if x.shape == shape else np.broadcast_to(x, shape), dtype=dtype,
                        order="C") for x in arrays]
    out = degree_days_parton_logan_block(temps[0], temps[1], temps[2], d, lower, upper, cutoff,
                                         coefficients=coefficients)
    return out[()] if out.ndim == 0 else out

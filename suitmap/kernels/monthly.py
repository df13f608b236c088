"""Degree-days from monthly climate: daily interpolation and a normal model.

Two routes from monthly values to degree-days:

(a) interpolate the 12 monthly means (or a monthly series) to smooth daily
    values that keep every month's mean exactly, then apply any daily
    degree-day method (``monthly_to_daily``, ``monthly_series_to_daily``,
    ``monthly_degree_days_interpolated``);
(b) integrate the degree-day function against a normal distribution of the
    daily mean temperature about the monthly mean
    (``monthly_degree_days_normal``).

Pure numpy/scipy kernels, float64 arithmetic, no I/O.

References
----------
Epstein (1991) Journal of Climate 4:365-368; Thom (1954) Monthly Weather
Review 82:1-6 (cited from memory); Boneva, Kendall & Stefanov (1971) Journal
of the Royal Statistical Society B 33:1-71 (cited from memory).
"""

from __future__ import annotations

import functools
import math

import numpy as np
from numpy.typing import ArrayLike
from scipy.interpolate import CubicSpline
from scipy.special import erfcx

from suitmap.kernels.degree_days import CUTOFFS, METHODS, degree_days

__all__ = ["month_lengths", "monthly_to_daily", "monthly_series_to_daily",
           "monthly_degree_days_normal", "monthly_degree_days_interpolated"]

_CALENDARS_365 = ("standard", "gregorian", "proleptic_gregorian", "julian")
_NOLEAP = (31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31)


# ------------------------------------------------------------------ calendars
def month_lengths(calendar: str = "standard", leap: bool = False) -> np.ndarray:
    """Days in each of the 12 months of one year of a CF calendar.

    Parameters
    ----------
    calendar : str
        A CF-conventions calendar name: ``standard``, ``gregorian``,
        ``proleptic_gregorian``, ``julian`` (February has 29 days when
        ``leap``), ``noleap``/``365_day``, ``all_leap``/``366_day``,
        ``360_day``.
    leap : bool
        Whether the year is a leap year (used by the first four calendars).

    Returns
    -------
    numpy.ndarray
        int64 array of 12 month lengths.

    References
    ----------
    .. [1] CF Conventions, section 4.4.1 "Calendar".
    """
    days = list(_NOLEAP)
    if calendar in _CALENDARS_365:
        days[1] = 29 if leap else 28
    elif calendar in ("all_leap", "366_day"):
        days[1] = 29
    elif calendar == "360_day":
        days = [30] * 12
    elif calendar not in ("noleap", "365_day"):
        raise ValueError(f"unknown calendar {calendar!r}; use a CF calendar name such as "
                         "'standard', 'noleap', 'all_leap' or '360_day'")
    return np.array(days, dtype=np.int64)


def _check_days(days_in_month: ArrayLike, n: int) -> np.ndarray:
    days = np.asarray(days_in_month)
    if days.ndim != 1 or days.size != n:
        raise ValueError(f"days_in_month must be a 1-D array of {n} month lengths (one per "
                         f"month along the month axis), got shape {days.shape}")
    if not np.all(np.isfinite(days)) or np.any(days != np.round(days)) or np.any(days < 1):
        raise ValueError("days_in_month must hold whole, positive numbers of days; got "
                         f"{days.tolist()}")
    return days.astype(np.int64)


def _month_axis(values: ArrayLike, axis: int) -> tuple[np.ndarray, int]:
    """float64 array with the month axis moved last, and that axis (normalised)."""
    arr = np.asarray(values, dtype=np.float64)
    if arr.ndim == 0:
        raise ValueError("monthly values must have a month axis; got a scalar")
    if not -arr.ndim <= axis < arr.ndim:
        raise ValueError(f"axis {axis} is out of range for an array of {arr.ndim} dimensions")
    axis = int(axis) % arr.ndim
    return np.moveaxis(arr, axis, -1), axis


# ------------------------------------------------- route (a): cyclic harmonic
def _harmonics(t: np.ndarray, period: int) -> np.ndarray:
    """(len(t), 13): 1, then cos/sin of harmonics 1..6 (scaled by sqrt 2)."""
    w = 2.0 * np.pi * np.outer(t, np.arange(1, 7)) / period
    cols = np.empty((t.size, 13))
    cols[:, 0] = 1.0
    cols[:, 1::2] = math.sqrt(2.0) * np.cos(w)
    cols[:, 2::2] = math.sqrt(2.0) * np.sin(w)
    return cols


@functools.lru_cache(maxsize=16)
def _climatology_weights(days: tuple[int, ...]) -> np.ndarray:
    """(n_days, 12) matrix W: daily values = W @ monthly means (see Notes of
    ``monthly_to_daily``)."""
    n = np.array(days)
    period = int(n.sum())
    basis = _harmonics(np.arange(period) + 0.5, period)          # day centres
    month = np.repeat(np.arange(12), n)
    means = np.zeros((12, 13))
    np.add.at(means, month, basis)
    means /= n[:, None]                                          # month means of basis
    # 13 harmonic coefficients, 12 month means: one direction v of
    # coefficients leaves every month mean unchanged.  Keep only the part of
    # harmonic 6 orthogonal to v's harmonic-6 part: the solution with the
    # smallest harmonic-6 amplitude.  Harmonics 0..5 stay free, so any
    # trigonometric polynomial of degree <= 5 in time is reproduced exactly.
    v = np.linalg.svd(means)[2][-1]
    v6 = v[11:]
    norm6 = float(np.hypot(*v6))
    if norm6 < 1e-8:
        raise ValueError(f"month lengths {list(days)} admit no unique harmonic interpolation; "
                         "use calendar month lengths")
    u = np.array([-v6[1], v6[0]]) / norm6
    basis12 = np.column_stack([basis[:, :11], basis[:, 11:] @ u])
    means12 = np.column_stack([means[:, :11], means[:, 11:] @ u])
    if np.linalg.cond(means12) > 1e8:
        raise ValueError(f"month lengths {list(days)} give an ill-conditioned harmonic fit; "
                         "use calendar month lengths")
    weights = basis12 @ np.linalg.inv(means12)
    weights.setflags(write=False)
    return weights


def monthly_to_daily(monthly: ArrayLike, days_in_month: ArrayLike, *, axis: int = 0) -> np.ndarray:
    """Smooth daily values of a 12-month climatology that keep each month's mean.

    A harmonic interpolation in the spirit of Epstein (1991) [1]_, adapted to
    months of unequal length: the result is a periodic trigonometric
    polynomial of degree 6 in time (period one year of ``sum(days_in_month)``
    days), sampled at the day centres, whose daily values average exactly to
    the monthly inputs in every month.

    Parameters
    ----------
    monthly : array_like
        Monthly means, 12 along ``axis``, January first; the year is cyclic
        (December is followed by January).
    days_in_month : array_like
        The 12 month lengths in days, e.g. ``month_lengths("noleap")``,
        ``month_lengths("standard", leap=True)``, ``month_lengths("360_day")``.
    axis : int
        The month axis of ``monthly``.

    Returns
    -------
    numpy.ndarray
        float64 daily values, ``sum(days_in_month)`` along ``axis`` (other
        axes unchanged).  Every value of a cell is NaN where any of its 12
        months is NaN.

    Raises
    ------
    ValueError
        ``monthly`` does not have 12 values along ``axis``, or the month
        lengths are not 12 positive whole numbers.

    Notes
    -----
    Epstein [1]_ writes the 12 monthly means as a Fourier series in the
    month index and multiplies harmonic k by (πk/12)/sin(πk/12): the mean
    of harmonic k over one month is its mid-month value times
    sin(πk/12)/(πk/12), so the amplified series has the given monthly means
    when the months are equal and the mean is an integral.

    Here the months are the calendar's, of 28-31 (or 30) days, and a
    month's mean is the mean of its daily values.  The daily value of day d
    is f(d + ½) with f(t) = c0 + Σ_{k=1..6} [a_k cos(2πkt/T) + b_k sin(2πkt/T)],
    T the days of the year.  These 13 coefficients meet the 12 conditions
    "mean of f at the day centres of month j = m_j" (a 12 × 13 linear
    system, solved once per calendar) along a line of solutions; we take the
    one with the smallest harmonic-6 amplitude.  Consequences:

    * for 12 equal months (``360_day``) this is Epstein's interpolant with
      the factor for a discrete mean of n day-centre values,
      n·sin(πk/(12n))/sin(πk/12), which tends to (πk/12)/sin(πk/12) as
      n → ∞ (it differs by < 6e-4 for n = 30);
    * any periodic signal made of harmonics 0-5 in time (a pure annual
      sinusoid, say) is reproduced exactly from its monthly means;
    * f is infinitely differentiable and periodic in time (no kinks at
      month boundaries, unlike interpolation in a month-index coordinate
      with unequal months); the day-to-day change is at most
      12π/T · max|f − c| for any constant c (Bernstein's inequality).

    The interpolation is linear: daily = W @ monthly, with the (T, 12)
    matrix W cached per set of month lengths.  Month means are reproduced
    to rounding (~1e-13 for temperatures in °C).  Like any mean-preserving
    interpolant of a strongly varying input it can overshoot the monthly
    extremes a little.

    References
    ----------
    .. [1] Epstein, E.S. (1991) On obtaining daily climatological values
       from monthly means. Journal of Climate 4:365-368.
    .. [2] Bernstein, S. (1912) Sur l'ordre de la meilleure approximation
       des fonctions continues par des polynômes de degré donné. Mémoires
       de l'Académie Royale de Belgique 4 (cited from memory).
    """
    arr, axis = _month_axis(monthly, axis)
    if arr.shape[-1] != 12:
        raise ValueError(f"monthly climatology must have 12 months along axis {axis}, "
                         f"got {arr.shape[-1]}")
    days = _check_days(days_in_month, 12)
    weights = _climatology_weights(tuple(int(d) for d in days))
    return np.moveaxis(arr @ weights.T, -1, axis)


# ----------------------------------------- route (a): non-cyclic monthly series
def monthly_series_to_daily(values: ArrayLike, days_in_month: ArrayLike, *,
                            axis: int = 0) -> np.ndarray:
    """Smooth daily values of a monthly series that keep each month's mean.

    The running integral of the series (exact at every month boundary) is
    interpolated with a cubic spline and each day's value is the spline's
    increase over that day, i.e. the day's mean of the spline's derivative,
    a continuously differentiable piecewise quadratic (a histospline [1]_).
    Month means are preserved by construction: a month's daily values add
    up to the spline's increase over the month, which is the month's total.

    Parameters
    ----------
    values : array_like
        Monthly means, n consecutive months along ``axis`` (not cyclic).
    days_in_month : array_like
        The n month lengths in days (e.g. from the calendar of the data).
    axis : int
        The month axis of ``values``.

    Returns
    -------
    numpy.ndarray
        float64 daily values, ``sum(days_in_month)`` along ``axis``.  A cell
        with any NaN month is NaN on every day.

    Raises
    ------
    ValueError
        ``days_in_month`` does not match the month axis, or holds other
        than positive whole numbers.

    Notes
    -----
    Spline: scipy's ``CubicSpline`` with not-a-knot ends [2]_, through the
    cumulative sums of the anomalies from the series mean (the mean is
    added back; this keeps the rounding of the cumulative sums small).
    Properties:

    * a daily curve that is a polynomial of degree <= 2 in time is
      reproduced exactly (a not-a-knot cubic spline reproduces cubics);
    * a smooth curve is reproduced to O(h³) with h ~ 31 days: for a pure
      annual sinusoid of amplitude A the error away from the first and last
      two months is below h³ω³A/24, ω = 2π/365 (≈ 0.006 A; the bound of
      Hall & Meyer (1976) for the derivative of a cubic spline);
    * at the ends, the first two (last two) months share one quadratic: an
      extrapolation, less accurate than the interior;
    * one month gives a constant, two months a straight line.

    Interpolating the cumulative sum and differencing it is common
    practice for mean-preserving interpolation; for a cyclic climatology
    use ``monthly_to_daily``.

    References
    ----------
    .. [1] Boneva, L.I., Kendall, D.G. & Stefanov, I. (1971) Spline
       transformations: three new diagnostic aids for the statistical
       data-analyst. Journal of the Royal Statistical Society B 33:1-71
       (cited from memory).
    .. [2] de Boor, C. (1978) A Practical Guide to Splines. Springer,
       chapter IV (not-a-knot end condition; cited from memory).
    .. [3] Hall, C.A. & Meyer, W.W. (1976) Optimal error bounds for cubic
       spline interpolation. Journal of Approximation Theory 16:105-122
       (cited from memory).
    """
    arr, axis = _month_axis(values, axis)
    n = arr.shape[-1]
    days = _check_days(days_in_month, n)
    total = int(days.sum())
    bad = ~np.all(np.isfinite(arr), axis=-1)
    if bad.any():
        arr = np.where(bad[..., None], 0.0, arr)
    ref = arr.mean(axis=-1, keepdims=True)
    if n == 1:
        daily = np.broadcast_to(ref, arr.shape[:-1] + (total,)).copy()
    else:
        edges = np.concatenate([[0], np.cumsum(days)]).astype(np.float64)
        cum = np.concatenate([np.zeros(arr.shape[:-1] + (1,)),
                              np.cumsum((arr - ref) * days, axis=-1)], axis=-1)
        spline = CubicSpline(edges, cum, axis=-1, bc_type="not-a-knot")
        daily = np.diff(spline(np.arange(total + 1, dtype=np.float64)), axis=-1) + ref
    if bad.any():
        daily[bad] = np.nan
    return np.moveaxis(daily, -1, axis)


# --------------------------------------------------- route (b): normal model
def _tail(x: np.ndarray) -> np.ndarray:
    """E[(X − x)⁺] for X standard normal and x >= 0: φ(x) − x·(1 − Φ(x)).

    Written as exp(−x²/2)·[1/√(2π) − (x/2)·erfcx(x/√2)] so that neither
    factor underflows before the product does.
    """
    with np.errstate(over="ignore", invalid="ignore"):
        val = np.exp(-0.5 * x * x) * (1.0 / math.sqrt(2.0 * math.pi)
                                      - 0.5 * x * erfcx(x / math.sqrt(2.0)))
    val = np.where(np.isposinf(x), 0.0, val)
    return np.maximum(val, 0.0)


def monthly_degree_days_normal(mean: ArrayLike, sd: ArrayLike, lower: ArrayLike,
                               upper: ArrayLike, n_days: ArrayLike) -> np.ndarray:
    """Degree-days of a month from its mean temperature, daily means normal.

    The daily mean temperature X of the month's days is taken as normal
    with mean μ and standard deviation σ (Thom-type method [1]_), and each
    day contributes clip(X − L, 0, U − L).  Expected total over N days:

        DD = N·[G(L) − G(U)],  G(c) = (μ − c)·Φ(z) + σ·φ(z),  z = (μ − c)/σ,

    where G(c) = E[(X − c)⁺] and Φ, φ are the standard normal distribution
    and density.

    Parameters
    ----------
    mean : array_like
        Monthly mean temperature μ.
    sd : array_like
        Standard deviation σ >= 0 of the daily mean temperature about μ
        within the month (day-to-day variability, not the diurnal range).
    lower, upper : array_like
        Lower and upper developmental thresholds; ``upper`` may be
        ``np.inf``.  ``lower`` finite and ``upper > lower``.
    n_days : array_like
        Days in the month, N >= 0.

    Returns
    -------
    numpy.ndarray
        float64 degree-days of the broadcast shape (a float64 scalar when
        every input is a scalar); NaN where an input is NaN.

    Raises
    ------
    ValueError
        ``sd`` or ``n_days`` negative, ``lower`` not finite, or
        ``upper <= lower``.

    Notes
    -----
    Each day is constant at its daily mean, as in the ``average`` daily
    method with a horizontal cutoff: the diurnal range is ignored, so where
    a month's days cross a threshold during the day (cool months near L)
    this underestimates the degree-days of the sine or triangle methods.  It
    is a fast screen; for the diurnal cycle use interpolated daily minima
    and maxima (``monthly_degree_days_interpolated``).

    Evaluated as DD/N = clip(μ − L, 0, U − L) + σ·[t(|z_L|) − t(|z_U|)] with
    t(x) = φ(x) − x·(1 − Φ(x)) (from G(c) = max(μ − c, 0) + σ·t(|z|)), which
    avoids cancellation far from the thresholds and gives the σ → 0 limit
    N·clip(μ − L, 0, U − L) exactly (used for σ = 0).

    References
    ----------
    .. [1] Thom, H.C.S. (1954) The rational relationship between heating
       degree days and temperature. Monthly Weather Review 82:1-6 (cited
       from memory).
    """
    args = [np.asarray(a, dtype=np.float64) for a in (mean, sd, lower, upper, n_days)]
    scalar = all(a.ndim == 0 for a in args)
    mu, sigma, lo, up, n = np.broadcast_arrays(*args)
    if np.any(sigma < 0):
        raise ValueError("sd (standard deviation of daily mean temperature) must be >= 0")
    if np.any(n < 0):
        raise ValueError("n_days must be >= 0")
    if np.any(~np.isfinite(lo) & ~np.isnan(lo)):
        raise ValueError("lower threshold must be a finite temperature")
    if np.any(up <= lo):
        raise ValueError("upper threshold must be greater than the lower threshold; "
                         "use np.inf for no upper threshold")
    with np.errstate(divide="ignore", invalid="ignore"):
        zl = np.abs(mu - lo) / sigma
        zu = np.abs(mu - up) / sigma
        spread = sigma * (_tail(zl) - _tail(zu))
    spread = np.where(sigma == 0, 0.0, spread)
    spread = np.where(np.isnan(sigma) | np.isnan(mu), np.nan, spread)
    base = np.clip(mu - lo, 0.0, up - lo)
    out = n * (base + spread)
    return out[()] if scalar else out


# ------------------------------------ route (a) + daily method (optional variant)
def monthly_degree_days_interpolated(tmin: ArrayLike, tmax: ArrayLike,
                                     days_in_month: ArrayLike, lower: float,
                                     upper: float, *, method: str = "single_sine",
                                     cutoff: str = "horizontal",
                                     axis: int = 0) -> np.ndarray:
    """Degree-days per month of a climatology of monthly mean Tmin and Tmax.

    Tmin and Tmax are interpolated to days with ``monthly_to_daily`` (their
    monthly means are kept), each day gets the daily degree-day ``method``
    of ``suitmap.kernels.degree_days.degree_days``, and the days of each
    month are added up.  The year is cyclic: the double methods take the
    next day's minimum, and 31 December's next day is 1 January.

    Parameters
    ----------
    tmin, tmax : array_like
        Monthly mean daily minimum and maximum temperature, 12 along
        ``axis``, same shape.
    days_in_month : array_like
        The 12 month lengths (see ``month_lengths``).
    lower, upper : float
        Developmental thresholds (``upper`` may be ``np.inf``).
    method, cutoff : str
        A daily method from ``METHODS`` and a cutoff from ``CUTOFFS``.
    axis : int
        The month axis.

    Returns
    -------
    numpy.ndarray
        float64 degree-days of each month, 12 along ``axis``.

    Raises
    ------
    ValueError
        As ``monthly_to_daily`` and ``degree_days``.

    Notes
    -----
    Interpolated minima and maxima are smooth climatological days: the
    day-to-day weather variability is absent, so months whose days hover
    near a threshold get fewer degree-days than real years would (see
    ``monthly_degree_days_normal`` for a model of that variability).

    References
    ----------
    .. [1] Epstein, E.S. (1991) On obtaining daily climatological values
       from monthly means. Journal of Climate 4:365-368.
    .. [2] Baskerville, G.L. & Emin, P. (1969) Rapid estimation of heat
       accumulation from maximum and minimum temperatures. Ecology
       50:514-517.
    """
    if method not in METHODS or cutoff not in CUTOFFS:
        raise ValueError(f"unknown method {method!r} or cutoff {cutoff!r}; use one of "
                         f"{', '.join(METHODS)} and {', '.join(CUTOFFS)}")
    lo_arr, hi_arr = np.asarray(tmin, dtype=np.float64), np.asarray(tmax, dtype=np.float64)
    if lo_arr.shape != hi_arr.shape:
        raise ValueError(f"tmin and tmax must have the same shape, got {lo_arr.shape} "
                         f"and {hi_arr.shape}")
    days = _check_days(days_in_month, 12)
    dmin = np.moveaxis(monthly_to_daily(lo_arr, days, axis=axis), axis, -1)
    dmax = np.moveaxis(monthly_to_daily(hi_arr, days, axis=axis), axis, -1)
    daily = degree_days(dmin, dmax, lower, upper, method=method, cutoff=cutoff,
                        tmin_next=np.roll(dmin, -1, axis=-1))
    starts = np.r_[0, np.cumsum(days)[:-1]]
    return np.moveaxis(np.add.reduceat(daily, starts, axis=-1), -1, axis)

"""Daylength and diurnal temperature curves built from daily Tmin/Tmax.

``daylength``/``sun_times`` (Forsythe et al. 1995), ``sine_hourly`` (the
single-sine method's day), ``parton_logan_hourly`` (day sine, night decay)
and, re-exported from ``day_quadrature``, quadrature over a day
(``day_nodes``, ``sine_nodes``, ``parton_logan_nodes``, ``daily_mean_of``)
to average any f(T(t)).  Each curve has a numba scalar twin (``_daylength``,
``_sine_temp``, ``_pl_temp``, ``_pl_temp_prev``) for compiled loops in other kernels; the
array functions run the same code.  Local solar hours; day of year 1 =
1 January.  No I/O.

References
----------
Parton & Logan (1981) Agric. Meteorol. 23:205-216; Forsythe et al. (1995)
Ecol. Model. 80:87-95; Baskerville & Emin (1969) Ecology 50:514-517.
"""

from __future__ import annotations

import math

import numba
import numpy as np
from numpy.typing import ArrayLike

# quadrature over a day lives in day_quadrature; re-exported here
from suitmap.kernels.day_quadrature import (  # noqa: F401
    _clip_day, _pl_nodes, daily_mean_of, day_nodes, parton_logan_nodes, sine_nodes)

__all__ = ["PARTON_LOGAN_150CM", "SINE_HOUR_OF_MIN", "daily_mean_of", "day_nodes",
           "daylength", "parton_logan_hourly", "parton_logan_nodes", "sine_hourly",
           "sine_nodes", "sun_times"]

SINE_HOUR_OF_MIN = 3.0
"""Default hour of the minimum of ``sine_hourly`` (maximum 12 h later)."""

PARTON_LOGAN_150CM = {"a": 1.86, "b": 2.20, "c": -0.17}
"""Parton & Logan (1981) coefficients for air temperature at 150 cm."""

_JIT = dict(cache=True, nogil=True, error_model="numpy")  # nogil: dask threads run kernels at once
_TWO_PI = 2.0 * math.pi

# ----------------------------------------------------------- scalar kernels
@numba.njit(**_JIT)
def _daylength(lat_deg: float, doy: float, p: float) -> float:
    """Forsythe et al. (1995) CBM daylength in hours (scalar)."""
    theta = 0.2163108 + 2.0 * math.atan(0.9671396 * math.tan(0.00860 * (doy - 186.0)))
    phi = math.asin(0.39795 * math.cos(theta))            # solar declination
    lat = math.radians(lat_deg)
    arg = ((math.sin(math.radians(p)) + math.sin(lat) * math.sin(phi))
           / (math.cos(lat) * math.cos(phi)))
    arg = 1.0 if arg > 1.0 else (-1.0 if arg < -1.0 else arg)   # NaN kept
    return 24.0 - (24.0 / math.pi) * math.acos(arg)


@numba.njit(**_JIT)
def _sine_temp(tmin: float, tmax: float, t: float, hour_of_min: float) -> float:
    """Symmetric 24-h sine: ``tmin`` at ``hour_of_min``, ``tmax`` 12 h later."""
    return 0.5 * (tmax + tmin) - 0.5 * (tmax - tmin) * math.cos(_TWO_PI * (t - hour_of_min) / 24.0)


@numba.njit(**_JIT)
def _pl_day(tmin: float, tmax: float, t: float, sunrise: float, y: float, a: float,
            c: float) -> float:
    """Parton & Logan day sine: Tn + (Tx - Tn) sin(pi (t - sunrise - c) / (Y + 2a))."""
    return tmin + (tmax - tmin) * math.sin(math.pi * (t - sunrise - c) / (y + 2.0 * a))


@numba.njit(**_JIT)
def _pl_temp_prev(tmin_prev: float, tmax_prev: float, tmin: float, tmax: float,
                  tmin_next: float, daylength_h: float, t: float, a: float, b: float,
                  c: float) -> float:
    """Parton & Logan temperature at solar hour ``t`` in [0, 24) of a day.

    t < sunrise: the previous night, decaying from the previous day's sunset
    temperature (from ``tmin_prev``, ``tmax_prev`` and today's daylength)
    toward today's ``tmin``; sunrise <= t < sunset: the day sine of
    ``tmin``, ``tmax``; t >= sunset: the night, decaying from today's sunset
    temperature toward ``tmin_next``.  Daylength is clipped to [0, 24].
    """
    y = _clip_day(daylength_h)
    sunrise = 12.0 - 0.5 * y
    sunset = 12.0 + 0.5 * y
    if y >= 24.0:                       # polar day: no night
        return _pl_day(tmin, tmax, t, sunrise, y, a, c)
    z = 24.0 - y
    if t < sunrise:
        t_set = _pl_day(tmin_prev, tmax_prev, sunset, sunrise, y, a, c)
        return tmin + (t_set - tmin) * math.exp(-b * (t + 24.0 - sunset) / z)
    if t < sunset:
        return _pl_day(tmin, tmax, t, sunrise, y, a, c)
    t_set = _pl_day(tmin, tmax, sunset, sunrise, y, a, c)
    return tmin_next + (t_set - tmin_next) * math.exp(-b * (t - sunset) / z)


@numba.njit(**_JIT)
def _pl_temp(tmin: float, tmax: float, tmin_next: float, daylength_h: float, t: float,
             a: float, b: float, c: float) -> float:
    """``_pl_temp_prev`` with the previous day taken equal to today."""
    return _pl_temp_prev(tmin, tmax, tmin, tmax, tmin_next, daylength_h, t, a, b, c)


# ------------------------------------------------------------------- loops
@numba.njit(**_JIT)
def _daylength_loop(lat: np.ndarray, doy: np.ndarray, p: float, out: np.ndarray) -> None:
    for i in range(out.size):
        out[i] = _daylength(lat[i], doy[i], p)


@numba.njit(**_JIT)
def _sine_loop(tmin: np.ndarray, tmax: np.ndarray, hours: np.ndarray, hour_of_min: float,
               out: np.ndarray) -> None:
    for i in range(out.size):
        out[i] = _sine_temp(tmin[i], tmax[i], hours[i], hour_of_min)


@numba.njit(**_JIT)
def _pl_loop(tmin_prev: np.ndarray, tmax_prev: np.ndarray, tmin: np.ndarray,
             tmax: np.ndarray, tmin_next: np.ndarray, dl: np.ndarray, hours: np.ndarray,
             a: float, b: float, c: float, out: np.ndarray) -> None:
    for i in range(out.size):
        out[i] = _pl_temp_prev(tmin_prev[i], tmax_prev[i], tmin[i], tmax[i], tmin_next[i],
                               dl[i], hours[i], a, b, c)


def _flat(*arrays: ArrayLike) -> tuple[tuple[int, ...], list[np.ndarray]]:
    """Broadcast to one shape; return it and flat float64 copies."""
    arrs = np.broadcast_arrays(*[np.asarray(a, dtype=np.float64) for a in arrays])
    return arrs[0].shape, [np.ascontiguousarray(a).ravel() for a in arrs]


def _with_hours(daily: list, hours: ArrayLike) -> tuple[tuple[int, ...], list[np.ndarray]]:
    """Broadcast the daily inputs, given a trailing hours axis unless
    ``hours`` is 0-d, with ``hours``; flat float64 copies, ``hours`` last."""
    h = np.asarray(hours, dtype=np.float64)
    if h.ndim == 0:
        return _flat(*daily, h)
    return _flat(*[np.asarray(d, dtype=np.float64)[..., None] for d in daily], h)


# --------------------------------------------------------------- public API
def daylength(lat_deg: ArrayLike, doy: ArrayLike, p: float = 0.8333) -> np.ndarray:
    """Daylength in hours from latitude and day of year (CBM model).

    theta = 0.2163108 + 2 atan[0.9671396 tan(0.00860 (J - 186))],
    phi = asin(0.39795 cos theta) (declination),
    D = 24 - (24/pi) acos{[sin(p pi/180) + sin(lat) sin(phi)] / [cos(lat) cos(phi)]},
    the acos argument clipped to [-1, 1] so polar day gives 24 and polar
    night 0.

    Parameters
    ----------
    lat_deg : array_like
        Latitude in degrees north, in [-90, 90].
    doy : array_like
        Day of year J (1 = 1 January; fractional days allowed).  Broadcast
        against ``lat_deg``.
    p : float
        Degrees of the sun below the horizon that end the day: 0.8333 for
        sunrise-sunset (upper limb, standard refraction); 6/12/18 twilight.

    Returns
    -------
    numpy.ndarray
        Daylength in hours, float64, the broadcast shape (0-d for scalars).

    Raises
    ------
    ValueError
        A latitude outside [-90, 90].

    Notes
    -----
    The model's declination ignores the leap-year cycle; against astral's
    sunrise-to-sunset durations (2021-2024) it is within 1.5 + 5 tan|lat|
    minutes (tests/test_diurnal.py), worst near the equinoxes.

    References
    ----------
    .. [1] Forsythe, W.C., Rykiel, E.J., Stahl, R.S., Wu, H. & Schoolfield,
       R.M. (1995) A model comparison for daylength as a function of
       latitude and day of year. Ecological Modelling 80:87-95.

    Examples
    --------
    >>> round(float(daylength(40.0, 172)), 3)
    15.016
    """
    shape, (lat, j) = _flat(lat_deg, doy)
    if np.any(np.abs(lat) > 90.0):
        raise ValueError("lat_deg must lie in [-90, 90] degrees for daylength")
    out = np.empty(lat.size)
    _daylength_loop(lat, j, float(p), out)
    return out.reshape(shape)


def sun_times(lat_deg: ArrayLike, doy: ArrayLike,
              p: float = 0.8333) -> tuple[np.ndarray, np.ndarray]:
    """Sunrise and sunset in local solar hours: 12 - D/2 and 12 + D/2.

    Parameters
    ----------
    lat_deg, doy, p
        As in ``daylength``.

    Returns
    -------
    (numpy.ndarray, numpy.ndarray)
        Sunrise and sunset, symmetric about solar noon (add longitude and
        equation of time for clock time); polar day (0, 24), night (12, 12).

    References
    ----------
    .. [1] Forsythe, W.C., Rykiel, E.J., Stahl, R.S., Wu, H. & Schoolfield,
       R.M. (1995) Ecological Modelling 80:87-95.
    """
    d = daylength(lat_deg, doy, p)
    return 12.0 - 0.5 * d, 12.0 + 0.5 * d


def sine_hourly(tmin: ArrayLike, tmax: ArrayLike, hours: ArrayLike, *,
                hour_of_min: float = SINE_HOUR_OF_MIN) -> np.ndarray:
    """Temperature of the symmetric 24-h sine between ``tmin`` and ``tmax``.

    T(t) = M - alpha cos(2 pi (t - t_min)/24), M = (Tmax + Tmin)/2,
    alpha = (Tmax - Tmin)/2: the curve whose integral the single-sine
    degree-day method evaluates in closed form [1]_, [2]_.  Its daily mean
    is M; its minimum is at ``hour_of_min`` and its maximum 12 h later.

    Parameters
    ----------
    tmin, tmax : array_like
        Daily minimum and maximum, broadcast together to a shape S.
    hours : array_like
        Hours of the day (any real values: the curve has period 24 h).  A
        1-d ``hours`` of length H gives every day the same hours; an array
        of shape S + (H,) gives each day its own.
    hour_of_min : float
        Hour of the minimum.  The default, 03:00 (maximum at 15:00), sits
        between the usual early-morning minimum and mid-afternoon maximum,
        which one symmetric sine cannot both match.  Daily integrals (what
        degree-days and development use) do not depend on it.

    Returns
    -------
    numpy.ndarray
        float64, shape S + (H,) (S for a scalar hour).

    References
    ----------
    .. [1] Baskerville, G.L. & Emin, P. (1969) Rapid estimation of heat
       accumulation from maximum and minimum temperatures. Ecology
       50:514-517.
    .. [2] Zalom, F.G. et al. (1983) Degree-days: the calculation and use of
       heat units in pest management. Univ. California DANR Leaflet 21373.
    """
    shape, (lo, hi, h) = _with_hours([tmin, tmax], hours)
    out = np.empty(h.size)
    _sine_loop(lo, hi, h, float(hour_of_min), out)
    return out.reshape(shape)


def parton_logan_hourly(tmin: ArrayLike, tmax: ArrayLike, tmin_next: ArrayLike,
                        daylength_h: ArrayLike, hours: ArrayLike, *, a: float = 1.86,
                        b: float = 2.20, c: float = -0.17, tmin_prev: ArrayLike | None = None,
                        tmax_prev: ArrayLike | None = None) -> np.ndarray:
    """Parton & Logan (1981) hourly temperature from daily Tmin/Tmax.

    With daylength Y, night length Z = 24 - Y, sunrise 12 - Y/2 and sunset
    12 + Y/2 (solar hours):

    * day, sunrise <= t < sunset:
      T = Tn + (Tx - Tn) sin[pi (t - sunrise - c) / (Y + 2a)];
      the sine's minimum is at sunrise + c (c < 0: before sunrise, so the
      day starts slightly above Tn) and its maximum at 12 + a + c
      (13.69 h with the 150-cm coefficients), reached when Y > 2(a + c);
    * night, t >= sunset: T = Tn' + (Ts - Tn') exp(-b n / Z), n = t - sunset,
      Ts the day sine at sunset and Tn' = ``tmin_next``: as in [1]_ the
      night runs from sunset to the next sunrise and falls toward the next
      day's minimum (which it approaches, not reaches: at the next sunrise
      T = Tn' + (Ts - Tn') e^(-b));
    * before sunrise, t < sunrise: the previous night, falling toward today's
      Tn from the previous day's sunset temperature (n = t + 24 - sunset),
      computed from ``tmin_prev``, ``tmax_prev`` and today's daylength
      (yesterday's differs by minutes); without them today's Tmin and Tmax
      stand in.

    The curve jumps at sunrise (night end to day start), as in the original
    model.  Polar day (Y = 24): the day sine all day; polar night (Y = 0):
    no day sine, Tmax not reached.

    Parameters
    ----------
    tmin, tmax : array_like
        Today's minimum Tn and maximum Tx.
    tmin_next : array_like
        Next day's minimum.
    daylength_h : array_like
        Daylength in hours, e.g. from ``daylength`` (clipped to [0, 24]).
    hours : array_like
        Solar hours in [0, 24): shape (H,) for the same hours every day, or
        S + (H,) for hours per day (e.g. from ``parton_logan_nodes``).
    a, b, c : float
        Lag coefficient of the maximum (h; the maximum is at 12 + a + c),
        night decay coefficient, lag of the minimum after sunrise (h).
        Defaults: the 150-cm air-temperature values of [1]_
        (``PARTON_LOGAN_150CM``).
    tmin_prev, tmax_prev : array_like, optional
        Previous day's minimum and maximum, for the hours before sunrise
        (give both or neither).

    Returns
    -------
    numpy.ndarray
        float64, shape S + (H,) (S for a scalar hour), S the broadcast shape
        of the daily inputs.

    Raises
    ------
    ValueError
        An hour outside [0, 24), or only one of ``tmin_prev``/``tmax_prev``.

    References
    ----------
    .. [1] Parton, W.J. & Logan, J.A. (1981) A model for diurnal variation in
       soil and air temperature. Agricultural Meteorology 23:205-216.

    Examples
    --------
    >>> round(float(parton_logan_hourly(10.0, 30.0, 10.0, 12.0, 12.0)), 3)
    28.87
    """
    if (tmin_prev is None) != (tmax_prev is None):
        raise ValueError("give both tmin_prev and tmax_prev, or neither")
    if tmin_prev is None:
        tmin_prev, tmax_prev = tmin, tmax
    shape, (lo_p, hi_p, lo, hi, lo_n, dl, h) = _with_hours(
        [tmin_prev, tmax_prev, tmin, tmax, tmin_next, daylength_h], hours)
    if np.any((h < 0.0) | (h >= 24.0)):
        raise ValueError("hours must lie in [0, 24) solar hours for parton_logan_hourly")
    out = np.empty(h.size)
    _pl_loop(lo_p, hi_p, lo, hi, lo_n, dl, h, float(a), float(b), float(c), out)
    return out.reshape(shape)

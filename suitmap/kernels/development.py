"""Daily development (fraction of a generation per day) from Tmin/Tmax.

Development over a day is the daily mean of the development rate over the
day's assumed temperature curve, (1/24 h) ∫ r(T(t)) dt, for any curve of
``suitmap.kernels.rates``.  Two curves of the day: the symmetric sine of the
single-sine degree-day method, and Parton & Logan's day sine with a night
exponential decay.  Compiled Gauss-Legendre quadrature between the points
where T(t) crosses the limits of the rate curve (``rates.rate_limits``), so
the rate's kinks (zero outside its limits) fall on interval ends.  The
compiled integrals of one day, and the loop of the fast Parton-Logan path of
``suitmap.kernels.tables`` (the same day over a tabulated rate), live in
:mod:`suitmap.kernels.development_day` and are re-exported here.  No I/O.

References
----------
Baskerville & Emin (1969) Ecology 50:514-517; Parton & Logan (1981)
Agricultural Meteorology 23:205-216; Abramowitz & Stegun (1964) 25.4.29.
"""

from __future__ import annotations

from functools import lru_cache

import numba
import numpy as np
from numpy.typing import ArrayLike

from suitmap.kernels.development_day import _JIT, _pl_day, _sine_day
from suitmap.kernels.development_day import (  # noqa: F401  (re-exported: tables*.py call them as dev.<name>)
    _HALF_PI, _INLINE, _asin, _branch, _pl_daytime, _pl_night, _pl_tabulated_range, _rate,
    _s_cross, _sin, _unit)
from suitmap.kernels.diurnal import PARTON_LOGAN_150CM
from suitmap.kernels.rates import model_code, pack_params, rate_limits, rate_scalar  # noqa: F401

__all__ = ["DIURNAL", "DEFAULT_NODES", "daily_development", "development_block",
           "accumulate_generations", "quadrature_nodes"]

DIURNAL = ("sine", "parton_logan")
DEFAULT_NODES = 20
"""Gauss-Legendre nodes per interval: tests/test_development.py checks 1e-6
relative against scipy.integrate.quad for every curve (measured <= 2e-8;
4 nodes miss it)."""
_SINE, _PL = 0, 1
_POWER_HI = (1, 2)  # briere1, briere2: (t_high - T)^(1/m) at the upper limit
_CHUNK = 4096           # elements per parallel work item (an element is ~1 us)
_PARALLEL_MIN = 8192


@lru_cache(maxsize=16)
def quadrature_nodes(n: int) -> tuple[np.ndarray, np.ndarray]:
    """Nodes x and weights w, shape (3, n), with ∫_0^1 g ≈ Σ_k w[j, k] g(x[j, k]).

    Row 0: n-point Gauss-Legendre on [0, 1].  Rows 1, 2: the same composed
    with x = u² and x = u(2 − u), which cluster the nodes at the left or the
    right end (dx/du = 0 there).  An end behaviour (x − a)^β, e.g. the square
    root of the Briere-1 curve at t_high, becomes u^(2β + 1), which
    Gauss-Legendre integrates far better; an analytic integrand converges
    faster without, so rows 1, 2 are used only at a power-law end.

    References
    ----------
    .. [1] Abramowitz, M. & Stegun, I.A. (1964) Handbook of Mathematical
       Functions, 25.4.29 (Gauss-Legendre integration).
    """
    n = int(n)
    if n < 1:
        raise ValueError(f"quadrature needs n_nodes >= 1, got {n}")
    u, w = np.polynomial.legendre.leggauss(n)
    u = 0.5 * (u + 1.0)
    w = 0.5 * w
    x = np.stack([u, u * u, u * (2.0 - u)])
    wx = np.stack([w, 2.0 * u * w, 2.0 * (1.0 - u) * w])
    x.flags.writeable = False
    wx.flags.writeable = False
    return x, wx


# ------------------------------------------------------------------------ loops
@numba.njit(**_JIT)
def _fill_range(tmin: np.ndarray, tmax: np.ndarray, tnext: np.ndarray, dl: np.ndarray,
                out: np.ndarray, start: int, stop: int, diurnal: int, code: int,
                p: np.ndarray, lo: float, hi: float, coef: np.ndarray, x: np.ndarray,
                w: np.ndarray, power_hi: bool) -> None:
    if diurnal == _SINE:
        for i in range(start, stop):
            out[i] = _sine_day(np.float64(tmin[i]), np.float64(tmax[i]), lo, hi, code, p,
                               x, w, power_hi)
    else:
        a, b, c = coef[0], coef[1], coef[2]
        for i in range(start, stop):
            out[i] = _pl_day(np.float64(tmin[i]), np.float64(tmax[i]), np.float64(tnext[i]),
                             np.float64(dl[i]), a, b, c, lo, hi, code, p, x, w, power_hi)


@numba.njit(parallel=True, **_JIT)
def _fill_parallel(tmin: np.ndarray, tmax: np.ndarray, tnext: np.ndarray, dl: np.ndarray,
                   out: np.ndarray, diurnal: int, code: int, p: np.ndarray, lo: float,
                   hi: float, coef: np.ndarray, x: np.ndarray, w: np.ndarray,
                   power_hi: bool) -> None:
    n = out.size
    for k in numba.prange((n + _CHUNK - 1) // _CHUNK):
        start = k * _CHUNK
        _fill_range(tmin, tmax, tnext, dl, out, start, min(n, start + _CHUNK), diurnal,
                    code, p, lo, hi, coef, x, w, power_hi)


# ---------------------------------------------------------------------- helpers
def _diurnal_code(diurnal: str) -> int:
    if diurnal not in DIURNAL:
        raise ValueError(f"unknown diurnal curve {diurnal!r}; use one of: {', '.join(DIURNAL)}")
    return DIURNAL.index(diurnal)


def _pl_coefficients(coefficients: dict | None) -> np.ndarray:
    """(a, b, c) checked: a, b > 0 and −3a <= c <= a keep the day sine's
    phase within [−π/2, 3π/2] for every daylength."""
    co = dict(PARTON_LOGAN_150CM, **(coefficients or {}))
    if set(co) != {"a", "b", "c"}:
        raise ValueError(f"Parton-Logan coefficients are a, b, c; got {sorted(co)}")
    a, b, c = (float(co[k]) for k in ("a", "b", "c"))
    if not (a > 0.0 and b > 0.0 and -3.0 * a <= c <= a):
        raise ValueError(f"Parton-Logan coefficients need a > 0, b > 0, -3a <= c <= a; "
                         f"got a={a}, b={b}, c={c}")
    return np.array([a, b, c])


def development_block(tmin: np.ndarray, tmax: np.ndarray, code: int, packed: np.ndarray,
                      limits: tuple[float, float], *, diurnal: int = _SINE,
                      tmin_next: np.ndarray | None = None,
                      daylength: np.ndarray | None = None,
                      coefficients: np.ndarray | None = None, n_nodes: int = DEFAULT_NODES,
                      out: np.ndarray | None = None, parallel: bool = True) -> np.ndarray:
    """Exact daily development of same-shape arrays (the kernel entry point).

    ``code``/``packed`` from ``rates.model_code``/``rates.pack_params``,
    ``limits`` from ``rates.rate_limits``; ``diurnal`` the index in
    ``DIURNAL``; for Parton-Logan ``daylength`` (hours) is required,
    ``tmin_next`` defaults to ``tmin`` and ``coefficients`` to the 150-cm
    (a, b, c).  Inputs are C-contiguous float32/float64 (converted
    otherwise); returns float64, ``out`` if given.  Formulas: see
    ``daily_development``.

    References
    ----------
    As ``daily_development``.
    """
    shape = np.shape(tmin)
    arrays = [tmin, tmax]
    if diurnal == _PL:
        if daylength is None:
            raise ValueError("the Parton-Logan day needs daylength (hours), e.g. from "
                             "suitmap.kernels.diurnal.daylength")
        arrays += [tmin if tmin_next is None else tmin_next, daylength]
    flat = []
    for arr in np.broadcast_arrays(*[np.asarray(a) for a in arrays]):
        dt = arr.dtype if arr.dtype in (np.float32, np.float64) else np.float64
        flat.append(np.ascontiguousarray(arr, dtype=dt).reshape(-1))
    if flat[0].size != int(np.prod(shape)):
        raise ValueError(f"tmin {shape} and the other inputs must have the same shape")
    while len(flat) < 4:
        flat.append(flat[0])                  # placeholders, not read by the sine day
    coef = _pl_coefficients(None) if coefficients is None else np.asarray(coefficients, float)
    x, w = quadrature_nodes(n_nodes)
    if out is None:
        out = np.empty(shape, dtype=np.float64)
    o = out.reshape(-1)
    p = np.ascontiguousarray(packed, dtype=np.float64)
    lo, hi = float(limits[0]), float(limits[1])
    power_hi = code in _POWER_HI
    if parallel and o.size >= _PARALLEL_MIN:
        _fill_parallel(*flat, o, diurnal, code, p, lo, hi, coef, x, w, power_hi)
    else:
        _fill_range(*flat, o, 0, o.size, diurnal, code, p, lo, hi, coef, x, w, power_hi)
    return out


# ----------------------------------------------------------------------- public
def daily_development(tmin: ArrayLike, tmax: ArrayLike, model: str, params: dict, *,
                      diurnal: str = "sine", daylength: ArrayLike | None = None,
                      tmin_next: ArrayLike | None = None, coefficients: dict | None = None,
                      n_nodes: int = DEFAULT_NODES, parallel: bool = True) -> np.ndarray:
    """Development per day (fraction of a generation) from Tmin and Tmax.

    Parameters
    ----------
    tmin, tmax : array_like
        Daily minimum and maximum temperature, °C; broadcast together.
    model : str
        A rate curve of ``suitmap.kernels.rates.MODELS``.
    params : dict
        Its parameters (``rates.PARAMS[model]``).
    diurnal : {"sine", "parton_logan"}
        The day's temperature curve.  ``"sine"``: M + α sin φ over one
        period, M = (Tmax + Tmin)/2, α = (Tmax − Tmin)/2 (the single-sine
        assumption [1]_).  ``"parton_logan"`` [2]_: from sunrise to the next
        sunrise; day sine T = Tn + (Tx − Tn) sin[π(τ − c)/(Y + 2a)], τ hours
        after sunrise, then the night T = Tn' + (Ts − Tn') exp(−b n/Z), n
        hours after sunset, Z = 24 − Y, Ts the sunset temperature, Tn' the
        next day's minimum.
    daylength : array_like, optional
        Hours of daylight Y (clipped to [0, 24]), required for
        ``"parton_logan"``; e.g. ``suitmap.kernels.diurnal.daylength``.
    tmin_next : array_like, optional
        Next day's minimum, for ``"parton_logan"`` (default: ``tmin``).
    coefficients : dict, optional
        Parton-Logan ``a``, ``b``, ``c`` (default 1.86, 2.20, −0.17, air at
        150 cm [2]_).
    n_nodes : int
        Gauss-Legendre nodes per interval (see Notes).
    parallel : bool
        Use all numba threads for large inputs.

    Returns
    -------
    numpy.ndarray
        float64 development per day (1/day × 1 day), broadcast shape; NaN
        where an input used is NaN.

    Raises
    ------
    ValueError
        Unknown model, diurnal curve or bad parameters; no daylength for
        Parton-Logan.

    Notes
    -----
    Development per day = (1/24 h) ∫ r(T(t)) dt.  The rate r is zero outside
    its limits (lo, hi) (``rates.rate_limits``) and has a kink or a power
    singularity there, so the day is cut where T(t) crosses lo and hi: on
    the sine, at φ = asin((lo − M)/α) and asin((hi − M)/α), by symmetry
    over φ ∈ [−π/2, π/2] only; on the Parton-Logan day sine at the same
    asin points on its rising and falling parts, on the night at
    s = −ln[(θ − Tn')/(Ts − Tn')]/b.  Each interval gets ``n_nodes``
    Gauss-Legendre nodes, clustered at the hot end for the Briere curves'
    power law at t_high (``quadrature_nodes``).  A constant day gives r(T).  With
    the linear curve and the sine day this is single-sine degree-days with
    no upper threshold divided by the thermal constant.

    References
    ----------
    .. [1] Baskerville, G.L. & Emin, P. (1969) Rapid estimation of heat
       accumulation from maximum and minimum temperatures. Ecology
       50:514-517.
    .. [2] Parton, W.J. & Logan, J.A. (1981) A model for diurnal variation in
       soil and air temperature. Agricultural Meteorology 23:205-216.
    .. [3] Abramowitz, M. & Stegun, I.A. (1964) Handbook of Mathematical
       Functions, 25.4.29.

    Examples
    --------
    >>> float(daily_development(20.0, 20.0, "linear", {"t_low": 10.0,
    ...                                                 "thermal_constant": 200.0}))
    0.05
    """
    code = model_code(model)
    packed = pack_params(code, params)
    limits = rate_limits(code, params)
    d = _diurnal_code(diurnal)
    coef = _pl_coefficients(coefficients)
    inputs = [np.asarray(tmin), np.asarray(tmax)]
    if d == _PL:
        if daylength is None:
            raise ValueError("diurnal='parton_logan' needs daylength (hours), e.g. from "
                             "suitmap.kernels.diurnal.daylength")
        inputs += [inputs[0] if tmin_next is None else np.asarray(tmin_next),
                   np.asarray(daylength)]
    scalar = all(a.ndim == 0 for a in inputs)
    b = np.broadcast_arrays(*inputs)
    out = development_block(b[0], b[1], code, packed, limits, diurnal=d,
                            tmin_next=b[2] if d == _PL else None,
                            daylength=b[3] if d == _PL else None, coefficients=coef,
                            n_nodes=n_nodes, parallel=parallel)
    return out[()] if scalar else out


def accumulate_generations(daily_dev: ArrayLike, axis: int = -1,
                           tol: float = 1e-9) -> tuple[np.ndarray, np.ndarray]:
    """Season total of daily development and the day it first reaches 1.

    Parameters
    ----------
    daily_dev : array_like
        Development per day (fraction of a generation), days along ``axis``.
    axis : int
        The time axis.
    tol : float
        The running total counts as 1 from 1 − ``tol`` (so rounding in e.g.
        ten days of 0.1 does not put the day off by one).

    Returns
    -------
    total : numpy.ndarray
        Sum over ``axis`` (generations per season, fractional), the shape
        of ``daily_dev`` without ``axis``; NaN if any day is NaN.
    first_day : numpy.ndarray
        1-based index along ``axis`` of the first day whose running total
        reaches 1 (float64), NaN if it never does.  A NaN day ends the
        search: days after it are not counted.

    References
    ----------
    Common practice: development as the sum of daily rates (rate summation),
    e.g. Zalom et al. (1983) University of California DANR Leaflet 21373.
    """
    dev = np.moveaxis(np.asarray(daily_dev, dtype=np.float64), axis, -1)
    if dev.shape[-1] == 0:
        raise ValueError("accumulate_generations needs at least one day along axis")
    running = np.cumsum(dev, axis=-1)
    total = running[..., -1].copy()
    reached = running >= 1.0 - tol
    first = np.where(reached.any(axis=-1), np.argmax(reached, axis=-1) + 1.0, np.nan)
    return total, first

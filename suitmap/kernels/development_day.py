"""Compiled integrals of one day: the rate over the day's temperature curve.

The numba half of :mod:`suitmap.kernels.development` (which re-exports every
name here and holds the quadrature nodes, the array loops and the public
functions).  Exact path: the integral of ``rates.rate_scalar`` over a sine
day (``_sine_day``) or a Parton & Logan day (``_pl_day``: day sine plus
night exponential decay), cut where T(t) crosses the limits of the rate
curve, each piece by Gauss-Legendre nodes passed in as (x, w) of
``development.quadrature_nodes``.  The fast Parton-Logan path of
``suitmap.kernels.tables`` (``_pl_tabulated_range``): the same day over a
1-D rate table, sin and asin by polynomials.  No I/O.

References
----------
Baskerville & Emin (1969) Ecology 50:514-517; Parton & Logan (1981)
Agricultural Meteorology 23:205-216; Abramowitz & Stegun (1964) 25.4.29.
"""

from __future__ import annotations

import math

import numba
import numpy as np

from suitmap.kernels.degree_days import _asin, _sin
from suitmap.kernels.rates import rate_scalar

_HALF_PI = 0.5 * math.pi
_INLINE = dict(cache=True, nogil=True, error_model="numpy", inline="always")
_JIT = dict(cache=True, nogil=True, error_model="numpy")  # nogil: dask threads run kernels at once


# ---------------------------------------------------------------- scalar parts
@numba.njit(**_INLINE)
def _unit(x: float) -> float:
    return 1.0 if x > 1.0 else (-1.0 if x < -1.0 else x)


@numba.njit(**_JIT)
def _branch(base: float, amp: float, pa: float, pb: float, lo: float, hi: float,
            code: int, p: np.ndarray, x: np.ndarray, w: np.ndarray, power_hi: bool) -> float:
    """∫ r(base + amp·sin ψ) dψ over [pa, pb] ⊂ [−π/2, π/2] (sin increasing),
    restricted to lo < T < hi where the rate can be non-zero; nodes
    clustered at the hot end if ``power_hi`` (a power law at hi)."""
    if amp == 0.0:
        r = rate_scalar(code, p[0], p[1], p[2], p[3], p[4], p[5], base)
        return (pb - pa) * r if pb > pa else 0.0
    s_lo = math.asin(_unit((lo - base) / amp))
    s_hi = math.asin(_unit((hi - base) / amp))
    rising = amp > 0.0
    a = max(pa, s_lo if rising else s_hi)
    b = min(pb, s_hi if rising else s_lo)
    if not b > a:
        return 0.0
    # A power law at hi: cluster the nodes at the hot end (where hi is
    # crossed, or nearly reached at the top of the sine).
    rule = (2 if rising else 1) if power_hi else 0
    width = b - a
    total = 0.0
    for k in range(x.shape[1]):
        t = base + amp * math.sin(a + width * x[rule, k])
        total += w[rule, k] * rate_scalar(code, p[0], p[1], p[2], p[3], p[4], p[5], t)
    return width * total


@numba.njit(**_JIT)
def _sine_day(tmin: float, tmax: float, lo: float, hi: float, code: int, p: np.ndarray,
              x: np.ndarray, w: np.ndarray, power_hi: bool) -> float:
    """Daily mean rate over M + α sin φ, φ over one period (Baskerville & Emin
    1969): by symmetry (1/π) ∫_{−π/2}^{π/2} r(M + α sin φ) dφ."""
    if tmin != tmin or tmax != tmax:
        return math.nan
    mean = 0.5 * (tmin + tmax)
    amp = 0.5 * abs(tmax - tmin)
    return _branch(mean, amp, -_HALF_PI, _HALF_PI, lo, hi, code, p, x, w, power_hi) / math.pi


@numba.njit(**_JIT)
def _pl_daytime(tn: float, tx: float, y: float, a: float, c: float, lo: float, hi: float,
                code: int, p: np.ndarray, x: np.ndarray, w: np.ndarray,
                power_hi: bool) -> float:
    """∫ r dt (rate × hours) from sunrise to sunset of the Parton & Logan
    day T = Tn + (Tx − Tn) sin ψ, ψ = π(τ − c)/(Y + 2a), τ ∈ [0, Y] hours
    after sunrise; split where sin ψ turns (ψ = π/2)."""
    scale = (y + 2.0 * a) / math.pi           # hours per radian
    p0 = -math.pi * c / (y + 2.0 * a)
    p1 = math.pi * (y - c) / (y + 2.0 * a)
    amp = tx - tn
    total = 0.0
    if p0 < _HALF_PI:                          # rising part
        total += _branch(tn, amp, p0, min(p1, _HALF_PI), lo, hi, code, p, x, w, power_hi)
    if p1 > _HALF_PI:                          # falling part, mirrored: sin(π − ψ)
        total += _branch(tn, amp, math.pi - p1, math.pi - max(p0, _HALF_PI), lo, hi,
                         code, p, x, w, power_hi)
    return scale * total


@numba.njit(**_JIT)
def _s_cross(theta: float, tnext: float, k: float, b: float) -> float:
    """s where tnext + k·exp(−b s) = theta (+inf if never)."""
    q = (theta - tnext) / k
    return -math.log(q) / b if q > 0.0 else math.inf


@numba.njit(**_JIT)
def _pl_night(ts: float, tnext: float, b: float, lo: float, hi: float, code: int,
              p: np.ndarray, x: np.ndarray, w: np.ndarray, power_hi: bool) -> float:
    """∫_0^1 r(Tn' + (Ts − Tn') exp(−b s)) ds: the night, s = hours after
    sunset / night length, from the sunset temperature toward Tn'."""
    k = ts - tnext
    if k == 0.0:
        return rate_scalar(code, p[0], p[1], p[2], p[3], p[4], p[5], tnext)
    s_lo = _s_cross(lo, tnext, k, b)
    s_hi = _s_cross(hi, tnext, k, b)
    sa = max(0.0, s_hi if k > 0.0 else s_lo)
    sb = min(1.0, s_lo if k > 0.0 else s_hi)
    if not sb > sa:
        return 0.0
    rule = (1 if k > 0.0 else 2) if power_hi else 0   # the hot end, as in _branch
    width = sb - sa
    total = 0.0
    for i in range(x.shape[1]):
        t = tnext + k * math.exp(-b * (sa + width * x[rule, i]))
        total += w[rule, i] * rate_scalar(code, p[0], p[1], p[2], p[3], p[4], p[5], t)
    return width * total


@numba.njit(**_JIT)
def _pl_day(tn: float, tx: float, tnext: float, daylength: float, a: float, b: float,
            c: float, lo: float, hi: float, code: int, p: np.ndarray, x: np.ndarray,
            w: np.ndarray, power_hi: bool) -> float:
    """Daily mean rate from sunrise to the next sunrise (Parton & Logan 1981)."""
    if tn != tn or tx != tx or tnext != tnext or daylength != daylength:
        return math.nan
    y = 0.0 if daylength < 0.0 else (24.0 if daylength > 24.0 else daylength)
    z = 24.0 - y
    total = _pl_daytime(tn, tx, y, a, c, lo, hi, code, p, x, w, power_hi)
    if z > 0.0:
        ts = tn + (tx - tn) * math.sin(math.pi * (y - c) / (y + 2.0 * a))   # at sunset
        total += z * _pl_night(ts, tnext, b, lo, hi, code, p, x, w, power_hi)
    return total / 24.0


# ------------------------------------------- Parton-Logan over a rate table
# The fast path of suitmap.kernels.tables: the same day as _pl_day, but the
# rate read from a 1-D table (linear interpolation), sin and asin by
# polynomials (degree_days._sin, _asin; no calls in the loop).


@numba.njit(**_INLINE)
def _rate(t: float, rt: np.ndarray, rax: np.ndarray) -> float:
    """Rate from the 1-D table: rax = (t0, 1/h, nodes - 2), rt = (r_k, r_k+1 - r_k)."""
    u = (t - rax[0]) * rax[1]
    u = u if u > 0.0 else 0.0
    k = min(np.int64(u), np.int64(rax[2]))
    return rt[2 * k] + (u - k) * rt[2 * k + 1]


@numba.njit(**_JIT)
def _pl_tabulated_range(a: np.ndarray, b: np.ndarray, c: np.ndarray, d: np.ndarray,
                        out: np.ndarray, start: int, stop: int, rt: np.ndarray,
                        rax: np.ndarray, fpar: np.ndarray, gx: np.ndarray, gw: np.ndarray,
                        power_hi: bool) -> int:
    """The Parton-Logan day of ``_pl_day`` over the tabulated rate: the day
    sine split at π/2 and at the asin crossings of the limits; the night in
    q = exp(−b n/Z), where T = Tn' + (Ts − Tn') q is linear, in two pieces
    [e^−b, e^−b/2], [e^−b/2, 1] cut at the limits; Gauss-Legendre rows of
    (gx, gw) as in ``quadrature_nodes``.  +inf where an input is outside
    (rax[3], rax[4]) (to compute exactly), NaN for NaN input; returns the
    number of +inf."""
    lo, hi, pa, pb, pc = fpar[2], fpar[3], fpar[4], fpar[5], fpar[6]
    eb, ebh = math.exp(-pb), math.exp(-0.5 * pb)
    cnt = 0
    for i in range(start, stop):
        x, y, w, dl = np.float64(a[i]), np.float64(b[i]), np.float64(c[i]), np.float64(d[i])
        yl = min(max(dl, 0.0), 24.0) if dl == dl else 0.0
        g = yl + 2.0 * pa
        p0 = -math.pi * pc / g
        p1 = math.pi * (yl - pc) / g
        am = y - x
        am = am if am != 0.0 else 1e-300
        s_lo = _asin(_unit((lo - x) / am))
        s_hi = _asin(_unit((hi - x) / am))
        lo_psi = s_lo if am > 0.0 else s_hi
        hi_psi = s_hi if am > 0.0 else s_lo
        ra = max(p0, lo_psi)                                  # rising part
        rw = max(0.0, min(min(p1, _HALF_PI), hi_psi) - ra)
        fa = max(math.pi - p1, lo_psi)                        # falling part, mirrored
        fw = max(0.0, min(math.pi - max(p0, _HALF_PI), hi_psi) - fa)
        k = x + am * _sin(p1 if p1 <= _HALF_PI else math.pi - p1) - w    # Ts − Tn'
        k = k if k != 0.0 else 1e-300
        qa = (lo - w) / k if k > 0.0 else (hi - w) / k
        qb = (hi - w) / k if k > 0.0 else (lo - w) / k
        n1a = max(eb, qa)
        n1w = max(0.0, min(ebh, qb) - n1a)
        n2a = max(ebh, qa)
        n2w = max(0.0, min(1.0, qb) - n2a)
        rd = 2 if power_hi else 0                   # nodes clustered at the hot end
        rn = (2 if k > 0.0 else 1) if power_hi else 0
        day = 0.0
        night = 0.0
        for j in range(gx.shape[1]):
            u = gx[rd, j]
            day += gw[rd, j] * (rw * _rate(x + am * _sin(ra + rw * u), rt, rax)
                                + fw * _rate(x + am * _sin(fa + fw * u), rt, rax))
            q1 = n1a + n1w * gx[rn, j]
            q2 = n2a + n2w * gx[rn, j]
            night += gw[rn, j] * (n1w * _rate(w + k * q1, rt, rax) / q1
                                  + n2w * _rate(w + k * q2, rt, rax) / q2)
        v = (g / math.pi * day + (24.0 - yl) / pb * night) / 24.0
        inside = ((x >= rax[3]) & (x < rax[4]) & (y >= rax[3]) & (y < rax[4])
                  & (w >= rax[3]) & (w < rax[4]))
        v = (v if inside else math.inf) + 0.0 * (x + y + w + dl)
        out[i] = v
        cnt += v == math.inf
    return cnt

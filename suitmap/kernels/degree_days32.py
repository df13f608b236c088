"""Sine degree-days in float32 arithmetic: the fast strategy of the sine methods.

The single and double sine of ``degree_days`` (Baskerville & Emin 1969;
Zalom et al. 1983, Table 5) with every operation in float32, so that one
AVX-512 instruction works on sixteen days instead of eight; the square
roots and divisions that bound the float64 loops are also cheaper in
float32.  The result is written as float64.

Written to keep float32 accurate:

* every quantity near a threshold comes from the distances of the
  threshold to the day's extremes, ``up = hi - T`` and ``dn = T - lo``:
  s = (T - M)/α = (dn - up)/(2α), cos θ = sqrt(up · dn)/α and, for |s| > 1/2,
  the arcsine's (1 - |s|)/2 = min(up, dn)/(2α).  The float64 kernels form
  1 - s² from s, which in float32 would lose half the digits near s = ±1.
* the arcsine is asin x = x + x z q(z), z = x², |x| <= 1/2, with q a
  least-squares polynomial of degree 4 fitted on 400 Chebyshev nodes of
  [0, 1/4] to (asin x - x)/(x z) in float64; |fit error| <= 1.7e-8
  relative, below float32 rounding (6e-8).  For |x| > 1/2,
  asin|x| = π/2 - 2 asin sqrt((1 - |x|)/2).

Error: a few float32 roundings of terms up to (M - L) π, about 1e-5 °C·day
at 30 °C days against the float64 closed form of the same inputs
(``tests/test_degree_days32.py``).  float64 input is rounded to float32
first; on days of tiny range across a threshold, whose value with the
vertical cutoff changes by (U - L)/α per °C, that rounding alone can move
the value by ~1e-3 °C·day (climate data are float32 anyway).
No I/O.

References
----------
Baskerville, G.L. & Emin, P. (1969) Rapid estimation of heat accumulation
from maximum and minimum temperatures. Ecology 50:514-517.
Zalom, F.G., Goodell, P.B., Wilson, L.T., Barnett, W.W. & Bentley, W.J.
(1983) Degree-days: the calculation and use of heat units in pest
management. University of California DANR Leaflet 21373.
"""

from __future__ import annotations

import math

import numba
import numpy as np

from suitmap.kernels._day_parts import _HORIZONTAL, _INLINE, _JIT, _VERTICAL

__all__ = ["sine_degree_days32", "asin32"]

_F = np.float32
# q(z) of asin x = x + x z q(z): the fit described in the module notes
_Q0, _Q1, _Q2, _Q3, _Q4 = (_F(0.16666673123836517), _F(0.07498808950185776),
                           _F(0.045010700821876526), _F(0.02649427019059658),
                           _F(0.03820646554231644))
_ZERO, _HALF, _ONE, _TWO = _F(0.0), _F(0.5), _F(1.0), _F(2.0)
_HP = _F(0.5 * math.pi)
_IPI = _F(1.0 / math.pi)
_NAN = _F(math.nan)
_CHUNK = 16384          # elements per parallel work item
_PARALLEL_MIN = 65536   # below this many elements the serial loop is used
_SINGLE, _DOUBLE = 4, 5  # degree_days.METHODS indices of the sine methods


@numba.njit(**_INLINE)
def _asin_small(r: np.float32, z: np.float32) -> np.float32:
    """asin r for 0 <= r <= 1/2, z = r * r (Horner's rule)."""
    return r + r * z * (_Q0 + z * (_Q1 + z * (_Q2 + z * (_Q3 + z * _Q4))))


@numba.njit(**_INLINE)
def _asin(s: np.float32, gap: np.float32) -> np.float32:
    """asin s for s in [-1, 1], given gap = (1 - |s|)/2 (used where |s| > 1/2;
    the caller forms it without cancellation): asin|s| = π/2 - 2 asin √gap."""
    a = abs(s)
    big = a > _HALF
    z = gap if big else a * a
    r = math.sqrt(z) if big else a
    p = _asin_small(r, z)
    th = _HP - _TWO * p if big else p
    return th if s >= _ZERO else -th


@numba.njit(**_INLINE)
def _angle(lo: np.float32, hi: np.float32, t: np.float32, inv: np.float32
           ) -> tuple[np.float32, np.float32]:
    """θ = asin(clip((t - M)/α, -1, 1)) and cos θ of the sine from lo to hi
    (inv = 1/α), from the distances of t to hi and lo."""
    span = hi - lo
    up = hi - t
    dn = t - lo
    up = up if up > _ZERO else _ZERO
    dn = dn if dn > _ZERO else _ZERO
    up = up if up < span else span          # t = +-inf: 0 * span, not 0 * inf
    dn = dn if dn < span else span
    s = _HALF * (dn - up) * inv
    s = s if s < _ONE else _ONE
    s = s if s > -_ONE else -_ONE
    c = math.sqrt(up * dn) * inv
    near = up if up < dn else dn
    return _asin(s, _HALF * near * inv), c


@numba.njit(**_INLINE)
def _parts(t1: np.float32, t2: np.float32, lower: np.float32, upper: np.float32
           ) -> tuple[np.float32, np.float32, np.float32]:
    """(h, v, a) of a sine day between t1 and t2 (either order), float32:
    the formulas of ``_day_parts._sine_parts`` and ``_settle``."""
    lo = t1 if t1 < t2 else t2
    hi = t2 if t1 < t2 else t1
    mean = _HALF * (lo + hi)
    amp = _HALF * (hi - lo)
    inv = _ONE / amp
    th1, c1 = _angle(lo, hi, lower, inv)
    th2, c2 = _angle(lo, hi, upper, inv)
    v = ((mean - lower) * (th2 - th1) + amp * (c1 - c2)) * _IPI
    crosses = hi > upper
    rest = _HP - th2
    h = v + (upper - lower) * rest * _IPI if crosses else v
    a = ((mean - upper) * rest + amp * c2) * _IPI if crosses else _ZERO
    hot = lo >= upper
    cold = hi <= lower
    inside = lo >= lower and hi <= upper
    h = mean - lower if inside else (_ZERO if cold else (upper - lower if hot else h))
    v = mean - lower if inside else (_ZERO if cold or hot else v)
    a = _ZERO if inside or cold else (mean - upper if hot else a)
    return h, v, a


@numba.njit(**_INLINE)
def _choose(h: np.float32, v: np.float32, a: np.float32, cutoff: int) -> np.float32:
    return h if cutoff == _HORIZONTAL else (v if cutoff == _VERTICAL else max(v, h - a))


_BLOCK = 512            # values per float32 pass (2 KB, in L1): see _single


# one loop per method, the cutoff chosen per value: measured as fast as one
# loop per cutoff (unlike the float64 double sine), at a third of the compile time
@numba.njit(**_JIT)
def _single(tmin, tmax, out, lower, upper, cutoff) -> None:
    """A block at a time into a float32 buffer, then widened into out: with a
    float64 store in the loop LLVM vectorises eight lanes, not sixteen
    (measured 1.5-2x)."""
    buf = np.empty(_BLOCK, np.float32)
    for s in range(0, out.size, _BLOCK):
        m = min(_BLOCK, out.size - s)
        a, b = tmin[s:s + m], tmax[s:s + m]
        for i in range(m):
            x, y = _F(a[i]), _F(b[i])
            h, v, q = _parts(x, y, lower, upper)
            r = _choose(h, v, q, cutoff)
            buf[i] = r if x == x and y == y else _NAN
        o = out[s:s + m]
        for i in range(m):
            o[i] = buf[i]


@numba.njit(**_JIT)
def _double(tmin, tmax, tnext, out, lower, upper, cutoff) -> None:
    buf = np.empty(_BLOCK, np.float32)
    for s in range(0, out.size, _BLOCK):
        m = min(_BLOCK, out.size - s)
        a, b, c = tmin[s:s + m], tmax[s:s + m], tnext[s:s + m]
        for i in range(m):
            x, y, w = _F(a[i]), _F(b[i]), _F(c[i])
            h1, v1, a1 = _parts(x, y, lower, upper)
            h2, v2, a2 = _parts(w, y, lower, upper)
            r = _HALF * _choose(h1 + h2, v1 + v2, a1 + a2, cutoff)
            buf[i] = r if x == x and y == y and w == w else _NAN
        o = out[s:s + m]
        for i in range(m):
            o[i] = buf[i]


@numba.njit(**_JIT)
def _range32(tmin, tmax, tnext, out, start, stop, lower, upper, method, cutoff) -> None:
    """out[start:stop] of flat arrays (slices from 0: no wraparound checks)."""
    a, b, c, o = tmin[start:stop], tmax[start:stop], tnext[start:stop], out[start:stop]
    if method == _SINGLE:
        _single(a, b, o, lower, upper, cutoff)
    else:
        _double(a, b, c, o, lower, upper, cutoff)


@numba.njit(parallel=True, **_JIT)
def _parallel32(tmin, tmax, tnext, out, lower, upper, method, cutoff) -> None:
    n = out.size
    for k in numba.prange((n + _CHUNK - 1) // _CHUNK):
        s = k * _CHUNK
        _range32(tmin, tmax, tnext, out, s, min(n, s + _CHUNK), lower, upper, method, cutoff)


@numba.njit(**_JIT)
def _asin_array(x, out) -> None:
    for i in range(x.size):
        s = x[i]
        out[i] = _asin(s, _HALF * (_ONE - abs(s)))


def asin32(x: np.ndarray) -> np.ndarray:
    """The float32 arcsine of the sine kernels, elementwise over ``x`` in [-1, 1].

    Parameters
    ----------
    x : numpy.ndarray
        Values in [-1, 1], converted to float32.

    Returns
    -------
    numpy.ndarray
        float32 arcsine, same shape.

    References
    ----------
    .. [1] Abramowitz, M. & Stegun, I.A. (1964) Handbook of Mathematical
       Functions, section 4.4 (inverse circular functions; the power series
       of the arcsine is what the polynomial is fitted to).
    """
    x = np.ascontiguousarray(x, dtype=np.float32)
    out = np.empty_like(x)
    _asin_array(x.reshape(-1), out.reshape(-1))
    return out


def sine_degree_days32(tmin: np.ndarray, tmax: np.ndarray, tmin_next: np.ndarray | None,
                       lower: float, upper: float, method: int, cutoff: int,
                       out: np.ndarray, *, parallel: bool = True) -> np.ndarray:
    """Single or double sine degree-days in float32 arithmetic into ``out``.

    Parameters
    ----------
    tmin, tmax, tmin_next : numpy.ndarray
        Flat arrays of one size, float32 (C-contiguous float32 is read
        without a copy; anything else is converted to it first); ``tmin_next`` the next day's minimum
        for the double sine, None for the single sine.
    lower, upper : float
        Thresholds (°C); ``upper`` may be ``np.inf``.
    method, cutoff : int
        Index in ``degree_days.METHODS`` (4 single sine, 5 double sine) and
        ``degree_days.CUTOFFS``.
    out : numpy.ndarray
        Flat C-contiguous float64 array of the size.
    parallel : bool
        All numba threads (default) or the calling thread only.

    Returns
    -------
    numpy.ndarray
        ``out``: degree-days, NaN where an input used is NaN.

    References
    ----------
    .. [1] Baskerville & Emin (1969) Ecology 50:514-517.
    .. [2] Zalom et al. (1983) University of California DANR Leaflet 21373,
       Table 5.
    """
    if method not in (_SINGLE, _DOUBLE):
        raise ValueError(f"the float32 kernel covers the sine methods (4, 5), not {method}")
    a, b = (np.ascontiguousarray(x, dtype=np.float32) for x in (tmin, tmax))  # one compiled type
    c = a if tmin_next is None or method == _SINGLE else np.ascontiguousarray(
        tmin_next, dtype=np.float32)
    m = _SINGLE if tmin_next is None else method
    lo, up = _F(lower), _F(upper)
    if parallel and out.size >= _PARALLEL_MIN:
        _parallel32(a, b, c, out, lo, up, m, cutoff)
    else:
        _range32(a, b, c, out, 0, out.size, lo, up, m, cutoff)
    return out

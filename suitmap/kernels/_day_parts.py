"""Compiled per-day parts of the daily degree-day methods.

Small numba functions, inlined into the loops of ``suitmap.kernels.degree_days``
(and of the modules that import them from there): a vectorisable sine and arcsine,
and the (h, v, a) of a sine, triangle or constant day — h the degree-days
with the horizontal cutoff, v with the vertical cutoff, a the degree-days
above the upper threshold.  Written without early returns (every value
computed, then chosen with conditional expressions) so that LLVM vectorises
the loops; with ``error_model="numpy"`` a division by zero gives inf/nan in
a value that is never chosen.  No I/O.

numba's on-disk cache keys each compiled loop on the content of the file
that defines the loop, not of this one: after changing this module, clear
the numba files (``*.nbi``, ``*.nbc``) in ``__pycache__`` of the modules
whose loops inline it, or they keep running the old code.

References
----------
Baskerville & Emin (1969) Ecology 50:514-517; Zalom et al. (1983) University
of California DANR Leaflet 21373; Estrin (1960) Proc. Western Joint Computer
Conference 17:33-40 (the polynomial evaluation scheme).
"""

from __future__ import annotations

import math

import numba
from numba import types
from numba.extending import intrinsic

_JIT = dict(cache=True, nogil=True, error_model="numpy")  # nogil: dask threads run kernels at once
_INLINE = dict(_JIT, inline="always")
_HALF_PI = 0.5 * math.pi
_INV_PI = 1.0 / math.pi
_HORIZONTAL, _VERTICAL, _INTERMEDIATE = range(3)   # indices in degree_days.CUTOFFS

# asin(x) = x + x*z*Q(z), z = x*x, |x| <= 1/2: least-squares Chebyshev fit of
# degree 11 on [0, 1/4] to the Taylor series of asin, sum over k of
# C(2k, k) x^(2k+1) / (4^k (2k+1)), converted to powers of z.  |error| <= 2.9e-16
# against an extended-precision arcsine on [-1, 1] (checked in
# tests/test_degree_days.py and tests/test_degree_days_fastpath.py).
_Q = (0.16666666666666644, 0.07500000000022296, 0.04464285710119162,
      0.03038194749989369, 0.022372043512243936, 0.017355335155521026,
      0.01392879278779328, 0.011881831750882983, 0.007772895784963765,
      0.01612412297421581, -0.010896805266938904, 0.028275669163721096)
_Q0, _Q1, _Q2, _Q3, _Q4, _Q5, _Q6, _Q7, _Q8, _Q9, _Q10, _Q11 = _Q


@intrinsic
def _fma(typingctx, a, b, c):
    """a * b + c rounded once (llvm.fma); vectorises to vfmadd."""
    sig = types.float64(types.float64, types.float64, types.float64)

    def codegen(context, builder, signature, args):
        return builder.fma(*args)
    return sig, codegen


# Taylor series of sin, sum_k (-1)^k x^(2k+1)/(2k+1)!, k = 0..9
_SIN = tuple((-1.0) ** k / math.factorial(2 * k + 1) for k in range(10))
_S0, _S1, _S2, _S3, _S4, _S5, _S6, _S7, _S8, _S9 = _SIN


@numba.njit(**_INLINE)
def _sin(x: float) -> float:
    """sin x for |x| <= pi/2, vectorisable: the Taylor series to x^19
    (remainder <= (pi/2)^21/21! = 2.6e-16), Horner's rule."""
    z = x * x
    return x * (_S0 + z * (_S1 + z * (_S2 + z * (_S3 + z * (_S4 + z * (_S5 + z * (
        _S6 + z * (_S7 + z * (_S8 + z * _S9)))))))))


@numba.njit(**_INLINE)
def _asin(x: float) -> float:
    """Arcsine of x in [-1, 1], vectorisable; asin(+-1) = +-pi/2 exactly.

    For |x| > 1/2, asin|x| = pi/2 - 2 asin(sqrt((1 - |x|)/2)).  Q(z) is
    evaluated by Estrin's scheme with fused multiply-adds: depth 4 instead
    of the 11 dependent steps of Horner's rule, which is what limits the
    sine loops (measured in benchmarks/bench_kernels.py).

    References
    ----------
    .. [1] Estrin, G. (1960) Organization of computer systems: the fixed plus
       variable structure computer. Proc. Western Joint Computer Conference
       17:33-40.
    """
    ax = abs(x)
    big = ax > 0.5
    z = 0.5 * (1.0 - ax) if big else ax * ax
    r = math.sqrt(z) if big else ax
    z2 = z * z
    z4 = z2 * z2
    b0 = _fma(_fma(_Q3, z, _Q2), z2, _fma(_Q1, z, _Q0))
    b1 = _fma(_fma(_Q7, z, _Q6), z2, _fma(_Q5, z, _Q4))
    b2 = _fma(_fma(_Q11, z, _Q10), z2, _fma(_Q9, z, _Q8))
    q = _fma(b2, z4 * z4, _fma(b1, z4, b0))
    p = _fma(r * z, q, r)
    res = _fma(-2.0, p, _HALF_PI) if big else p
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
def _sine_common(t1: float, t2: float, lower: float, upper: float
                 ) -> tuple[float, float, float, float, float, float, float]:
    """lo, hi, M, alpha, theta2, cos(theta2) and v of a sine day.

    Baskerville & Emin (1969); cases of Zalom et al. (1983), Table 5, in one
    expression: theta = asin(clip((threshold - M)/alpha, -1, 1)).  Measured
    slower: a reciprocal of alpha instead of the two divisions, and
    cos(theta) as a polynomial in the arcsine's z instead of the square root.
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
    return lo, hi, mean, amp, th2, c2, v


@numba.njit(**_INLINE)
def _sine_parts(t1: float, t2: float, lower: float, upper: float) -> tuple[float, float, float]:
    """(h, v, a) of a sine day between ``t1`` and ``t2`` (either order).

    Baskerville & Emin (1969); Zalom et al. (1983), Table 5.  With a constant
    cutoff the caller's ``_finish`` lets LLVM drop the parts it does not use.
    """
    lo, hi, mean, amp, th2, c2, v = _sine_common(t1, t2, lower, upper)
    crosses = hi > upper                         # never true for upper = inf
    rest = _HALF_PI - th2
    h = v + (upper - lower) * rest * _INV_PI if crosses else v
    a = ((mean - upper) * rest + amp * c2) * _INV_PI if crosses else 0.0
    return _settle(lo, hi, h, v, a, lower, upper)


@numba.njit(**_INLINE)
def _sine_gv(t1: float, t2: float, lower: float, upper: float) -> tuple[float, float]:
    """(h - a, v) of a sine day: the intermediate cutoff is max(v, h - a).

    h - a in one expression, v + [(2U - L - M)(pi/2 - theta2) - alpha
    cos(theta2)]/pi where the day crosses U (measured 10 % faster for the
    double sine than h and a apart).  Zalom et al. (1983), Table 5.
    """
    lo, hi, mean, amp, th2, c2, v = _sine_common(t1, t2, lower, upper)
    crosses = hi > upper
    g = v + ((2.0 * upper - lower - mean) * (_HALF_PI - th2) - amp * c2) * _INV_PI
    h, v, a = _settle(lo, hi, g if crosses else v, v, 0.0, lower, upper)
    return h - a, v


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

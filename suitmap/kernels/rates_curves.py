"""The compiled development-rate curves and their array loops.

The numba half of :mod:`suitmap.kernels.rates` (which re-exports every name
here and holds validation, packing, the public functions and the quantities
derived from a curve): the model codes (index in ``MODELS``), one scalar
function per curve, ``rate_scalar`` dispatching on the code with six packed
parameters (callable from other compiled kernels), and the serial and
parallel loops behind ``rates.rate_array``.  Parameters are not checked here.
No I/O.

References
----------
Logan et al. (1976) Environmental Entomology 5:1133-1140; Schoolfield, Sharpe
& Magnuson (1981) Journal of Theoretical Biology 88:719-731; Lactin et al.
(1995) Environmental Entomology 24:68-75; Briere et al. (1999) Environmental
Entomology 28:22-29 (full citations in ``rates.development_rate``).  Linear
degree-day model: common practice.
"""

from __future__ import annotations

import math

import numba
import numpy as np

__all__ = ["MODELS", "R_CAL", "KELVIN", "rate_scalar"]

MODELS = ("linear", "briere1", "briere2", "lactin1", "lactin2", "logan6",
          "sharpe_schoolfield")
R_CAL = 1.987          # gas constant, cal mol-1 K-1 (Schoolfield et al. 1981)
KELVIN = 273.15        # °C -> K
_LINEAR, _BRIERE1, _BRIERE2, _LACTIN1, _LACTIN2, _LOGAN6, _SHARPE = range(7)
_CHUNK = 16384          # elements per parallel work item
_PARALLEL_MIN = 65536   # below this many elements the serial loop is used
_JIT = dict(cache=True, nogil=True, error_model="numpy")  # nogil: dask threads run kernels at once


# ------------------------------------------------------------- scalar curves
@numba.njit(**_JIT)
def _linear(t: float, t_low: float, k: float) -> float:
    """(T - t_low)/K above t_low, else 0; no upper limit."""
    return (t - t_low) / k if t > t_low else 0.0


@numba.njit(**_JIT)
def _briere(t: float, a: float, t_low: float, t_high: float, inv_m: float) -> float:
    """a T (T - t_low) (t_high - T)^(1/m) on (t_low, t_high), clipped at 0
    (negative on (t_low, 0] when t_low < 0); Briere-1 is inv_m = 1/2."""
    if t > t_low and t < t_high:
        d = t_high - t
        r = a * t * (t - t_low) * (math.sqrt(d) if inv_m == 0.5 else d ** inv_m)
        return r if r > 0.0 else 0.0
    return 0.0


@numba.njit(**_JIT)
def _lactin_core(t: float, rho: float, t_high: float, delta: float) -> float:
    """exp(rho T) - exp(rho t_high - (t_high - T)/delta), unclipped, written as
    -exp(rho T)*expm1((rho - 1/delta)(t_high - T)): no cancellation."""
    return -math.exp(rho * t) * math.expm1((rho - 1.0 / delta) * (t_high - t))


@numba.njit(**_JIT)
def _lactin(t: float, scale: float, rho: float, t_high: float, delta: float,
            lam: float, lo: float, hi: float) -> float:
    """scale*(Lactin-1 curve) + lam on (lo, hi), clipped at 0; 0 outside."""
    if t <= lo or t >= hi or t >= t_high:
        return 0.0
    r = scale * _lactin_core(t, rho, t_high, delta) + lam
    return r if r > 0.0 else 0.0


@numba.njit(**_JIT)
def _sharpe_schoolfield(t: float, rho25: float, ha: float, hl: float, tl_half: float,
                        hh: float, th_half: float) -> float:
    """Schoolfield et al. (1981) at T °C (-> K); denominator in log-sum-exp
    form so that nothing overflows; 0 at or below absolute zero."""
    tk = t + KELVIN
    if not tk > 0.0:
        return 0.0
    inv = 1.0 / tk
    xa = ha / R_CAL * (1.0 / 298.0 - inv)
    xl = hl / R_CAL * (1.0 / tl_half - inv)
    xh = hh / R_CAL * (1.0 / th_half - inv)
    top = max(0.0, max(xl, xh))
    lse = top + math.log(math.exp(-top) + math.exp(xl - top) + math.exp(xh - top))
    return rho25 * (tk / 298.0) * math.exp(xa - lse)


@numba.njit(**_JIT)
def rate_scalar(code: int, p0: float, p1: float, p2: float, p3: float, p4: float,
                p5: float, t: float) -> float:
    """Development rate (1/day) of model ``code`` at temperature ``t`` (°C).

    ``code`` is the model's index in ``MODELS``; ``p0..p5`` are the packed
    parameters of ``pack_params`` (not re-validated).  Returns a rate >= 0;
    NaN for NaN ``t`` or an unknown code.  Callable from other numba code.

    References
    ----------
    As ``development_rate``.
    """
    if t != t:
        return math.nan
    if code == _LINEAR:
        return _linear(t, p0, p1)
    if code == _BRIERE1:
        return _briere(t, p0, p1, p2, 0.5)
    if code == _BRIERE2:
        return _briere(t, p0, p1, p2, 1.0 / p3)
    if code == _LACTIN1:
        return _lactin(t, 1.0, p0, p1, p2, 0.0, -math.inf, math.inf)
    if code == _LACTIN2:
        return _lactin(t, 1.0, p0, p1, p2, p3, p4, p5)
    if code == _LOGAN6:
        return _lactin(t, p0, p1, p2, p3, 0.0, -math.inf, math.inf)
    if code == _SHARPE:
        return _sharpe_schoolfield(t, p0, p1, p2, p3, p4, p5)
    return math.nan


# --------------------------------------------------------------------- loops
@numba.njit(**_JIT)
def _fill_range(temp: np.ndarray, out: np.ndarray, code: int, packed: np.ndarray,
                start: int, stop: int) -> None:
    p0, p1, p2, p3, p4, p5 = packed[0], packed[1], packed[2], packed[3], packed[4], packed[5]
    for i in range(start, stop):
        out[i] = rate_scalar(code, p0, p1, p2, p3, p4, p5, np.float64(temp[i]))


@numba.njit(parallel=True, **_JIT)
def _fill_parallel(temp: np.ndarray, out: np.ndarray, code: int, packed: np.ndarray) -> None:
    n = out.size
    for k in numba.prange((n + _CHUNK - 1) // _CHUNK):
        start = k * _CHUNK
        _fill_range(temp, out, code, packed, start, min(n, start + _CHUNK))

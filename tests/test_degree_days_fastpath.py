"""Tests of the fast sine loops of suitmap.kernels.degree_days (one compiled
loop per cutoff for the double sine, the fused-multiply-add arcsine of
suitmap.kernels._day_parts): against a case-by-case scalar implementation of
the published closed forms, against numerical integration of the sine day,
and for values that do not depend on where a day sits in the array."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.integrate import quad

from suitmap.kernels import _day_parts
from suitmap.kernels import degree_days as dd_mod
from suitmap.kernels.degree_days import CUTOFFS, degree_days, degree_days_block

L, U = 10.0, 30.0


def _sine_hva(tmin: float, tmax: float, lower: float, upper: float) -> tuple[float, float, float]:
    """(H, V, A) of one single-sine day, case by case.

    Baskerville & Emin (1969) Ecology 50:514-517, with the cases of Zalom et
    al. (1983) Univ. California DANR Leaflet 21373, Table 5: H horizontal
    cutoff, V vertical cutoff (H less (U-L)(pi/2 - theta2)/pi), A the area
    above U, [(M-U)(pi/2 - theta2) + alpha cos theta2]/pi.
    """
    lo, hi = min(tmin, tmax), max(tmin, tmax)
    m, a = 0.5 * (lo + hi), 0.5 * (hi - lo)
    if hi <= lower:                                  # wholly below L
        return 0.0, 0.0, 0.0
    if lo >= upper:                                  # wholly above U
        return upper - lower, 0.0, m - upper
    if lo >= lower and hi <= upper:                  # wholly between
        return m - lower, m - lower, 0.0
    th1 = math.asin((lower - m) / a) if lo < lower else -math.pi / 2
    if hi <= upper:                                  # Tmin < L < Tmax <= U
        h = ((m - lower) * (math.pi / 2 - th1) + a * math.cos(th1)) / math.pi
        return h, h, 0.0
    th2 = math.asin((upper - m) / a)
    if lo >= lower:                                  # L <= Tmin < U < Tmax
        h = ((m - lower) * (th2 + math.pi / 2) + (upper - lower) * (math.pi / 2 - th2)
             - a * math.cos(th2)) / math.pi
    else:                                            # Tmin < L, Tmax > U
        h = ((m - lower) * (th2 - th1) + a * (math.cos(th1) - math.cos(th2))
             + (upper - lower) * (math.pi / 2 - th2)) / math.pi
    v = h - (upper - lower) * (math.pi / 2 - th2) / math.pi
    above = ((m - upper) * (math.pi / 2 - th2) + a * math.cos(th2)) / math.pi
    return h, v, above


def _reference(tmin, tmax, tnext, cutoff, lower=L, upper=U):
    """One day; double sine when ``tnext`` is given: the mean of the two
    half-days' parts, the intermediate clamp on the whole day (Allen 1976,
    Environ. Entomol. 5:388-396; Zalom et al. 1983, Table 6)."""
    parts = [_sine_hva(tmin, tmax, lower, upper)]
    if tnext is not None:
        parts.append(_sine_hva(tnext, tmax, lower, upper))
    h, v, a = (sum(p[k] for p in parts) / len(parts) for k in range(3))
    return {"horizontal": h, "vertical": v, "intermediate": max(v, h - a)}[cutoff]


def _days(n, seed, dtype=np.float64):
    rng = np.random.default_rng(seed)
    tmin = rng.uniform(-5.0, 40.0, n)
    tmax = tmin + rng.gamma(2.0, 6.0, n)          # some days cross both thresholds
    tnext = tmin + rng.normal(0.0, 5.0, n)        # now and then above tmax
    swap = rng.random(n) < 0.05                   # Tmin > Tmax now and then
    tmin[swap], tmax[swap] = tmax[swap], tmin[swap]
    return tuple(np.asarray(x, dtype=dtype) for x in (tmin, tmax, tnext))


@pytest.mark.parametrize("double", [False, True], ids=["single_sine", "double_sine"])
@pytest.mark.parametrize("cutoff", CUTOFFS)
@pytest.mark.parametrize("dtype", [np.float64, np.float32])
def test_loops_equal_case_by_case_formulas(double, cutoff, dtype):
    # Enough days for the parallel path (several work items, ragged end);
    # the reference (math.asin, math.cos) runs on a subsample.  Measured
    # difference <= 9e-15; 1e-12 leaves room for the rounding of
    # (thr - M)/alpha near +-1, where the vertical value is steep.
    n = 2 * dd_mod._PARALLEL_MIN + 333
    tmin, tmax, tnext = _days(n, seed=1983, dtype=dtype)
    method = "double_sine" if double else "single_sine"
    got = degree_days_block(tmin, tmax, tnext if double else None, L, U, method, cutoff)
    serial = degree_days_block(tmin, tmax, tnext if double else None, L, U, method, cutoff,
                               parallel=False)
    np.testing.assert_array_equal(got, serial)
    idx = np.random.default_rng(7).choice(n, 3000, replace=False)
    want = [_reference(float(tmin[i]), float(tmax[i]), float(tnext[i]) if double else None,
                       cutoff) for i in idx]
    np.testing.assert_allclose(got[idx], want, rtol=0, atol=1e-12)


@pytest.mark.parametrize("cutoff", CUTOFFS)
def test_double_sine_against_quadrature_of_the_full_period(cutoff):
    # Allen (1976): the day is a half-period of the sine from Tmin up to
    # Tmax and a half-period from Tmax down to the next day's minimum; each
    # half-day is integrated here over t in [-pi/2, pi/2] of
    # M + alpha sin(t) (Baskerville & Emin 1969), with the cutoff applied
    # to the integrand: horizontal min(T, U) - L, vertical T - L inside
    # (L, U] only, and for the intermediate cutoff the whole-day value
    # max(V, H - A), A the integral of (T - U)+ (Zalom et al. 1983).
    def half(lo, hi, g):
        m, a = 0.5 * (lo + hi), 0.5 * (hi - lo)
        kinks = [math.asin(min(1.0, max(-1.0, (thr - m) / a))) for thr in (L, U)] if a else []
        val, _ = quad(lambda t: g(m + a * math.sin(t)), -math.pi / 2, math.pi / 2,
                      points=kinks or None, epsabs=1e-13, epsrel=1e-13, limit=200)
        return val / math.pi

    parts = {"h": lambda T: max(0.0, min(T, U) - L),
             "v": lambda T: T - L if L < T <= U else 0.0,
             "a": lambda T: max(0.0, T - U)}
    tmin, tmax, tnext = _days(60, seed=1976)
    got = degree_days(tmin, tmax, L, U, method="double_sine", cutoff=cutoff, tmin_next=tnext)
    for i in range(tmin.size):
        day = {k: 0.5 * sum(half(min(x, tmax[i]), max(x, tmax[i]), g) for x in (tmin[i], tnext[i]))
               for k, g in parts.items()}
        want = {"horizontal": day["h"], "vertical": day["v"],
                "intermediate": max(day["v"], day["h"] - day["a"])}[cutoff]
        assert got[i] == pytest.approx(want, abs=1e-9)


@pytest.mark.parametrize("method", ["single_sine", "double_sine"])
@pytest.mark.parametrize("cutoff", CUTOFFS)
def test_value_does_not_depend_on_position_in_the_array(method, cutoff):
    # A day gives bit for bit the same value in the vector body of the loop,
    # in its scalar remainder and alone (the fused multiply-adds are explicit,
    # not left to the compiler), so callers that cut blocks differently
    # (seasons, tables, along_time) agree exactly.  Property, no source.
    tmin, tmax, tnext = _days(203, seed=5, dtype=np.float32)
    full = degree_days_block(tmin, tmax, tnext, L, U, method, cutoff, parallel=False)
    for start in range(17):
        part = degree_days_block(tmin[start:], tmax[start:], tnext[start:], L, U, method,
                                 cutoff, parallel=False)
        np.testing.assert_array_equal(part, full[start:])
    for i in (0, 1, 7, 8, 9, 15, 202):
        one = degree_days_block(tmin[i:i + 1], tmax[i:i + 1], tnext[i:i + 1], L, U, method,
                                cutoff, parallel=False)
        assert one[0] == full[i] or (np.isnan(one[0]) and np.isnan(full[i]))


@pytest.mark.skipif(np.finfo(np.longdouble).eps >= np.finfo(np.float64).eps,
                    reason="no extended precision on this platform")
def test_arcsine_against_extended_precision():
    # The Estrin / fused-multiply-add arcsine against numpy's long-double
    # arcsin (an independent, more precise reference), densely around the
    # switch at |x| = 1/2 and near +-1; asin(+-1) must be +-pi/2 exactly.
    rng = np.random.default_rng(3)
    x = np.concatenate([np.linspace(-1.0, 1.0, 20001), rng.uniform(-1, 1, 20000),
                        rng.uniform(0.499, 0.501, 5000), 1.0 - rng.uniform(0, 1e-9, 5000),
                        -1.0 + rng.uniform(0, 1e-9, 5000), [np.nextafter(0.5, 1.0), 1e-300]])
    got = np.array([_day_parts._asin(float(v)) for v in x])
    err = np.abs(got.astype(np.longdouble) - np.arcsin(x.astype(np.longdouble)))
    assert float(err.max()) <= 3.0e-16         # measured 2.85e-16 on 6e6 points
    assert _day_parts._asin(1.0) == math.pi / 2 and _day_parts._asin(-1.0) == -math.pi / 2
    assert dd_mod._asin is _day_parts._asin      # still importable from degree_days

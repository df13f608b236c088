"""Tests of suitmap.kernels.degree_days32 (the float32 sine degree-days) and of
the degree-day DailyTable strategies (suitmap.kernels.tables.degree_days).

References: Zalom et al. (1983) Table 7; scipy.integrate.quad of the sine
day (the reference of tests/test_degree_days.py); numpy's float64 arcsine;
and the float64 closed form, itself checked against both in
tests/test_degree_days.py."""

from __future__ import annotations

import numpy as np
import pytest
# Zalom et al. (1983) Table 7; scipy quad of the assumed day curve; days covering every case
from test_degree_days import BOUNDARY_DAYS, TABLE_TOL, ZALOM_TABLE_7, _random_days, reference

from suitmap.kernels.degree_days import CUTOFFS, METHODS, degree_days_block
from suitmap.kernels.degree_days32 import asin32, sine_degree_days32
from suitmap.kernels.tables import degree_day_table

L, U = 10.0, 30.0
SINES = {"single_sine": 4, "double_sine": 5}
F32 = np.float32


def run32(tmin, tmax, tnext, method, cutoff, lower=L, upper=U, parallel=True):
    a, b = (np.ascontiguousarray(x, dtype=F32).reshape(-1) for x in (tmin, tmax))
    c = None if tnext is None else np.ascontiguousarray(tnext, dtype=F32).reshape(-1)
    out = np.empty(a.size)
    return sine_degree_days32(a, b, c, lower, upper, SINES[method], CUTOFFS.index(cutoff),
                              out, parallel=parallel)


def exact64(tmin, tmax, tnext, method, cutoff, lower=L, upper=U):
    """The float64 closed form of the same float32-rounded days."""
    r = [np.asarray(x, dtype=F32).astype(np.float64) for x in (tmin, tmax)]
    n = None if tnext is None else np.asarray(tnext, dtype=F32).astype(np.float64)
    return degree_days_block(r[0], r[1], n, lower, upper, method, cutoff)


def test_asin32_against_float64_arcsine():
    # numpy's float64 arcsine of the same float32 values; bound: 1.5 float32
    # ulps at pi/2 (1.19e-7 each) -- rounding of the result, the fit error
    # is 1.7e-8 (module notes of degree_days32)
    x = np.linspace(-1.0, 1.0, 400_001).astype(F32)
    err = np.abs(asin32(x).astype(np.float64) - np.arcsin(x.astype(np.float64)))
    assert err.max() <= 1.8e-7
    assert asin32(np.array([1.0, -1.0, 0.0]))[0] == F32(np.pi / 2)
    # relative error near 0, where the polynomial, not pi/2, sets the result
    small = x[(np.abs(x) > 1e-6) & (np.abs(x) < 0.5)]
    rel = np.abs(asin32(small) / np.arcsin(small.astype(np.float64)) - 1.0)
    assert rel.max() <= 2.5e-7


@pytest.mark.parametrize("row", ZALOM_TABLE_7, ids=lambda r: f"{r[0]}-{r[1]}-{r[2]}")
@pytest.mark.parametrize("method", SINES)
def test_zalom_1983_table_7(row, method):
    # Zalom et al. (1983) Table 7, deg F, L = 55, U = 90, horizontal cutoff;
    # columns 5 and 6 are the single and double sine
    col = 5 if method == "single_sine" else 6
    got = run32([row[0]], [row[1]], [row[2]] if method == "double_sine" else None, method,
                "horizontal", 55.0, 90.0)
    assert abs(got[0] - row[col]) <= TABLE_TOL


@pytest.mark.parametrize("cutoff", CUTOFFS)
@pytest.mark.parametrize("method", SINES)
def test_against_quadrature(method, cutoff):
    # scipy quad of the sine day with the cutoff in the integrand (Baskerville
    # & Emin 1969; Allen 1976 for the two half-days), random and boundary
    # days; float32 input rounding (6e-8 x 45 deg C) and arithmetic: 2e-5
    tmin, tmax, tnext = _random_days(150, seed=32)
    bd = np.array(BOUNDARY_DAYS, dtype=float)
    tmin = np.concatenate([tmin, bd[:, 0]]).astype(F32).astype(float)
    tmax = np.concatenate([tmax, bd[:, 1]]).astype(F32).astype(float)
    tnext = np.concatenate([tnext, 0.5 * (bd[:, 0] + bd[:, 1])]).astype(F32).astype(float)
    double = method == "double_sine"
    got = run32(tmin, tmax, tnext if double else None, method, cutoff)
    want = [reference("sine", a, b, c if double else None, cutoff)
            for a, b, c in zip(tmin, tmax, tnext)]
    np.testing.assert_allclose(got, want, rtol=0, atol=2e-5)


def _many_days(n, seed):
    rng = np.random.default_rng(seed)
    tmin = rng.uniform(-15.0, 45.0, n)
    tmax = tmin + rng.gamma(2.0, 5.0, n)
    tnext = tmin + rng.normal(0.0, 4.0, n)
    # float32 values: the kernel's own rounding of float64 input is not what is tested
    return tuple(x.astype(F32).astype(np.float64) for x in (tmin, tmax, tnext))


@pytest.mark.parametrize("upper", [U, np.inf])
@pytest.mark.parametrize("cutoff", CUTOFFS)
@pytest.mark.parametrize("method", SINES)
def test_equals_float64_closed_form(method, cutoff, upper):
    # 292000 random days (365 x 800), parallel path: within 3e-5 deg C.day of the float64
    # closed form (module notes: ~1e-5 at 30 deg C days), 2e-5 relative where
    # the value is above 1 % of U - L, and 365-day sums within 1e-6 relative
    tmin, tmax, tnext = _many_days(365 * 800, seed=3)
    nxt = tnext if method == "double_sine" else None
    got = run32(tmin, tmax, nxt, method, cutoff, upper=upper)
    want = exact64(tmin, tmax, nxt, method, cutoff, upper=upper)
    err = np.abs(got - want)
    assert err.max() <= 3e-5
    big = want > 0.2
    assert (err[big] / want[big]).max() <= 2e-5
    sums = got.reshape(365, 800).sum(axis=0), want.reshape(365, 800).sum(axis=0)
    sel = sums[1] > 1.0
    assert np.max(np.abs(sums[0][sel] - sums[1][sel]) / sums[1][sel]) <= 1e-6


@pytest.mark.parametrize("threshold", [L, U])
@pytest.mark.parametrize("cutoff", CUTOFFS)
def test_days_grazing_a_threshold(threshold, cutoff):
    # a day whose maximum (or minimum) lies within 1e-3 deg C of a threshold:
    # there 1 - s^2 formed from s would lose half of float32's digits (error
    # ~ alpha sqrt(eps) ~ 1e-3); formed from the distances to the extremes
    # it stays at input rounding.  # derived bound, no source
    rng = np.random.default_rng(11)
    d = rng.uniform(-1e-3, 1e-3, 4000)
    span = rng.uniform(5.0, 25.0, 4000)
    for tmin, tmax in ((threshold + d - span, threshold + d), (threshold + d, threshold + d + span)):
        got = run32(tmin, tmax, None, "single_sine", cutoff)
        want = exact64(tmin, tmax, None, "single_sine", cutoff)
        assert np.max(np.abs(got - want)) <= 1e-5


def test_nan_order_constant_days_and_chunking():
    tmin, tmax, tnext = _many_days(200_000, seed=5)
    tmin[::997] = np.nan
    tmax[5::1009] = np.nan
    tnext[7::1013] = np.nan
    tmin[3::101] = tmax[3::101]                       # constant days
    for method in SINES:
        nxt = tnext if method == "double_sine" else None
        par = run32(tmin, tmax, nxt, method, "intermediate")
        ser = run32(tmin, tmax, nxt, method, "intermediate", parallel=False)
        np.testing.assert_array_equal(par, ser)      # parallel chunks = one pass
        want = exact64(tmin, tmax, nxt, method, "intermediate")
        np.testing.assert_array_equal(np.isnan(par), np.isnan(want))
        ok = ~np.isnan(want)
        assert np.max(np.abs(par[ok] - want[ok])) <= 3e-5
        # a day given as (Tmax, Tmin) is the same day
        swapped = run32(tmax, tmin, None, method, "vertical")
        np.testing.assert_array_equal(swapped, run32(tmin, tmax, None, method, "vertical"))
    # the double sine with two equal half-days is the single sine, bit for bit
    np.testing.assert_array_equal(run32(tmin, tmax, tmin, "double_sine", "horizontal"),
                                  run32(tmin, tmax, None, "single_sine", "horizontal"))


def test_only_sine_methods():
    a = np.zeros(4, F32)
    with pytest.raises(ValueError, match="sine"):
        sine_degree_days32(a, a, None, L, U, METHODS.index("single_triangle"), 0, np.empty(4))


# ---------------------------------------------------- DailyTable strategies
@pytest.mark.parametrize("method", METHODS)
def test_default_strategy(method):
    # measured (benchmarks/README.md): float32 closed forms for the sines,
    # the exact float64 closed form for the others
    t = degree_day_table(L, U, method, "vertical")
    tmin, tmax, tnext = _many_days(2000, seed=8)
    got = t.evaluate(tmin, tmax, tmin_next=tnext)
    want = degree_days_block(tmin, tmax, tnext, L, U, method, "vertical")
    if method in SINES:
        assert t.strategy == "float32"
        assert 0.0 < t.max_abs_error <= 3e-5 and t.max_rel_error <= 2e-5 and t.peak > 19.0
        np.testing.assert_allclose(got, want, rtol=0, atol=3e-5)
    else:
        assert t.strategy == "closed_form"
        np.testing.assert_array_equal(got, want)


def test_strategy_errors_and_out():
    with pytest.raises(ValueError, match="float32"):
        degree_day_table(L, U, "single_triangle", strategy="float32")
    with pytest.raises(ValueError, match="closed_form"):
        degree_day_table(L, U, "average", strategy="table")
    t = degree_day_table(L, U, "double_sine", "horizontal", strategy="float32")
    tmin, tmax, tnext = (x.reshape(20, 50) for x in _many_days(1000, seed=9))
    out = np.empty((20, 50))
    assert t.evaluate(tmin, tmax, out, tmin_next=tnext) is out
    with pytest.raises(ValueError, match="float64"):
        t.evaluate(tmin, tmax, np.empty((20, 50), F32), tmin_next=tnext)
    exact = degree_day_table(L, U, "double_sine", "horizontal", strategy="closed_form")
    np.testing.assert_allclose(out, exact.evaluate(tmin, tmax, tmin_next=tnext), atol=3e-5)

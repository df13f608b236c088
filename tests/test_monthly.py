"""Tests of suitmap.kernels.monthly: mean-preserving daily interpolation of
monthly values (Epstein 1991 harmonic, cumulative-spline for series) and
degree-days from a monthly mean under a normal model of daily means.

References are beside each check: published formulas, analytic integrals of
the test signals, scipy.integrate.quad, seeded Monte Carlo, and inequalities
for trigonometric polynomials and cubic splines."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.integrate import quad
from scipy.stats import norm

from suitmap.kernels.degree_days import METHODS
from suitmap.kernels.monthly import (
    month_lengths,
    monthly_degree_days_interpolated,
    monthly_degree_days_normal,
    monthly_series_to_daily,
    monthly_to_daily,
)

CALENDARS = {
    "noleap": month_lengths("noleap"),
    "standard_leap": month_lengths("standard", leap=True),
    "360_day": month_lengths("360_day"),
}


def month_means(daily: np.ndarray, days: np.ndarray, axis: int = 0) -> np.ndarray:
    starts = np.r_[0, np.cumsum(days)[:-1]]
    sums = np.add.reduceat(daily, starts, axis=axis)
    shape = [1] * daily.ndim
    shape[axis] = len(days)
    return sums / days.reshape(shape)


def edges(days: np.ndarray) -> np.ndarray:
    return np.r_[0, np.cumsum(days)].astype(np.float64)


# ----------------------------------------------------------------- calendars
def test_month_lengths_cf_calendars():
    # CF Conventions 4.4.1: year lengths of the calendars.
    assert month_lengths("standard").sum() == 365
    assert month_lengths("gregorian", leap=True).sum() == 366
    assert month_lengths("noleap", leap=True).sum() == 365
    assert month_lengths("all_leap").sum() == 366
    assert month_lengths("360_day").tolist() == [30] * 12
    assert month_lengths("365_day")[1] == 28
    with pytest.raises(ValueError, match="calendar"):
        month_lengths("lunar")


# --------------------------------------------------- route (a): climatology
@pytest.mark.parametrize("name", list(CALENDARS))
def test_climatology_keeps_month_means(name):
    # Defining property of mean-preserving interpolation (Epstein 1991,
    # J. Climate 4:365-368): the daily values of each month average to its mean.
    days = CALENDARS[name]
    rng = np.random.default_rng(11)
    monthly = rng.uniform(-20.0, 35.0, size=(12, 7))
    daily = monthly_to_daily(monthly, days)
    assert daily.shape == (days.sum(), 7)
    np.testing.assert_allclose(month_means(daily, days), monthly, rtol=0, atol=1e-9)
    # month axis last, 3-D
    monthly3 = rng.uniform(-5.0, 25.0, size=(2, 3, 12))
    daily3 = monthly_to_daily(monthly3, days, axis=-1)
    assert daily3.shape == (2, 3, days.sum())
    np.testing.assert_allclose(month_means(daily3, days, axis=2), monthly3, rtol=0, atol=1e-9)


@pytest.mark.parametrize("name", list(CALENDARS))
def test_climatology_smooth_and_periodic(name):
    # The result is a trigonometric polynomial of degree n = 6 and period T
    # days sampled at day centres.  Bernstein's inequality (Bernstein 1912)
    # |g'| <= n(2π/T)·max|g| and Szegő's refinement (Szegő 1928;
    # g'^2 + (nω)^2 g^2 <= (nω)^2 max|g|^2, from memory), which gives
    # max|g| <= max over day centres / cos(nπ/T), bound every day-to-day
    # change, including 31 Dec -> 1 Jan, by (12π/T)·max|daily − c|/cos(6π/T)
    # for any constant c [derived].  A step or kinked interpolant breaks it.
    days = CALENDARS[name]
    period = days.sum()
    rng = np.random.default_rng(5)
    for _ in range(20):
        monthly = rng.uniform(-10.0, 30.0, size=12)
        daily = monthly_to_daily(monthly, days)
        centre = 0.5 * (daily.max() + daily.min())
        spread = np.abs(daily - centre).max()
        bound = (12 * math.pi / period) * spread / math.cos(6 * math.pi / period)
        jumps = np.abs(np.diff(np.r_[daily, daily[0]]))      # wraps the year
        assert jumps.max() <= bound
        # much smoother than the monthly steps themselves
        assert jumps.max() < 0.25 * np.abs(np.diff(np.r_[monthly, monthly[0]])).max()


def test_climatology_equal_months_is_shift_equivariant():
    # Cyclic year: with 12 equal months, starting the year one month later
    # shifts the daily curve by exactly one month [derived].
    days = CALENDARS["360_day"]
    monthly = np.random.default_rng(2).normal(15.0, 8.0, size=12)
    base = monthly_to_daily(monthly, days)
    for r in (1, 5):
        shifted = monthly_to_daily(np.roll(monthly, r), days)
        np.testing.assert_allclose(shifted, np.roll(base, 30 * r), rtol=0, atol=1e-10)


@pytest.mark.parametrize("name", list(CALENDARS))
def test_climatology_constant(name):
    days = CALENDARS[name]
    daily = monthly_to_daily(np.full(12, 17.25), days)
    np.testing.assert_allclose(daily, 17.25, rtol=0, atol=1e-12)


@pytest.mark.parametrize("name", list(CALENDARS))
@pytest.mark.parametrize("k", [1, 2, 3, 5])
def test_climatology_recovers_annual_harmonics(name, k):
    # f(t) = a + A·sin(2πk(t − t0)/T): monthly means by the exact integral
    # over each month [analytic].  The method reproduces any harmonic k <= 5
    # in time exactly, so the daily values are the day means of f (its exact
    # integral over each day) to rounding, and differ from f at the day
    # centres by at most A·(1 − sinc(πk/T)) (the day-mean factor) [derived].
    days = CALENDARS[name]
    period = days.sum()
    w = 2 * math.pi * k / period
    a, amp, t0 = 9.0, 13.0, 37.3

    def integral(t):
        return a * t - amp / w * np.cos(w * (t - t0))

    e = edges(days)
    monthly = np.diff(integral(e)) / days
    daily = monthly_to_daily(monthly, days)
    t = np.arange(period + 1, dtype=np.float64)
    np.testing.assert_allclose(daily, np.diff(integral(t)), rtol=0, atol=1e-10)
    centres = a + amp * np.sin(w * (t[:-1] + 0.5 - t0))
    sinc = math.sin(w / 2) / (w / 2)
    assert np.abs(daily - centres).max() <= amp * (1 - sinc) + 1e-10


def _epstein(monthly: np.ndarray, s: np.ndarray, factor) -> np.ndarray:
    """Epstein (1991): Fourier series of the 12 monthly means in the month
    coordinate s (month j spans [j, j+1), centre j + 1/2), harmonic k
    multiplied by factor(k)."""
    c = np.fft.rfft(monthly) / 12.0                       # c[k], k = 0..6
    x = 2 * np.pi * (s - 0.5) / 12.0                      # phase 0 at mid-January
    out = np.full(s.shape, c[0].real)
    for k in range(1, 7):
        weight = 1.0 if k == 6 else 2.0                   # Nyquist term counted once
        out += weight * factor(k) * (c[k] * np.exp(1j * k * x)).real
    return out


def epstein_factor(k):
    # Epstein (1991), J. Climate 4:365-368: (πk/12)/sin(πk/12) [memory for the
    # exact factor; verified by its property in the next test].
    return (math.pi * k / 12) / math.sin(math.pi * k / 12)


def test_epstein_factor_gives_exact_continuous_month_means():
    # Property check of the published factor with scipy.integrate.quad: the
    # continuous Epstein curve integrates to each month's mean.
    monthly = np.random.default_rng(3).uniform(0.0, 25.0, size=12)
    for j in range(12):
        val, _ = quad(lambda s: _epstein(monthly, np.array([s]), epstein_factor)[0], j, j + 1,
                      epsabs=1e-12, epsrel=1e-12)
        assert val == pytest.approx(monthly[j], abs=1e-9)


def test_equal_months_match_epstein():
    # 360_day: 12 months of n = 30 days.  Epstein's series with the factor
    # for a discrete mean of n day-centre values, n·sin(πk/(12n))/sin(πk/12)
    # [derived from the same argument as Epstein's continuous factor], is the
    # exact reference; Epstein's own continuous factor differs from it by
    # |Δfactor_k|·|harmonic k| summed over k [derived tolerance].
    n = 30
    days = CALENDARS["360_day"]
    monthly = np.random.default_rng(4).uniform(-10.0, 30.0, size=12)
    s = (np.arange(360) + 0.5) / n
    daily = monthly_to_daily(monthly, days)

    def discrete(k):
        return n * math.sin(math.pi * k / (12 * n)) / math.sin(math.pi * k / 12)

    np.testing.assert_allclose(daily, _epstein(monthly, s, discrete), rtol=0, atol=1e-10)
    c = np.abs(np.fft.rfft(monthly) / 12.0)
    tol = sum((1 if k == 6 else 2) * c[k] * abs(discrete(k) - epstein_factor(k))
              for k in range(1, 7))
    assert 0 < tol < 0.05
    assert np.abs(daily - _epstein(monthly, s, epstein_factor)).max() <= tol + 1e-12


def test_climatology_nan_cell_and_errors():
    days = CALENDARS["noleap"]
    monthly = np.random.default_rng(6).uniform(0, 20, size=(12, 3))
    monthly[4, 1] = np.nan
    daily = monthly_to_daily(monthly, days)
    assert np.isnan(daily[:, 1]).all()
    assert np.isfinite(daily[:, [0, 2]]).all()
    with pytest.raises(ValueError, match="12 months"):
        monthly_to_daily(np.zeros(11), days[:11])
    with pytest.raises(ValueError, match="12 month lengths"):
        monthly_to_daily(np.zeros(12), days[:11])
    with pytest.raises(ValueError, match="positive"):
        monthly_to_daily(np.zeros(12), np.r_[0, days[1:]])
    with pytest.raises(ValueError, match="whole"):
        monthly_to_daily(np.zeros(12), days + 0.5)


# ---------------------------------------------------- route (a): monthly series
def series_days() -> np.ndarray:
    # 1999-2002 in the standard calendar (2000 is a leap year), then 5 months
    years = [month_lengths("standard", leap=(y == 2000)) for y in (1999, 2000, 2001, 2002)]
    return np.concatenate(years + [month_lengths("standard")[:5]])


def test_series_keeps_month_means():
    # Defining property (Boneva, Kendall & Stefanov 1971, histospline; from memory).
    days = series_days()
    rng = np.random.default_rng(7)
    values = rng.uniform(-15.0, 35.0, size=(4, days.size))
    daily = monthly_series_to_daily(values, days, axis=1)
    assert daily.shape == (4, days.sum())
    np.testing.assert_allclose(month_means(daily, days, axis=1), values, rtol=0, atol=1e-9)


def test_series_reproduces_quadratics():
    # A not-a-knot cubic spline reproduces cubic polynomials (de Boor 1978,
    # A Practical Guide to Splines; from memory), so a daily curve
    # f(t) = a + b t + c t^2 (cubic running integral) is recovered exactly:
    # the daily values are f's exact day means [analytic].
    days = series_days()
    a, b, c = 4.0, 0.02, -1.5e-5

    def integral(t):
        return a * t + b * t**2 / 2 + c * t**3 / 3

    values = np.diff(integral(edges(days))) / days
    daily = monthly_series_to_daily(values, days)
    truth = np.diff(integral(np.arange(days.sum() + 1.0)))
    np.testing.assert_allclose(daily, truth, rtol=0, atol=1e-9)


def test_series_recovers_sinusoid_in_the_interior():
    # Annual sinusoid of amplitude A: the derivative of a cubic spline
    # interpolant errs by at most h^3·max|F''''|/24 (Hall & Meyer 1976, J.
    # Approx. Theory 16:105-122, complete spline; from memory), F the running
    # integral: F'''' = f''' so the bound is h^3 ω^3 A/24, h = 31 days.  The
    # not-a-knot ends differ from the complete spline, so the first and last
    # two months are left out; at the ends only the month means are checked.
    days = series_days()
    e = edges(days)
    amp, w = 12.0, 2 * math.pi / 365.25

    def integral(t):
        return 10.0 * t - amp / w * np.cos(w * (t - 40.0))

    values = np.diff(integral(e)) / days
    daily = monthly_series_to_daily(values, days)
    truth = np.diff(integral(np.arange(e[-1] + 1)))
    inner = slice(int(e[2]), int(e[-3]))
    assert np.abs(daily - truth)[inner].max() <= (31 * w) ** 3 * amp / 24
    np.testing.assert_allclose(month_means(daily, days), values, rtol=0, atol=1e-9)


def test_series_short_constant_and_nan():
    days = np.array([31, 28])
    daily = monthly_series_to_daily([3.0, 7.0], days)
    # two months: a straight line through the two means [derived]
    np.testing.assert_allclose(np.diff(daily, 2), 0.0, atol=1e-12)
    np.testing.assert_allclose(month_means(daily, days), [3.0, 7.0], atol=1e-12)
    np.testing.assert_allclose(monthly_series_to_daily([5.5], [30]), np.full(30, 5.5))
    np.testing.assert_allclose(monthly_series_to_daily(np.full(30, -2.0), np.full(30, 30)), -2.0,
                               atol=1e-12)
    values = np.random.default_rng(8).uniform(0, 20, size=(10, 3))
    values[3, 2] = np.nan
    out = monthly_series_to_daily(values, np.full(10, 30))
    assert np.isnan(out[:, 2]).all() and np.isfinite(out[:, :2]).all()
    with pytest.raises(ValueError, match="10 month lengths"):
        monthly_series_to_daily(values, np.full(9, 30))


# ------------------------------------------------------------ route (b): normal
def test_normal_check_values():
    # REFERENCES §4 [derived] (Thom-type method; Thom 1954, Mon. Weather Rev.
    # 82:1-6, from memory).
    val = monthly_degree_days_normal(10.0, 3.0, 10.0, np.inf, 30)
    assert val == pytest.approx(35.905, abs=5e-4)
    assert monthly_degree_days_normal(12.0, 4.0, 10.0, 30.0, 31) == pytest.approx(86.527, abs=5e-4)


CASES = [  # mean, sd, lower, upper, n_days
    (12.0, 4.0, 10.0, 30.0, 31),
    (5.0, 3.5, 10.0, 30.0, 30),
    (28.0, 5.0, 10.0, 30.0, 31),
    (18.0, 2.0, 12.0, np.inf, 28),
    (-3.0, 6.0, 0.0, 8.0, 31),
]


def test_normal_against_monte_carlo():
    # Independent reference: N·mean(clip(X − L, 0, U − L)) over 10^6 seeded
    # normal draws; tolerance 5 Monte Carlo standard errors.
    rng = np.random.default_rng(20240601)
    for mu, sd, lo, up, n in CASES:
        x = rng.normal(mu, sd, size=1_000_000)
        y = np.clip(x - lo, 0.0, up - lo)
        mc, se = n * y.mean(), n * y.std(ddof=1) / math.sqrt(y.size)
        assert abs(monthly_degree_days_normal(mu, sd, lo, up, n) - mc) <= 5 * se


def test_normal_against_quadrature():
    # Independent reference: N·∫ clip(x − L, 0, U − L)·pdf(x) dx by
    # scipy.integrate.quad, split at the thresholds.
    for mu, sd, lo, up, n in CASES:
        pdf = norm(mu, sd).pdf
        below, _ = quad(lambda x, lo=lo, pdf=pdf: (x - lo) * pdf(x), lo, up,
                        epsabs=0, epsrel=1e-12)
        above = (up - lo) * norm.sf(up, mu, sd) if np.isfinite(up) else 0.0
        ref = n * (below + above)
        val = monthly_degree_days_normal(mu, sd, lo, up, n)
        assert val == pytest.approx(ref, rel=1e-9, abs=1e-12)
    # array inputs broadcast elementwise
    mu, sd, lo, up, n = (np.array(c, dtype=float) for c in zip(*CASES, strict=True))
    out = monthly_degree_days_normal(mu, sd, lo, up, n)
    assert out.shape == (len(CASES),)
    np.testing.assert_allclose(out, [monthly_degree_days_normal(*c) for c in CASES], rtol=1e-15)


def test_normal_parity():
    # E[(X − L)+] − E[(L − X)+] = μ − L and, by the symmetry of the normal,
    # E[(L − X)+] for mean μ equals E[(X − L)+] for mean 2L − μ [derived].
    for mu in (-4.0, 9.0, 10.0, 16.5, 40.0):
        hi = monthly_degree_days_normal(mu, 3.0, 10.0, np.inf, 30)
        lo = monthly_degree_days_normal(20.0 - mu, 3.0, 10.0, np.inf, 30)
        assert hi - lo == pytest.approx(30 * (mu - 10.0), abs=1e-10)


@pytest.mark.parametrize("mu", [2.0, 10.0, 15.0, 30.0, 41.0])
def test_normal_sd_to_zero(mu):
    # σ → 0: N·clip(μ − L, 0, U − L) (a constant day at μ); the σ term is
    # σ·[t(|z_L|) − t(|z_U|)] with 0 <= t <= φ(0), so the gap is at most
    # N·σ·φ(0) [derived].
    lo, up, n = 10.0, 30.0, 31
    limit = n * min(max(mu - lo, 0.0), up - lo)
    assert monthly_degree_days_normal(mu, 0.0, lo, up, n) == limit
    for sd in (1.0, 1e-2, 1e-6, 1e-12):
        val = monthly_degree_days_normal(mu, sd, lo, up, n)
        assert abs(val - limit) <= n * sd * norm.pdf(0) + 1e-12


def test_normal_far_outside_thresholds():
    lo, up, n, sd = 10.0, 30.0, 30, 2.0
    # Far below L: N·σ·t(x), x = 20, against the asymptotic series of the
    # normal partial expectation, t(x) = φ(x)/x²·(1 − 3/x² + 15/x⁴ − 105/x⁶ + …)
    # (Abramowitz & Stegun 26.2.12 for the Mills ratio; from memory);
    # the next term is 945/x⁸ ≈ 4e-8 relative.
    x = 20.0
    series = norm.pdf(x) / x**2 * (1 - 3 / x**2 + 15 / x**4 - 105 / x**6)
    val = monthly_degree_days_normal(lo - x * sd, sd, lo, up, n)
    assert val > 0
    assert val == pytest.approx(n * sd * series, rel=1e-7)
    # Beyond underflow: exactly 0, never negative or NaN
    assert monthly_degree_days_normal(lo - 100 * sd, sd, lo, up, n) == 0.0
    assert monthly_degree_days_normal(-1e300, sd, lo, up, n) == 0.0
    # Far above U: N·(U − L) less the same tiny tail [derived]
    val = monthly_degree_days_normal(up + x * sd, sd, lo, up, n)
    assert n * (up - lo) - val == pytest.approx(n * sd * series, rel=1e-5)
    assert monthly_degree_days_normal(1e300, sd, lo, up, n) == n * (up - lo)
    assert monthly_degree_days_normal(1e300, sd, lo, np.inf, n) == pytest.approx(n * 1e300)


def test_normal_inputs():
    assert isinstance(monthly_degree_days_normal(12.0, 4.0, 10.0, 30.0, 31), float)
    assert np.isnan(monthly_degree_days_normal(np.nan, 4.0, 10.0, 30.0, 31))
    assert np.isnan(monthly_degree_days_normal(12.0, np.nan, 10.0, 30.0, 31))
    assert monthly_degree_days_normal(12.0, 4.0, 10.0, 30.0, 0) == 0.0
    with pytest.raises(ValueError, match="sd"):
        monthly_degree_days_normal(12.0, -1.0, 10.0, 30.0, 31)
    with pytest.raises(ValueError, match="upper threshold"):
        monthly_degree_days_normal(12.0, 1.0, 10.0, 10.0, 31)
    with pytest.raises(ValueError, match="lower threshold"):
        monthly_degree_days_normal(12.0, 1.0, -np.inf, 10.0, 31)
    with pytest.raises(ValueError, match="n_days"):
        monthly_degree_days_normal(12.0, 1.0, 10.0, 30.0, -1)


# ------------------------------------- route (a) + daily method (optional variant)
@pytest.mark.parametrize("method", METHODS)
def test_interpolated_linear_regime(method):
    # When every interpolated day lies inside [L, U], each method gives M − L
    # per day (Zalom et al. 1983, DANR Leaflet 21373, Tables 3-6; McMaster &
    # Wilhelm 1997), so a month totals N·(mean monthly (Tmin+Tmax)/2 − L):
    # the month means are kept by the interpolation.
    days = CALENDARS["standard_leap"]
    rng = np.random.default_rng(9)
    tmin = rng.uniform(2.0, 12.0, size=(12, 2))
    tmax = tmin + rng.uniform(6.0, 14.0, size=(12, 2))
    dd = monthly_degree_days_interpolated(tmin, tmax, days, -40.0, 80.0, method=method)
    expected = days[:, None] * ((tmin + tmax) / 2 + 40.0)
    if method.startswith("double"):
        # Allen (1976), Environ. Entomol. 5:388-396: the second half-day ends at
        # the next day's minimum, so a month gains ¼·(Tmin on the first day of
        # the next month − Tmin on its own first day) [derived]; cyclic year.
        dmin = monthly_to_daily(tmin, days)
        first = dmin[np.r_[0, np.cumsum(days)[:-1]]]
        expected = expected + 0.25 * (np.roll(first, -1, axis=0) - first)
    np.testing.assert_allclose(dd, expected, rtol=1e-12)


def test_interpolated_single_sine_against_quadrature():
    # Independent reference: each interpolated day's sine curve
    # M + α·sin(2πx) (Baskerville & Emin 1969, Ecology 50:514-517) integrated
    # with scipy.integrate.quad with the horizontal cutoff applied to the
    # integrand, summed per month.
    days = CALENDARS["noleap"]
    tmin = np.array([-2, -1, 3, 7, 11, 15, 17, 17, 13, 8, 3, -1.0])
    tmax = tmin + np.array([7, 8, 10, 12, 13, 14, 14, 13, 12, 10, 8, 7.0])
    lo, up = 10.0, 28.0
    dd = monthly_degree_days_interpolated(tmin, tmax, days, lo, up, axis=0)
    dmin, dmax = monthly_to_daily(tmin, days), monthly_to_daily(tmax, days)
    per_day = []
    for a, b in zip(dmin, dmax, strict=True):
        m, amp = (a + b) / 2, (b - a) / 2
        kinks = []                                # where the curve crosses L or U
        for c in (lo, up):
            if abs(c - m) < amp:
                th = math.asin((c - m) / amp) / (2 * math.pi)
                kinks += [th % 1.0, (0.5 - th) % 1.0]
        def curve(x, m=m, amp=amp):
            return min(max(m + amp * math.sin(2 * math.pi * x) - lo, 0.0), up - lo)

        val, _ = quad(curve,
                      0.0, 1.0, points=sorted(kinks) or None, limit=200, epsabs=1e-13,
                      epsrel=1e-13)
        per_day.append(val)
    ref = np.add.reduceat(np.array(per_day), np.r_[0, np.cumsum(days)[:-1]])
    np.testing.assert_allclose(dd, ref, rtol=0, atol=1e-7)
    assert ref[0] == 0 and ref[6] > 100       # the check covers cold and warm months
    with pytest.raises(ValueError, match="method"):
        monthly_degree_days_interpolated(tmin, tmax, days, lo, up, method="hourly")

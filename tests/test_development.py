"""Tests of suitmap.kernels.development: daily development against
scipy.integrate.quad of the rate curve over the day's temperature curve (the
sine day of Baskerville & Emin 1969, the Parton & Logan 1981 day, both from
suitmap.kernels.diurnal), the constant day, the single-sine degree-day
identity for the linear curve, and accumulate_generations on hand-built
series."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.integrate import quad

from suitmap.kernels.degree_days import degree_days
from suitmap.kernels.development import (
    DEFAULT_NODES,
    accumulate_generations,
    daily_development,
)
from suitmap.kernels.diurnal import parton_logan_hourly, sine_hourly
from suitmap.kernels.rates import MODELS, development_rate, rate_limits

# Published parameter sets (as in tests/test_rates.py):
CURVES = {
    # no source: a plain linear model (common practice, no source)
    "linear": dict(t_low=10.0, thermal_constant=250.0),
    # Aghdam et al. 2009, Cydia pomonella eggs, Briere-1 fit
    "briere1": dict(a=1.453e-4, t_low=9.645, t_high=37.6185),
    # Briere et al. 1999, Lobesia botrana eggs, Briere-2 (scale a: from memory)
    "briere2": dict(a=1.57e-4, t_low=11.26, t_high=34.0, m=1.75),
    # Lactin et al. 1995, Leptinotarsa decemlineata eggs
    "lactin1": dict(rho=0.15543, t_high=38.0487, delta=6.4212),
    # Lactin et al. 1995 set with lam added (no source: checks the formula only)
    "lactin2": dict(rho=0.15543, t_high=38.0487, delta=6.4212, lam=-0.05),
    # Aghdam et al. 2009, Cydia pomonella eggs, Logan-6 fit
    "logan6": dict(psi=0.0613, rho=0.1689, t_high=36.6712, delta=5.7836),
    # Hilbert & Logan 1983, Melanoplus sanguinipes, Sharpe-Schoolfield fit
    "sharpe_schoolfield": dict(rho25=0.0455, ha=8814.36, hl=-14877.95, tl_half=298.81,
                               hh=47258.52, th_half=316.695),
}
HOUR_OF_MIN = 3.0        # sine_hourly's default; the daily integral does not depend on it


def random_days(n: int, seed: int):
    """Days from cold to hot, many crossing the curves' limits (about 10 and
    34-38 deg C), some narrow, some near the limits by design."""
    rng = np.random.default_rng(seed)
    tmin = rng.uniform(-8.0, 36.0, n)
    tmax = tmin + rng.gamma(2.0, 5.0, n)
    tmax[:3] = tmin[:3] + np.array([0.0, 1e-3, 0.3])          # narrow days
    return tmin, tmax


def _rate(model, t):
    return float(development_rate(t, model, **CURVES[model]))


def quad_sine_day(model: str, tmin: float, tmax: float) -> float:
    """(1/24) ∫ r(T(t)) dt over the sine day of diurnal.sine_hourly, with the
    crossing times of the rate limits as break points for quad."""
    lo, hi = rate_limits(model, CURVES[model])
    mean, amp = 0.5 * (tmin + tmax), 0.5 * (tmax - tmin)
    points = []
    for th in (lo, hi):   # M - α cos(2π(t - 3)/24) = th
        if math.isfinite(th) and amp > 0 and abs(th - mean) < amp:
            d = 12.0 / math.pi * math.acos((mean - th) / amp)
            points += [HOUR_OF_MIN + d, HOUR_OF_MIN + 24.0 - d]
    val, _ = quad(lambda t: _rate(model, float(sine_hourly(tmin, tmax, t))),
                  HOUR_OF_MIN, HOUR_OF_MIN + 24.0, points=sorted(points) or None,
                  epsabs=1e-15, epsrel=1e-12, limit=400)
    return val / 24.0


def quad_parton_logan_day(model: str, tmin: float, tmax: float, tnext: float,
                          y: float) -> float:
    """(1/24) ∫ r(T(t)) dt from sunrise to the next sunrise, T from
    diurnal.parton_logan_hourly: today until 24 h, then the next day's hours
    before its sunrise (previous day = today, the day's minimum = tnext)."""
    rise, sset = 12.0 - 0.5 * y, 12.0 + 0.5 * y

    def temp(t):
        if t < 24.0:
            return float(parton_logan_hourly(tmin, tmax, tnext, y, t))
        return float(parton_logan_hourly(tnext, tnext, tnext, y, t - 24.0,
                                         tmin_prev=tmin, tmax_prev=tmax))

    total = 0.0
    for a, b in ((rise, sset), (sset, 24.0), (24.0, 24.0 + rise)):
        if b > a:
            v, _ = quad(lambda t: _rate(model, temp(t)), a, b, epsabs=1e-15, epsrel=1e-12,
                        limit=400)
            total += v
    return total / 24.0


@pytest.mark.parametrize("model", MODELS)
def test_sine_day_equals_quadrature(model):
    # Reference: scipy.integrate.quad of the rate over the single-sine day
    # (Baskerville & Emin 1969), independent of the kernel's asin/Gauss-Legendre.
    tmin, tmax = random_days(25, seed=11)
    ref = np.array([quad_sine_day(model, a, b) for a, b in zip(tmin, tmax)])
    got = daily_development(tmin, tmax, model, CURVES[model])
    np.testing.assert_allclose(got, ref, rtol=1e-6, atol=1e-13)


def test_default_nodes_are_needed():
    # Why DEFAULT_NODES: with 4 nodes per interval the same comparison misses
    # 1e-6 (the Sharpe-Schoolfield curve over wide days converges slowest).
    model = "sharpe_schoolfield"
    tmin, tmax = random_days(25, seed=11)
    ref = np.array([quad_sine_day(model, a, b) for a, b in zip(tmin, tmax)])
    coarse = daily_development(tmin, tmax, model, CURVES[model], n_nodes=4)
    assert np.max(np.abs(coarse - ref) / ref) > 1e-6
    assert DEFAULT_NODES >= 16


def test_sine_day_near_the_limits():
    # Days whose maximum or minimum sits just at, above or below a limit (the
    # Briere square root at t_high is the hard case); reference: quad.
    for model in ("briere1", "briere2", "lactin2", "linear"):
        lo, hi = rate_limits(model, CURVES[model])
        for th in (x for x in (lo, hi) if math.isfinite(x)):
            for d in (-0.1, -1e-4, 0.0, 1e-4, 0.1):
                for a, b in ((th + d - 12.0, th + d), (th + d, th + d + 12.0)):
                    ref = quad_sine_day(model, a, b)
                    got = float(daily_development(a, b, model, CURVES[model]))
                    assert abs(got - ref) <= 1e-6 * abs(ref) + 1e-13, (model, a, b)


@pytest.mark.parametrize("model", MODELS)
def test_parton_logan_day_equals_quadrature(model):
    # Reference: quad of the rate over the Parton & Logan (1981) curve of
    # diurnal.parton_logan_hourly, sunrise to the next sunrise.
    rng = np.random.default_rng(23)
    tmin, tmax = random_days(12, seed=23)
    tnext = tmin + rng.normal(0.0, 3.0, tmin.size)
    y = rng.uniform(0.0, 24.0, tmin.size)
    y[:4] = [0.0, 24.0, 2.0, 16.0]        # polar night and day, short and long day
    ref = np.array([quad_parton_logan_day(model, *v) for v in zip(tmin, tmax, tnext, y)])
    got = daily_development(tmin, tmax, model, CURVES[model], diurnal="parton_logan",
                            daylength=y, tmin_next=tnext)
    np.testing.assert_allclose(got, ref, rtol=1e-6, atol=1e-13)


@pytest.mark.parametrize("diurnal", ["sine", "parton_logan"])
@pytest.mark.parametrize("model", MODELS)
def test_constant_day_is_the_rate(model, diurnal):
    # A day at one temperature develops at the constant-temperature rate
    # (definition of rate summation; no curve of the day is involved).
    t = np.array([-20.0, 0.0, 9.0, 11.0, 18.5, 25.0, 30.0, 33.9, 36.0, 37.9, 45.0])
    got = daily_development(t, t, model, CURVES[model], diurnal=diurnal,
                            daylength=np.full(t.size, 13.0), tmin_next=t)
    np.testing.assert_allclose(got, development_rate(t, model, **CURVES[model]),
                               rtol=1e-12, atol=1e-15)


def test_linear_curve_is_single_sine_degree_days():
    # Linear rate (T - t_low)/K integrated over the sine day = single-sine
    # degree-days with no upper threshold / K (Baskerville & Emin 1969).
    tmin, tmax = random_days(400, seed=5)
    p = CURVES["linear"]
    dd = degree_days(tmin, tmax, p["t_low"], np.inf, method="single_sine")
    got = daily_development(tmin, tmax, "linear", p)
    np.testing.assert_allclose(got, dd / p["thermal_constant"], rtol=1e-12, atol=1e-15)


def test_nan_propagates_and_scalars():
    p = CURVES["briere1"]
    got = daily_development([np.nan, 20.0, 20.0], [25.0, np.nan, 25.0], "briere1", p)
    assert np.isnan(got[:2]).all() and np.isfinite(got[2])
    pl = daily_development(20.0, 25.0, "briere1", p, diurnal="parton_logan",
                           daylength=[np.nan, 12.0], tmin_next=[15.0, np.nan])
    assert np.isnan(pl).all()
    assert np.ndim(daily_development(20.0, 25.0, "briere1", p)) == 0


def test_bad_arguments():
    p = CURVES["linear"]
    with pytest.raises(ValueError, match="daylength"):
        daily_development(10.0, 20.0, "linear", p, diurnal="parton_logan")
    with pytest.raises(ValueError, match="diurnal"):
        daily_development(10.0, 20.0, "linear", p, diurnal="triangle")
    with pytest.raises(ValueError, match="thermal_constant"):
        daily_development(10.0, 20.0, "linear", {"t_low": 10.0})
    with pytest.raises(ValueError, match="Parton-Logan"):
        daily_development(10.0, 20.0, "linear", p, diurnal="parton_logan", daylength=12.0,
                          coefficients={"a": -1.0})


# ------------------------------------------------------ accumulate_generations
# Hand-built series: rate summation completes a generation on the day the
# running total of daily development reaches 1 (common practice, no source).
def test_accumulate_generations_hand_built():
    dev = np.array([0.25, 0.25, 0.25, 0.5, 0.5, 0.5, 0.0])
    total, first = accumulate_generations(dev)
    assert total == 2.25 and first == 4.0      # 0.25, 0.5, 0.75, 1.25: day 4


def test_accumulate_generations_never_axis_and_rounding():
    dev = np.array([[0.1] * 10, [0.09] * 10, [0.5, 0.5] + [0.0] * 8])
    total, first = accumulate_generations(dev.T, axis=0)
    np.testing.assert_allclose(total, [1.0, 0.9, 1.0])
    # ten days of 0.1 sum to 0.9999999999999999 in floating point: still day 10
    assert first[0] == 10.0 and np.isnan(first[1]) and first[2] == 2.0


def test_accumulate_generations_nan_day():
    total, first = accumulate_generations(np.array([0.6, 0.6, np.nan, 0.2]))
    assert np.isnan(total) and first == 2.0
    total, first = accumulate_generations(np.array([0.6, np.nan, 0.6]))
    assert np.isnan(total) and np.isnan(first)

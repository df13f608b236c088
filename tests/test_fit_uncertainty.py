"""Covariances written by ``suitmap fit``: the linear part's (a comment) and the curve's ([uncertainty]).

Lower threshold t = -a/b and thermal constant K = 1/b of the regression r = a + b T
(Campbell et al. 1974); their covariance by the delta method is checked against
numpy.polyfit's coefficient covariance propagated here, and against a Monte Carlo.
"""

from __future__ import annotations

import math
import re

import numpy as np
import pytest

from suitmap.cli import main
from suitmap.config.profile import load_profile
from suitmap.fit import LabData, fit_model, linear_part, write_profile_toml


def linear_rate(t, t_low, k):
    """r = (T - T0)/K above T0 (degree-day model; common practice, no source)."""
    return np.maximum(np.asarray(t, float) - t_low, 0.0) / k


def briere1(t, a, t_low, t_high):
    """r = a T (T - T0) sqrt(TL - T) on (T0, TL), else 0 (Briere et al. 1999, eq. 2)."""
    t = np.asarray(t, float)
    inside = (t > t_low) & (t < t_high)
    return np.where(inside, a * t * (t - t_low) * np.sqrt(np.clip(t_high - t, 0, None)), 0.0)


def delta_method(a, b, cov_ab):
    """Covariance of (-a/b, 1/b) from the covariance of (a, b): G V G'."""
    g = np.array([[-1 / b, a / b**2], [0.0, -1 / b**2]])
    return g @ cov_ab @ g.T


def test_covariance_matches_polyfit_propagation():
    rng = np.random.default_rng(21)
    t = np.arange(12.0, 30.0, 2.0)
    n = rng.integers(5, 50, t.size).astype(float)
    r = linear_rate(t, 10.5, 280.0) + 0.01 / np.sqrt(n) * rng.standard_normal(t.size)
    lp = linear_part(LabData(t, 1 / r, n), max_temperature=30.0)
    (b, a), cov = np.polyfit(t, r, 1, w=np.sqrt(n), cov=True)  # cov of (b, a), scaled by s2
    cov_ab = cov[::-1, ::-1]  # reorder to (a, b)
    want = delta_method(a, b, cov_ab)
    np.testing.assert_allclose(np.array(lp.covariance), want, rtol=1e-7)
    assert math.sqrt(lp.covariance[0][0]) == pytest.approx(lp.lower_threshold_se, rel=1e-9)
    assert math.sqrt(lp.covariance[1][1]) == pytest.approx(lp.degree_days_per_generation_se,
                                                           rel=1e-9)
    assert lp.covariance[0][1] == lp.covariance[1][0]


def test_covariance_matches_monte_carlo():
    # 4000 data sets from a known line with known noise (sd sigma/sqrt(n) per group mean):
    # the empirical covariance of (t, K) against the delta method at the true values with
    # the true sigma, V = sigma^2 (X'WX)^-1.  Small noise (CV of b ~ 2 %), so the first-order
    # approximation holds; band: 6 % on the variances (sampling sd ~2.2 %), 0.03 on the
    # correlation.
    t = np.array([12.0, 15, 18, 21, 24, 27])
    n = np.array([10.0, 30, 20, 25, 15, 20])
    t_low, k, sigma = 10.0, 250.0, 0.004
    true = linear_rate(t, t_low, k)
    rng = np.random.default_rng(99)
    est, covs = [], []
    for _ in range(4000):
        r = true + sigma / np.sqrt(n) * rng.standard_normal(t.size)
        lp = linear_part(LabData(t, 1 / r, n), max_temperature=30.0)
        est.append((lp.lower_threshold, lp.degree_days_per_generation))
        covs.append(lp.covariance)
    emp = np.cov(np.array(est).T)
    x = np.column_stack([np.ones(t.size), t])
    v = sigma**2 * np.linalg.inv(x.T @ (n[:, None] * x))
    want = delta_method(-t_low / k, 1 / k, v)
    for i in range(2):
        assert emp[i, i] == pytest.approx(want[i, i], rel=0.06)
        assert np.mean([c[i][i] for c in covs]) == pytest.approx(want[i, i], rel=0.03)
    corr = emp[0, 1] / math.sqrt(emp[0, 0] * emp[1, 1])
    assert corr == pytest.approx(want[0, 1] / math.sqrt(want[0, 0] * want[1, 1]), abs=0.03)
    # the line pivots about the weighted centroid: a steeper line has a higher threshold and
    # fewer degree-days, so the two are negatively correlated
    assert corr < -0.5


def test_profile_uncertainty_round_trip(tmp_path):
    # the profile's [uncertainty] is the curve's covariance, which must equal the one
    # scipy.optimize.curve_fit gives for the same weighted least-squares problem (sigma =
    # 1/sqrt(n), covariance scaled by the residual variance: absolute_sigma=False)
    from scipy.optimize import curve_fit

    rng = np.random.default_rng(12)
    t = np.arange(12.0, 33.0, 2.0)
    n = np.full(t.size, 30.0)
    obs = briere1(t, 1.7e-4, 10.55, 34.0) + 0.02 / np.sqrt(n) * rng.standard_normal(t.size)
    data = LabData(t, 1 / obs, n, source="rearing.csv")
    res = fit_model(data, "briere1")
    path = write_profile_toml(res, data, tmp_path / "p.toml", organism_name="test moth (invented)")
    prof = load_profile(path)
    unc = prof.biology.uncertainty
    assert unc.parameters == ("rate_curve.a", "rate_curve.t_low", "rate_curve.t_high")
    c = np.array(unc.covariance)
    assert np.array_equal(c, c.T) and np.linalg.eigvalsh(c).min() >= 0
    p0 = [res.params[k] for k in ("a", "t_low", "t_high")]
    popt, pcov = curve_fit(lambda x, a, t0, tl: briere1(x, a, t0, tl), t, obs, p0=p0,
                           sigma=1 / np.sqrt(n), absolute_sigma=False, xtol=1e-14, ftol=1e-14)
    np.testing.assert_allclose(popt, p0, rtol=1e-5)
    np.testing.assert_allclose(c, pcov, rtol=2e-3, atol=1e-6 * np.abs(pcov).max())
    # the linear part's covariance stays in a comment, with the standard errors above it
    text = path.read_text()
    lp = linear_part(data)
    got = re.search(r"delta method: \[\[([^,]+), ([^,]+)\], \[([^,]+), ([^\]]+)\]\]", text)
    np.testing.assert_allclose([float(got.group(i)) for i in (1, 2, 4)],
                               [lp.covariance[0][0], lp.covariance[0][1], lp.covariance[1][1]],
                               rtol=1e-5)
    se_t = float(re.search(r"lower_threshold se ([\d.e+-]+),", text).group(1))
    assert math.sqrt(lp.covariance[0][0]) == pytest.approx(se_t, rel=1e-5)


def test_fitted_profile_feeds_parameter_draws(tmp_path, monkeypatch):
    # the profile written by `suitmap fit` is accepted by the parameter draws, whose sample
    # covariance approaches the written one (2000 draws: sampling sd of a variance ~3 %)
    from suitmap.pipeline.uncertainty import draw_profiles

    monkeypatch.chdir(tmp_path)
    t = np.arange(12.0, 33.0, 2.5)
    rng = np.random.default_rng(8)
    rate = briere1(t, 1.7e-4, 10.55, 34.0) * (1 + rng.normal(0, 0.03, t.size))
    (tmp_path / "cage.csv").write_text("temperature,days,n\n" + "\n".join(
        f"{a:g},{1 / float(b)!r},15" for a, b in zip(t, rate)) + "\n")
    assert main(["fit", "cage.csv", "--model", "briere1,linear", "--quiet"]) == 0
    prof = load_profile(tmp_path / "cage_profile.toml")
    profiles, draws, _ = draw_profiles(prof, 2000, seed=3)
    assert len(profiles) == 2000
    c = np.array(prof.biology.uncertainty.covariance)
    np.testing.assert_allclose(np.diag(np.cov(draws.T)), np.diag(c), rtol=0.1)
    # every drawn profile carries its own curve: the draws are what the layers see
    assert len({p.development.rate_curve for p in profiles[:50]}) == 50

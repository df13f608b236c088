"""Tests of suitmap.fit: lab CSV reading, rate-curve fitting, linear part, profile and figure.

Synthetic lab data are drawn (seeded) from published parameter sets; the
generating formulas of Briere-1 and the linear model are written out here
from the papers, so the data do not depend on suitmap's own rate kernel.
"""

from __future__ import annotations

import math
import os
import sys

import numpy as np
import pytest
from scipy import stats

from suitmap.errors import InputError, OutputError
from suitmap.fit import (
    MIN_TEMPERATURES, FitResult, LabData, fit_all, fit_model, linear_part, plot_fits,
    read_lab_csv, upper_limit, write_profile_toml,
)
from suitmap.kernels.rates import MODELS, PARAMS, development_rate
from suitmap.config.profile import profile_from_dict

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover
    import tomli as tomllib

# Briere et al. (1999) Environ. Entomol. 28:22-29, Lobesia botrana eggs, Briere-1:
# T0 = 10.55, TL = 34.00 [pub]; a = 1.7e-4  # from memory (the scale), REFERENCES.md sec. 2
BRIERE1_LB = dict(a=1.7e-4, t_low=10.55, t_high=34.0)


def briere1(t, a, t_low, t_high):
    """r = a T (T - T0) sqrt(TL - T) on (T0, TL), else 0 (Briere et al. 1999, eq. 2)."""
    t = np.asarray(t, float)
    inside = (t > t_low) & (t < t_high)
    return np.where(inside, a * t * (t - t_low) * np.sqrt(np.clip(t_high - t, 0, None)), 0.0)


def linear_rate(t, t_low, k):
    """r = (T - T0)/K above T0 (degree-day model; common practice, no source)."""
    return np.maximum(np.asarray(t, float) - t_low, 0.0) / k


def draw(rate, n, sigma, rng):
    """Mean rates with variance sigma**2/n (a mean of n individuals)."""
    obs = rate + sigma / np.sqrt(n) * rng.standard_normal(rate.size)
    assert (obs > 0).all()
    return obs


def write_csv(tmp_path, text, name="lab.csv"):
    p = tmp_path / name
    p.write_text(text, encoding="utf-8")
    return p


# ------------------------------------------------------------------ recovery
def test_briere1_recovers_published_parameters():
    rng = np.random.default_rng(20240611)
    t = np.arange(12.0, 33.0, 2.0)
    n = np.full(t.size, 30.0)
    obs = draw(briere1(t, **BRIERE1_LB), n, 0.02, rng)
    res = fit_model(LabData(t, 1 / obs, n, source="syn.csv"), "briere1")
    assert res.converged, res.message
    assert res.dof == t.size - 3
    tq = stats.t.ppf(0.975, res.dof)  # Student t, N - k degrees of freedom
    for key, true in BRIERE1_LB.items():
        lo, hi = res.ci95[key]
        assert lo <= true <= hi, (key, true, lo, hi)
        assert hi - res.params[key] == pytest.approx(tq * res.se[key], rel=1e-9)
    assert res.params["t_low"] == pytest.approx(10.55, abs=1.0)
    assert res.params["t_high"] == pytest.approx(34.0, abs=1.0)


def test_linear_fit_matches_linregress():
    # equal weights: the linear model is ordinary regression; t_low = -b0/b1, K = 1/b1,
    # se(K) = se(b1)/b1**2 and se(t_low) by the delta method from scipy.stats.linregress.
    rng = np.random.default_rng(5)
    t = np.repeat(np.arange(13.0, 29.0, 3.0), 2)
    obs = draw(linear_rate(t, 11.0, 220.0), np.ones(t.size), 0.003, rng)
    res = fit_model(LabData(t, 1 / obs, None, source="lin.csv"), "linear")
    lr = stats.linregress(t, obs)
    b, a = lr.slope, lr.intercept
    var_b = lr.stderr**2
    cov_ab = -t.mean() * var_b
    var_t = lr.intercept_stderr**2 / b**2 + a**2 * var_b / b**4 - 2 * a * cov_ab / b**3
    assert res.params["t_low"] == pytest.approx(-a / b, rel=1e-7)
    assert res.params["thermal_constant"] == pytest.approx(1 / b, rel=1e-7)
    assert res.se["thermal_constant"] == pytest.approx(lr.stderr / b**2, rel=1e-4)
    assert res.se["t_low"] == pytest.approx(math.sqrt(var_t), rel=1e-4)
    for key, true in (("t_low", 11.0), ("thermal_constant", 220.0)):
        assert res.ci95[key][0] <= true <= res.ci95[key][1]


def test_lactin1_recovers_published_curve():
    # Lactin et al. (1995) Environ. Entomol. 24:68-75, Leptinotarsa decemlineata eggs:
    # rho = 0.15543, TL = 38.0487, delta = 6.4212; r(20) = 0.12256, r(30) = 0.25902
    # [derived, REFERENCES.md sec. 2]
    true = dict(rho=0.15543, t_high=38.0487, delta=6.4212)
    rng = np.random.default_rng(11)
    t = np.arange(10.0, 38.0, 3.0)
    n = np.full(t.size, 40.0)
    obs = draw(development_rate(t, "lactin1", **true), n, 0.01, rng)
    res = fit_model(LabData(t, 1 / obs, n), "lactin1")
    assert res.converged, res.message
    for key, value in true.items():
        assert res.ci95[key][0] <= value <= res.ci95[key][1], key
    assert res.rate(20.0) == pytest.approx(0.12256, rel=0.02)
    assert res.rate(30.0) == pytest.approx(0.25902, rel=0.02)


def test_logan6_recovers_published_curve():
    # Aghdam et al. (2009), Cydia pomonella eggs: psi = 0.0613, rho = 0.1689,
    # TM = 36.6712, delta = 5.7836 -> r(25) = 0.19082 [derived, REFERENCES.md sec. 2].
    # psi and delta trade off (Logan-6 is ill-conditioned), so check the curve.
    true = dict(psi=0.0613, rho=0.1689, t_high=36.6712, delta=5.7836)
    rng = np.random.default_rng(2)
    t = np.arange(10.0, 36.0, 2.0)
    n = np.full(t.size, 40.0)
    obs = draw(development_rate(t, "logan6", **true), n, 0.005, rng)
    res = fit_model(LabData(t, 1 / obs, n), "logan6")
    assert res.converged, res.message
    assert res.rate(25.0) == pytest.approx(0.19082, rel=0.02)
    assert res.params["t_high"] == pytest.approx(36.6712, abs=0.5)


# Published parameter sets (REFERENCES.md sec. 2) to generate data for the optimiser check.
GENERATORS = {
    "linear": dict(t_low=10.0, thermal_constant=250.0),  # common practice, no source
    "briere1": BRIERE1_LB,
    # Briere et al. (1999), L. botrana eggs, Briere-2; a from memory (the scale)
    "briere2": dict(a=1.57e-4, t_low=11.26, t_high=34.0, m=1.75),
    "lactin1": dict(rho=0.15543, t_high=38.0487, delta=6.4212),  # Lactin et al. 1995
    "lactin2": dict(rho=0.12, t_high=38.0, delta=7.0, lam=-1.12),  # invented, positive 9-37 °C
    "logan6": dict(psi=0.0613, rho=0.1689, t_high=36.6712, delta=5.7836),  # Aghdam et al. 2009
    # Hilbert & Logan (1983), Melanoplus sanguinipes
    "sharpe_schoolfield": dict(rho25=0.0455, ha=8814.36, hl=-14877.95, tl_half=298.81,
                               hh=47258.52, th_half=316.695),
}


@pytest.mark.parametrize("model", MODELS)
def test_fit_is_at_least_as_good_as_the_truth(model):
    # A least-squares optimum has RSS no larger than the generating parameters' RSS.
    p = GENERATORS[model]
    t = np.arange(12.0, 36.0, 2.0) if model != "sharpe_schoolfield" else np.arange(12.0, 44.0, 2.5)
    r = development_rate(t, model, **p)
    keep = r > 0.2 * r.max()
    t, r = t[keep], r[keep]
    n = np.full(t.size, 25.0)
    obs = draw(r, n, 0.05 * r.max(), np.random.default_rng(len(model)))
    res = fit_model(LabData(t, 1 / obs, n), model)
    rss_true = float(np.sum(n * (obs - r) ** 2))
    assert res.rss <= rss_true * (1 + 1e-9), (res.rss, rss_true, res.message)
    assert set(res.params) == set(PARAMS[model])


# ------------------------------------------------------------------ coverage
def _coverage(model, gen, true, t, n, sigma, draws, seed):
    rng = np.random.default_rng(seed)
    rate = gen(t, **true)
    hits = dict.fromkeys(true, 0)
    for _ in range(draws):
        res = fit_model(LabData(t, 1 / draw(rate, n, sigma, rng), n), model)
        assert res.converged, res.message
        for key, value in true.items():
            hits[key] += res.ci95[key][0] <= value <= res.ci95[key][1]
    return {key: h / draws for key, h in hits.items()}


def test_ci_coverage_linear():
    # 1000 draws, N = 7 rows, 5 dof: binomial sd of the coverage 0.0069, band +-2.9 sd.
    # A normal (z) quantile instead of Student's t would cover ~0.89.
    t = np.arange(12.0, 31.0, 3.0)
    n = np.array([10.0, 20, 30, 15, 25, 10, 20])
    true = dict(t_low=10.0, thermal_constant=250.0)

    def gen(tt, t_low, thermal_constant):
        return linear_rate(tt, t_low, thermal_constant)

    cov = _coverage("linear", gen, true, t, n, 0.004, 1000, 1)
    for key, c in cov.items():
        assert 0.93 <= c <= 0.97, (key, c)


def test_ci_coverage_briere1():
    # 200 draws: binomial sd 0.0154; band [0.90, 0.99].  Linearised intervals of a
    # nonlinear model, so only approximately 0.95 (Bates & Watts 1988, ch. 2).
    t = np.arange(12.0, 33.0, 2.0)
    n = np.full(t.size, 30.0)
    cov = _coverage("briere1", briere1, BRIERE1_LB, t, n, 0.02, 200, 7)
    for key, c in cov.items():
        assert 0.90 <= c <= 0.99, (key, c)


# ---------------------------------------------------------------- model choice
def test_aic_picks_the_generating_model():
    rng = np.random.default_rng(3)
    t = np.arange(12.0, 34.0, 2.0)
    n = np.full(t.size, 20.0)
    obs = draw(briere1(t, **BRIERE1_LB), n, 0.002, rng)  # nearly clean Briere-1 data
    ranked = fit_all(LabData(t, 1 / obs, n), models=("linear", "briere1"))
    assert [r.model for r in ranked] == ["briere1", "linear"]
    # delta AIC > 10: "essentially no support" (Burnham & Anderson 2002; section from memory)
    assert ranked[1].aic - ranked[0].aic > 10


def test_aic_bic_are_the_gaussian_likelihood():
    # -2 log L from scipy.stats.norm with var_i = s2/w_i, s2 = RSS_w/N (maximum likelihood);
    # AIC = -2 log L + 2K, BIC = -2 log L + K log N, K = k + 1 (Burnham & Anderson 2002,
    # sec. 2.2; Schwarz 1978); AICc = AIC + 2K(K+1)/(N-K-1) (sec. 2.4)
    rng = np.random.default_rng(9)
    t = np.arange(12.0, 33.0, 2.0)
    n = rng.integers(10, 40, t.size).astype(float)
    obs = draw(briere1(t, **BRIERE1_LB), n, 0.02, rng)
    res = fit_model(LabData(t, 1 / obs, n), "briere1")
    fitted = briere1(t, **res.params)
    s2 = float(np.sum(n * (obs - fitted) ** 2)) / t.size
    loglik = stats.norm.logpdf(obs, loc=fitted, scale=np.sqrt(s2 / n)).sum()
    big_k = 3 + 1
    assert res.rss == pytest.approx(s2 * t.size, rel=1e-9)
    assert res.aic == pytest.approx(-2 * loglik + 2 * big_k, rel=1e-9)
    assert res.bic == pytest.approx(-2 * loglik + big_k * math.log(t.size), rel=1e-9)
    assert res.aicc == pytest.approx(res.aic + 2 * big_k * (big_k + 1) / (t.size - big_k - 1))


# ----------------------------------------------------------------- linear part
def test_linear_part_exact_data_excludes_the_decline():
    t = np.array([12.0, 15, 18, 21, 24, 27, 30, 33, 35])
    r = linear_rate(t, 10.0, 250.0)
    r[-2:] = [0.05, 0.02]  # past the peak at 30 °C
    lp = linear_part(LabData(t, 1 / r, np.full(t.size, 10.0)))
    assert lp.temperatures == (12.0, 15.0, 18.0, 21.0, 24.0, 27.0)  # below the peak
    assert lp.lower_threshold == pytest.approx(10.0, abs=1e-9)
    assert lp.degree_days_per_generation == pytest.approx(250.0, rel=1e-9)
    # the user's own limit
    lp30 = linear_part(LabData(t, 1 / r), max_temperature=30.0)
    assert lp30.temperatures[-1] == 30.0 and lp30.n_obs == 7
    assert lp30.lower_threshold == pytest.approx(10.0, abs=1e-9)


def test_linear_part_matches_linregress():
    # Campbell et al. (1974): t = -a/b, K = 1/b; se(t) = (rbar/b) sqrt(s2/(N rbar**2) +
    # (se_b/b)**2), se(K) = se_b/b**2  # from memory (the se formulas; the next test checks
    # them against the delta method). Reference: scipy.stats.linregress on the same rows.
    rng = np.random.default_rng(4)
    t = np.repeat([12.0, 15, 18, 21, 24, 27, 31], 3)
    r = draw(linear_rate(t, 9.0, 300.0), np.ones(t.size), 0.003, rng)
    r[t == 31] = 0.03  # a decline after 27 °C
    lp = linear_part(LabData(t, 1 / r, None))
    keep = t < 27
    lr = stats.linregress(t[keep], r[keep])
    b, a, nk = lr.slope, lr.intercept, keep.sum()
    s2 = lr.stderr**2 * np.sum((t[keep] - t[keep].mean()) ** 2)
    rbar = r[keep].mean()
    se_t = (rbar / b) * math.sqrt(s2 / (nk * rbar**2) + (lr.stderr / b) ** 2)
    assert lp.n_obs == nk
    assert lp.slope == pytest.approx(b, rel=1e-10)
    assert lp.intercept == pytest.approx(a, rel=1e-10)
    assert lp.lower_threshold == pytest.approx(-a / b, rel=1e-10)
    assert lp.degree_days_per_generation == pytest.approx(1 / b, rel=1e-10)
    assert lp.degree_days_per_generation_se == pytest.approx(lr.stderr / b**2, rel=1e-8)
    assert lp.lower_threshold_se == pytest.approx(se_t, rel=1e-8)
    assert lp.r_squared == pytest.approx(lr.rvalue**2, rel=1e-10)


def test_linear_part_weighted_matches_polyfit_delta_method():
    # weighted: numpy.polyfit with w = sqrt(n) (weights of the unsquared residuals) and its
    # scaled covariance; se of the x-intercept -a/b by the delta method must equal the
    # Campbell et al. (1974) formula (they are the same first-order approximation).
    rng = np.random.default_rng(8)
    t = np.arange(12.0, 30.0, 2.0)
    n = rng.integers(5, 50, t.size).astype(float)
    r = draw(linear_rate(t, 10.5, 280.0), n, 0.01, rng)
    lp = linear_part(LabData(t, 1 / r, n), max_temperature=30.0)
    (b, a), cov = np.polyfit(t, r, 1, w=np.sqrt(n), cov=True)
    grad = np.array([a / b**2, -1 / b])  # d(-a/b)/d(b, a)
    assert lp.slope == pytest.approx(b, rel=1e-9)
    assert lp.lower_threshold == pytest.approx(-a / b, rel=1e-9)
    assert lp.lower_threshold_se == pytest.approx(math.sqrt(grad @ cov @ grad), rel=1e-6)
    assert lp.degree_days_per_generation_se == pytest.approx(math.sqrt(cov[0, 0]) / b**2,
                                                             rel=1e-6)


def test_linear_part_needs_three_temperatures(tmp_path):
    t = np.array([12.0, 15, 18, 21, 24])
    r = np.array([0.02, 0.04, 0.06, 0.03, 0.01])  # peak at 18 °C: only 12 and 15 below
    with pytest.raises(InputError, match=r"lab data few\.csv: only 2 temperatures below"):
        linear_part(LabData(t, 1 / r, source="few.csv"))


# ------------------------------------------------------------------- CSV input
GOOD_CSV = """\
# invented rearing data (tests)
Temp (°C); development time ; sample_size ; stage
12;  50.0; 20; egg
15;  20.0; 25; egg   # trailing comment

18;  12.5; 30; egg
21;  9.09; 30; egg
24;  7.14; 28; egg
"""


def test_read_lab_csv_header_spellings_comments(tmp_path):
    data = read_lab_csv(write_csv(tmp_path, GOOD_CSV))
    np.testing.assert_array_equal(data.temperature, [12, 15, 18, 21, 24])
    np.testing.assert_array_equal(data.days, [50.0, 20.0, 12.5, 9.09, 7.14])
    np.testing.assert_array_equal(data.n, [20, 25, 30, 30, 28])
    assert data.source.endswith("lab.csv")
    plain = read_lab_csv(write_csv(tmp_path, "t_c,days\n10,40\n14,20\n18,12\n22,9\n", "p.csv"))
    assert plain.n is None and len(plain) == 4


@pytest.mark.parametrize("text, pattern", [
    ("temperature,days,n\n12,50,10\n15,20,10\n18,12,10\n",
     r"lab\.csv: only 3 distinct temperatures .*at least 4 .*more than k.*briere1"),
    ("temperature,days\n12,50\n15,0\n18,12\n21,9\n",
     r"lab\.csv: line 3, column days: development time must be positive"),
    ("temperature,days\n12,50\n15,-2\n18,12\n21,9\n",
     r"lab\.csv: line 3, column days: development time must be positive"),
    ("temperature,n\n12,5\n15,5\n18,5\n21,5\n",
     r"lab\.csv: no days column .*development_time"),
    ("temp,days\n12,50\n15,twenty\n18,12\n21,9\n",
     r"lab\.csv: line 3, column days: 'twenty' is not a number"),
    ("temp,days\n12,50\n15,20\n18,nan\n21,9\n",
     r"lab\.csv: line 4, column days: 'nan' is not a finite number"),
    ("temp,days\n12,50\n,20\n18,12\n21,9\n",
     r"lab\.csv: line 3, column temp: empty cell"),
    ("temp,days,n\n12,50,10\n15,20,0\n18,12,10\n21,9,10\n",
     r"lab\.csv: line 3, column n: sample size must be positive"),
    ("temp,temperature,days\n12,12,50\n",
     r"lab\.csv: columns temp, temperature all look like the temperature column"),
])
def test_read_lab_csv_errors_name_file_line_column(tmp_path, text, pattern):
    with pytest.raises(InputError, match=pattern) as err:
        read_lab_csv(write_csv(tmp_path, text))
    assert "\n" not in str(err.value)


def test_read_lab_csv_missing_file(tmp_path):
    with pytest.raises(InputError, match="not_there.csv: file not found"):
        read_lab_csv(tmp_path / "not_there.csv")


def test_labdata_checks_arrays():
    with pytest.raises(InputError, match="row 2, column days"):
        LabData([10, 15, 20, 25], [30, -1, 10, 8])
    with pytest.raises(InputError, match=f"at least {MIN_TEMPERATURES}"):
        LabData([10, 10, 20, 20], [30, 31, 10, 11])


# ------------------------------------------------------------ failure reporting
FIVE_T = np.array([12.0, 16, 20, 24, 28])


def five_temperature_data():
    return LabData(FIVE_T, 1 / briere1(FIVE_T, **BRIERE1_LB), np.full(5, 10.0),
                   source="five.csv")


def test_model_with_too_many_parameters_for_the_data():
    with pytest.raises(InputError, match=r"five\.csv: sharpe_schoolfield has 6 parameters "
                                         r"and needs more than 6 distinct temperatures"):
        fit_model(five_temperature_data(), "sharpe_schoolfield")


def test_non_convergence_is_reported_not_raised():
    res = fit_model(five_temperature_data(), "briere2", max_nfev=1)
    assert not res.converged
    assert "without converging" in res.message
    ranked = fit_all(five_temperature_data(), models=("sharpe_schoolfield", "briere1"))
    assert [r.model for r in ranked] == ["briere1", "sharpe_schoolfield"]
    assert ranked[0].converged and not ranked[1].converged
    assert "needs more than 6 distinct temperatures" in ranked[1].message
    assert all(math.isnan(v) for v in ranked[1].params.values())


def test_fit_all_raises_when_nothing_converges():
    with pytest.raises(InputError, match=r"five\.csv: no rate model converged \(sharpe"):
        fit_all(five_temperature_data(), models=("sharpe_schoolfield",))


# -------------------------------------------------------------- profile output
def briere_fit_and_data():
    rng = np.random.default_rng(12)
    t = np.arange(12.0, 33.0, 2.0)
    n = np.full(t.size, 30.0)
    data = LabData(t, 1 / draw(briere1(t, **BRIERE1_LB), n, 0.02, rng), n,
                   source="/some/where/rearing.csv")
    return fit_model(data, "briere1"), data


def test_write_profile_toml(tmp_path):
    res, data = briere_fit_and_data()
    out = write_profile_toml(res, data, tmp_path / "moth.toml", organism_name='Test "moth"')
    with out.open("rb") as fh:
        doc = tomllib.load(fh)
    assert doc["organism"] == {"name": 'Test "moth"', "role": "pest",
                               "source": "fitted by suitmap fit from rearing.csv"}
    dev = doc["development"]
    curve = dev.pop("rate_curve")
    lp = linear_part(data)
    assert dev == {"lower_threshold": lp.lower_threshold, "upper_threshold": res.params["t_high"],
                   "degree_days_per_generation": lp.degree_days_per_generation,
                   "method": "single_sine", "cutoff": "vertical"}  # none above the curve's limit
    assert curve == {"model": "briere1", **res.params}  # full precision round trip
    # the whole file, rate curve included, is a valid suitmap profile
    prof = profile_from_dict({**doc, "development": {**dev, "rate_curve": curve}}, where=str(out))
    assert prof.development.rate_curve.model == "briere1"
    assert os.listdir(tmp_path) == ["moth.toml"]  # no temporary file left


def test_write_profile_toml_optimum_and_overwrite(tmp_path):
    res, data = briere_fit_and_data()
    path = tmp_path / "moth.toml"
    write_profile_toml(res, data, path, organism_name="moth")
    before = path.read_bytes()
    with pytest.raises(OutputError, match="moth.toml already exists"):
        write_profile_toml(res, data, path, organism_name="moth", upper="optimum")
    assert path.read_bytes() == before
    write_profile_toml(res, data, path, organism_name="moth", upper="optimum", overwrite=True)
    with path.open("rb") as fh:
        dev = tomllib.load(fh)["development"]
    # Briere-1 optimum (Briere et al. 1999): [4TL + 3T0 + sqrt(16TL^2 + 9T0^2 - 16 T0 TL)]/10
    t0, tl = res.params["t_low"], res.params["t_high"]
    topt = (4 * tl + 3 * t0 + math.sqrt(16 * tl**2 + 9 * t0**2 - 16 * t0 * tl)) / 10
    assert dev["upper_threshold"] == pytest.approx(topt, rel=1e-9)
    assert dev["cutoff"] == "horizontal"   # development goes on above the optimum


def test_write_profile_refuses_non_converged(tmp_path):
    res = fit_model(five_temperature_data(), "briere2", max_nfev=1)
    with pytest.raises(InputError, match="did not converge"):
        write_profile_toml(res, five_temperature_data(), tmp_path / "x.toml", organism_name="x")
    assert not (tmp_path / "x.toml").exists()


def test_upper_limit_per_model():
    res, data = briere_fit_and_data()
    assert upper_limit(res, data) == res.params["t_high"]
    lin = fit_model(data, "linear")
    assert upper_limit(lin, data) == data.temperature.max()
    lac = fit_model(data, "lactin2")
    u = upper_limit(lac, data)
    assert lac.rate(u - 1e-6) > 0 and lac.rate(u + 1e-6) == 0  # the curve's upper zero
    assert u <= lac.params["t_high"]


# ----------------------------------------------------------------------- figure
def test_plot_fits_writes_png(tmp_path):
    from matplotlib.image import imread

    res, data = briere_fit_and_data()
    failed = fit_model(data, "briere2", max_nfev=1)
    ranked = [res, fit_model(data, "linear"), failed]
    out = plot_fits(data, ranked, tmp_path / "fits.png")
    assert out.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    img = imread(out)
    assert img.shape[0] > 300 and img.shape[1] > 400
    with pytest.raises(OutputError, match="already exists"):
        plot_fits(data, ranked, out)
    assert os.listdir(tmp_path) == ["fits.png"]


def test_fit_result_rate_uses_kernel():
    res, _ = briere_fit_and_data()
    assert isinstance(res, FitResult)
    np.testing.assert_allclose(res.rate([15.0, 25.0]), briere1([15.0, 25.0], **res.params),
                               rtol=1e-12)


def test_summary_line():
    res, data = briere_fit_and_data()
    line = res.summary()
    assert line.startswith("briere1: AIC ") and "t_high = " in line and "\n" not in line
    failed = fit_model(data, "briere2", max_nfev=1)
    assert failed.summary().startswith("briere2: not converged (")

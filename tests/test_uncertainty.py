"""Parameter uncertainty: probability layers against the normal distribution, draws by seed."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.stats import norm

import suitmap
from conftest import write_period, write_profile, write_runfile
from suitmap.config.profile import profile_from_dict
from suitmap.errors import ProfileError
from suitmap.pipeline.uncertainty import draw_profiles

MEAN, SD, N = 1500.0, 200.0, 150


def _run(tmp_path, seed=7):
    # 20 °C every day of 2001 (Tmin = Tmax, lower threshold 10): 3650 °C·day a season, so
    # complete generations = floor(3650 / D) with D ~ N(1500, 200²) the thermal constant
    tmp_path.mkdir(parents=True, exist_ok=True)
    t = np.full((365, 2, 2), 20.0)
    prof = write_profile(tmp_path, lower=10.0, upper=30.0, ddg=MEAN)
    prof.write_text(prof.read_text() + f"""
[suitability]
saturating_generations = 3

[uncertainty]
parameters = ["degree_days_per_generation"]
covariance = [[{SD ** 2}]]
""")
    b = write_period(tmp_path / "c", "b", t, t.copy())
    return write_runfile(tmp_path, prof, [{"name": "baseline", "years": (2001, 2001),
                                           "tmin": f"c/{b[0]}", "tmax": f"c/{b[1]}"}],
                         extra=f"\n[compute]\nparameter_draws = {N}\nparameter_seed = {seed}\n")


def test_probability_layers_match_the_normal_distribution(tmp_path):
    ds = suitmap.compute_run(_run(tmp_path)).compute().periods["baseline"]
    # at least n generations  <=>  D <= 3650 / n; within four binomial standard errors
    for n in (1, 2, 3):
        expected = norm.cdf((3650 / n - MEAN) / SD)
        se = np.sqrt(expected * (1 - expected) / N)
        np.testing.assert_allclose(ds[f"probability_generations_ge_{n}"].values, expected,
                                   atol=4 * se + 1e-6)
    # suitability = min(1, 3650 / D / 3) falls with D: its p10 is at D's 90th percentile
    for q, z in ((10, norm.ppf(0.9)), (50, 0.0), (90, norm.ppf(0.1))):
        expected = min(1.0, 3650 / (MEAN + z * SD) / 3)
        np.testing.assert_allclose(ds[f"suitability_p{q}"].values, expected, atol=0.04)
    assert "seed 7" in ds.attrs["parameter_draws"]


def test_draws_are_reproducible_by_seed():
    prof = profile_from_dict({"organism": {"name": "x"},
                              "development": {"lower_threshold": 10, "upper_threshold": 30,
                                              "degree_days_per_generation": 300},
                              "uncertainty": {"parameters": ["lower_threshold",
                                                             "degree_days_per_generation"],
                                              "covariance": [[1.0, -5.0], [-5.0, 900.0]]}})
    _, a, _ = draw_profiles(prof, 50, 3)
    _, b, _ = draw_profiles(prof, 50, 3)
    _, c, _ = draw_profiles(prof, 50, 4)
    np.testing.assert_array_equal(a, b)
    assert not np.array_equal(a, c)
    # the sample covariance approaches the given one (loosely, 50 draws)
    assert np.cov(a.T)[0, 0] == pytest.approx(1.0, rel=0.5)


def test_bad_covariance_is_refused():
    base = {"organism": {"name": "x"},
            "development": {"lower_threshold": 10, "upper_threshold": 30,
                            "degree_days_per_generation": 300}}
    for unc, needle in (({"parameters": ["lower_threshold"], "covariance": [[-1.0]]}, "positive"),
                        ({"parameters": ["wingspan"], "covariance": [[1.0]]}, "parameters"),
                        ({"parameters": ["lower_threshold"], "covariance": [[1.0, 0.0]]}, "1 x 1")):
        with pytest.raises(ProfileError, match=needle):
            profile_from_dict({**base, "uncertainty": unc})


def _curve_run(tmp_path, a_mean, a_sd, n_draws):
    # 20 °C every day of 2001 under a Briere-1 curve, r = a T (T - T0) sqrt(TL - T) (Briere
    # et al. 1999, eq. 2): linear in a, so with a ~ N(mean, sd²) a season's development
    # 365 r(20) is normal too and complete generations >= n has a normal probability
    tmp_path.mkdir(parents=True, exist_ok=True)
    t = np.full((365, 2, 2), 20.0)
    prof = write_profile(tmp_path, lower=10.0, upper=34.0, ddg=300.0)
    prof.write_text(prof.read_text() + f"""
[development.rate_curve]
model = "briere1"
a = {float(a_mean)!r}
t_low = 10.0
t_high = 34.0

[uncertainty]
parameters = ["rate_curve.a"]
covariance = [[{float(a_sd) ** 2!r}]]
""")
    b = write_period(tmp_path / "c", "b", t, t.copy())
    return write_runfile(tmp_path, prof, [{"name": "baseline", "years": (2001, 2001),
                                           "tmin": f"c/{b[0]}", "tmax": f"c/{b[1]}"}],
                         extra=f"\n[compute]\nparameter_draws = {n_draws}\nparameter_seed = 5\n")


def test_draws_of_a_rate_curve_move_the_generations(tmp_path):
    per_a = 365 * 20.0 * (20.0 - 10.0) * np.sqrt(34.0 - 20.0)   # development per unit a
    mean, sd = 2.0 / per_a, 0.5 / per_a                          # 2.0 ± 0.5 generations
    ds = suitmap.compute_run(_curve_run(tmp_path, mean, sd, N)).compute().periods["baseline"]
    for n in (1, 2, 3):
        expected = norm.sf((n / per_a - mean) / sd)
        se = np.sqrt(expected * (1 - expected) / N)
        np.testing.assert_allclose(ds[f"probability_generations_ge_{n}"].values, expected,
                                   atol=4 * se + 0.01)
    assert "rate_curve.a" in ds.attrs["parameter_draws"]


def test_draws_that_cannot_move_the_generations_are_refused():
    base = {"organism": {"name": "x"},
            "development": {"lower_threshold": 10, "upper_threshold": 34,
                            "degree_days_per_generation": 300,
                            "rate_curve": {"model": "briere1", "a": 2e-4, "t_low": 10.0,
                                           "t_high": 34.0}}}
    only_dd = {"parameters": ["lower_threshold"], "covariance": [[1.0]]}
    with pytest.raises(ProfileError, match="generations come from the curve.*rate_curve.a"):
        profile_from_dict({**base, "uncertainty": only_dd})
    with pytest.raises(ProfileError, match="parameters"):
        profile_from_dict({**base, "uncertainty": {"parameters": ["rate_curve.wings"],
                                                   "covariance": [[1.0]]}})
    staged = {"organism": {"name": "x"},
              "development": {"lower_threshold": 10, "upper_threshold": 30,
                              "degree_days_per_generation": 300},
              "stage": [{"name": "egg", "degree_days": 100}, {"name": "larva", "degree_days": 200}],
              "uncertainty": only_dd}
    with pytest.raises(ProfileError, match="stage"):
        profile_from_dict(staged)

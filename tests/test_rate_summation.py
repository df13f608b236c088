"""Generations by rate summation (a development-rate curve over the day) in period layers."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.integrate import quad

import suitmap
from climate_fixtures import make_tmin_tmax
from conftest import write_period, write_runfile

CURVE_PROFILE = """
[organism]
name = "test moth (invented)"
[development]
lower_threshold = {lower}
upper_threshold = {upper}
{ddg}
method = "single_sine"
cutoff = "horizontal"
diurnal = "{diurnal}"
[development.rate_curve]
{curve}
"""


def case(tmp_path, curve, *, lower=10.0, upper=30.0, ddg="", diurnal="sine", n=365, seed=2,
         fast=True):
    tmin, tmax = make_tmin_tmax(n, 2, 2, mean=16.0, seed=seed)
    tmp_path.mkdir(parents=True, exist_ok=True)
    prof = tmp_path / "profile.toml"
    prof.write_text(CURVE_PROFILE.format(lower=lower, upper=upper, ddg=ddg, diurnal=diurnal,
                                         curve=curve))
    b = write_period(tmp_path / "c", "b", tmin, tmax)
    run = write_runfile(tmp_path, prof, [{"name": "baseline", "years": (2001, 2001),
                                          "tmin": f"c/{b[0]}", "tmax": f"c/{b[1]}"}],
                        extra=f"[compute]\nfast_tables = {'true' if fast else 'false'}")
    return suitmap.compute_run(run).compute().periods["baseline"], tmin, tmax


def test_linear_curve_equals_degree_days_without_cutoff(tmp_path):
    """Rate (T - t_low)/K summed over the sine day is single-sine degree-days / K with no
    upper cutoff (Baskerville & Emin 1969): a consistency check between the two paths."""
    ds, _, _ = case(tmp_path, 'model = "linear"\nt_low = 10.0\nthermal_constant = 300.0',
                    upper=65.0, ddg="degree_days_per_generation = 300.0", fast=False)
    # 65 degC: the highest threshold a profile accepts, above every day of the case
    np.testing.assert_allclose(ds["generations"].values, ds["degree_days"].values / 300.0,
                               rtol=1e-6)
    assert "rate summation" in ds.attrs["generations_from"]


def briere(t, a=3.0e-5, t0=9.5, tl=35.0):
    # Briere et al. 1999 (Environ. Entomol. 28:22-29), Briere-1 written out here
    return a * t * (t - t0) * math.sqrt(tl - t) if t0 < t < tl else 0.0


@pytest.mark.parametrize("fast, rel", [(False, 1e-5), (True, 1e-3)])
def test_briere_generations_match_quadrature(tmp_path, fast, rel):
    ds, tmin, tmax = case(tmp_path, 'model = "briere1"\na = 3.0e-5\nt_low = 9.5\nt_high = 35.0',
                          fast=fast)
    j, i = 1, 0
    total, first = 0.0, None
    for k in range(365):
        m, a = (tmax[k, j, i] + tmin[k, j, i]) / 2, (tmax[k, j, i] - tmin[k, j, i]) / 2
        # the symmetric sine day the single-sine method assumes, integrated with scipy
        day = quad(lambda th: briere(m + a * math.sin(th)), 0, 2 * math.pi, limit=200)[0]
        total += day / (2 * math.pi)
        if first is None and total >= 1.0:
            first = k + 1
    assert ds["generations"].values[j, i] == pytest.approx(total, rel=rel)
    assert abs(ds["first_generation_day"].values[j, i] - first) <= (0 if not fast else 1)


@pytest.mark.parametrize("curve", [
    'model = "briere2"\na = 2.0e-5\nt_low = 9.0\nt_high = 34.0\nm = 2.0',
    'model = "lactin1"\nrho = 0.15543\nt_high = 38.0487\ndelta = 6.4212',
    'model = "sharpe_schoolfield"\nrho25 = 0.0455\nha = 8814.36\nhl = -14877.95\n'
    'tl_half = 298.81\nhh = 47258.52\nth_half = 316.695',
])
@pytest.mark.parametrize("diurnal", ["sine", "parton_logan"])
def test_fast_and_exact_paths_agree(tmp_path, curve, diurnal):
    """The fast (table) path must not change results beyond 1e-3 (seasonal totals)."""
    fast, _, _ = case(tmp_path / "f", curve, fast=True, seed=5, diurnal=diurnal)
    exact, _, _ = case(tmp_path / "e", curve, fast=False, seed=5, diurnal=diurnal)
    np.testing.assert_allclose(fast["generations"].values, exact["generations"].values, rtol=1e-3)


def test_parton_logan_day_runs_and_differs_from_sine(tmp_path):
    sine, _, _ = case(tmp_path / "s", 'model = "briere1"\na = 3.0e-5\nt_low = 9.5\nt_high = 35.0')
    pl, _, _ = case(tmp_path / "p", 'model = "briere1"\na = 3.0e-5\nt_low = 9.5\nt_high = 35.0',
                    diurnal="parton_logan")
    s, p = sine["generations"].values, pl["generations"].values
    assert np.isfinite(p).all() and (p > 0).all()
    # same Tmin/Tmax, another daily curve: close but not identical (Parton & Logan 1981)
    assert not np.allclose(s, p, rtol=1e-4) and np.allclose(s, p, rtol=0.25)


def test_public_api_on_numbers_and_xarray():
    import xarray as xr

    p = {"a": 3.0e-5, "t_low": 9.5, "t_high": 35.0}
    assert suitmap.development_rate(25.0, "briere1", **p) == pytest.approx(briere(25.0))
    m, a = 17.5, 7.5  # Tmin 10, Tmax 25
    want = quad(lambda th: briere(m + a * math.sin(th)), 0, 2 * math.pi)[0] / (2 * math.pi)
    exact = suitmap.daily_development(10.0, 25.0, "briere1", p, fast=False)
    assert exact == pytest.approx(want, rel=1e-6)
    # the default fast route reads a table: within 1e-3 of the integral (README)
    assert suitmap.daily_development(10.0, 25.0, "briere1", p) == pytest.approx(want, rel=1e-3)
    da = xr.DataArray(np.array([10.0, 12.0]), dims="time")
    out = suitmap.daily_development(da, da + 15.0, "briere1", p, fast=False)
    assert out.dims == ("time",) and out.values[0] == pytest.approx(want, rel=1e-6)
    with pytest.raises(ValueError, match="lat and doy"):
        suitmap.daily_development(10.0, 25.0, "briere1", p, diurnal="parton_logan")

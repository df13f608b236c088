"""Monthly climate input through a run file: both routes, and what they record."""

from __future__ import annotations

import textwrap

import numpy as np
import pandas as pd
import pytest
import xarray as xr
from scipy.stats import norm

import suitmap
from suitmap.errors import InputError
from conftest import write_profile


def write_monthly(path, values, times, var):
    """values (t, 2, 3) in °C on a 1-degree lat/lon grid."""
    da = xr.DataArray(values.astype("f4"), dims=("time", "lat", "lon"),
                      coords={"time": times, "lat": [49.5, 48.5], "lon": [0.5, 1.5, 2.5]}, name=var)
    da.attrs["units"] = "degC"
    da["lat"].attrs = {"units": "degrees_north", "standard_name": "latitude"}
    da["lon"].attrs = {"units": "degrees_east", "standard_name": "longitude"}
    da.to_dataset().rio.write_crs("EPSG:4326").to_netcdf(path)
    return path


def monthly_case(tmp_path, n_months, route_lines=""):
    times = pd.date_range("2001-01-01", periods=n_months, freq="MS") + pd.Timedelta(days=14)
    m = np.arange(n_months) % 12
    mean = 12.0 - 11.0 * np.cos(2 * np.pi * (m + 0.5) / 12)[:, None, None] + np.zeros((1, 2, 3))
    mean = mean + np.linspace(-1, 1, 6).reshape(1, 2, 3)
    write_monthly(tmp_path / "tn.nc", mean - 5.0, times, "tmin")
    write_monthly(tmp_path / "tx.nc", mean + 5.0, times, "tmax")
    prof = write_profile(tmp_path, lower=8.0, upper=30.0, ddg=300.0)
    run = tmp_path / "run.toml"
    run.write_text(textwrap.dedent(f"""
        [profile]
        path = "{prof.name}"
        [baseline]
        years = [2001, {2001 + max(n_months // 12, 1) - 1}]
        tmin = "tn.nc"
        tmax = "tx.nc"
        [output]
        dir = "results"
        [compute]
        """) + route_lines)
    return run, mean


def test_interpolated_series_keeps_monthly_means(tmp_path):
    run, mean = monthly_case(tmp_path, 24)
    pc = suitmap.open_period(suitmap.load_run(run).baseline, suitmap.load_profile(tmp_path / "profile.toml"))
    daily = ((pc.tmin + pc.tmax) / 2).load()
    assert daily.sizes["time"] == 730
    monthly = daily.groupby(daily["time"].dt.year * 100 + daily["time"].dt.month).mean()
    np.testing.assert_allclose(monthly.values, mean, atol=1e-4)  # float32 days
    ds = suitmap.compute_run(run).compute().periods["baseline"]
    assert ds.attrs["seasons"] == 2
    assert ds.attrs["monthly_route"].startswith("interpolate")


def test_climatology_is_repeated_every_year(tmp_path):
    run, _ = monthly_case(tmp_path, 12)
    text = run.read_text().replace("years = [2001, 2001]", "years = [2001, 2003]")
    run.write_text(text)
    ds = suitmap.compute_run(run).compute().periods["baseline"]
    assert ds.attrs["seasons"] == 3
    assert "climatology" in ds.attrs["monthly_route"]


def test_normal_route_matches_thom_formula(tmp_path):
    run, mean = monthly_case(tmp_path, 12, 'monthly_route = "normal"\ndaily_sd = 3.0\n')
    ds = suitmap.compute_run(run).compute().periods["baseline"]
    # the normal-model expectation written out here: N * E[clip(T - L, 0, U - L)], T ~ N(mu, sd)
    # (Thom-type method, from memory: Thom 1954)
    def expected(mu, sd=3.0, lo=8.0, hi=30.0, n=1):
        g = lambda c: (mu - c) * norm.cdf((mu - c) / sd) + sd * norm.pdf((mu - c) / sd)
        return n * (g(lo) - g(hi))
    days = np.array([31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31])
    want = sum(expected(mean[k], n=days[k]) for k in range(12))
    np.testing.assert_allclose(ds["degree_days"].values, want, rtol=1e-5)
    assert ds.attrs["monthly_route"].startswith("normal")
    assert "first_generation_day" not in ds


def test_normal_route_needs_daily_sd(tmp_path):
    run, _ = monthly_case(tmp_path, 12, 'monthly_route = "normal"\n')
    with pytest.raises(suitmap.errors.InputError, match="daily_sd"):
        suitmap.compute_run(run)


def test_climatology_with_a_month_dimension(tmp_path):
    """A 12-month climatology on a 'month' dimension (1-12, here stored December first) gives
    the same daily values as the same climatology on a CF time axis."""
    run, mean = monthly_case(tmp_path, 12)
    prof = suitmap.load_profile(tmp_path / "profile.toml")
    ref = suitmap.open_period(suitmap.load_run(run).baseline, prof)
    order = np.r_[11, np.arange(11)]
    for var, values in (("tmin", mean - 5.0), ("tmax", mean + 5.0)):
        da = xr.DataArray(values[order].astype("f4"), dims=("month", "lat", "lon"), name=var,
                          coords={"month": order + 1, "lat": [49.5, 48.5], "lon": [0.5, 1.5, 2.5]},
                          attrs={"units": "degC"})
        da["lat"].attrs = {"units": "degrees_north", "standard_name": "latitude"}
        da["lon"].attrs = {"units": "degrees_east", "standard_name": "longitude"}
        (tmp_path / f"{var}_clim.nc").unlink(missing_ok=True)
        da.to_dataset().rio.write_crs("EPSG:4326").to_netcdf(tmp_path / f"{var}_clim.nc")
    run.write_text(run.read_text().replace('"tn.nc"', '"tmin_clim.nc"').replace('"tx.nc"', '"tmax_clim.nc"'))
    got = suitmap.open_period(suitmap.load_run(run).baseline, prof)
    np.testing.assert_allclose(got.tmin.values, ref.tmin.values, atol=1e-6)
    np.testing.assert_allclose(got.tmax.values, ref.tmax.values, atol=1e-6)


@pytest.mark.parametrize("route", ['monthly_route = "interpolate"\n',
                                   'monthly_route = "normal"\ndaily_sd = 3.0\n'])
def test_both_routes_refuse_a_series_missing_months(tmp_path, route):
    """A series starting in March 2001 for years 2001-2002: January and February are missing;
    both routes apply one rule (the normal route used to sum the season without them)."""
    run, mean = monthly_case(tmp_path, 24, route)
    times = pd.date_range("2001-03-01", periods=22, freq="MS") + pd.Timedelta(days=14)
    write_monthly(tmp_path / "tn.nc", mean[2:] - 5.0, times, "tmin")
    write_monthly(tmp_path / "tx.nc", mean[2:] + 5.0, times, "tmax")
    with pytest.raises(InputError, match="2 missing, the first 2001-01"):
        suitmap.compute_run(run)

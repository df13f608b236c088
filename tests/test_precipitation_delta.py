"""Precipitation in delta-change scenarios (monthly ratios) and from GeoTIFF files."""

from __future__ import annotations

import calendar
import textwrap

import numpy as np
import pytest
import xarray as xr

import suitmap
from climate_fixtures import make_tmin_tmax, write_geotiff_daily, write_netcdf_daily
from conftest import write_period, write_profile, write_runfile
from suitmap.cli import main

# Monthly change factors chosen for the test (future / historical model climatology), and the
# model's historical monthly rates (mm/day).  April: the model's historical month is drier
# than 0.1 mm/day, so the guard keeps the observed month (factor 1); September: a ratio of
# 8 is capped at 5 (module docstring of suitmap.climate.delta_precipitation).
HIST = np.array([2.0, 2.0, 1.5, 0.05, 1.0, 0.8, 0.5, 0.6, 0.2, 1.2, 2.5, 3.0])
RATIO = np.array([1.2, 1.0, 0.5, 3.0, 1.5, 0.8, 0.6, 2.0, 8.0, 1.1, 1.3, 0.9])
APPLIED = np.where(HIST < 0.1, 1.0, np.minimum(RATIO, 5.0))


def _monthly_series(values_by_month, first_year, n_years, ny, nx):
    """Daily (time, y, x) arrays whose every day of month m holds values_by_month[m-1]."""
    days = []
    for y in range(first_year, first_year + n_years):
        for m in range(1, 13):
            days += [values_by_month[m - 1]] * calendar.monthrange(y, m)[1]
    return np.broadcast_to(np.array(days)[:, None, None], (len(days), ny, nx)).copy()


def test_monthly_ratios_by_hand():
    from suitmap.climate.delta_precipitation import apply_ratios, monthly_ratios

    hist = _monthly_series(HIST, 1981, 2, 2, 3)
    fut = _monthly_series(HIST * RATIO, 2051, 2, 2, 3)
    obs = np.full((730, 2, 3), 3.0)

    def da(a, start):
        t = xr.date_range(start, periods=a.shape[0], freq="D")
        return xr.DataArray(a.astype("float32"), dims=("time", "y", "x"),
                            coords={"time": t, "y": [50.5, 49.5], "x": [0.5, 1.5, 2.5]}
                            ).rio.write_crs("EPSG:4326")

    f = monthly_ratios(da(hist, "1981-01-01"), da(fut, "2051-01-01")).values
    np.testing.assert_allclose(f[:, 0, 0], APPLIED, rtol=1e-6)
    scen = apply_ratios(da(obs, "2001-01-01"), monthly_ratios(da(hist, "1981-01-01"),
                                                              da(fut, "2051-01-01")))
    # by hand: a month's total = its days × 3 mm × its factor (2001 is not a leap year)
    days = np.array([calendar.monthrange(2001, m)[1] for m in range(1, 13)])
    monthly = scen.isel(time=slice(0, 365)).groupby("time.month").sum().values[:, 1, 1]
    np.testing.assert_allclose(monthly, days * 3.0 * APPLIED, rtol=1e-6)


def _delta_case(tmp_path):
    tmin, tmax = make_tmin_tmax(730, 4, 5, mean=15.0, seed=8)
    prof = write_profile(tmp_path, ddg=250.0)
    prof.write_text(prof.read_text() + "\n[moisture]\nmin_annual_precipitation = 400.0\n")
    write_period(tmp_path / "obs", "obs", tmin, tmax, start="2001-01-01")
    write_netcdf_daily(tmp_path / "obs/obs_pr.nc", np.full((730, 4, 5), 3.0), var="pr",
                       units="mm/day", standard_name=False, crs="EPSG:4326")
    # a coarse invented model (2 x 3 cells of 2 degrees): temperatures unchanged, precipitation
    # by the monthly factors above, given as a CF flux (kg m-2 s-1) to exercise the units
    (tmp_path / "cm").mkdir()
    mn, mx = make_tmin_tmax(730, 2, 3, seed=30)
    for label, start, y0, pr in (("hist", "1981-01-01", 1981, HIST),
                                 ("fut", "2053-01-01", 2053, HIST * RATIO)):
        for role, arr in (("tasmin", mn), ("tasmax", mx)):
            write_netcdf_daily(tmp_path / "cm" / f"m_{label}_{role}.nc", arr, var=role,
                               role="tmin" if role == "tasmin" else "tmax", start=start,
                               res=2.0, lon0=-2.0, lat0=50.0, crs="EPSG:4326")
        write_netcdf_daily(tmp_path / "cm" / f"m_{label}_pr.nc",
                           _monthly_series(pr, y0, 2, 2, 3) / 86400.0, var="pr",
                           units="kg m-2 s-1", standard_name=False, start=start, res=2.0,
                           lon0=-2.0, lat0=50.0, crs="EPSG:4326")
    run = tmp_path / "run.toml"
    run.write_text(textwrap.dedent("""
        [profile]
        path = "profile.toml"
        [baseline]
        years = [2001, 2002]
        tmin = "obs/obs_tmin.nc"
        tmax = "obs/obs_tmax.nc"
        pr = "obs/obs_pr.nc"
        [[scenario]]
        name = "model_delta"
        years = [2053, 2054]
        tmin = "cm/m_fut_tasmin.nc"
        tmax = "cm/m_fut_tasmax.nc"
        pr = "cm/m_fut_pr.nc"
        downscale = { method = "delta", historical_tmin = "cm/m_hist_tasmin.nc", historical_tmax = "cm/m_hist_tasmax.nc", historical_pr = "cm/m_hist_pr.nc", historical_years = [1981, 1982], smoothing = "monthly" }
        [output]
        dir = "results"
        """))
    return run


def test_delta_scenario_carries_precipitation_by_monthly_ratio(tmp_path):
    # observed 3 mm every day; scenario year total by hand = Σ_m days_m × 3 × factor_m
    # (2001 and 2002 have no 29 February), uniform factors survive bilinear regridding
    layers = suitmap.compute_run(_delta_case(tmp_path)).compute()
    days = np.array([calendar.monthrange(2001, m)[1] for m in range(1, 13)])
    expected = float((days * 3.0 * APPLIED).sum())
    np.testing.assert_allclose(layers.periods["model_delta"]["annual_precipitation"].values,
                               expected, rtol=1e-5)
    np.testing.assert_allclose(layers.periods["baseline"]["annual_precipitation"].values,
                               365 * 3.0, rtol=1e-5)
    assert "monthly future/historical ratio" in layers.periods["model_delta"].attrs["downscaling"]
    np.testing.assert_allclose(
        layers.comparisons["model_delta_vs_baseline"]["change_annual_precipitation"].values,
        expected - 365 * 3.0, rtol=1e-4)


def test_delta_with_pr_needs_the_historical_pr(tmp_path):
    from suitmap.config.runfile import load_run
    from suitmap.errors import RunFileError

    run = _delta_case(tmp_path)
    run.write_text(run.read_text().replace('historical_pr = "cm/m_hist_pr.nc", ', ""))
    with pytest.raises(RunFileError, match=r"scenario\[0\]\.downscale\.historical_pr"):
        load_run(run)


# ------------------------------------------------------------------ GeoTIFF input
def _pr_case(tmp_path, pr, *, fmt, units="mm/day"):
    tmp_path.mkdir(parents=True, exist_ok=True)
    tmin, tmax = make_tmin_tmax(730, 3, 4, mean=20.0, seed=1)
    prof = write_profile(tmp_path)
    prof.write_text(prof.read_text() + "\n[moisture]\nmin_annual_precipitation = 900.0\n"
                    "max_dry_months = 2\n")
    b = write_period(tmp_path / "climate", "base", tmin, tmax, start="2001-01-01")
    if fmt == "nc":
        write_netcdf_daily(tmp_path / "climate/pr.nc", pr, var="pr", units=units,
                           standard_name=False, crs="EPSG:4326")
    else:   # the GeoTIFF writer of the fixtures writes values as given with a units tag
        dates = [str(d) for d in np.arange("2001-01-01", "2003-01-01", dtype="datetime64[D]")]
        write_geotiff_daily(tmp_path / "climate/pr.tif", pr, dates, units=units)
    run = write_runfile(tmp_path, prof, [{"name": "baseline", "years": (2001, 2002),
                                          "tmin": f"climate/{b[0]}", "tmax": f"climate/{b[1]}"}],
                        formats=("geotiff",))
    run.write_text(run.read_text().replace('tmax = "climate/base_tmax.nc"',
                                           f'tmax = "climate/base_tmax.nc"\npr = "climate/pr.{fmt}"'))
    return run


def test_geotiff_precipitation_gives_the_netcdf_layers(tmp_path):
    rng = np.random.default_rng(5)
    pr = rng.gamma(0.6, 4.0, size=(730, 3, 4)) * (rng.random((730, 3, 4)) < 0.4)
    pr[:, 0, 0] = np.nan     # a missing cell stays missing in both
    a = suitmap.compute_run(_pr_case(tmp_path / "nc", pr, fmt="nc")).compute()
    b = suitmap.compute_run(_pr_case(tmp_path / "tif", pr, fmt="tif")).compute()
    pa, pb = a.periods["baseline"], b.periods["baseline"]
    for name in ("annual_precipitation", "dry_months", "aridity_index", "moisture_score",
                 "suitability", "limiting_factor"):
        np.testing.assert_array_equal(pa[name].values, pb[name].values, err_msg=name)
    assert np.isfinite(pa["annual_precipitation"].values[1:]).all()
    # the daily values as written, summed per year by numpy (float32 as stored)
    expected = pr.astype("float32").astype(float).reshape(2, 365, 3, 4).sum(axis=1).mean(axis=0)
    np.testing.assert_allclose(pb["annual_precipitation"].values, expected, rtol=1e-5)


@pytest.mark.parametrize("units, needle", [("furlongs", "units 'furlongs'"),
                                           (None, "no units")])
def test_geotiff_precipitation_with_bad_units_is_named(tmp_path, capsys, units, needle):
    run = _pr_case(tmp_path, np.full((730, 3, 4), 2.0), fmt="tif", units=units)
    code = main(["run", str(run)])
    err = capsys.readouterr().err
    lines = [ln for ln in err.splitlines() if ln.startswith("suitmap: error:")]
    assert code == 2 and len(lines) == 1 and "Traceback" not in err
    assert "pr.tif" in lines[0] and needle in lines[0]
    assert not (tmp_path / "results").exists()


# ------------------------------------------------------------------ scenario sets
def test_scenario_set_with_delta_carries_precipitation(tmp_path):
    from suitmap.config.runfile import load_run
    from suitmap.errors import RunFileError

    for m in ("alpha", "beta"):
        for pw, span in (("historical", "1991-2014"), ("lowpath", "2041-2070")):
            for v in ("tasmin", "tasmax", "pr"):
                (tmp_path / "cm").mkdir(exist_ok=True)
                (tmp_path / f"cm/{m}_{pw}_{v}_{span}.nc").write_bytes(b"")
    run = tmp_path / "run.toml"
    head = textwrap.dedent("""
        [profile]
        path = "p.toml"
        [baseline]
        years = [1991, 2014]
        tmin = "obs_tmin.nc"
        tmax = "obs_tmax.nc"
        pr = "obs_pr.nc"
        [[scenario_set]]
        files = "cm/{model}_{pathway}_{variable}_{*}.nc"
        periods = { historical = [1991, 2014], mid-century = [2041, 2070] }
        historical = "historical"
        downscale = { method = "delta", smoothing = "monthly" }
        """)
    run.write_text(head + 'variables = { tmin = "tasmin", tmax = "tasmax", pr = "pr" }\n')
    r = load_run(run)
    fut = next(s for s in r.scenarios if s.name == "alpha_lowpath_mid-century")
    assert fut.pr.patterns == (str(tmp_path / "cm/alpha_lowpath_pr_2041-2070.nc"),)
    assert fut.delta.historical_pr.patterns == (str(tmp_path / "cm/alpha_historical_pr_1991-2014.nc"),)
    assert fut.pr.variable == "pr"
    # without pr in variables the baseline's pr is not matched by the scenarios: refused
    run.write_text(head + 'variables = { tmin = "tasmin", tmax = "tasmax" }\n')
    with pytest.raises(RunFileError, match="not for every period"):
        load_run(run)
    (tmp_path / "cm/beta_lowpath_pr_2041-2070.nc").unlink()
    run.write_text(head + 'variables = { tmin = "tasmin", tmax = "tasmax", pr = "pr" }\n')
    with pytest.raises(RunFileError, match=r"beta lowpath mid-century .*none for pr \('pr'\)"):
        load_run(run)

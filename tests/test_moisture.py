"""Moisture: FAO-56 radiation and Hargreaves ET0 against published examples and solar geometry,
dry months, precipitation units, and the moisture layers on a constructed grid."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.integrate import quad

import suitmap
from climate_fixtures import make_tmin_tmax, write_netcdf_daily
from conftest import write_period, write_profile, write_runfile
from suitmap.cli import main
from suitmap.kernels.moisture import (MJ_TO_MM, aridity_index, dry_month, extraterrestrial_radiation,
                                      hargreaves_et0, moisture_factors)


# ------------------------------------------------------------------ kernels
def test_ra_fao56_example_8():
    # Allen et al. (1998) FAO-56, chapter 3, Example 8 "Determination of extraterrestrial
    # radiation": 3 September (J = 246) at 20°S -> Ra = 32.2 MJ m-2 day-1 (13.1 mm/day).
    # The values as transcribed in several independent open test suites (the chapter's
    # table of contents, Example 8 p. 47, was seen; the page itself was not).
    ra = extraterrestrial_radiation(-20.0, 246)
    assert ra == pytest.approx(32.2, abs=0.05)
    assert ra * MJ_TO_MM == pytest.approx(13.1, abs=0.05)


def _ra_by_integration(lat, doy):
    """Solar geometry integrated over the day: G_sc · dr · ∫ max(0, cos zenith) dt.

    cos zenith = sin φ sin δ + cos φ cos δ cos ω (hour angle ω, 2π per 1440 min);
    δ and dr as in FAO-56 eqs. 23-24.  No sunset hour angle (eq. 25) is used."""
    phi = math.radians(lat)
    dr = 1 + 0.033 * math.cos(2 * math.pi * doy / 365)
    d = 0.409 * math.sin(2 * math.pi * doy / 365 - 1.39)

    def cosz(w):
        return max(0.0, math.sin(phi) * math.sin(d) + math.cos(phi) * math.cos(d) * math.cos(w))

    val, _ = quad(cosz, -math.pi, math.pi, points=[0.0], limit=500, epsabs=1e-12, epsrel=1e-12)
    return 0.0820 * dr * val * 1440 / (2 * math.pi)


@pytest.mark.parametrize("lat", [-75.0, -45.0, -20.0, 0.0, 12.5, 45.72, 66.0, 80.0])
@pytest.mark.parametrize("doy", [1, 80, 172, 246, 355])
def test_ra_matches_integrated_solar_geometry(lat, doy):
    # independent route: scipy quadrature of the instantaneous top-of-atmosphere flux,
    # including polar day and polar night (rel 1e-5: quadrature across the sunrise kinks)
    assert extraterrestrial_radiation(lat, doy) == pytest.approx(_ra_by_integration(lat, doy),
                                                                 rel=1e-5)


def test_ra_polar_night_is_zero_and_hemispheres_mirror():
    assert extraterrestrial_radiation(80.0, 355) == 0.0
    # about half a year apart the two hemispheres see nearly the same sun (dr differs)
    assert extraterrestrial_radiation(-40.0, 172) < extraterrestrial_radiation(40.0, 172)


def test_hargreaves_fao56_example_20():
    # FAO-56 chapter 3, Example 20 (Hargreaves, eq. 52): Lyon, 45°43'N, July, monthly mean
    # Tmax 26.6 °C, Tmin 14.8 °C -> ET0 = 5.0 mm/day (as transcribed in open test suites;
    # Ra here from eq. 21 for 15 July, J = 196)
    ra = extraterrestrial_radiation(45 + 43 / 60, 196)
    assert hargreaves_et0(14.8, 26.6, ra) == pytest.approx(5.0, abs=0.05)


def test_hargreaves_is_equation_52():
    # FAO-56 eq. 52 written out by hand: 0.0023 (Tmean + 17.8) (Tmax - Tmin)^0.5 0.408 Ra
    tmin, tmax, ra = 12.0, 30.0, 38.0
    hand = 0.0023 * (21.0 + 17.8) * math.sqrt(18.0) * 0.408 * 38.0
    assert hargreaves_et0(tmin, tmax, ra) == pytest.approx(hand, rel=1e-12)
    assert hargreaves_et0(-30.0, -25.0, 10.0) == 0.0    # below -17.8 °C: no negative loss


def test_dry_month_bagnouls_gaussen():
    # Bagnouls & Gaussen (1957): dry when P (mm) < 2 T (°C)
    p = np.array([30.0, 40.0, 41.0, 0.0, 5.0])
    t = np.array([20.0, 20.0, 20.0, -5.0, 2.6])
    assert dry_month(p, t).tolist() == [True, False, False, False, True]


def test_aridity_and_factors_by_hand():
    assert aridity_index(600.0, 1200.0) == 0.5
    assert np.isinf(aridity_index(5.0, 0.0))
    # common practice, no source: the documented ramps of moisture_factors
    dry, wet = moisture_factors([150.0, 600.0, 2400.0], [2.0, 9.0, 0.0], None,
                                min_annual_precipitation=300.0, max_annual_precipitation=1200.0,
                                max_dry_months=6.0)
    np.testing.assert_allclose(dry, [0.5, 0.5, 1.0])    # 150/300; 1 - (9-6)/(12-6)
    np.testing.assert_allclose(wet, [1.0, 1.0, 0.5])    # 1200/2400
    d, w = moisture_factors(np.nan, None, None, min_annual_precipitation=1.0)
    assert np.isnan(d) and np.isnan(w)


# ------------------------------------------------------------------ layers
MOIST = "\n[moisture]\nmin_annual_precipitation = 300.0\nmax_annual_precipitation = 2000.0\n"


def _case(tmp_path, pr, *, units="kg m-2 s-1", moisture=MOIST, var="pr"):
    tmin, tmax = make_tmin_tmax(730, 3, 4, mean=20.0, seed=1)
    prof = write_profile(tmp_path)
    prof.write_text(prof.read_text() + moisture)
    b = write_period(tmp_path / "climate", "base", tmin, tmax, start="2001-01-01")
    write_netcdf_daily(tmp_path / "climate/pr.nc", pr, var=var, units=units, standard_name=False,
                       crs="EPSG:4326")
    run = write_runfile(tmp_path, prof, [{"name": "baseline", "years": (2001, 2002),
                                          "tmin": f"climate/{b[0]}", "tmax": f"climate/{b[1]}"}])
    run.write_text(run.read_text().replace('tmax = "climate/base_tmax.nc"',
                                           'tmax = "climate/base_tmax.nc"\npr = "climate/pr.nc"'))
    return run, tmin, tmax


def test_dry_zone_becomes_too_dry(tmp_path):
    pr = np.full((730, 3, 4), 3.0)          # mm/day: 1095 mm a year
    pr[:, :, 0] = 0.1                       # the western column: 36.5 mm a year
    run, tmin, tmax = _case(tmp_path, pr / 86400.0)   # as a CF flux, kg m-2 s-1
    ds = suitmap.compute_run(run).compute().periods["baseline"]
    np.testing.assert_allclose(ds["annual_precipitation"].values[:, 0], 36.5, rtol=1e-5)
    np.testing.assert_allclose(ds["annual_precipitation"].values[:, 1:], 1095.0, rtol=1e-5)
    assert (ds["dry_months"].values[:, 0] == 12).all()     # 0.1 mm/day vs 2 × 20 °C
    assert (ds["dry_months"].values[:, 1:] == 0).all()
    np.testing.assert_allclose(ds["moisture_score"].values[:, 0], 36.5 / 300.0, rtol=1e-5)
    np.testing.assert_allclose(ds["moisture_score"].values[:, 1:], 1.0)
    lf = ds["limiting_factor"]
    meanings = lf.attrs["flag_meanings"].split()
    assert [meanings[v] for v in lf.values[:, 0]] == ["too_dry"] * 3
    assert "too_dry" not in [meanings[v] for v in lf.values[:, 1:].ravel()]
    dev_surv = ds["development_score"].values * ds["survival_score"].values
    np.testing.assert_allclose(ds["suitability"].values,
                               dev_surv * ds["moisture_score"].values, rtol=1e-6)
    # aridity: precipitation / Hargreaves ET0 of the same days, by a plain loop (FAO-56 eq. 21, 52)
    lat = ds["y"].values[1]
    doy = np.concatenate([np.arange(1, 366)] * 2)
    tn, tx = np.minimum(tmin[:, 1, 2], tmax[:, 1, 2]), np.maximum(tmin[:, 1, 2], tmax[:, 1, 2])
    et0 = sum(hargreaves_et0(a, b, extraterrestrial_radiation(lat, d)) for a, b, d in zip(tn, tx, doy))
    assert ds["aridity_index"].values[1, 2] == pytest.approx(2 * 1095.0 / et0, rel=1e-4)


def test_too_wet_and_units_of_amounts(tmp_path):
    pr = np.full((730, 3, 4), 3.0)
    pr[:, 2, :] = 8.0                       # 2920 mm a year: above the 2000 mm limit
    run, _, _ = _case(tmp_path, pr, units="mm")      # daily amounts in mm
    ds = suitmap.compute_run(run).compute().periods["baseline"]
    np.testing.assert_allclose(ds["annual_precipitation"].values[2], 2920.0, rtol=1e-5)
    np.testing.assert_allclose(ds["moisture_score"].values[2], 2000.0 / 2920.0, rtol=1e-5)
    meanings = ds["limiting_factor"].attrs["flag_meanings"].split()
    assert {meanings[v] for v in ds["limiting_factor"].values[2]} == {"too_wet"}


def test_monthly_precipitation_in_mm_per_day(tmp_path):
    # 24 monthly values (mean rates, mm/day, stamped mid-month): a year's total is the sum
    # of rate × the month's days
    import pandas as pd
    import xarray as xr

    run, _, _ = _case(tmp_path, np.ones((730, 3, 4)))
    rate = np.zeros((24, 3, 4), "f4") + np.array([1.0, 2.0, 0.5, 4.0], "f4")[None, None, :]
    times = pd.date_range("2001-01-01", periods=24, freq="MS") + pd.Timedelta(days=14)
    da = xr.DataArray(rate, dims=("time", "lat", "lon"), name="pr",
                      coords={"time": times, "lat": [49.5, 48.5, 47.5],
                              "lon": [-1.5, -0.5, 0.5, 1.5]}, attrs={"units": "mm/day"})
    da["lat"].attrs = {"units": "degrees_north", "standard_name": "latitude"}
    da["lon"].attrs = {"units": "degrees_east", "standard_name": "longitude"}
    (tmp_path / "climate/pr.nc").unlink()
    da.to_dataset().rio.write_crs("EPSG:4326").to_netcdf(tmp_path / "climate/pr.nc")
    from suitmap.climate.precipitation import open_precipitation

    pr = open_precipitation(str(tmp_path / "climate/pr.nc"))
    assert pr.attrs["frequency"] == "monthly"
    ds = suitmap.compute_run(run).compute().periods["baseline"]
    np.testing.assert_allclose(ds["annual_precipitation"].values[0], [365.0, 730.0, 182.5, 1460.0],
                               rtol=1e-5)


def test_without_precipitation_nothing_changes(tmp_path):
    tmin, tmax = make_tmin_tmax(730, 3, 4, mean=20.0, seed=1)
    prof = write_profile(tmp_path)
    b = write_period(tmp_path / "c", "b", tmin, tmax)
    run = write_runfile(tmp_path, prof, [{"name": "baseline", "years": (2001, 2002),
                                          "tmin": f"c/{b[0]}", "tmax": f"c/{b[1]}"}])
    plain = suitmap.compute_run(run).compute().periods["baseline"]
    prof.write_text(prof.read_text() + MOIST)         # [moisture] alone, no pr: no moisture layers
    from suitmap.errors import SuitmapWarning

    with pytest.warns(SuitmapWarning, match=r"\[moisture\] but no precipitation"):
        again = suitmap.compute_run(run).compute().periods["baseline"]
    assert "moisture_score" not in again and "annual_precipitation" not in again
    assert again["limiting_factor"].attrs["flag_meanings"] == plain["limiting_factor"].attrs["flag_meanings"]
    np.testing.assert_array_equal(again["suitability"].values, plain["suitability"].values)


@pytest.mark.parametrize("value, units, needle", [(-5.0, "mm/day", "below zero"),
                                                   (3.0, "kg m-2 s-1", "above any recorded"),
                                                   (3.0, "furlongs", "not a precipitation")])
def test_bad_precipitation_is_refused_naming_the_file(tmp_path, capsys, value, units, needle):
    pr = np.full((730, 3, 4), 2.0)
    pr[100, 1, 1] = value                   # 3 kg m-2 s-1 is 259200 mm/day
    run, _, _ = _case(tmp_path, pr, units=units)
    code = main(["run", str(run)])
    err = capsys.readouterr().err
    lines = [ln for ln in err.splitlines() if ln.startswith("suitmap: error:")]
    assert code == 2 and len(lines) == 1 and "Traceback" not in err
    assert "pr.nc" in lines[0] and needle in lines[0]
    # the values are checked as they are computed, after the output folder was taken: it holds
    # only its resumable state (.suitmap), no layer file and no manifest
    out = tmp_path / "results"
    assert not [p for p in out.rglob("*") if p.is_file() and ".suitmap" not in p.parts]


def test_pr_for_some_periods_only_is_refused(tmp_path):
    from suitmap.config.runfile import runfile_from_dict
    from suitmap.errors import RunFileError

    raw = {"profile": {"path": "p.toml"},
           "baseline": {"years": [2001, 2002], "tmin": "a.nc", "tmax": "b.nc", "pr": "c.nc"},
           "scenario": [{"name": "s", "years": [2051, 2052], "tmin": "a.nc", "tmax": "b.nc"}]}
    with pytest.raises(RunFileError, match="pr .*not for every period"):
        runfile_from_dict(raw, tmp_path / "run.toml")


def test_two_periods_written_with_change_layers(tmp_path):
    # baseline 2 mm/day, scenario 3 mm/day everywhere: change_annual_precipitation = +365 mm;
    # the limiting_factor GeoTIFF carries the moisture classes
    import rasterio

    tmin, tmax = make_tmin_tmax(730, 3, 4, mean=20.0, seed=2)
    prof = write_profile(tmp_path)
    prof.write_text(prof.read_text() + "\n[moisture]\nmin_annual_precipitation = 1000.0\n")
    b = write_period(tmp_path / "c", "b", tmin, tmax, start="2001-01-01")
    s = write_period(tmp_path / "c", "s", tmin, tmax, start="2053-01-01")
    for name, rate, start in (("b_pr.nc", 2.0, "2001-01-01"), ("s_pr.nc", 3.0, "2053-01-01")):
        write_netcdf_daily(tmp_path / "c" / name, np.full((730, 3, 4), rate), var="pr",
                           units="mm/day", standard_name=False, crs="EPSG:4326", start=start)
    run = write_runfile(tmp_path, prof, [
        {"name": "baseline", "years": (2001, 2002), "tmin": f"c/{b[0]}", "tmax": f"c/{b[1]}"},
        {"name": "wet", "years": (2053, 2054), "tmin": f"c/{s[0]}", "tmax": f"c/{s[1]}"}],
        formats=("geotiff", "netcdf"))
    text = run.read_text()
    text = text.replace('tmax = "c/b_tmax.nc"', 'tmax = "c/b_tmax.nc"\npr = "c/b_pr.nc"')
    run.write_text(text.replace('tmax = "c/s_tmax.nc"', 'tmax = "c/s_tmax.nc"\npr = "c/s_pr.nc"'))
    suitmap.run(run)
    out = tmp_path / "results"
    with rasterio.open(next(out.rglob("wet_vs_baseline/change_annual_precipitation.tif"))) as src:
        np.testing.assert_allclose(src.read(1), 365.0, rtol=1e-5)
    with rasterio.open(out / "baseline" / "limiting_factor.tif") as src:
        codes = src.read(1)
        meanings = src.tags(1)["flag_meanings"].split()
    assert {meanings[c] for c in codes.ravel()} == {"too_dry"}     # 730 mm < 1000 mm

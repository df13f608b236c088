"""Delta-change downscaling through a run file."""

import textwrap

import numpy as np

import suitmap
from climate_fixtures import make_tmin_tmax, write_netcdf_daily
from conftest import write_period, write_profile


def test_uniform_model_change_equals_warming_the_baseline(tmp_path):
    tmin, tmax = make_tmin_tmax(730, 4, 5, seed=8)
    write_profile(tmp_path, ddg=250.0)
    write_period(tmp_path / "obs", "obs", tmin, tmax, start="2001-01-01")
    # a reference scenario: the observed days warmed by exactly 2 degrees
    write_period(tmp_path / "ref", "ref", tmin + 2.0, tmax + 2.0, start="2001-01-01")
    # a coarse invented model (2 x 3 cells of 2 degrees) whose future is its history + 2 degrees
    (tmp_path / "cm").mkdir()
    mn, mx = make_tmin_tmax(730, 2, 3, seed=30)
    for label, start, dt in (("hist", "1981-01-01", 0.0), ("fut", "2053-01-01", 2.0)):
        for role, arr in (("tasmin", mn), ("tasmax", mx)):
            write_netcdf_daily(tmp_path / "cm" / f"m_{label}_{role}.nc", arr + dt, var=role,
                               role="tmin" if role == "tasmin" else "tmax", start=start,
                               res=2.0, lon0=-2.0, lat0=50.0, crs="EPSG:4326")
    run = tmp_path / "run.toml"
    run.write_text(textwrap.dedent("""
        [profile]
        path = "profile.toml"
        [baseline]
        years = [2001, 2002]
        tmin = "obs/obs_tmin.nc"
        tmax = "obs/obs_tmax.nc"
        [[scenario]]
        name = "reference_plus2"
        years = [2001, 2002]
        tmin = "ref/ref_tmin.nc"
        tmax = "ref/ref_tmax.nc"
        [[scenario]]
        name = "model_delta"
        years = [2053, 2054]
        tmin = "cm/m_fut_tasmin.nc"
        tmax = "cm/m_fut_tasmax.nc"
        downscale = { method = "delta", historical_tmin = "cm/m_hist_tasmin.nc", historical_tmax = "cm/m_hist_tasmax.nc", historical_years = [1981, 1982], smoothing = "monthly" }
        [output]
        dir = "results"
        """))
    layers = suitmap.compute_run(run).compute()
    d = layers.periods["model_delta"]
    r = layers.periods["reference_plus2"]
    # float32 storage: a 2-degree shift survives to ~1e-6 degC per day
    np.testing.assert_allclose(d["degree_days"].values, r["degree_days"].values, rtol=1e-5)
    assert "delta change" in d.attrs["downscaling"] and d.attrs["years"] == "2053-2054"
    np.testing.assert_array_equal(d["x"].values, layers.periods["baseline"]["x"].values)

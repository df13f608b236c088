"""Scenario batches: ensembles over models, mixed calendars, snapping to the baseline grid."""

from __future__ import annotations

import textwrap

import numpy as np
import xarray as xr

import suitmap
from climate_fixtures import make_tmin_tmax, write_netcdf_daily
from conftest import write_period, write_profile

OFFSETS = {"alpha": 1.0, "beta": 2.0, "gamma": 3.0}  # invented models, °C warmer than baseline


def batch(tmp_path, calendars=None, grids=None):
    tmin, tmax = make_tmin_tmax(730, 4, 5, seed=21)
    write_profile(tmp_path, ddg=250.0)
    write_period(tmp_path / "obs", "obs", tmin, tmax, start="2001-01-01")
    (tmp_path / "cm").mkdir()
    for model, dt in OFFSETS.items():
        cal = (calendars or {}).get(model, "standard")
        n = {"360_day": 720}.get(cal, 730)
        a, b = make_tmin_tmax(n, 4, 5, seed=21)
        kw = dict(calendar=cal, start="2053-01-01", crs="EPSG:4326", **(grids or {}).get(model, {}))
        if "res" in kw:  # a coarser model grid: 2 x 3 cells of 2 degrees over the same area
            a, b = make_tmin_tmax(n, 2, 3, seed=21)
        for role, arr in (("tasmin", a), ("tasmax", b)):
            write_netcdf_daily(tmp_path / "cm" / f"{model}_lowpath_{role}_2053-2054.nc", arr + dt,
                               var=role, role="tmin" if role == "tasmin" else "tmax", **kw)
    run = tmp_path / "run.toml"
    run.write_text(textwrap.dedent("""
        [profile]
        path = "profile.toml"
        [baseline]
        years = [2001, 2002]
        tmin = "obs/obs_tmin.nc"
        tmax = "obs/obs_tmax.nc"
        [[scenario_set]]
        files = "cm/{model}_{pathway}_{variable}_{*}.nc"
        variables = { tmin = "tasmin", tmax = "tasmax" }
        periods = { mid = [2053, 2054] }
        [output]
        dir = "results"
        formats = ["geotiff", "netcdf", "png"]
        """))
    return run


def type7(values, q):
    """Hyndman & Fan (1996) sample quantile type 7, written out for three values."""
    v = np.sort(values, axis=0)
    h = (len(v) - 1) * q
    lo = int(np.floor(h))
    return v[lo] + (h - lo) * (v[min(lo + 1, len(v) - 1)] - v[lo])


def test_ensemble_of_three_models_with_known_offsets(tmp_path):
    layers = suitmap.compute_run(batch(tmp_path)).compute()
    assert set(layers.periods) == {"baseline", "alpha_lowpath_mid", "beta_lowpath_mid",
                                   "gamma_lowpath_mid"}
    ens = layers.ensembles["ensemble_lowpath_mid"]
    changes = np.stack([layers.comparisons[f"{m}_lowpath_mid_vs_baseline"]["change_degree_days"].values
                        for m in OFFSETS])
    # warming never lowers degree-days, so the +2 °C model is the median everywhere
    np.testing.assert_array_equal(ens["ensemble_median_change_degree_days"].values,
                                  changes[1].astype(np.float32))
    np.testing.assert_allclose(ens["ensemble_p10_change_degree_days"].values, type7(changes, 0.1),
                               rtol=1e-6)
    np.testing.assert_allclose(ens["ensemble_p90_change_degree_days"].values, type7(changes, 0.9),
                               rtol=1e-6)
    # every model warms every cell: full agreement, robust everywhere
    assert (ens["model_agreement_change_degree_days"].values == 1).all()
    assert (ens["robust_change_degree_days"].values == 1).all()
    assert ens.attrs["n_models"] == 3


def test_ensemble_outputs_are_written(tmp_path):
    manifest = suitmap.run(batch(tmp_path))
    folder = manifest.parent / "ensemble_lowpath_mid"
    assert (folder / "ensemble.nc").is_file()
    assert (folder / "ensemble_median_change_suitability.tif").is_file()
    assert (folder / "ensemble_median_change_degree_days.png").is_file()
    with xr.open_dataset(folder / "ensemble.nc") as ds:
        assert "model_agreement_change_generations" in ds


def test_mixed_calendars_in_one_batch(tmp_path):
    run = batch(tmp_path, calendars={"alpha": "standard", "beta": "noleap", "gamma": "360_day"})
    layers = suitmap.compute_run(run).compute()
    assert layers.periods["gamma_lowpath_mid"].attrs["calendar"] == "360_day"
    assert layers.periods["beta_lowpath_mid"].attrs["calendar"] == "noleap"
    a = layers.periods["alpha_lowpath_mid"]["first_generation_day"].values
    g = layers.periods["gamma_lowpath_mid"]["first_generation_day"].values
    # same weather indices, +1 vs +3 °C: the 360_day model (warmer) completes earlier, on a
    # date comparable with the standard-calendar model (within the 5 days a 360-day year loses)
    ok = np.isfinite(a) & np.isfinite(g)
    assert ok.any()
    assert (g[ok] <= a[ok] + 6).all() and (g[ok] > a[ok] - 60).all()
    assert "360_day" in layers.periods["gamma_lowpath_mid"].attrs["day_of_season_note"]


def test_scenario_on_another_grid_is_snapped(tmp_path):
    # baseline: 4 x 5 cells of 1 degree from (-2, 50); gamma: 2 x 3 cells of 2 degrees, same corner
    run = batch(tmp_path, grids={"gamma": {"res": 2.0, "lon0": -2.0, "lat0": 50.0}})
    layers = suitmap.compute_run(run).compute()
    g = layers.periods["gamma_lowpath_mid"]
    b = layers.periods["baseline"]
    np.testing.assert_array_equal(g["x"].values, b["x"].values)
    assert "bilinear" in g["degree_days"].attrs["suitmap_regrid"]
    assert "gamma_lowpath_mid_vs_baseline" in layers.comparisons

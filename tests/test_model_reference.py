"""Multi-model change against each model's own historical run, CMIP-named files, bias layers."""

from __future__ import annotations

import textwrap

import numpy as np
import pytest
from climate_fixtures import make_tmin_tmax, write_netcdf_daily
from conftest import write_period, write_profile

import suitmap
from suitmap.config.runfile import load_run
from suitmap.errors import RunFileError
from suitmap.kernels.degree_days import degree_days

# invented models: bias of the historical run against the observations (°C) and calendar
MODELS = {"alpha": (1.0, "standard"), "beta": (-1.0, "noleap"), "gamma": (2.0, "360_day")}
WARMING = 2.0
LOWER, UPPER = 10.0, 30.0  # the test profile's thresholds (conftest.write_profile)
NY, NX = 2, 3


def days_per_year(calendar: str) -> int:
    return 360 if calendar == "360_day" else 365


def series(calendar: str):
    """Two years of invented daily weather in ``calendar`` (2001-2002 and 2053-2054 have no 29 Feb)."""
    return make_tmin_tmax(2 * days_per_year(calendar), NY, NX, seed=21)


def season_dd(tmin, tmax, calendar):
    """Mean over the two calendar years of the summed single-sine degree-days (horizontal cutoff),
    computed with the kernel on plain numpy (Baskerville & Emin 1969; the kernel is checked against
    the published values in test_degree_days.py)."""
    n = days_per_year(calendar)
    dd = degree_days(tmin.astype(np.float64), tmax.astype(np.float64), LOWER, UPPER,
                     method="single_sine", cutoff="horizontal")
    return np.mean([dd[k * n:(k + 1) * n].sum(axis=0) for k in range(2)], axis=0)


def write_year_files(folder, model, experiment, first_year, tmin, tmax, calendar):
    """CMIP-style names with dates only, one file per year (several files per period)."""
    n = days_per_year(calendar)
    end = "1230" if calendar == "360_day" else "1231"
    for k in range(2):
        year = first_year + k
        for var, arr, role in (("tasmin", tmin, "tmin"), ("tasmax", tmax, "tmax")):
            name = f"{var}_day_{model}_{experiment}_r1i1p1f1_{year}0101-{year}{end}.nc"
            write_netcdf_daily(folder / name, arr[k * n:(k + 1) * n], var=var, role=role,
                               calendar=calendar, start=f"{year}-01-01", crs="EPSG:4326")


def make_batch(tmp_path, set_extra: str = "") -> tuple:
    write_profile(tmp_path, ddg=250.0)
    obs_n, obs_x = series("standard")
    write_period(tmp_path / "obs", "obs", obs_n, obs_x, start="2001-01-01")
    cm = tmp_path / "cmip"
    cm.mkdir()
    expected = {}
    for model, (bias, cal) in MODELS.items():
        n, x = series(cal)
        hist_n, hist_x = n + bias, x + bias
        write_year_files(cm, model, "historical", 2001, hist_n, hist_x, cal)
        write_year_files(cm, model, "ssp245", 2053, hist_n + WARMING, hist_x + WARMING, cal)
        expected[model] = {"hist": season_dd(hist_n, hist_x, cal),
                           "fut": season_dd(hist_n + WARMING, hist_x + WARMING, cal)}
    expected["obs"] = season_dd(obs_n, obs_x, "standard")
    run = tmp_path / "run.toml"
    run.write_text(textwrap.dedent("""
        [profile]
        path = "profile.toml"
        [baseline]
        years = [2001, 2002]
        tmin = "obs/obs_tmin.nc"
        tmax = "obs/obs_tmax.nc"
        [[scenario_set]]
        files = "cmip/{variable}_day_{model}_{pathway}_{*}.nc"
        variables = { tmin = "tasmin", tmax = "tasmax" }
        periods = { historical = [2001, 2002], mid = [2053, 2054] }
        historical = "historical"
        """) + set_extra + '\n[output]\ndir = "results"\nformats = ["netcdf"]\n')
    return run, expected


def test_ensemble_change_is_each_model_against_its_own_historical_run(tmp_path):
    run, exp = make_batch(tmp_path)
    r = load_run(run)
    # CMIP names carry dates, not period names: each file serves the period its dates overlap
    hist = {s.name: s for s in r.scenarios if s.kind == "historical"}
    assert sorted(hist) == ["alpha_historical", "beta_historical", "gamma_historical"]
    fut = next(s for s in r.scenarios if s.name == "gamma_ssp245_mid")
    assert len(fut.tmin.patterns) == 2 and all("_2053" in p or "_2054" in p for p in fut.tmin.patterns)
    assert fut.reference == "gamma_historical"
    assert any("alpha × ssp245 × mid (2053-2054): 2 tmin + 2 tmax files, years 2053-2054" in line
               for line in r.inventory)

    layers = suitmap.compute_run(run).compute()
    own = {m: exp[m]["fut"] - exp[m]["hist"] for m in MODELS}
    against_obs = {m: exp[m]["fut"] - exp["obs"] for m in MODELS}
    for m in MODELS:
        c = layers.comparisons[f"{m}_ssp245_mid_vs_{m}_historical"]
        np.testing.assert_allclose(c["change_degree_days"].values, own[m], rtol=1e-4, atol=1e-2)
        assert c.attrs["change_reference"] == "model_historical"
        assert c["change_degree_days"].attrs["change_reference"] == "model_historical"
    assert "not bias-corrected" in layers.periods["alpha_ssp245_mid"].attrs["model_climate"]
    assert "model_climate" not in layers.periods["baseline"].attrs
    ens = layers.ensembles["ensemble_ssp245_mid"]
    median = np.median(np.stack([own[m] for m in MODELS]), axis=0)
    np.testing.assert_allclose(ens["ensemble_median_change_degree_days"].values, median,
                               rtol=1e-4, atol=1e-2)
    # ... and not the change against the observations (the models' biases differ by up to 3 °C)
    obs_median = np.median(np.stack([against_obs[m] for m in MODELS]), axis=0)
    assert np.abs(obs_median - median).min() > 10.0
    assert ens.attrs["change_reference"] == "model_historical"
    assert "small ensemble: only 3" in ens.attrs["small_ensemble_caution"]
    assert "robust_change_degree_days" in ens and "robust_change_change_degree_days" not in ens

    # bias layers: the model's historical run minus the observations, per model
    for m in MODELS:
        b = layers.comparisons[f"{m}_historical_vs_baseline"]["model_bias_degree_days"].values
        np.testing.assert_allclose(b, exp[m]["hist"] - exp["obs"], rtol=1e-4, atol=1e-2)
    # alpha (+1 °C, same days as the observations): its bias is the effect of a +1 °C shift
    assert (layers.comparisons["alpha_historical_vs_baseline"]["model_bias_degree_days"].values > 0).all()
    assert (layers.comparisons["beta_historical_vs_baseline"]["model_bias_degree_days"].values < 0).all()


def test_observations_route_must_be_asked_for_and_is_labelled(tmp_path):
    run, exp = make_batch(tmp_path, 'change_against = "observations"\n')
    layers = suitmap.compute_run(run).compute()
    c = layers.comparisons["alpha_ssp245_mid_vs_baseline"]
    np.testing.assert_allclose(c["change_degree_days"].values, exp["alpha"]["fut"] - exp["obs"],
                               rtol=1e-4, atol=1e-2)
    assert c.attrs["change_reference"] == "observations_asked"
    assert "bias is counted as change" in c.attrs["change_reference_note"]
    assert "model_bias_degree_days" in layers.comparisons["alpha_historical_vs_baseline"]


def test_delta_change_for_the_whole_set_in_one_key(tmp_path):
    run, exp = make_batch(tmp_path, 'downscale = { method = "delta", smoothing = "monthly" }\n')
    r = load_run(run)
    fut = next(s for s in r.scenarios if s.name == "alpha_ssp245_mid")
    assert fut.delta is not None and fut.delta.historical_years == (2001, 2002)
    assert all("historical" in p for p in fut.delta.historical_tmin.patterns)
    layers = suitmap.compute_run(run).compute()
    # a uniform +2 °C model change added to the observed days = the observations warmed by 2 °C
    obs_n, obs_x = series("standard")
    warmed = season_dd(obs_n + WARMING, obs_x + WARMING, "standard")
    for m in MODELS:
        c = layers.comparisons[f"{m}_ssp245_mid_vs_baseline"]
        assert c.attrs["change_reference"] == "delta_change"
        np.testing.assert_allclose(c["change_degree_days"].values, warmed - exp["obs"],
                                   rtol=1e-4, atol=1e-2)


@pytest.mark.parametrize("extra, needle", [
    ('downscale = { method = "delta" }\nchange_against = "observations"\n', "leave out change_against"),
    ('historical_pathway = "past"\n', "no 'past' files"),
])
def test_bad_reference_keys(tmp_path, extra, needle):
    run, _ = make_batch(tmp_path, extra)
    with pytest.raises(RunFileError, match=needle):
        load_run(run)


def test_missing_years_listed(tmp_path):
    run, _ = make_batch(tmp_path)
    for f in (tmp_path / "cmip").glob("*_day_beta_ssp245_*_2054*.nc"):
        f.unlink()
    r = load_run(run)
    line = next(s for s in r.inventory if s.startswith("beta × ssp245 × mid"))
    assert "years 2053" in line and "MISSING years 2054" in line


def test_check_lists_model_pathway_period(tmp_path, capsys):
    from suitmap.cli import main

    run, _ = make_batch(tmp_path)
    assert main(["check", str(run)]) == 0
    out = capsys.readouterr().out
    for m in MODELS:
        assert f"{m} × ssp245 × mid (2053-2054): 2 tmin + 2 tmax files, years 2053-2054" in out
        assert f"{m} × historical × historical (2001-2002): 2 tmin + 2 tmax files" in out
    assert "[historical] gamma_historical" in out
    assert "usable: yes" in out


def test_written_outputs_carry_the_route_and_the_caution(tmp_path):
    import rasterio
    import xarray as xr

    run, _ = make_batch(tmp_path)
    run.write_text(run.read_text().replace('formats = ["netcdf"]', 'formats = ["geotiff", "netcdf"]'))
    root = suitmap.run(run).parent
    ens = root / "ensemble_ssp245_mid"
    with rasterio.open(ens / "robust_change_degree_days.tif") as src:
        assert src.dtypes[0] == "uint8"
        assert src.tags()["change_reference"] == "model_historical"
        assert "only 3 climate models" in src.tags()["small_ensemble_caution"]
    assert not list(ens.glob("*change_change*"))
    with xr.open_dataset(root / "alpha_ssp245_mid_vs_alpha_historical" / "changes.nc") as ds:
        assert ds.attrs["change_reference"] == "model_historical"
        assert ds["change_degree_days"].attrs["change_reference_period"] == "alpha_historical"
    assert (root / "alpha_historical_vs_baseline" / "model_bias_degree_days.tif").is_file()

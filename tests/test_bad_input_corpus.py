"""A corpus of bad inputs, each made from one good base case by a single fault.

Every case must end the same way through the real command line
(``suitmap.cli.main``): exit code 2, exactly one ``suitmap: error:`` line naming
the culprit (file, variable or key), no traceback, no internal error, and the
case folder exactly as it was (no output folder, no temporary file).

The limits the temperature cases probe are the observed extremes of
near-surface air temperature: −89.2 °C (Vostok, 1983) and +56.7 °C (Death
Valley, 1913), WMO World Weather and Climate Extremes Archive; see
suitmap/climate/plausibility.py.
"""

from __future__ import annotations

import os
import textwrap
from pathlib import Path

import netCDF4
import numpy as np
import pytest
import rasterio
from affine import Affine
from pyproj import CRS

from climate_fixtures import make_tmin_tmax
from suitmap.cli import main

NT, NY, NX = 365, 3, 4
LAT = 51.5 - np.arange(NY)          # cell centres, north-up
LON = 0.5 + np.arange(NX)


# ------------------------------------------------------------------ writers (netCDF4, rasterio)
def nc(path: Path, data, var: str, *, units="degC", calendar="standard", days=None,
       start="2001-01-01", lat=LAT, lon=LON, dtype="f4", zlib=False, fill=True,
       scale=None) -> Path:
    """One (time, lat, lon) variable written with netCDF4 as given (no masking of inf)."""
    data = np.asarray(data)
    with netCDF4.Dataset(path, "w") as ds:
        ds.createDimension("time", None)
        ds.createDimension("lat", len(lat))
        ds.createDimension("lon", len(lon))
        t = ds.createVariable("time", "f8", ("time",))
        t.units, t.calendar = f"days since {start}", calendar
        t[:] = np.arange(data.shape[0]) if days is None else days
        la = ds.createVariable("lat", "f8", ("lat",))
        la[:], la.units, la.standard_name = lat, "degrees_north", "latitude"
        lo = ds.createVariable("lon", "f8", ("lon",))
        lo[:], lo.units, lo.standard_name = lon, "degrees_east", "longitude"
        gm = ds.createVariable("crs", "i4", ())
        gm.setncatts(CRS.from_epsg(4326).to_cf())
        kw = dict(zlib=True, chunksizes=(30, len(lat), len(lon))) if zlib else {}
        if fill and np.dtype(dtype).kind == "f":
            kw["fill_value"] = np.array(1e20, dtype=dtype)
        v = ds.createVariable(var, dtype, ("time", "lat", "lon"), **kw)
        v.set_auto_maskandscale(False)
        if units is not None:
            v.units = units
        if scale is not None:
            v.scale_factor = scale
        v.grid_mapping = "crs"
        v[:] = np.where(np.isnan(data), 1e20, data).astype(dtype) if fill and np.dtype(dtype).kind == "f" \
            else data.astype(dtype)
    return path


def tif(path: Path, data, *, nodata=None, units="degC") -> Path:
    nt, ny, nx = data.shape
    with rasterio.open(path, "w", driver="GTiff", height=ny, width=nx, count=nt, dtype="float32",
                       crs="EPSG:4326", transform=Affine(1.0, 0, 0.0, 0, -1.0, 52.0),
                       nodata=nodata) as dst:
        dst.write(data.astype("float32"))
        for b in range(nt):
            dst.set_band_description(b + 1, str(np.datetime64("2001-01-01") + b))
        dst.update_tags(units=units)
    return path


PROFILE = """\
[organism]
name = "Karsvale test moth (invented)"
role = "pest"

[development]
lower_threshold = 10.0
upper_threshold = 30.0
degree_days_per_generation = 300.0

[survival]
lethal_cold = -15.0
lethal_heat = 40.0

[suitability]
saturating_generations = 2.0
"""

RUN = """\
[profile]
path = "profile.toml"

[baseline]
name = "baseline"
years = [2001, 2001]
tmin = "climate/base_tmin.nc"
tmax = "climate/base_tmax.nc"

[[scenario]]
name = "warm"
years = [2053, 2053]
tmin = "climate/scen_tmin.nc"
tmax = "climate/scen_tmax.nc"

[output]
dir = "results"
formats = ["geotiff", "netcdf", "png"]

[compute]
fast_tables = true
"""


@pytest.fixture
def case(tmp_path):
    tmin, tmax = make_tmin_tmax(NT, NY, NX, mean=12.0, seed=7)
    clim = tmp_path / "climate"
    clim.mkdir()
    nc(clim / "base_tmin.nc", tmin, "tmin")
    nc(clim / "base_tmax.nc", tmax, "tmax")
    nc(clim / "scen_tmin.nc", tmin + 2, "tmin", start="2053-01-01")
    nc(clim / "scen_tmax.nc", tmax + 2, "tmax", start="2053-01-01")
    (tmp_path / "profile.toml").write_text(PROFILE)
    (tmp_path / "run.toml").write_text(RUN)
    return {"dir": tmp_path, "clim": clim, "tmin": tmin, "tmax": tmax,
            "run": tmp_path / "run.toml", "profile": tmp_path / "profile.toml"}


def snapshot(folder: Path) -> set[str]:
    return {str(p.relative_to(folder)) for p in folder.rglob("*")} | {
        str(p.relative_to(folder)) for p in folder.iterdir() if p.is_symlink()}


def cli(case, command, capsys):
    code = main([command, str(case["run"])])
    cap = capsys.readouterr()
    return code, cap.out, cap.err


# ------------------------------------------------------------------ faults
def edit(path: Path, old: str, new: str) -> None:
    text = path.read_text()
    assert old in text, old
    path.write_text(text.replace(old, new))


def with_value(role="tmin", value=-300.0, file="base"):
    def f(c):
        a = c[role].copy() + (2 if file == "scen" else 0)
        a[100, 1, 2] = value
        nc(c["clim"] / f"{file}_{role}.nc", a, role,
           start="2053-01-01" if file == "scen" else "2001-01-01")
    return f


def base_units(units, convert=lambda a: a):
    return lambda c: nc(c["clim"] / "base_tmin.nc", convert(c["tmin"]), "tmin", units=units)


def corrupt_compressed(c):
    p = nc(c["clim"] / "base_tmin.nc", c["tmin"], "tmin", zlib=True)
    data = bytearray(p.read_bytes())
    starts = [i for i in range(len(data) - 1) if data[i] == 0x78 and data[i + 1] in (0x01, 0x5E, 0x9C, 0xDA)]
    i = starts[len(starts) // 2]
    for k in range(i + 2, i + 200):
        data[k] ^= 0x5A
    p.write_bytes(bytes(data))


def truncate(c):
    p = c["clim"] / "base_tmin.nc"
    p.write_bytes(p.read_bytes()[: p.stat().st_size // 2])


def reversed_time(c):
    nc(c["clim"] / "base_tmin.nc", c["tmin"][::-1], "tmin", days=np.arange(NT)[::-1])


def months_swapped(c):  # February stored after March
    days = np.concatenate([np.arange(31), np.arange(59, 90), np.arange(31, 59), np.arange(90, NT)])
    nc(c["clim"] / "base_tmin.nc", c["tmin"][days], "tmin", days=days)


def profile_set(old, new):
    return lambda c: edit(c["profile"], old, new)


def run_set(old, new):
    return lambda c: edit(c["run"], old, new)


def second_scenario(name):
    return run_set("[output]", textwrap.dedent(f"""\
        [[scenario]]
        name = "{name}"
        years = [2053, 2053]
        tmin = "climate/scen_tmin.nc"
        tmax = "climate/scen_tmax.nc"

        [output]"""))


def int_tenths(c):
    nc(c["clim"] / "base_tmax.nc", np.round(c["tmax"] * 10), "tmax", dtype="i2", fill=False)


def geotiff_input(data_fn, **kw):
    def f(c):
        tif(c["clim"] / "base_tmin.tif", data_fn(c["tmin"]), **kw)
        edit(c["run"], "climate/base_tmin.nc", "climate/base_tmin.tif")
    return f


def put(a, value):
    a = a.copy()
    a[10, 0, 0] = value
    return a


# id -> (fault, words the one error line must hold)
CLIMATE = {
    "minus_300_C": (with_value(value=-300.0), ["base_tmin.nc", "-300", "-95"]),
    "plus_1e30": (with_value(value=1e30), ["base_tmin.nc", "1e+30", "missing-value"]),
    "undeclared_fill_9999": (with_value(value=-9999.0), ["base_tmin.nc", "-9999", "_FillValue"]),
    "undeclared_fill_999": (with_value(value=-999.0), ["base_tmin.nc", "-999"]),
    "undeclared_fill_32768": (with_value(value=-32768.0), ["base_tmin.nc", "-32768"]),
    "plus_inf": (with_value(value=np.inf), ["base_tmin.nc", "infinite"]),
    "minus_inf": (with_value(value=-np.inf), ["base_tmin.nc", "infinite"]),
    "tmax_plus_80": (with_value("tmax", 80.0), ["base_tmax.nc", "65"]),
    "scenario_minus_120": (with_value("tmin", -120.0, "scen"), ["scen_tmin.nc", "-120"]),
    "beyond_hot_record": (with_value("tmax", 60.0), ["base_tmax.nc", "accept_implausible"]),
    "beyond_cold_record": (with_value("tmin", -92.0), ["base_tmin.nc", "accept_implausible"]),
    "all_nan": (lambda c: nc(c["clim"] / "base_tmin.nc", c["tmin"] * np.nan, "tmin"),
                ["base_tmin.nc", "no valid value", "accept_implausible"]),
    "kelvin_label_on_celsius": (base_units("K"), ["base_tmin.nc", "units say K"]),
    "celsius_label_on_kelvin": (base_units("degC", lambda a: a + 273.15), ["base_tmin.nc", "kelvin"]),
    "fahrenheit_label_on_kelvin": (base_units("degF", lambda a: a + 273.15), ["base_tmin.nc", "kelvin"]),
    "int16_tenths_no_scale": (int_tenths, ["base_tmax.nc", "scale_factor"]),
    "no_units": (base_units(None), ["base_tmin.nc", "units"]),
    "unknown_units": (base_units("furlongs"), ["base_tmin.nc", "furlongs"]),
    "latitude_beyond_90": (lambda c: nc(c["clim"] / "base_tmin.nc", c["tmin"], "tmin", lat=LAT + 45),
                           ["base_tmin.nc", "latitude"]),
    "longitude_beyond_360": (lambda c: nc(c["clim"] / "base_tmin.nc", c["tmin"], "tmin", lon=LON + 400),
                             ["base_tmin.nc", "longitude"]),
    "corrupt_compressed_data": (corrupt_compressed, ["base_tmin.nc", "corrupt"]),
    "truncated_file": (truncate, ["base_tmin.nc"]),
    "empty_file": (lambda c: (c["clim"] / "base_tmin.nc").write_bytes(b""), ["base_tmin.nc"]),
    "text_not_netcdf": (lambda c: (c["clim"] / "base_tmin.nc").write_text("tmin,1\n"), ["base_tmin.nc"]),
    "reversed_time_axis": (reversed_time, ["base_tmin.nc", "backwards"]),
    "february_after_march": (months_swapped, ["base_tmin.nc", "out of order", "2001-03-31"]),
    "tmin_tmax_calendars_differ": (
        lambda c: nc(c["clim"] / "base_tmin.nc", c["tmin"], "tmin", calendar="noleap"),
        ["baseline", "noleap", "standard", "calendar"]),
    "day_gap": (lambda c: nc(c["clim"] / "base_tmin.nc", c["tmin"], "tmin",
                             days=np.r_[np.arange(100), np.arange(101, NT + 1)]), ["baseline", "missing"]),
    "geotiff_undeclared_nodata": (geotiff_input(lambda a: put(a, -9999.0)), ["base_tmin.tif", "-9999"]),
    "geotiff_inf": (geotiff_input(lambda a: put(a, np.inf)), ["base_tmin.tif", "infinite"]),
    "fahrenheit_values_impossible": (lambda c: nc(c["clim"] / "base_tmin.nc", c["tmin"] * 0 + 500, "tmin",
                                                  units="degF"), ["base_tmin.nc", "260"]),
    "geotiff_kelvin_label_on_celsius": (geotiff_input(lambda a: a, units="K"), ["base_tmin.tif", "units say K"]),
    "geotiff_all_nodata": (geotiff_input(lambda a: np.full_like(a, -1.0), nodata=-1.0),
                           ["base_tmin.tif", "no valid value"]),
}

PROFILE_FAULTS = {
    "binary_profile": (lambda c: c["profile"].write_bytes(bytes(range(256)) * 4), ["profile.toml"]),
    "nul_bytes_profile": (lambda c: c["profile"].write_bytes(b"[organism]\x00\x00"), ["profile.toml"]),
    "lower_nan": (profile_set("lower_threshold = 10.0", "lower_threshold = nan"), ["lower_threshold"]),
    "lower_inf": (profile_set("lower_threshold = 10.0", "lower_threshold = -inf"), ["lower_threshold"]),
    "upper_inf": (profile_set("upper_threshold = 30.0", "upper_threshold = inf"), ["upper_threshold"]),
    "upper_huge": (profile_set("upper_threshold = 30.0", "upper_threshold = 1e9"), ["upper_threshold"]),
    "lethal_cold_nan": (profile_set("lethal_cold = -15.0", "lethal_cold = nan"), ["lethal_cold"]),
    "lethal_cold_huge": (profile_set("lethal_cold = -15.0", "lethal_cold = -1e6"), ["lethal_cold"]),
    "lethal_heat_inf": (profile_set("lethal_heat = 40.0", "lethal_heat = inf"), ["lethal_heat"]),
    "lethal_heat_nan": (profile_set("lethal_heat = 40.0", "lethal_heat = nan"), ["lethal_heat"]),
    "ddg_inf": (profile_set("generation = 300.0", "generation = inf"), ["degree_days_per_generation"]),
    "ddg_nan": (profile_set("generation = 300.0", "generation = nan"), ["degree_days_per_generation"]),
    "ddg_huge": (profile_set("generation = 300.0", "generation = 1e12"), ["degree_days_per_generation"]),
    "ddg_negative": (profile_set("generation = 300.0", "generation = -5"), ["degree_days_per_generation"]),
    "saturating_nan": (profile_set("generations = 2.0", "generations = nan"), ["saturating_generations"]),
    "name_too_long": (profile_set('name = "Karsvale test moth (invented)"', f'name = "{"m" * 201}"'),
                      ["organism.name", "200"]),
    "lower_above_upper": (profile_set("lower_threshold = 10.0", "lower_threshold = 35.0"),
                          ["lower_threshold"]),
    "threshold_as_text": (profile_set("lower_threshold = 10.0", 'lower_threshold = "ten"'),
                          ["lower_threshold"]),
    "profile_not_toml": (lambda c: c["profile"].write_text("lower_threshold: 10\n"), ["profile.toml"]),
    "profile_is_a_folder": (lambda c: (c["profile"].unlink(), c["profile"].mkdir()), ["profile.toml", "folder"]),
    "source_too_long": (profile_set('role = "pest"', 'role = "pest"\nsource = "' + "s" * 3000 + '"'),
                        ["organism.source"]),
    "rate_curve_parameter_nan": (profile_set("generation = 300.0", "generation = 300.0\nrate_curve = "
                                             "{ model = \"linear\", a = nan, b = 0.01 }"), ["rate_curve.a"]),
    "stage_rate_curve_param_nan": (profile_set("saturating_generations = 2.0",
                                               "saturating_generations = 2.0\n[[stage]]\nname = "
                                               "\"egg\"\n[stage.rate_curve]\nmodel = \"briere1\"\n"
                                               "a = nan\nt_low = 10.0\nt_high = 35.0"),
                                   ["stage[0].rate_curve.a"]),
    "stage_rate_curve_and_degree_days": (profile_set("saturating_generations = 2.0",
                                                     "saturating_generations = 2.0\n[[stage]]\n"
                                                     "name = \"egg\"\ndegree_days = 50.0\n"
                                                     "rate_curve = { model = \"linear\", t_low = 10.0,"
                                                     " thermal_constant = 50.0 }"),
                                         ["stage[0].degree_days"]),
    "profile_missing": (lambda c: c["profile"].unlink(), ["profile.toml"]),
}

RUN_FAULTS = {
    "formats_empty": (run_set('formats = ["geotiff", "netcdf", "png"]', "formats = []"),
                      ["output.formats"]),
    "daily_sd_nan": (run_set("fast_tables = true", "daily_sd = nan"), ["daily_sd"]),
    "daily_sd_inf": (run_set("fast_tables = true", "daily_sd = inf"), ["daily_sd"]),
    "suitable_level_nan": (run_set('dir = "results"', 'dir = "results"\nsuitable_level = nan'),
                           ["suitable_level"]),
    "agreement_level_inf": (run_set('dir = "results"', 'dir = "results"\nagreement_level = inf'),
                            ["agreement_level"]),
    "accept_not_boolean": (run_set("fast_tables = true", 'accept_implausible = "yes"'),
                           ["accept_implausible"]),
    "period_name_too_long": (run_set('name = "warm"', f'name = "{"w" * 65}"'), ["scenario[0].name"]),
    "scenario_named_manifest": (run_set('name = "warm"', 'name = "manifest.json"'), ["manifest.json"]),
    "scenario_named_readme": (run_set('name = "warm"', 'name = "readme.TXT"'), ["readme.TXT"]),
    "names_differ_only_in_case": (run_set('name = "warm"', 'name = "Baseline"'), ["Baseline"]),
    "name_is_a_comparison_folder": (second_scenario("warm_vs_baseline"), ["warm_vs_baseline"]),
    "year_zero": (run_set("years = [2001, 2001]", "years = [0, 2001]"), ["baseline.years"]),
    "year_huge": (run_set("years = [2053, 2053]", "years = [2053, 99999]"), ["scenario[0].years"]),
    "years_outside_data": (run_set("years = [2053, 2053]", "years = [2053, 2055]"), ["warm", "2055"]),
    "chunk_cells_zero": (run_set("fast_tables = true", "chunk_cells = 0"), ["chunk_cells"]),
    "threads_negative": (run_set("fast_tables = true", "threads = -1"), ["threads"]),
    "unknown_compute_key": (run_set("fast_tables = true", "fast = true"), ["compute.fast"]),
    "binary_run_file": (lambda c: c["run"].write_bytes(b"\xff\xfe\x00garbage\x89PNG"), ["run.toml"]),
    "utf16_run_file": (lambda c: c["run"].write_bytes(c["run"].read_text().encode("utf-16")), ["run.toml"]),
    "output_dangling_symlink": (lambda c: os.symlink(c["dir"] / "gone" / "away", c["dir"] / "results"),
                                ["results", "does not exist"]),
    "output_is_a_file": (lambda c: (c["dir"] / "results").write_text("mine"), ["results", "file"]),
    "glob_matches_nothing": (run_set("climate/scen_tmax.nc", "climate/none_*.nc"), ["none_*.nc"]),
    "pr_geotiff_without_units": (lambda c: (
        tif(c["clim"] / "pr.tif", np.full((NT, NY, NX), 2.0), units=""),
        run_set('tmax = "climate/base_tmax.nc"', 'tmax = "climate/base_tmax.nc"\npr = "climate/pr.tif"')(c),
        run_set('tmax = "climate/scen_tmax.nc"', 'tmax = "climate/scen_tmax.nc"\npr = "climate/pr.tif"')(c)),
        ["pr.tif", "units"]),
    "variable_absent": (run_set('tmin = "climate/base_tmin.nc"',
                                'tmin = { files = "climate/base_tmin.nc", variable = "tasmin" }'),
                        ["base_tmin.nc", "tasmin"]),
}

CASES = [pytest.param(f, n, "run", id=f"{k}-run") for k, (f, n) in
         {**CLIMATE, **PROFILE_FAULTS, **RUN_FAULTS}.items()]
CASES += [pytest.param(f, n, "check", id=f"{k}-check") for k, (f, n) in CLIMATE.items()]


@pytest.mark.parametrize("fault, needles, command", CASES)
def test_bad_input_is_refused_in_one_line(case, capsys, fault, needles, command):
    fault(case)
    before = snapshot(case["dir"])
    code, out, err = cli(case, command, capsys)
    errors = [ln for ln in err.splitlines() if ln.startswith("suitmap: error:")]
    assert code == 2, err
    assert len(errors) == 1 and "Traceback" not in err and "internal error" not in err, err
    for n in needles:
        assert n in errors[0], errors[0]
    assert snapshot(case["dir"]) == before  # nothing written, nothing left behind
    if command == "run":
        assert out == ""


def test_the_corpus_is_large_enough():
    assert len(CASES) >= 60


def test_base_case_is_good(case, capsys):
    """Without a fault the base case checks clean, so each case above fails for its fault alone."""
    code, out, err = cli(case, "check", capsys)
    assert code == 0, err
    assert "usable: yes" in out


def test_suspicious_values_pass_when_accepted(case, capsys):
    with_value("tmax", 60.0)(case)
    edit(case["run"], "fast_tables = true", "fast_tables = true\naccept_implausible = true")
    code, out, err = cli(case, "check", capsys)
    assert code == 0, err


def test_impossible_values_are_refused_even_when_accepted(case, capsys):
    with_value("tmax", 70.0)(case)
    edit(case["run"], "fast_tables = true", "fast_tables = true\naccept_implausible = true")
    code, out, err = cli(case, "check", capsys)
    assert code == 2 and "base_tmax.nc" in err and "65" in err


# ------------------------------------------------------------------ nothing half-written
def _failing_writer(monkeypatch, after: int):
    import suitmap.pipeline.outputs as outputs

    calls = {"n": 0}
    real = outputs.write_cog

    def flaky(*a, **k):
        calls["n"] += 1
        if calls["n"] > after:
            raise OSError(28, "No space left on device (simulated)")
        return real(*a, **k)

    monkeypatch.setattr(outputs, "write_cog", flaky)


def _tree(folder: Path) -> dict[str, bytes]:
    return {str(p.relative_to(folder)): p.read_bytes() for p in folder.rglob("*")
            if p.is_file() and ".suitmap" not in p.parts}


def test_failed_write_leaves_the_previous_complete_run(case, capsys, monkeypatch):
    from suitmap.writers.manifest import verify_manifest

    assert cli(case, "run", capsys)[0] == 0
    out = case["dir"] / "results"
    previous = _tree(out)
    edit(case["profile"], "generation = 300.0", "generation = 250.0")  # new layers to write
    _failing_writer(monkeypatch, after=3)
    code, _, err = cli(case, "run", capsys)
    assert code == 2 and "Traceback" not in err
    assert "nothing was published" in err and "previous complete outputs" in err and "unchanged" in err
    assert _tree(out) == previous and verify_manifest(out / "manifest.json") == []
    assert not (out / ".suitmap" / "staging").exists()


def test_failed_overwrite_keeps_the_users_folder(case, capsys, monkeypatch):
    out = case["dir"] / "results"
    out.mkdir()
    (out / "notes.txt").write_text("user data")
    _failing_writer(monkeypatch, after=0)
    main(["run", "--overwrite", str(case["run"])])
    err = capsys.readouterr().err
    assert "nothing was published" in err and "holds no outputs of this run" in err
    assert (out / "notes.txt").read_text() == "user data"
    assert sorted(p.name for p in out.iterdir()) == [".suitmap", "notes.txt"]


def test_read_error_met_while_computing_is_named(case, capsys, monkeypatch):
    """Data that fail only when the layers are computed (the plausibility pass, which would
    meet them first, is switched off here) give the same one-line error naming the files,
    and a first run leaves no output folder behind."""
    import suitmap.climate.plausibility as plausibility

    monkeypatch.setattr(plausibility, "check_values", lambda *a, **k: {})
    corrupt_compressed(case)
    before = snapshot(case["dir"])
    code, _, err = cli(case, "run", capsys)
    errors = [ln for ln in err.splitlines() if ln.startswith("suitmap: error:")]
    assert code == 2 and len(errors) == 1 and "Traceback" not in err, err
    assert "base_tmin.nc" in errors[0] and "reading the climate data failed" in errors[0]
    assert snapshot(case["dir"]) == before


def test_scenario_covering_part_of_the_baseline_grid_is_said(case, capsys):
    """A scenario grid on the baseline's western half only: `check` notes the uncovered
    cells (6 of 12: the centres at longitudes 2.5 and 3.5 of three rows)."""
    half = slice(0, 2)
    nc(case["clim"] / "scen_tmin.nc", case["tmin"][:, :, half] + 2, "tmin", start="2053-01-01", lon=LON[half])
    nc(case["clim"] / "scen_tmax.nc", case["tmax"][:, :, half] + 2, "tmax", start="2053-01-01", lon=LON[half])
    code, out, err = cli(case, "check", capsys)
    assert code == 0, err
    assert "covers only part of the baseline grid: at least 6 of 12" in out


# ------------------------------------------------------------------ size guard
def test_huge_declared_grid_is_refused_before_reading(case, capsys):
    """A file declaring 60 000 × 120 000 cells (data never written, so the file is small):
    refused from its declared sizes, naming the file, before any value is read."""
    p = case["clim"] / "base_tmin.nc"
    with netCDF4.Dataset(p, "w") as ds:
        ds.createDimension("time", None)
        ds.createDimension("lat", 60_000)
        ds.createDimension("lon", 120_000)
        t = ds.createVariable("time", "f8", ("time",))
        t.units, t.calendar = "days since 2001-01-01", "standard"
        t[:] = np.arange(NT)
        la = ds.createVariable("lat", "f8", ("lat",))
        la[:], la.units = 89.9985 - 0.003 * np.arange(60_000), "degrees_north"
        lo = ds.createVariable("lon", "f8", ("lon",))
        lo[:], lo.units = -179.9985 + 0.003 * np.arange(120_000), "degrees_east"
        v = ds.createVariable("tmin", "f4", ("time", "lat", "lon"))
        v.units = "degC"
    before = snapshot(case["dir"])
    code, _, err = cli(case, "check", capsys)
    assert code == 2 and "base_tmin.nc" in err and "chunks" in err and "Traceback" not in err, err
    assert snapshot(case["dir"]) == before


def test_chunks_too_large_for_the_memory_are_refused(case, capsys, monkeypatch):
    import suitmap.climate.size_guard as size_guard

    # 365 days × 12 cells × 32 bytes × threads needs well over 64 KiB
    monkeypatch.setattr(size_guard, "available_memory", lambda: 2**16)
    code, _, err = cli(case, "run", capsys)
    assert code == 2 and "base_tmin.nc" in err and "chunk_cells" in err and "Traceback" not in err, err
    assert not (case["dir"] / "results").exists()

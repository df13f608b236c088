"""Every bad input: one line on stderr naming the culprit, exit code 2, no output left."""

from __future__ import annotations

import subprocess
import sys


from climate_fixtures import make_tmin_tmax, write_netcdf_daily
from suitmap.cli import main


def run_cli(args, capsys):
    code = main(list(args))
    cap = capsys.readouterr()
    return code, cap.out, cap.err


def leftovers(folder):
    """Output folders or temporary names a failed run might have left."""
    return sorted(p.name for p in folder.iterdir()
                  if p.name.startswith(("results", ".results")))


def assert_clean_failure(case, capsys, *needles, args=None):
    code, out, err = run_cli(args or ["run", str(case["run"])], capsys)
    assert code == 2, err
    lines = [ln for ln in err.splitlines() if ln.startswith("suitmap: error:")]
    assert len(lines) == 1, err
    assert "Traceback" not in err
    for n in needles:
        assert n in lines[0], lines[0]
    assert leftovers(case["dir"]) == []
    print(lines[0])
    return lines[0]


def edit_run(case, old, new):
    text = case["run"].read_text()
    assert old in text
    case["run"].write_text(text.replace(old, new))


def test_missing_run_file(tmp_path, capsys):
    code, _, err = run_cli(["run", str(tmp_path / "nope.toml")], capsys)
    assert code == 2 and "nope.toml" in err and "not found" in err


def test_no_file_matches_glob(small_case, capsys):
    edit_run(small_case, "climate/base_tmin.nc", "climate/typo_tmin_*.nc")
    assert_clean_failure(small_case, capsys, "typo_tmin_*.nc")


def test_missing_named_file(small_case, capsys):
    edit_run(small_case, "climate/scen_tmax.nc", "climate/gone.nc")
    assert_clean_failure(small_case, capsys, "gone.nc")


def test_variable_not_found(small_case, capsys):
    edit_run(small_case, 'tmin = "climate/base_tmin.nc"',
             'tmin = { files = "climate/base_tmin.nc", variable = "tasmin" }')
    assert_clean_failure(small_case, capsys, "tasmin", "base_tmin.nc")


def test_unknown_units(small_case, capsys):
    tmin, _tmax = small_case["tmin"], small_case["tmax"]
    write_netcdf_daily(small_case["dir"] / "climate" / "base_tmin.nc", tmin, var="tmin",
                       units="furlongs", crs="EPSG:4326")
    assert_clean_failure(small_case, capsys, "furlongs", "base_tmin.nc")


def test_missing_units(small_case, capsys):
    write_netcdf_daily(small_case["dir"] / "climate" / "base_tmax.nc", small_case["tmax"],
                       var="tmax", units=None, crs="EPSG:4326")
    assert_clean_failure(small_case, capsys, "base_tmax.nc", "units")


def test_mismatched_tmin_tmax_grids(small_case, capsys):
    """Tmin and Tmax of one period on different grids cannot be paired (scenarios on another
    grid than the baseline are snapped instead, see test_batch.py)."""
    tmin, tmax = make_tmin_tmax(730, 4, 6, seed=2)
    write_netcdf_daily(small_case["dir"] / "climate" / "scen_tmax.nc", tmax, var="tmax",
                       start="2053-01-01", crs="EPSG:4326")
    msg = assert_clean_failure(small_case, capsys, "warm tmin", "warm tmax")
    assert "5" in msg and "6" in msg  # says how the shapes differ


def test_years_outside_data(small_case, capsys):
    edit_run(small_case, "years = [2053, 2054]", "years = [2053, 2060]")
    assert_clean_failure(small_case, capsys, "2060", "warm")


def test_corrupt_netcdf(small_case, capsys):
    (small_case["dir"] / "climate" / "base_tmin.nc").write_bytes(b"this is not a netcdf file")
    assert_clean_failure(small_case, capsys, "base_tmin.nc")


def test_invalid_profile(small_case, capsys):
    text = small_case["profile"].read_text().replace("lower_threshold = 10.0",
                                                     "lower_threshold = 35.0")
    small_case["profile"].write_text(text)
    assert_clean_failure(small_case, capsys, "lower_threshold", "profile.toml")


def test_invalid_run_file(small_case, capsys):
    edit_run(small_case, 'formats = ["geotiff", "netcdf", "png"]', 'formats = ["jpeg"]')
    assert_clean_failure(small_case, capsys, "output.formats", "run.toml")


def test_check_reports_unusable_input(small_case, capsys):
    edit_run(small_case, "climate/base_tmin.nc", "climate/none_*.nc")
    assert_clean_failure(small_case, capsys, "none_*.nc", args=["check", str(small_case["run"])])


def test_existing_output_is_not_overwritten(small_case, capsys):
    out = small_case["dir"] / "results"
    out.mkdir()
    keep = out / "mine.txt"
    keep.write_text("user data")
    code, _, err = run_cli(["run", str(small_case["run"])], capsys)
    assert code == 2 and "--overwrite" in err and "results" in err
    assert keep.read_text() == "user data"
    assert sorted(p.name for p in out.iterdir()) == ["mine.txt"]


def test_failure_mid_run_leaves_no_broken_file_and_resumes(small_case, capsys, monkeypatch):
    """A writer failing after some files exist: no half-written file, no manifest (the run is
    visibly incomplete), and a rerun of the same run file completes it."""
    import rasterio

    import suitmap.pipeline.outputs as outputs

    calls = {"n": 0}
    real = outputs.write_cog

    def flaky(*a, **k):
        calls["n"] += 1
        if calls["n"] == 5:
            raise OSError("disk full (simulated)")
        return real(*a, **k)

    monkeypatch.setattr(outputs, "write_cog", flaky)
    code, _, err = run_cli(["run", str(small_case["run"])], capsys)
    assert code == 2 and "Traceback" not in err and len(err.strip().splitlines()) == 1
    assert "nothing was published" in err and "disk full" in err
    out = small_case["dir"] / "results"
    assert not (out / "manifest.json").exists()
    assert sorted(p.name for p in out.iterdir()) == [".suitmap"]  # no layer of the failed run
    assert not [p for p in out.rglob("*") if ".tmp" in p.name or "partial" in p.name]
    for tif in out.rglob("*.tif"):
        with rasterio.open(tif) as src:
            src.read(1)
    monkeypatch.setattr(outputs, "write_cog", real)
    code, _, err = run_cli(["run", str(small_case["run"])], capsys)
    assert code == 0, err
    assert (out / "manifest.json").is_file()


def test_exit_code_of_the_real_process(small_case):
    """The console entry point itself exits 2 with one line and no traceback."""
    edit_run(small_case, "climate/base_tmin.nc", "climate/none_*.nc")
    proc = subprocess.run([sys.executable, "-m", "suitmap", "run", str(small_case["run"])],
                          capture_output=True, text=True)
    assert proc.returncode == 2
    assert proc.stderr.strip().count("\n") == 0 and "Traceback" not in proc.stderr
    assert "none_*.nc" in proc.stderr

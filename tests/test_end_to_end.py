"""The bundled demo end to end, read back with rasterio and xarray as a GIS user would."""

from __future__ import annotations

import hashlib
import json
import os
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
import rasterio
import xarray as xr

from suitmap.layers.metadata import NUMERIC_LAYERS


@pytest.fixture(scope="module")
def demo(tmp_path_factory):
    folder = tmp_path_factory.mktemp("demo") / "suitmap-demo"
    # run from outside the checkout, so the installed package (and its bundled data) is used
    proc = subprocess.run([sys.executable, "-m", "suitmap", "demo", "--out", str(folder)],
                          capture_output=True, text=True, cwd=folder.parent,
                          preexec_fn=lambda: os.umask(0o022))  # the usual umask: files 0644
    assert proc.returncode == 0, proc.stderr
    return folder, proc


def test_demo_prints_where_outputs_are(demo):
    folder, proc = demo
    assert str(folder / "results") in proc.stdout
    assert "screening-level" in proc.stdout
    assert "Traceback" not in proc.stderr


def test_manifest_lists_every_file_with_correct_checksum(demo):
    root = demo[0] / "results"
    manifest = json.loads((root / "manifest.json").read_text())
    listed = {e["path"]: e for e in manifest["entries"]}
    on_disk = {p.relative_to(root).as_posix() for p in root.rglob("*")
               if p.is_file() and ".suitmap" not in p.parts}  # the run's cache and state
    assert on_disk - {"manifest.json"} == set(listed)
    for rel, e in listed.items():
        # SHA-256 computed here with hashlib, independently of suitmap's writer
        assert hashlib.sha256((root / rel).read_bytes()).hexdigest() == e["sha256"], rel
    periods = {e["period_or_comparison"] for e in listed.values()}
    assert {"baseline", "model-a_mid-century", "model-a_mid-century_vs_baseline"} <= periods


def lake_mask(folder: Path) -> np.ndarray:
    with xr.open_dataset(sorted((folder / "climate").glob("baseline_tmin_*.nc"))[0]) as ds:
        return np.isnan(ds["tmin"].isel(time=0).values)


def test_geotiffs_are_cloud_optimised_and_georeferenced(demo):
    folder = demo[0]
    root = folder / "results"
    lake = lake_mask(folder)
    assert lake.any() and not lake.all()
    tifs = sorted(root.rglob("*.tif"))
    assert len(tifs) >= 2 * len(NUMERIC_LAYERS) + len(NUMERIC_LAYERS) + 3
    for tif in tifs:
        layer = tif.stem
        with rasterio.open(tif) as src:
            assert src.crs.to_epsg() == 4326, tif
            assert src.descriptions[0] == layer
            assert src.overviews(1), f"{tif} has no overviews"
            assert src.profile["tiled"] or src.tags(ns="IMAGE_STRUCTURE").get("LAYOUT") == "COG"
            assert src.transform.e < 0  # north-up
            data = src.read(1)
            if layer in ("limiting_factor", "change_class", "range_change", "relocation_candidates") \
                    or layer.endswith("_status"):
                assert src.dtypes[0] == "uint8" and src.nodata == 255
                assert src.colormap(1)[0][:3] != (0, 0, 0) or src.colormap(1)[1]
                assert (data[lake] == 255).all() and (data[~lake] != 255).all()
            else:
                assert src.dtypes[0] == "float32" and np.isnan(src.nodata)
                assert np.isnan(data[lake]).all(), tif
            assert data.shape == lake.shape


def test_netcdf_is_cf_and_matches_geotiff(demo):
    root = demo[0] / "results"
    with xr.open_dataset(root / "baseline" / "layers.nc") as ds:
        assert ds.attrs["Conventions"].startswith("CF-")
        assert "suitmap" in ds.attrs["source"] and "suitmap" in ds.attrs["history"]
        assert "lower_threshold" in ds.attrs["profile"]
        assert "baseline_tmin_1991-2000.nc" in ds.attrs["inputs"]
        dd = ds["degree_days"]
        assert dd.attrs["units"] == "K d"
        assert dd.attrs["standard_name"] == "integral_wrt_time_of_air_temperature_excess"
        gm = dd.attrs.get("grid_mapping") or dd.encoding.get("grid_mapping")
        assert "cell_methods" in dd.attrs and gm
        assert "crs_wkt" in ds[gm].attrs
        assert ds["limiting_factor"].attrs["flag_meanings"].startswith("none too_cool")
        with rasterio.open(root / "baseline" / "degree_days.tif") as src:
            np.testing.assert_array_equal(src.read(1), dd.values.astype("float32"))
    with xr.open_dataset(root / "model-a_mid-century_vs_baseline" / "changes.nc") as ch:
        assert "change_class" in ch and "change_suitability" in ch


def test_demo_scenario_is_warmer_everywhere(demo):
    root = demo[0] / "results"
    with xr.open_dataset(root / "model-a_mid-century_vs_baseline" / "changes.nc") as ch:
        d = ch["change_degree_days"].values
        ok = np.isfinite(d)
        assert (d[ok] > 0).all()
        assert (ch["change_generations"].values[ok] > 0).all()


def test_pngs_written_for_every_layer(demo):
    root = demo[0] / "results"
    for tif in root.rglob("*.tif"):
        png = tif.with_suffix(".png")
        assert png.is_file() and png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


def digest(root):
    return {p.relative_to(root).as_posix(): hashlib.sha256(p.read_bytes()).hexdigest()
            for p in root.rglob("*") if p.is_file() and ".suitmap" not in p.parts}


def test_rerun_reuses_cache_and_refuses_foreign_folders(demo):
    folder = demo[0]
    before = digest(folder / "results")
    # the same run file again: every period comes from the cache, files are byte-identical
    proc = subprocess.run([sys.executable, "-m", "suitmap", "run", str(folder / "demo_run.toml"),
                           "--quiet"], capture_output=True, text=True, cwd=folder)
    assert proc.returncode == 0, proc.stderr
    assert digest(folder / "results") == before
    # another run file pointing at the same folder is refused without --overwrite
    other = folder / "other_run.toml"
    other.write_text((folder / "demo_run.toml").read_text())
    proc = subprocess.run([sys.executable, "-m", "suitmap", "run", str(other), "--quiet"],
                          capture_output=True, text=True, cwd=folder)
    assert proc.returncode == 2 and "--overwrite" in proc.stderr
    proc = subprocess.run([sys.executable, "-m", "suitmap", "run", str(other), "--quiet",
                           "--overwrite"], capture_output=True, text=True, cwd=folder)
    assert proc.returncode == 0, proc.stderr
    after = digest(folder / "results")
    assert set(after) == set(before)


def test_check_prints_qa_summary(demo):
    folder = demo[0]
    proc = subprocess.run([sys.executable, "-m", "suitmap", "check", str(folder / "demo_run.toml")],
                          capture_output=True, text=True)
    assert proc.returncode == 0, proc.stderr
    out = proc.stdout
    for needle in ("baseline", "model-a_mid-century", "noleap", "EPSG:4326", "usable: yes"):
        assert needle in out, needle


# --- outputs a GIS user can open without fixing them (issue 15) ----------------------------------

def output_files(root: Path) -> list[Path]:
    return [p for p in root.rglob("*") if p.is_file() and ".suitmap" not in p.parts]


def test_outputs_readable_by_colleagues_under_umask_022(demo):
    root = demo[0] / "results"
    for p in output_files(root):
        assert (p.stat().st_mode & 0o777) == 0o644, (p, oct(p.stat().st_mode))


def test_no_absolute_path_of_the_user_in_outputs(demo):
    folder = demo[0]
    needles = {str(folder).encode(), str(folder.resolve()).encode()}
    for p in output_files(folder / "results"):
        data = p.read_bytes()
        assert not any(n in data for n in needles), p
    manifest = json.loads((folder / "results" / "manifest.json").read_text())
    assert manifest["attrs"]["profile_file"] == "profiles/demo_pest.toml"  # relative to run file


def test_geotiffs_carry_provenance_units_styles_and_class_names(demo):
    from xml.etree import ElementTree as ET

    from gdal_ctypes import category_names

    root = demo[0] / "results"
    for tif in sorted(root.glob("*/*.tif")):
        with rasterio.open(tif) as src:
            tags, units, band = src.tags(), src.units, src.tags(1)
        for key in ("organism", "years", "lower_threshold_degC", "upper_threshold_degC",
                    "suitable_level", "suitmap_version", "caution"):
            assert tags.get(key), (tif, key)
        assert "period" in tags or "comparison" in tags
        assert "screening-level" in tags["caution"]
        for style in (tif.with_suffix(".qml"), tif.with_suffix(".sld")):
            text = style.read_text(encoding="utf-8")
            ET.fromstring(text.split("\n", 1)[1])  # parses
        if "flag_meanings" in band:
            names = category_names(tif)
            meanings = band["flag_meanings"].split()
            assert names is None or names == meanings, tif
        else:
            assert units[0], f"{tif} has no unit type"
    with rasterio.open(root / "baseline" / "degree_days.tif") as src:
        assert src.tags()["years"] == "1991-2020" and src.units == ("°C·day",)


def test_first_generation_day_never_is_not_no_data(demo):
    folder = demo[0]
    root = folder / "results" / "baseline"
    lake = lake_mask(folder)
    with rasterio.open(root / "first_generation_day.tif") as a, \
            rasterio.open(root / "first_generation_day_status.tif") as b, \
            rasterio.open(root / "degree_days.tif") as c:
        first, status, dd = a.read(1), b.read(1), c.read(1)
    never = np.isnan(first) & ~lake
    assert never.any(), "the demo has cells where no generation completes"
    assert np.isfinite(dd[never]).all()  # their climate is complete
    assert (status[never] == 1).all() and (status[lake] == 255).all()
    assert (status[np.isfinite(first)] == 0).all()
    with xr.open_dataset(root / "layers.nc", mask_and_scale=False) as ds:
        assert ds["first_generation_day"].attrs["ancillary_variables"] == \
            "first_generation_day_status"
        assert ds["first_generation_day_status"].attrs["flag_meanings"] == "occurs never"
    # the change layer: empty where the event never happens in a period, and says which case
    comp = folder / "results" / "model-a_mid-century_vs_baseline"
    with rasterio.open(folder / "results" / "model-a_mid-century" / "first_generation_day_status.tif") as s, \
            rasterio.open(comp / "change_first_generation_day_status.tif") as c:
        scen, change = s.read(1), c.read(1)
    assert ((change == 2) == ((status == 1) & (scen == 0))).all()  # starts in the scenario
    assert ((change == 1) == ((status == 1) & (scen == 1))).all()  # never in both
    assert (change[lake] == 255).all()


def test_netcdf_outputs_pass_the_cf_checker(demo, tmp_path):
    # compliance-checker (IOOS) with its cf:1.11 suite, "strict": any failed check at any level
    from compliance_checker.runner import CheckSuite, ComplianceChecker

    CheckSuite.load_all_available_checkers()
    for nc in sorted((demo[0] / "results").glob("*/*.nc")):  # not the run's own cache
        report = tmp_path / f"{nc.parent.name}.json"
        passed, errors = ComplianceChecker.run_checker(
            str(nc), ["cf:1.11"], 0, "strict", output_filename=str(report), output_format="json")
        doc = json.loads(report.read_text())
        failed = [msg for check in doc.values() for level in ("high_priorities",
                  "medium_priorities", "low_priorities") for r in check.get(level, [])
                  if r["value"][0] < r["value"][1] for msg in r["msgs"]]
        assert passed and not errors and not failed, (nc, failed)


def chromium() -> str | None:
    import shutil

    return next((shutil.which(n) for n in ("chromium", "chromium-browser", "google-chrome")
                 if shutil.which(n)), None)


def run_chromium(tmp_path, url: str, *extra: str) -> subprocess.CompletedProcess:
    exe = chromium()
    profile = tmp_path / f"chromium-profile-{len(list(tmp_path.iterdir()))}"
    return subprocess.run(
        [exe, "--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
         "--disable-component-update", "--disable-sync", "--no-first-run",
         f"--user-data-dir={profile}", "--enable-logging=stderr", "--v=0",
         "--virtual-time-budget=10000", *extra, url],
        capture_output=True, text=True, timeout=180)


def test_report_loads_in_headless_chromium(demo, tmp_path):
    import re

    if chromium() is None:
        if os.environ.get("CI"):
            pytest.fail("CI must have chromium: .ci/run installs the Debian package")
        pytest.skip("chromium is not installed here (.ci/run installs it)")
    root = demo[0] / "results"
    html_text = (root / "report.html").read_text(encoding="utf-8")
    assert not re.search(r"""(src|href)=["']?(https?:|//)""", html_text), "no network assets"
    probe = tmp_path / "report_probe.html"
    script = ("<script>window.addEventListener('load',()=>{const i=[...document.images];"
              "document.body.dataset.images=i.length;"
              "document.body.dataset.decoded=i.filter(x=>x.complete&&x.naturalWidth>0).length;"
              "});</script>")
    probe.write_text(html_text.replace("</body>", script + "</body>"), encoding="utf-8")
    proc = run_chromium(tmp_path, probe.as_uri(), "--dump-dom")
    assert proc.returncode == 0, proc.stderr[-2000:]
    images = int(re.search(r'data-images="(\d+)"', proc.stdout).group(1))
    decoded = int(re.search(r'data-decoded="(\d+)"', proc.stdout).group(1))
    pngs = [p for p in root.glob("*/*.png")]
    assert images == len(pngs) > 0 and decoded == images
    for table in ("summary", "inputs", "profile", "methods", "files"):
        assert f'class="{table}"' in proc.stdout, table
    shot = tmp_path / "report.png"
    proc = run_chromium(tmp_path, (root / "report.html").as_uri(), f"--screenshot={shot}",
                        "--window-size=1200,2000")
    assert proc.returncode == 0 and shot.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    console = [line for line in proc.stderr.splitlines() if "CONSOLE" in line]
    assert console == [], console


def test_report_command_rebuilds_report_and_methods(demo, tmp_path):
    import shutil

    from suitmap.writers.manifest import verify_manifest

    root = demo[0] / "results"
    copy = tmp_path / "results"
    shutil.copytree(root, copy, ignore=shutil.ignore_patterns(".suitmap"))
    (copy / "report.html").unlink()
    (copy / "methods.md").unlink()
    proc = subprocess.run([sys.executable, "-m", "suitmap", "report", str(copy)],
                          capture_output=True, text=True)
    assert proc.returncode == 0, proc.stderr
    assert (copy / "report.html").read_bytes() == (root / "report.html").read_bytes()
    assert verify_manifest(copy / "manifest.json") == []
    methods = (copy / "methods.md").read_text(encoding="utf-8")
    for needle in ("1991-2020", "2041-2070", "9.5 °C", "single_sine",
                   "Baskerville, G.L. & Emin, P. (1969)", "screening-level"):
        assert needle in methods, needle
    proc = subprocess.run([sys.executable, "-m", "suitmap", "report", str(tmp_path / "nothing")],
                          capture_output=True, text=True)
    assert proc.returncode == 2 and "manifest" in proc.stderr and "Traceback" not in proc.stderr


def test_results_readme_lists_every_layer(demo):
    root = demo[0] / "results"
    text = (root / "README.txt").read_text(encoding="utf-8")
    for tif in (root / "baseline").glob("*.tif"):
        assert f"  {tif.stem} [" in text, tif.stem
    assert "0 none, 1 too_cool" in text


def test_demo_writes_regional_and_range_outputs(demo):
    import pandas as pd

    root = demo[0] / "results"
    table = pd.read_csv(root / "regions.csv")
    base = table[table["period"] == "baseline"].set_index("region")
    assert len(base) == 6  # the invented districts
    # Tollmere is smaller than one cell and still gets that cell's value
    assert base.loc["Tollmere", "area_km2"] < 0.05 * 0.05 * 111 * 76
    assert np.isfinite(base.loc["Tollmere", "mean_degree_days"])
    # Ostra Lakeside holds the lake (missing cells), Far Marches reaches beyond the grid
    for name in ("Ostra Lakeside", "Far Marches"):
        assert 0 < base.loc[name, "covered_km2"] < 0.9 * base.loc[name, "area_km2"]
    assert np.isfinite(base["suitable_elevation_low_m"]).any()
    ranges = pd.read_csv(root / "ranges.csv")
    assert "all" in set(ranges["band"]) and np.isfinite(ranges["centroid_shift_km"]).all()
    comp = root / "model-a_mid-century_vs_baseline"
    for name in ("range_change.tif", "relocation_candidates.tif", "region_change.png",
                 "range_edges.png"):
        assert (comp / name).is_file(), name

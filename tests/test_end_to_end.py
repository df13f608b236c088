"""The bundled demo end to end, read back with rasterio and xarray as a GIS user would."""

from __future__ import annotations

import hashlib
import json
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
                          capture_output=True, text=True, cwd=folder.parent)
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

"""Regions and ranges in a run: [regions], [terrain], [ranges], `suitmap summarize`."""

from __future__ import annotations

import hashlib
import json
import warnings

import geopandas as gpd
import numpy as np
import pandas as pd
import pytest
import rasterio
from rasterio.transform import from_origin
from shapely.geometry import box

from suitmap.cli import main
from suitmap.config.runfile import load_run
from suitmap.errors import InputError, RunFileError, SuitmapWarning
from suitmap.pipeline.analysis import run

# small_case: lon −2…3, lat 46…50, 1° cells, cell (row 0, col 0) missing (tests/conftest.py)


def write_regions(folder, crs="EPSG:3035"):
    polys = {"west": box(-2.0, 48.0, 0.0, 50.0),       # includes the missing cell
             "tiny": box(1.2, 47.2, 1.3, 47.3),         # inside the cell centred at 1.5, 47.5
             "away": box(20.0, 20.0, 21.0, 21.0)}       # outside the grid
    gdf = gpd.GeoDataFrame({"name": list(polys)}, geometry=list(polys.values()), crs="EPSG:4326")
    gdf.to_crs(crs).to_file(folder / "districts.gpkg", layer="districts", engine="pyogrio")
    return folder / "districts.gpkg"


def write_dem(folder):
    # elevation rising 10 m per 0.1° row towards the north, on a finer grid than the climate
    rows = np.arange(40)
    dem = (1000.0 - 10.0 * rows[:, None] + 0.0 * np.arange(50)[None, :]).astype("float32")
    with rasterio.open(folder / "dem.tif", "w", driver="GTiff", width=50, height=40, count=1,
                       dtype="float32", crs="EPSG:4326", transform=from_origin(-2.0, 50.0, 0.1, 0.1)) as f:
        f.write(dem, 1)
    return folder / "dem.tif"


def add(run_path, text):
    run_path.write_text(run_path.read_text() + "\n" + text + "\n")


def test_run_writes_regions_ranges_and_range_change(small_case):
    d = small_case["dir"]
    write_regions(d)
    write_dem(d)
    add(small_case["run"], '[regions]\npath = "districts.gpkg"\nfield = "name"\n'
                           '[terrain]\nelevation = "dem.tif"\n'
                           '[ranges]\ndispersal_km_per_year = 2.0\nband_deg = 2.0')
    with pytest.warns(SuitmapWarning, match="away"):
        manifest = run(small_case["run"])
    root = manifest.parent
    doc = json.loads(manifest.read_text())
    listed = {e["path"]: e for e in doc["entries"]}
    for name in ("regions.csv", "regions.gpkg", "ranges.csv",
                 "warm_vs_baseline/range_change.tif", "warm_vs_baseline/relocation_candidates.tif",
                 "warm_vs_baseline/region_change.png", "warm_vs_baseline/range_edges.png"):
        assert name in listed
        assert hashlib.sha256((root / name).read_bytes()).hexdigest() == listed[name]["sha256"]
    table = pd.read_csv(root / "regions.csv")
    assert len(table) == 3 * 3  # regions × (2 periods + 1 comparison)
    base = table[table["period"] == "baseline"].set_index("region")
    with rasterio.open(root / "baseline" / "suitability.tif") as f:
        suit = f.read(1, masked=True)
        r, c = f.index(1.25, 47.25)
    assert base.loc["tiny", "mean_suitability"] == pytest.approx(float(suit[r, c]), rel=1e-6)
    assert base.loc["west", "covered_km2"] < 0.8 * base.loc["west", "area_km2"]  # one of 4 cells missing
    assert base.loc["away", "covered_km2"] == 0 and np.isnan(base.loc["away", "mean_suitability"])
    # the DEM falls 10 m per 0.1° row southwards from 1000 m at 50°N: bilinear resampling
    # reproduces a linear field, so the cell centred at 47.5°N (DEM row 24.5) lies at 755 m
    assert base.loc["tiny", "suitable_area_km2"] > 0
    assert base.loc["tiny", "suitable_elevation_low_m"] == pytest.approx(755.0, abs=1e-6)
    assert base.loc["tiny", "suitable_elevation_high_m"] == pytest.approx(755.0, abs=1e-6)
    comp = table[table["kind"] == "comparison"].set_index("region")
    warm = table[table["period"] == "warm"].set_index("region")
    mid = lambda t, r: (t.loc[r, "suitable_elevation_low_m"] + t.loc[r, "suitable_elevation_high_m"]) / 2
    assert comp.loc["west", "suitable_elevation_shift_m"] == pytest.approx(mid(warm, "west") - mid(base, "west"))
    gpkg = gpd.read_file(root / "regions.gpkg")
    assert gpkg.crs.to_epsg() == 3035 and len(gpkg) == 9  # the regions' own CRS
    ranges = pd.read_csv(root / "ranges.csv")
    assert set(ranges["band"]) == {"-2..0", "0..2", "2..4", "all"}
    assert "elevation_shift_m" in ranges and "centroid_shift_km" in ranges
    with rasterio.open(root / "warm_vs_baseline" / "range_change.tif") as f:
        codes = f.read(1)
        meanings = f.tags(1).get("flag_meanings", "")
    with rasterio.open(root / "warm_vs_baseline" / "relocation_candidates.tif") as f:
        cand = f.read(1)
    assert "reachable_gain" in meanings
    assert codes[0, 0] == 255 and cand[0, 0] == 255
    np.testing.assert_array_equal(cand[codes != 255] == 1, codes[codes != 255] == 4)


def test_summarize_from_finished_folder(small_case, capsys):
    d = small_case["dir"]
    regions = write_regions(d, crs="EPSG:4326")
    manifest = run(small_case["run"])
    root = manifest.parent
    before = {p: p.stat().st_mtime_ns for p in root.rglob("*.tif")}
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", SuitmapWarning)
        assert main(["summarize", str(small_case["run"]), "--regions", str(regions),
                     "--field", "name"]) == 0
    assert {p: p.stat().st_mtime_ns for p in root.rglob("*.tif")} == before  # nothing recomputed
    assert (root / "warm_vs_baseline" / "region_change.png").read_bytes()[:4] == b"\x89PNG"
    table = pd.read_csv(root / "regions.csv")
    assert set(table["region"]) == {"west", "tiny", "away"}
    listed = {e["path"]: e for e in json.loads(manifest.read_text())["entries"]}
    assert hashlib.sha256((root / "regions.csv").read_bytes()).hexdigest() == listed["regions.csv"]["sha256"]
    # again: refused without --overwrite (one line, exit 2), accepted with it
    assert main(["summarize", str(small_case["run"]), "--regions", str(regions), "--field", "name"]) == 2
    assert "--overwrite" in capsys.readouterr().err
    assert main(["summarize", str(small_case["run"]), "--regions", str(regions), "--field", "nope",
                 "--overwrite"]) == 2
    assert "no field 'nope'" in capsys.readouterr().err
    assert main(["summarize", str(small_case["run"]), "--overwrite"]) == 2  # no [regions] either
    assert "--regions FILE" in capsys.readouterr().err
    # the same numbers as a run with [regions] (layers read back vs in memory)
    add(small_case["run"], '[regions]\npath = "districts.gpkg"\nfield = "name"')
    (root / "regions.csv").rename(d / "summarized.csv")
    (root / "regions.gpkg").unlink()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", SuitmapWarning)
        run(small_case["run"], overwrite=True)
    a = pd.read_csv(d / "summarized.csv").sort_values(["region", "period"]).reset_index(drop=True)
    b = pd.read_csv(root / "regions.csv").sort_values(["region", "period"]).reset_index(drop=True)
    pd.testing.assert_frame_equal(a[b.columns], b, rtol=1e-5)
    # without --regions, summarize takes the run file's [regions]
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", SuitmapWarning)
        assert main(["summarize", str(small_case["run"]), "--overwrite"]) == 0
    c = pd.read_csv(root / "regions.csv").sort_values(["region", "period"]).reset_index(drop=True)
    pd.testing.assert_frame_equal(c[b.columns], b, rtol=1e-5)


def test_bad_regions_stop_the_run_before_any_output(small_case):
    write_regions(small_case["dir"])
    add(small_case["run"], '[regions]\npath = "districts.gpkg"\nfield = "district"')
    with pytest.raises(InputError, match="no field 'district'"):
        run(small_case["run"])
    assert not (small_case["dir"] / "results").exists()


def test_implausible_elevation_is_refused_before_any_output(small_case, capsys):
    dem = write_dem(small_case["dir"])
    with rasterio.open(dem, "r+") as f:
        f.write(f.read(1) * 100.0, 1)  # centimetres, not metres
    add(small_case["run"], '[terrain]\nelevation = "dem.tif"\n[ranges]')
    assert main(["run", str(small_case["run"])]) == 2
    err = capsys.readouterr().err
    assert "terrain.elevation" in err and "metres" in err and "Traceback" not in err
    assert not (small_case["dir"] / "results").exists()
    assert main(["check", str(small_case["run"])]) == 2


@pytest.mark.parametrize("text, match", [
    ('[regions]\npath = "d.gpkg"', "needs field"),
    ('[regions]\npath = "d.gpkg"\nfield = "n"\nsize = 3', "unknown key regions.size"),
    ('[ranges]\ndispersal_km_per_year = -1', "ranges.dispersal_km_per_year"),
    ('[ranges]\nband_deg = 0', "ranges.band_deg"),
    ('[terrain]\nelevation = 5', "terrain.elevation"),
])
def test_run_file_keys_are_checked(small_case, text, match):
    add(small_case["run"], text)
    with pytest.raises(RunFileError, match=match):
        load_run(small_case["run"])


def test_geography_keys_are_read(small_case):
    add(small_case["run"], '[regions]\npath = "d.gpkg"\nfield = "n"\nlayer = "l"\n'
                           '[ranges]\ndispersal_km_per_year = 0')
    geo = load_run(small_case["run"]).geography
    assert geo.regions_path == small_case["dir"] / "d.gpkg" and geo.regions_layer == "l"
    assert geo.ranges and geo.dispersal_km_per_year == 0.0 and geo.elevation is None


def test_summarize_reads_geotiffs_when_there_is_no_netcdf(small_case):
    d = small_case["dir"]
    regions = write_regions(d, crs="EPSG:4326")
    text = small_case["run"].read_text().replace('formats = ["geotiff", "netcdf", "png"]',
                                                 'formats = ["geotiff"]')
    assert text != small_case["run"].read_text()
    small_case["run"].write_text(text)
    add(small_case["run"], '[regions]\npath = "districts.gpkg"\nfield = "name"')
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", SuitmapWarning)
        manifest = run(small_case["run"])
        root = manifest.parent
        in_memory = pd.read_csv(root / "regions.csv")
        assert not [p for p in root.rglob("*.nc") if ".suitmap" not in p.parts]
        assert main(["summarize", str(small_case["run"]), "--regions", str(regions),
                     "--field", "name", "--overwrite"]) == 0
    read_back = pd.read_csv(root / "regions.csv")
    key = ["region", "period"]
    a = in_memory.sort_values(key).reset_index(drop=True)
    b = read_back.sort_values(key).reset_index(drop=True)
    assert set(a.columns) == set(b.columns)
    pd.testing.assert_frame_equal(a, b[a.columns], rtol=1e-5)


def test_elevation_without_ranges_or_regions_warns(small_case):
    from suitmap.pipeline.regions import check_geography

    write_dem(small_case["dir"])
    add(small_case["run"], '[terrain]\nelevation = "dem.tif"')
    with pytest.warns(SuitmapWarning, match="terrain.elevation is used only with"):
        check_geography(load_run(small_case["run"]))

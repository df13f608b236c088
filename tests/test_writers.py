"""Tests of suitmap.writers: COG, NetCDF, PNG figures, manifest, atomic writes.

Small synthetic layers on an invented grid, in EPSG:4326 and EPSG:32633.
"""

from __future__ import annotations

import hashlib
import json
import os
import sys

import dask.array as dsa
import matplotlib
import netCDF4
import numpy as np
import pyproj
import pytest
import rasterio
import xarray as xr
from affine import Affine
from PIL import Image

import rioxarray  # noqa: F401  (registers the .rio accessor)
from suitmap.errors import OutputError
from suitmap.writers import atomic, styles
from suitmap.writers.atomic import atomic_path, sha256_file
from suitmap.writers.cog import choose_blocksize, write_cog
from suitmap.writers.figures import DEFAULT_CAUTION, axis_labels, layer_figure, plot_layer
from suitmap.writers.manifest import Manifest, verify_manifest
from suitmap.writers.netcdf import write_netcdf

# Okabe, M. & Ito, K. (2008) Color Universal Design, https://jfly.uni-koeln.de/color/ :
# the eight colours as published (hex), typed here independently of styles.py.
OKABE_ITO_HEX = {"#000000", "#e69f00", "#56b4e9", "#009e73", "#f0e442", "#0072b2",
                 "#d55e00", "#cc79a7"}

LF_MEANINGS = "none too_cool too_hot cold_kill heat_kill"
CC_MEANINGS = "stays_unsuitable becomes_suitable stays_suitable becomes_unsuitable"


def grid(crs: str, ny: int = 40, nx: int = 60):
    """Cell-centre coords (y descending) and the expected north-up transform."""
    if crs == "EPSG:4326":
        x0, y0, res = 10.0, 50.0, 0.25
    else:
        x0, y0, res = 400_000.0, 5_200_000.0, 1_000.0
    x = x0 + res * (np.arange(nx) + 0.5)
    y = y0 - res * (np.arange(ny) + 0.5)
    return y, x, Affine(res, 0.0, x0, 0.0, -res, y0)


def layers(crs: str = "EPSG:4326", ny: int = 40, nx: int = 60, dask: bool = False):
    y, x, _ = grid(crs, ny, nx)
    rng = np.random.default_rng(42)
    dd = rng.uniform(0.0, 2500.0, (ny, nx)).astype(np.float32)
    dd[:3, :5] = np.nan
    lf = rng.integers(0, 5, (ny, nx)).astype(np.uint8)
    lf[-2:, :] = 255
    suit = rng.uniform(0.0, 1.0, (ny, nx))  # float64 on purpose
    suit[0, 0] = np.nan
    ds = xr.Dataset(
        {
            "degree_days": (("y", "x"), dsa.from_array(dd, chunks=(16, 16)) if dask else dd,
                            {"units": "degC day", "long_name": "degree-days over the season",
                             "cell_methods": "time: sum"}),
            "limiting_factor": (("y", "x"), lf,
                                {"units": "1", "long_name": "limiting factor",
                                 "flag_values": [0, 1, 2, 3, 4], "flag_meanings": LF_MEANINGS,
                                 "_FillValue": 255}),
            "suitability": (("y", "x"), suit, {"units": "1", "long_name": "suitability"}),
        },
        coords={"y": y, "x": x},
        attrs={"history": "2024-01-01 layers computed", "suitmap_version": "0.1.0",
               "inputs": ["tmin.nc", "tmax.nc"], "profile": {"name": "invented moth"}},
    )
    return ds.rio.write_crs(crs)


def files_in(folder) -> list[str]:
    return sorted(os.listdir(folder))


# ----------------------------------------------------------------------------- styles
@pytest.mark.parametrize("layer, expected", [
    # The expected names are the rules of the suitmap glossary, section "Colours".
    ("degree_days", "viridis"), ("generations", "viridis"),
    ("complete_generations", "viridis"), ("cold_kill_days", "viridis"),
    ("suitability", "cividis"), ("change_suitability", "RdBu_r"),
    ("change_degree_days", "RdBu_r"), ("change_generations", "RdBu_r"),
    ("limiting_factor", styles.CATEGORICAL), ("change_class", styles.CATEGORICAL),
    # ensemble change maps and model bias are signed differences: the same diverging scale
    ("ensemble_median_change_degree_days", "RdBu_r"), ("ensemble_p90_change_suitability", "RdBu_r"),
    ("model_bias_generations", "RdBu_r"), ("ensemble_median_suitability", "cividis"),
])
def test_colormap_per_layer_kind(layer, expected):
    assert styles.colormap_name(layer) == expected
    if expected != styles.CATEGORICAL:
        matplotlib.colormaps[expected]  # a real matplotlib colormap


@pytest.mark.parametrize("layer, meanings", [("limiting_factor", LF_MEANINGS),
                                             ("change_class", CC_MEANINGS)])
def test_class_colours_are_okabe_ito_distinct_and_keyed_by_meaning(layer, meanings):
    names = meanings.split()
    colours = styles.class_colours(layer, names)
    hexes = [styles.rgb_to_hex(colours[m]) for m in names]
    assert set(hexes) <= OKABE_ITO_HEX
    assert len(set(hexes)) == len(names)
    reordered = styles.class_colours(layer, names[::-1])
    assert reordered == colours  # same class, same colour, whatever its code
    table = styles.gdal_colour_table(layer, list(range(len(names)))[::-1], names)
    assert table[0] == (*colours[names[-1]], 255)
    assert table[255][3] == 0  # missing cells transparent


def test_unknown_class_layer_gets_free_distinct_okabe_ito_colours():
    colours = styles.class_colours("habitat_class", ["a", "b", "c"])
    hexes = {styles.rgb_to_hex(c) for c in colours.values()}
    assert len(hexes) == 3 and hexes <= OKABE_ITO_HEX
    with pytest.raises(ValueError):
        styles.class_colours("habitat_class", [str(i) for i in range(9)])


# -------------------------------------------------------------------------------- COG
@pytest.mark.parametrize("crs", ["EPSG:4326", "EPSG:32633"])
def test_cog_continuous_roundtrip(tmp_path, crs):
    ds = layers(crs, dask=True)
    _, _, transform = grid(crs)
    out = write_cog(ds["degree_days"], tmp_path / "dd.tif", layer="degree_days",
                    tags={"period": "baseline"})
    expected = ds["degree_days"].values
    with rasterio.open(out) as src:
        assert src.crs == rasterio.crs.CRS.from_string(crs)
        assert src.dtypes == ("float32",)
        assert np.isnan(src.nodata)
        assert src.descriptions == ("degree_days",)
        assert src.tags(1)["units"] == "degC day"
        assert src.tags(1)["long_name"] == "degree-days over the season"
        assert src.tags()["period"] == "baseline"
        assert src.transform.almost_equals(transform)
        assert src.transform.e < 0  # north up
        structure = src.tags(ns="IMAGE_STRUCTURE")
        assert structure["LAYOUT"] == "COG"
        assert structure["COMPRESSION"] == "DEFLATE"
        assert src.block_shapes == [(32, 32)]
        assert src.overviews(1) == [2]
        data = src.read(1)
    np.testing.assert_array_equal(data, expected)  # NaN where missing, equal elsewhere
    # Overview = average of each 2x2 block, nodata ignored (GDAL's documented AVERAGE
    # resampling; reference computed with numpy).
    with rasterio.open(out, overview_level=0) as ovr:
        level = ovr.read(1)
    blocks = expected.reshape(20, 2, 30, 2).astype(np.float64)
    with np.errstate(invalid="ignore"), pytest.warns(RuntimeWarning):
        reference = np.nanmean(blocks, axis=(1, 3))
    np.testing.assert_allclose(level, reference, rtol=1e-6)


def test_cog_float64_as_float32_and_south_up_input_flipped(tmp_path):
    ds = layers()
    out = write_cog(ds["suitability"], tmp_path / "s.tif", layer="suitability")
    with rasterio.open(out) as src:
        assert src.dtypes == ("float32",)
        np.testing.assert_array_equal(src.read(1), ds["suitability"].values.astype(np.float32))
    flipped = ds["degree_days"].isel(y=slice(None, None, -1))
    out = write_cog(flipped, tmp_path / "dd.tif", layer="degree_days")
    with rasterio.open(out) as src:
        assert src.transform.e < 0
        np.testing.assert_array_equal(src.read(1), ds["degree_days"].values)


def test_cog_class_layer_colour_table_and_mode_overview(tmp_path):
    crs = "EPSG:32633"
    y, x, transform = grid(crs)
    # Each 2x2 block holds its class three times, so the MODE overview is that class.
    coarse = np.arange(20 * 30).reshape(20, 30) % 5
    codes = np.kron(coarse, np.ones((2, 2), dtype=int)).astype(float)
    codes[0::2, 0::2] = (codes[0::2, 0::2] + 1) % 5
    codes[-2:, :] = np.nan  # missing as NaN in a float array
    da = xr.DataArray(codes, dims=("y", "x"), coords={"y": y, "x": x}, name="limiting_factor",
                      attrs={"units": "1", "long_name": "limiting factor",
                             "flag_values": [0, 1, 2, 3, 4], "flag_meanings": LF_MEANINGS})
    da = da.rio.write_crs(crs)
    out = write_cog(da, tmp_path / "lf.tif", layer="limiting_factor")
    colours = styles.class_colours("limiting_factor", LF_MEANINGS.split())
    with rasterio.open(out) as src:
        assert src.dtypes == ("uint8",)
        assert src.nodata == 255
        assert src.crs == rasterio.crs.CRS.from_epsg(32633)
        assert src.transform.almost_equals(transform)
        assert src.colorinterp[0] == rasterio.enums.ColorInterp.palette
        table = src.colormap(1)
        for code, meaning in enumerate(LF_MEANINGS.split()):
            assert table[code][:3] == colours[meaning]
            assert styles.rgb_to_hex(table[code][:3]) in OKABE_ITO_HEX
        assert src.tags(1)["flag_meanings"] == LF_MEANINGS
        assert src.tags(ns="IMAGE_STRUCTURE")["LAYOUT"] == "COG"
        assert src.overviews(1) == [2]
        data = src.read(1)
    expected = np.where(np.isnan(codes), 255, codes).astype(np.uint8)
    np.testing.assert_array_equal(data, expected)
    with rasterio.open(out, overview_level=0) as ovr:
        level = ovr.read(1)
    np.testing.assert_array_equal(level[:-1], coarse[:-1])
    assert (level[-1] == 255).all()


@pytest.mark.parametrize("ny, nx", [(10, 12), (17, 5), (40, 60), (300, 200), (600, 40)])
def test_blocksize_rule_gives_overviews_whenever_larger_than_one_tile(tmp_path, ny, nx):
    y, x, _ = grid("EPSG:4326", ny, nx)
    da = xr.DataArray(np.ones((ny, nx), np.float32), dims=("y", "x"),
                      coords={"y": y, "x": x}).rio.write_crs("EPSG:4326")
    out = write_cog(da, tmp_path / "a.tif", layer="degree_days")
    block = choose_blocksize(ny, nx)
    assert block % 16 == 0 and 16 <= block <= 512
    with rasterio.open(out) as src:
        assert src.block_shapes == [(block, block)]
        assert bool(src.overviews(1)) == (max(ny, nx) > 16)


def test_cog_errors(tmp_path):
    ds = layers()
    no_crs = ds["degree_days"].drop_vars("spatial_ref")
    no_crs.attrs.pop("grid_mapping", None)
    no_crs.encoding.pop("grid_mapping", None)
    with pytest.raises(OutputError, match="no CRS"):
        write_cog(no_crs, tmp_path / "a.tif", layer="degree_days")
    bad = ds["limiting_factor"].copy(data=np.full((40, 60), 7, np.uint8))
    with pytest.raises(OutputError, match="not in its flag_values"):
        write_cog(bad, tmp_path / "b.tif", layer="limiting_factor")
    assert files_in(tmp_path) == []
    import suitmap.writers as writers  # lazy re-exports

    assert writers.write_cog is write_cog and writers.Manifest is Manifest


# ----------------------------------------------------------------------------- NetCDF
@pytest.mark.parametrize("crs", ["EPSG:4326", "EPSG:32633"])
def test_netcdf_cf_attributes_and_roundtrip(tmp_path, crs):
    ds = layers(crs, dask=True)
    out = write_netcdf(ds, tmp_path / "layers.nc", title="invented moth, baseline",
                       history="2024-01-02 written by suitmap", source="suitmap test grid",
                       extra_attrs={"period": "baseline", "profile": {"name": "invented moth"}})
    with netCDF4.Dataset(out) as nc:
        assert nc.data_model == "NETCDF4"
        assert nc.Conventions == "CF-1.11"  # uint8 flags (CF-1.9), units_metadata (CF-1.11)
        assert nc.title == "invented moth, baseline"
        assert nc.source == "suitmap test grid"
        # Newest history line first, the earlier one kept.
        assert nc.history.splitlines() == ["2024-01-02 written by suitmap",
                                           "2024-01-01 layers computed"]
        assert json.loads(nc.profile) == {"name": "invented moth"}
        assert nc.period == "baseline"
        wkt = nc["spatial_ref"].crs_wkt
        assert pyproj.CRS.from_wkt(wkt).equals(pyproj.CRS.from_user_input(crs))
        for name in ("degree_days", "limiting_factor", "suitability"):
            var = nc[name]
            assert var.grid_mapping == "spatial_ref"
            assert var.filters()["zlib"] and var.filters()["shuffle"]
        assert nc["degree_days"].units == "degC day"
        assert nc["degree_days"].cell_methods == "time: sum"
        assert nc["degree_days"].dtype == np.float32
        assert nc["suitability"].dtype == np.float64
        lf = nc["limiting_factor"]
        assert lf.dtype == np.uint8
        assert lf._FillValue == 255
        assert list(lf.flag_values) == [0, 1, 2, 3, 4]
        assert lf.flag_values.dtype == np.uint8  # CF 3.5: same type as the variable
        assert lf.flag_meanings == LF_MEANINGS
        lf.set_auto_mask(False)
        np.testing.assert_array_equal(lf[:], ds["limiting_factor"].values)
        xs, ys = nc["x"], nc["y"]
        if crs == "EPSG:4326":
            assert (xs.standard_name, xs.units) == ("longitude", "degrees_east")
            assert (ys.standard_name, ys.units) == ("latitude", "degrees_north")
        else:
            assert (xs.standard_name, xs.units) == ("projection_x_coordinate", "m")
            assert (ys.standard_name, ys.units) == ("projection_y_coordinate", "m")
        assert "_FillValue" not in xs.ncattrs()
    back = xr.open_dataset(out, decode_coords="all")
    try:
        assert back.rio.crs == rasterio.crs.CRS.from_string(crs)
        for name in ("degree_days", "suitability"):
            assert back[name].dtype == ds[name].dtype
            np.testing.assert_array_equal(back[name].values, ds[name].values)  # exact
        np.testing.assert_array_equal(back["x"].values, ds["x"].values)
        np.testing.assert_array_equal(back["y"].values, ds["y"].values)
    finally:
        back.close()


def test_netcdf_class_layer_from_float_with_nan(tmp_path):
    ds = layers()
    cc = np.tile(np.array([0, 1, 2, 3], float), (40, 15))
    cc[0, :] = np.nan
    ds["change_class"] = (("y", "x"), cc, {"units": "1", "long_name": "change class",
                                          "flag_values": np.array([0, 1, 2, 3]),
                                          "flag_meanings": CC_MEANINGS})
    out = write_netcdf(ds, tmp_path / "c.nc", title="t", history="h", source="s")
    with netCDF4.Dataset(out) as nc:
        var = nc["change_class"]
        var.set_auto_mask(False)
        assert var.dtype == np.uint8
        np.testing.assert_array_equal(var[:], np.where(np.isnan(cc), 255, cc))
        assert var.flag_meanings == CC_MEANINGS


def test_netcdf_failure_while_computing_leaves_nothing(tmp_path):
    """A dask chunk that fails during the write leaves neither the file nor a temp file."""
    ds = layers(dask=True)
    codes = ds["limiting_factor"].values.copy()
    codes[30:, 50:] = 9  # a code that is not a flag value, in a late chunk only
    ds["limiting_factor"] = ds["limiting_factor"].copy(
        data=dsa.from_array(codes, chunks=(16, 16)))
    with pytest.raises(OutputError, match="not in its flag_values"):
        write_netcdf(ds, tmp_path / "x.nc", title="t", history="h", source="s")
    assert files_in(tmp_path) == []


# ---------------------------------------------------------------------------- figures
def map_colours(da) -> set[tuple[int, int, int]]:
    """Colours inside the map axes only (not the colour bar or legend)."""
    fig = layer_figure(da, title="t")
    fig.canvas.draw()
    rgba = np.asarray(fig.canvas.buffer_rgba())
    box = fig.axes[0].get_window_extent()
    height = rgba.shape[0]
    inner = rgba[int(height - box.y1) + 3:int(height - box.y0) - 3,
                 int(box.x0) + 3:int(box.x1) - 3, :3].reshape(-1, 3)
    return {tuple(int(c) for c in row) for row in np.unique(inner, axis=0)}


def one_layer(name, values, attrs, crs="EPSG:4326"):
    y, x, _ = grid(crs, *values.shape)
    da = xr.DataArray(values, dims=("y", "x"), coords={"y": y, "x": x}, name=name, attrs=attrs)
    return da.rio.write_crs(crs)


def cmap_rgb(name, value):
    return tuple(int(c) for c in matplotlib.colormaps[name](value, bytes=True)[:3])


def test_figure_png_written_with_caution(tmp_path):
    ds = layers(dask=True)
    pyplot_figs = (sys.modules["matplotlib.pyplot"].get_fignums()
                   if "matplotlib.pyplot" in sys.modules else None)
    out = plot_layer(ds["degree_days"], tmp_path / "dd.png", title="Degree-days, baseline")
    assert out.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    with Image.open(out) as im:
        w, h = im.size
        assert 600 <= w <= 2000 and 400 <= h <= 1600
        assert im.info["Description"] == DEFAULT_CAUTION
        assert im.info["Title"] == "Degree-days, baseline"
    assert DEFAULT_CAUTION == ("Screening-level estimate — not a basis for control decisions; "
                               "consult your local plant-protection authority.")
    if pyplot_figs is not None:  # no figure left in pyplot's global registry
        assert sys.modules["matplotlib.pyplot"].get_fignums() == pyplot_figs
    assert files_in(tmp_path) == ["dd.png"]


def test_figure_diverging_is_symmetric_about_zero():
    # Values -0.6 and +1.0: with limits ±1 they map to 0.2 and 1.0 of RdBu_r; the
    # colour of -1 (0.0) must not appear, which it would with data-range limits.
    values = np.where(np.arange(60)[None, :] < 30, -0.6, 1.0) * np.ones((40, 1))
    da = one_layer("change_suitability", values, {"units": "1"})
    colours = map_colours(da)
    assert cmap_rgb("RdBu_r", 0.2) in colours
    assert cmap_rgb("RdBu_r", 1.0) in colours
    assert cmap_rgb("RdBu_r", 0.0) not in colours


def test_figure_suitability_uses_cividis_on_fixed_unit_range():
    values = np.where(np.arange(60)[None, :] < 30, 0.3, 0.7) * np.ones((40, 1))
    values[:5, :5] = np.nan
    da = one_layer("suitability", values, {"units": "1"}, crs="EPSG:32633")
    colours = map_colours(da)
    assert cmap_rgb("cividis", 0.3) in colours and cmap_rgb("cividis", 0.7) in colours
    assert cmap_rgb("viridis", 0.3) not in colours
    assert (211, 211, 211) in colours  # missing cells: light grey background


def test_figure_degree_days_uses_viridis():
    values = np.where(np.arange(60)[None, :] < 30, 100.0, 300.0) * np.ones((40, 1))
    da = one_layer("degree_days", values, {"units": "degC day"})
    colours = map_colours(da)
    assert cmap_rgb("viridis", 0.0) in colours and cmap_rgb("viridis", 1.0) in colours


def test_figure_class_layer_uses_okabe_ito():
    values = (np.arange(60)[None, :] // 12 * np.ones((40, 1))).astype(np.uint8)
    values[:4, :] = 255
    da = one_layer("limiting_factor", values, {"units": "1", "flag_values": [0, 1, 2, 3, 4],
                                               "flag_meanings": LF_MEANINGS,
                                               "_FillValue": 255})
    colours = map_colours(da)
    for rgb in styles.class_colours("limiting_factor", LF_MEANINGS.split()).values():
        assert rgb in colours
    assert (211, 211, 211) in colours


def test_axis_labels_follow_the_crs():
    # Units as pyproj reports the CRS axes (EPSG:32633: easting/northing in metre).
    assert axis_labels(rasterio.crs.CRS.from_epsg(4326)) == ("longitude (°E)", "latitude (°N)")
    unit = pyproj.CRS.from_epsg(32633).axis_info[0].unit_name
    assert axis_labels(rasterio.crs.CRS.from_epsg(32633)) == (f"x ({unit})", f"y ({unit})")


# -------------------------------------------------------------------------- atomicity
def test_atomic_path_cleans_up_and_wraps_errors(tmp_path):
    target = tmp_path / "a.bin"
    with pytest.raises(OutputError, match="a.bin"):
        with atomic_path(target) as tmp:
            assert tmp.parent == tmp_path
            tmp.write_bytes(b"half")
            raise ValueError("boom")
    assert files_in(tmp_path) == []
    with pytest.raises(OutputError, match="does not exist"):
        with atomic_path(tmp_path / "missing" / "a.bin"):
            pass


def test_existing_file_replaced_only_by_os_replace(tmp_path, monkeypatch):
    ds = layers()
    target = tmp_path / "dd.tif"
    target.write_bytes(b"old content")
    bad = ds["limiting_factor"].copy(data=np.full((40, 60), 9, np.uint8))
    with pytest.raises(OutputError):
        write_cog(bad, target, layer="limiting_factor")
    assert target.read_bytes() == b"old content"  # failed write: old file untouched
    assert files_in(tmp_path) == ["dd.tif"]
    calls = []
    real_replace = os.replace

    def spy(src, dst):
        calls.append((os.fspath(src), os.fspath(dst)))
        real_replace(src, dst)

    monkeypatch.setattr(atomic.os, "replace", spy)
    write_cog(ds["degree_days"], target, layer="degree_days")
    assert len(calls) == 1
    src, dst = calls[0]
    assert dst == os.fspath(target) and os.path.dirname(src) == os.fspath(tmp_path)
    assert src != dst and atomic.TEMP_MARK in os.path.basename(src)
    with rasterio.open(target) as opened:
        assert opened.descriptions == ("degree_days",)
    assert files_in(tmp_path) == ["dd.tif"]


def test_figure_failure_leaves_nothing(tmp_path):
    values = np.full((40, 60), 6, np.uint8)
    da = one_layer("limiting_factor", values, {"flag_values": [0, 1, 2, 3, 4],
                                               "flag_meanings": LF_MEANINGS})
    with pytest.raises(OutputError):
        plot_layer(da, tmp_path / "lf.png", title="x")
    assert files_in(tmp_path) == []


# --------------------------------------------------------------------------- manifest
def test_sha256_known_vector(tmp_path):
    # FIPS 180-2, appendix B.1: SHA-256("abc").
    (tmp_path / "abc").write_bytes(b"abc")
    assert sha256_file(tmp_path / "abc") == (
        "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad")


def test_manifest_checksums_and_verification(tmp_path):
    ds = layers()
    root = tmp_path / "out"
    (root / "baseline").mkdir(parents=True)
    cog = write_cog(ds["degree_days"], root / "baseline" / "degree_days.tif",
                    layer="degree_days")
    nc = write_netcdf(ds, root / "baseline" / "layers.nc", title="t", history="h",
                      source="s")
    manifest = Manifest(root, attrs={"run": "invented.toml"})
    manifest.add(cog, layer="degree_days", period_or_comparison="baseline", format="COG")
    manifest.add("baseline/layers.nc", layer="all", period_or_comparison="baseline",
                 format="NetCDF")
    path = manifest.write(root / "manifest.json")
    doc = json.loads(path.read_text())
    assert doc["attrs"] == {"run": "invented.toml"}
    assert [e["path"] for e in doc["entries"]] == ["baseline/degree_days.tif",
                                                   "baseline/layers.nc"]
    for entry in doc["entries"]:
        data = (root / entry["path"]).read_bytes()
        assert entry["sha256"] == hashlib.sha256(data).hexdigest()
        assert entry["bytes"] == len(data)
    assert verify_manifest(path) == []

    with open(nc, "ab") as fh:  # modify one file: size and checksum both differ
        fh.write(b"\0")
    problems = verify_manifest(path)
    assert len(problems) == 2 and all("baseline/layers.nc" in p for p in problems)
    cog.unlink()
    assert any("degree_days.tif: missing" in p for p in verify_manifest(path))

    elsewhere = tmp_path / "elsewhere.tif"
    elsewhere.write_bytes(b"x")
    with pytest.raises(OutputError, match="outside"):
        manifest.add(elsewhere, layer="x", period_or_comparison="baseline", format="COG")
    with pytest.raises(OutputError, match="no such file"):
        manifest.add("baseline/nothing.tif", layer="x", period_or_comparison="baseline",
                     format="COG")
    doc["entries"].append(dict(doc["entries"][0], path="../elsewhere.tif"))
    path.write_text(json.dumps(doc))
    assert any("not inside the output root" in p for p in verify_manifest(path))


def test_region_outlines_drawn_in_the_layer_crs_with_a_legend_entry():
    # A square region inside the grid and one reaching past its edge: both drawn with
    # their own vertices (clipped by the axes, not moved), and named in the legend.
    da = one_layer("suitability", np.full((40, 60), 0.5), {"units": "1"})
    x, y = da["x"].values, da["y"].values
    inside = np.array([[x[10], y[10]], [x[20], y[10]], [x[20], y[20]], [x[10], y[20]],
                       [x[10], y[10]]])
    past = inside + np.array([x[50] - x[10], 0.0])
    plain = layer_figure(da, title="t")
    fig = layer_figure(da, title="t", outlines=[inside, past])
    ax = fig.axes[0]
    drawn = [np.column_stack(line.get_data()) for line in ax.lines]
    assert len(drawn) == len(plain.axes[0].lines) + 2
    assert any(d.shape == inside.shape and np.allclose(d, inside) for d in drawn)
    assert any(d.shape == past.shape and np.allclose(d, past) for d in drawn)
    assert ax.get_xlim() == plain.axes[0].get_xlim()   # the map's extent is kept
    labels = [t.get_text() for t in ax.get_legend().get_texts()]
    assert "region boundaries" in labels

"""Outputs a GIS user can open without fixing them (issue 15): file modes, GeoTIFF
provenance and unit, category names, style files, never vs missing, CF time,
figures that fit the page, warnings once.  Small invented grids; the demo run end
to end is checked in test_end_to_end.py.
"""

from __future__ import annotations

import datetime as dt
import os
import warnings
from xml.etree import ElementTree as ET

import matplotlib
import netCDF4
import numpy as np
import pytest
import rasterio
import xarray as xr

import rioxarray  # noqa: F401  (registers the .rio accessor)
from gdal_ctypes import category_names
from suitmap.layers.events import add_event_status, event_status
from suitmap.layers.metadata import layer_attrs
from suitmap.pipeline.warnings_once import WarningCollector
from suitmap.writers.atomic import atomic_write_text
from suitmap.writers.cf_time import climatology_variables
from suitmap.writers.cog import write_cog
from suitmap.writers.figures import layer_figure, plot_layer
from suitmap.writers.gis_styles import qml_text, sld_text, write_styles
from suitmap.writers.labels import label_with_unit
from suitmap.writers.netcdf import write_netcdf

# Okabe & Ito (2008), Color Universal Design, https://jfly.uni-koeln.de/color/ (hex as published)
OKABE_ITO = {"black": "#000000", "orange": "#e69f00", "sky_blue": "#56b4e9",
             "bluish_green": "#009e73", "yellow": "#f0e442", "blue": "#0072b2",
             "vermillion": "#d55e00", "reddish_purple": "#cc79a7"}
SLD = "{http://www.opengis.net/sld}"


def grid_layer(name: str, values: np.ndarray, crs: str = "EPSG:4326") -> xr.DataArray:
    ny, nx = values.shape
    da = xr.DataArray(values, dims=("y", "x"), name=name,
                      coords={"y": 47.0 - 0.05 * (np.arange(ny) + 0.5),
                              "x": 14.0 + 0.05 * (np.arange(nx) + 0.5)},
                      attrs=layer_attrs(name) if not name.startswith("ensemble") else {})
    return da.rio.write_crs(crs)


def demo_like() -> xr.Dataset:
    """Degree-days with a lake (missing) and first-generation days with never cells."""
    rng = np.random.default_rng(7)
    dd = rng.uniform(200.0, 1500.0, (12, 16)).astype(np.float32)
    dd[:3, :4] = np.nan                                      # lake: no climate data
    first = np.where(dd >= 420.0, rng.uniform(150, 260, dd.shape), np.nan).astype(np.float32)
    lf = np.where(np.isnan(dd), 255, rng.integers(0, 5, dd.shape)).astype(np.uint8)
    ds = xr.Dataset({"degree_days": grid_layer("degree_days", dd),
                     "first_generation_day": grid_layer("first_generation_day", first),
                     "limiting_factor": grid_layer("limiting_factor", lf)})
    return ds.rio.write_crs("EPSG:4326")


# --- file modes ---------------------------------------------------------------------------------

@pytest.mark.parametrize("mask, mode", [(0o022, 0o644), (0o027, 0o640), (0o077, 0o600)])
def test_output_files_follow_the_umask(tmp_path, mask, mode):
    ds = demo_like()
    old = os.umask(mask)
    try:
        files = [write_cog(ds["degree_days"], tmp_path / "dd.tif", layer="degree_days"),
                 write_netcdf(ds, tmp_path / "l.nc", title="t", history="h", source="s"),
                 plot_layer(ds["degree_days"], tmp_path / "dd.png", title="t"),
                 atomic_write_text(tmp_path / "r.txt", "x")]
        files += write_styles(tmp_path / "dd.tif", "degree_days", ds["degree_days"].attrs,
                              ds["degree_days"].values)
    finally:
        os.umask(old)
    for f in files:  # what open() would give a new file: 0666 less the umask
        assert (os.stat(f).st_mode & 0o777) == mode, f


# --- GeoTIFF: provenance, unit, category names, colour table --------------------------------------

def test_geotiff_has_dataset_metadata_and_unit_type(tmp_path):
    tags = {"period": "baseline", "years": "1991-2020", "organism": "invented moth",
            "lower_threshold_degC": 9.5, "suitable_level": 0.5, "caution": "screening-level"}
    p = write_cog(demo_like()["degree_days"], tmp_path / "dd.tif", layer="degree_days", tags=tags)
    with rasterio.open(p) as src:
        got = src.tags()
        assert {k: got[k] for k in tags} == {k: str(v) for k, v in tags.items()}
        assert src.units == ("°C·day",)  # 1 K d of a temperature difference = 1 °C·day


def test_class_geotiff_category_names_read_by_gdal_and_unused_entries_transparent(tmp_path):
    da = demo_like()["limiting_factor"]
    p = write_cog(da, tmp_path / "limiting_factor.tif", layer="limiting_factor")
    write_styles(p, "limiting_factor", da.attrs, da.values)
    names = category_names(p)
    if names is None:
        pytest.skip("rasterio's libgdal cannot be loaded with ctypes here")
    assert names == ["none", "too_cool", "too_hot", "cold_kill", "heat_kill"]
    with rasterio.open(p) as src:
        cmap = src.colormap(1)  # the .aux.xml table with alpha (a TIFF palette is RGB only)
    assert all(cmap[code][3] == 0 for code in range(5, 256)), "unused entries must be transparent"
    assert all(cmap[code][3] == 255 for code in range(5))


# --- style files ---------------------------------------------------------------------------------

def _hex(cmap_name: str, f: float) -> str:
    return matplotlib.colors.to_hex(matplotlib.colormaps[cmap_name](f))


@pytest.mark.parametrize("layer, cmap", [("degree_days", "viridis"), ("generations", "viridis"),
                                         ("suitability", "cividis")])
def test_qml_and_sld_of_continuous_layers_parse_and_name_the_glossary_ramp(layer, cmap):
    values = np.array([[0.1, 0.5], [0.9, np.nan]]) * (1 if layer == "suitability" else 1000)
    attrs = layer_attrs(layer)
    qml = ET.fromstring(qml_text(layer, attrs, values).split("\n", 1)[1])
    items = qml.findall(".//colorrampshader/item")
    assert [i.get("color") for i in (items[0], items[-1])] == [_hex(cmap, 0.0), _hex(cmap, 1.0)]
    sld = ET.fromstring(sld_text(layer, attrs, values).split("\n", 1)[1])
    entries = sld.findall(f".//{SLD}ColorMap/{SLD}ColorMapEntry")
    assert sld.find(f".//{SLD}ColorMap").get("type") == "ramp"
    assert entries[0].get("color") == _hex(cmap, 0.0) and entries[-1].get("color") == _hex(cmap, 1.0)
    lo, hi = float(entries[0].get("quantity")), float(entries[-1].get("quantity"))
    assert (lo, hi) == ((0.0, 1.0) if layer == "suitability" else (100.0, 900.0))


def test_change_layer_styles_are_symmetric_about_zero_with_white_centre():
    values = np.array([[-30.0, 5.0], [120.0, np.nan]])
    attrs = layer_attrs("change_degree_days")
    sld = ET.fromstring(sld_text("change_degree_days", attrs, values).split("\n", 1)[1])
    q = [float(e.get("quantity")) for e in sld.iter(f"{SLD}ColorMapEntry")]
    assert q[0] == -120.0 and q[-1] == 120.0 and q[len(q) // 2] == 0.0
    colours = [e.get("color") for e in sld.iter(f"{SLD}ColorMapEntry")]
    assert colours[0] == _hex("RdBu_r", 0.0) and colours[len(q) // 2] == _hex("RdBu_r", 0.5)
    qml = ET.fromstring(qml_text("change_degree_days", attrs, values).split("\n", 1)[1])
    renderer = qml.find(".//rasterrenderer")
    assert float(renderer.get("classificationMin")) == -float(renderer.get("classificationMax"))


def test_class_layer_styles_name_okabe_ito_colours_per_class():
    attrs = layer_attrs("change_class")
    qml = ET.fromstring(qml_text("change_class", attrs).split("\n", 1)[1])
    entries = {e.get("label"): e.get("color") for e in qml.iter("paletteEntry")}
    # the glossary's fixed class colours (styles.CLASS_COLOURS), spelled from the paper's palette
    assert entries == {"stays unsuitable": OKABE_ITO["yellow"],
                       "becomes suitable": OKABE_ITO["reddish_purple"],
                       "stays suitable": OKABE_ITO["bluish_green"],
                       "becomes unsuitable": OKABE_ITO["black"]}
    sld = ET.fromstring(sld_text("change_class", attrs).split("\n", 1)[1])
    assert sld.find(f".//{SLD}ColorMap").get("type") == "values"
    assert {e.get("quantity"): e.get("color") for e in sld.iter(f"{SLD}ColorMapEntry")} == {
        "0": OKABE_ITO["yellow"], "1": OKABE_ITO["reddish_purple"],
        "2": OKABE_ITO["bluish_green"], "3": OKABE_ITO["black"]}


# --- never vs missing ----------------------------------------------------------------------------

def test_event_status_tells_never_from_missing():
    dd = xr.DataArray([[500.0, 300.0, np.nan]], dims=("y", "x"))
    first = xr.DataArray([[180.0, np.nan, np.nan]], dims=("y", "x"), name="first_generation_day")
    assert event_status(first, dd).values.tolist() == [[0, 1, 255]]


def test_never_flag_in_netcdf_and_geotiff(tmp_path):
    ds = add_event_status(demo_like())
    nc = write_netcdf(ds, tmp_path / "layers.nc", title="t", history="h", source="s",
                      climatology=(1991, 2020), calendar="standard")
    with netCDF4.Dataset(nc) as f:
        flag = f["first_generation_day_status"]
        assert f["first_generation_day"].ancillary_variables == "first_generation_day_status"
        assert list(flag.flag_values) == [0, 1] and flag.flag_meanings == "occurs never"
        codes = flag[:].filled(255)
        first = f["first_generation_day"][:].filled(np.nan)
        dd = f["degree_days"][:].filled(np.nan)
    never = np.isnan(first) & ~np.isnan(dd)
    assert never.any() and (codes[never] == 1).all()
    assert (codes[np.isnan(dd)] == 255).all() and (codes[~np.isnan(first)] == 0).all()
    tif = write_cog(ds["first_generation_day_status"], tmp_path / "s.tif",
                    layer="first_generation_day_status")
    write_styles(tif, "first_generation_day_status", ds["first_generation_day_status"].attrs)
    names = category_names(tif)
    assert names is None or names == ["occurs", "never"]


def test_figure_shows_never_with_its_own_legend_entry():
    ds = add_event_status(demo_like())
    fig = layer_figure(ds["first_generation_day"], title="t",
                       never=ds["first_generation_day_status"] == 1)
    labels = [t.get_text() for ax in fig.axes if ax.get_legend()
              for t in ax.get_legend().get_texts()]
    assert any(label.startswith("never") for label in labels) and "no data" in labels


# --- CF climatological time ----------------------------------------------------------------------

@pytest.mark.parametrize("calendar, days", [
    # 1991-01-01 .. 2021-01-01 counted with Python's proleptic Gregorian dates
    ("standard", (dt.date(2021, 1, 1) - dt.date(1991, 1, 1)).days),
    ("noleap", 30 * 365)])  # CF 4.4.1: noleap years have 365 days
def test_climatology_bounds_span_the_period(calendar, days):
    time, bounds = climatology_variables((1991, 2020), calendar)
    assert bounds.values.tolist() == [0.0, float(days)]
    assert time.attrs["climatology"] == "climatology_bounds" and 0 < float(time.values) < 366


# --- figures fit the page ------------------------------------------------------------------------

def _text_inside(fig) -> list[str]:
    """Texts drawn (partly) outside the figure: titles, labels, legends, drawn tick labels."""
    canvas = fig.canvas
    canvas.draw()
    renderer = canvas.get_renderer()
    box = fig.bbox
    texts = [t for t in fig.texts]
    for ax in fig.axes:
        texts += [ax.title, ax._left_title, ax._right_title, ax.xaxis.label, ax.yaxis.label]
        if ax.get_legend():
            texts += [*ax.get_legend().get_texts(), ax.get_legend().get_title()]
        for axis in (ax.xaxis, ax.yaxis):  # only the ticks matplotlib draws (inside the view)
            texts += [t.label1 for t in axis._update_ticks() if t.label1.get_visible()]
            texts += [t.label2 for t in axis._update_ticks() if t.label2.get_visible()]
    bad = []
    for text in texts:
        if not text.get_visible() or not text.get_text().strip():
            continue
        ext = text.get_window_extent(renderer)
        if ext.x0 < box.x0 - 0.5 or ext.y0 < box.y0 - 0.5 or ext.x1 > box.x1 + 0.5 \
                or ext.y1 > box.y1 + 0.5:
            bad.append(text.get_text())
    tight = fig.get_tightbbox(renderer)  # inches; everything matplotlib draws
    w, h = fig.get_size_inches()
    if tight.x0 < -0.01 or tight.y0 < -0.01 or tight.x1 > w + 0.01 or tight.y1 > h + 0.01:
        bad.append(f"tight bbox {tight.bounds} outside {w} x {h} in")
    return bad


@pytest.mark.parametrize("layer", ["degree_days", "change_first_generation_day", "limiting_factor",
                                   "years_with_generation"])
def test_no_text_is_clipped(layer):
    ds = add_event_status(demo_like())
    if layer == "change_first_generation_day":
        da = grid_layer(layer, ds["first_generation_day"].values - 200.0)
    elif layer == "years_with_generation":
        da = grid_layer(layer, np.zeros(ds["degree_days"].shape, dtype=np.float32))
    else:
        da = ds[layer]
    title = ("Karsvale ridge leaf-miner (invented): " + label_with_unit(layer, da.attrs)
             + "\nmodel-a_mid-century 2041-2070 minus baseline 1991-2020")
    hatch = da.notnull() & (da > 0) if layer.startswith("change") else None
    fig = layer_figure(da, title=title, hatch=hatch)
    assert _text_inside(fig) == []


def test_colour_bar_label_is_short_with_unit_and_all_zero_layer_says_so():
    da = grid_layer("years_with_generation", np.zeros((4, 5), dtype=np.float32))
    fig = layer_figure(da, title="t")
    bar = fig.axes[-1]
    label = bar.get_ylabel()
    assert label == "years with a generation: 0 everywhere"
    assert [t.get_text() for t in bar.get_yticklabels()] == ["0"]
    dd = layer_figure(demo_like()["degree_days"], title="t").axes[-1].get_ylabel()
    assert dd == "degree-days (°C·day)"


# --- warnings once -------------------------------------------------------------------------------

def test_alike_warnings_about_many_files_collapse_into_one_line(capsys):
    collector = WarningCollector()
    with warnings.catch_warnings():
        warnings.simplefilter("always")
        warnings.showwarning = collector.showwarning
        for i in range(32):
            warnings.warn(f"climate/tmin_{1991 + i}.nc: no grid mapping, latitude/longitude "
                          "taken as EPSG:4326 (WGS 84)")
        warnings.warn("period 'baseline': 3 cell-days had Tmin > Tmax")
    collector.flush()
    lines = capsys.readouterr().err.strip().splitlines()
    assert len(lines) == 2
    assert "climate/tmin_1991.nc" in lines[0] and "32 files" in lines[0]
    assert lines[1].endswith("3 cell-days had Tmin > Tmax")


def test_citation_file_names_the_package_version():
    from pathlib import Path

    from suitmap._version import __version__

    text = (Path(__file__).resolve().parents[1] / "CITATION.cff").read_text(encoding="utf-8")
    assert text.startswith("cff-version: 1.2.0")
    assert f'version: "{__version__}"' in text.splitlines()


def test_three_panel_figure_shares_one_scale_and_fits_the_page():
    from suitmap.writers.panels import panel_figure

    base = add_event_status(demo_like())
    scen = base.copy()
    scen["first_generation_day"] = base["first_generation_day"] - 10.0
    change = grid_layer("change_first_generation_day",
                        (scen["first_generation_day"] - base["first_generation_day"]).values)
    fig = panel_figure(base["first_generation_day"], scen["first_generation_day"], change,
                       layer="first_generation_day",
                       title="Karsvale ridge leaf-miner (invented): first generation day\n"
                             "model-a_mid-century 2041-2070 minus baseline 1991-2020",
                       panel_titles=("baseline 1991-2020", "model-a_mid-century 2041-2070",
                                     "change"),
                       never=(base["first_generation_day_status"] == 1,
                              base["first_generation_day_status"] == 1))
    assert _text_inside(fig) == []
    maps = [ax for ax in fig.axes if ax.images]
    assert len(maps) == 3
    assert maps[0].images[0].norm.vmin == maps[1].images[0].norm.vmin  # one scale for both
    assert maps[2].images[0].norm.vmin == -maps[2].images[0].norm.vmax  # change centred on 0
    assert maps[2].images[0].get_cmap().name.startswith("RdBu_r")


def test_check_of_a_batch_without_grid_mapping_warns_once(tmp_path):
    import subprocess
    import sys

    from climate_fixtures import make_tmin_tmax, write_netcdf_daily
    from conftest import write_profile, write_runfile

    climate = tmp_path / "climate"
    climate.mkdir()
    for year in (2001, 2002, 2003, 2004):  # one file per year and variable: 8 files
        days = 366 if year == 2004 else 365  # 2004 is a leap year
        tmin, tmax = make_tmin_tmax(days, 4, 5, mean=12.0, seed=year)
        write_netcdf_daily(climate / f"tmin_{year}.nc", tmin, var="tmin", role="tmin",
                           start=f"{year}-01-01", crs=None)
        write_netcdf_daily(climate / f"tmax_{year}.nc", tmax, var="tmax", role="tmax",
                           start=f"{year}-01-01", crs=None)
    run = write_runfile(tmp_path, write_profile(tmp_path), [
        {"name": "baseline", "years": (2001, 2004), "tmin": "climate/tmin_*.nc",
         "tmax": "climate/tmax_*.nc"}])
    proc = subprocess.run([sys.executable, "-m", "suitmap", "check", str(run)],
                          capture_output=True, text=True)
    assert proc.returncode == 0, proc.stderr
    lines = [ln for ln in proc.stderr.splitlines() if "no grid mapping" in ln]
    assert len(lines) == 2, proc.stderr  # one per variable (their texts differ), not one per file
    assert "4 files" in lines[0] and "tmin_2001.nc" in lines[0]
    assert "4 files" in lines[1] and "tmax_2001.nc" in lines[1]


def test_change_of_an_event_day_says_where_it_starts_or_stops():
    from suitmap.layers.events import change_event_status

    # baseline / scenario flags: 0 occurs, 1 never, 255 no data
    base = xr.DataArray([[0, 1, 1, 0, 255]], dims=("y", "x"))
    scen = xr.DataArray([[0, 1, 0, 1, 255]], dims=("y", "x"))
    flag = change_event_status(base, scen)
    assert flag.values.tolist() == [[0, 1, 2, 3, 255]]
    assert flag.attrs["flag_meanings"] == "occurs_in_both never_in_both starts stops"

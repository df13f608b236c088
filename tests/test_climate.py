"""Tests of suitmap.climate: opening and normalising daily Tmin/Tmax grids.

Files are written with netCDF4/rasterio/pyproj directly (tests/climate_fixtures.py),
so every check compares what suitmap reads with an independently written field.
"""

from __future__ import annotations

import datetime as dt
import sys
import warnings
from pathlib import Path

import cftime
import dask
import dask.array
import numpy as np
import pytest
import xarray as xr
from affine import Affine
from pyproj import CRS

sys.path.insert(0, str(Path(__file__).resolve().parent))

from climate_fixtures import (  # noqa: E402
    cell_centres, daily_dates, make_tmin_tmax, write_geotiff_daily, write_netcdf_daily)

from suitmap.climate import (  # noqa: E402
    check_same_grid, open_climate, qa_summary, repair_tmin_tmax, resolve_paths, select_years)
from suitmap.errors import GridMismatch, InputError, SuitmapWarning  # noqa: E402

NT = 730  # two non-leap years of days (2001, 2002)
TMIN, TMAX = make_tmin_tmax(NT)
LON0, LAT0, RES = -2.0, 50.0, 1.0  # west edge, north edge, cell size (4 × 5 cells)
# Float32 storage of kelvin/fahrenheit values ~300 carries ~3e-5 of rounding.
ATOL = 1e-4


def nc(path, data=TMIN, **kw):
    kw.setdefault("crs", "EPSG:4326")
    return write_netcdf_daily(path, data, **kw)


def iso_dates(n=NT, start="2001-01-01", calendar="standard"):
    return [d.strftime("%Y-%m-%d") for d in daily_dates(start, n, calendar)]


def expected_x():
    return cell_centres(5, LON0, RES)


def expected_y():
    return cell_centres(4, LAT0, RES, descending=True)


# ----------------------------------------------------------------------------- units
# Conversions: T/K = t/°C + 273.15 (BIPM SI Brochure, 9th ed., 2019, §2.3.1);
# t/°F = 1.8 t/°C + 32 (NIST SP 811, 2008, Appendix B.8).
@pytest.mark.parametrize("units", ["K", "kelvin", "degC", "°C", "celsius", "deg_C", "C",
                                   "degF", "°F", "fahrenheit", "degrees_Celsius"])
def test_units_give_same_celsius(tmp_path, units):
    da = open_climate([nc(tmp_path / "t.nc", var="tasmin", units=units)], "tmin")
    assert da.dtype == np.float32
    assert da.attrs["units"] == "degC" and da.attrs["original_units"] == units
    np.testing.assert_allclose(da.values, TMIN, rtol=0, atol=ATOL)


def test_kelvin_celsius_fahrenheit_twins_agree(tmp_path):
    arrays = [open_climate([nc(tmp_path / f"t_{i}.nc", var="tasmin", units=u)], "tmin").values
              for i, u in enumerate(["K", "degC", "degF"])]
    np.testing.assert_allclose(arrays[0], arrays[1], rtol=0, atol=ATOL)
    np.testing.assert_allclose(arrays[2], arrays[1], rtol=0, atol=ATOL)


@pytest.mark.parametrize("units", ["m s-1", "degrees", None, ""])
def test_unknown_or_missing_units_raise(tmp_path, units):
    path = nc(tmp_path / "odd_units.nc", var="tasmin", units=units)
    with pytest.raises(InputError, match=r"odd_units\.nc.*tasmin"):
        open_climate([path], "tmin")


def test_packed_values_and_fill_value(tmp_path):
    data = TMIN.copy()
    data[3, 1, 2] = np.nan
    da = open_climate([nc(tmp_path / "packed.nc", data, var="tasmin", packed=True)], "tmin")
    # int16 packing over the data range in 60000 steps: error ≤ half a step
    # (CF conventions 1.11, §8.1 packed data).
    step = (np.nanmax(data) - np.nanmin(data)) / 60000.0
    vals = da.values
    assert np.isnan(vals[3, 1, 2]) and np.isnan(vals).sum() == 1
    np.testing.assert_allclose(vals, data, rtol=0, atol=step / 2 + 1e-5)


# ----------------------------------------------------------------------------- calendars
# Calendar definitions: CF conventions 1.11, §4.4.1 (noleap: Gregorian months,
# February always 28 days; 360_day: twelve months of 30 days).
NOLEAP_MONTHS = [31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31]


def test_noleap_calendar(tmp_path):
    da = open_climate([nc(tmp_path / "t.nc", var="tasmin", calendar="noleap")], "tmin")
    assert da.attrs["calendar"] == "noleap"
    assert isinstance(da.time.values[0], cftime.DatetimeNoLeap)
    doy = np.concatenate([np.arange(1, 366)] * 2)
    np.testing.assert_array_equal(da.time.dt.dayofyear.values, doy)
    np.testing.assert_array_equal(da.time.dt.year.values, np.repeat([2001, 2002], 365))
    month = np.concatenate([np.repeat(np.arange(1, 13), NOLEAP_MONTHS)] * 2)
    np.testing.assert_array_equal(da.time.dt.month.values, month)


def test_360_day_calendar(tmp_path):
    da = open_climate([nc(tmp_path / "t.nc", TMIN[:720], var="tasmin", calendar="360_day")], "tmin")
    assert da.attrs["calendar"] == "360_day" and da.sizes["time"] == 720
    m, d = da.time.dt.month.values, da.time.dt.day.values
    np.testing.assert_array_equal(da.time.dt.dayofyear.values, (m - 1) * 30 + d)
    assert d.max() == 30 and ((m == 2) & (d == 30)).sum() == 2  # 30 February exists
    np.testing.assert_array_equal(da.time.dt.year.values, np.repeat([2001, 2002], 360))


def test_standard_calendar_with_leap_year(tmp_path):
    n = 366 + 365  # 2004 (leap) and 2005
    data = make_tmin_tmax(n)[0]
    da = open_climate([nc(tmp_path / "t.nc", data, var="tasmin", start="2004-01-01", calendar="gregorian")],
                      "tmin")
    assert da.attrs["calendar"] == "standard"
    assert np.issubdtype(da.time.dtype, np.datetime64)
    days = [dt.date(2004, 1, 1) + dt.timedelta(days=k) for k in range(n)]  # Python's proleptic Gregorian
    np.testing.assert_array_equal(da.time.dt.dayofyear.values, [d.timetuple().tm_yday for d in days])
    np.testing.assert_array_equal(da.time.dt.day.values, [d.day for d in days])


# ----------------------------------------------------------------------------- layout
# Reference in this section: the field as written by climate_fixtures (netCDF4,
# an independent writer) and its cell centres; longitude/latitude attributes as
# in CF conventions 1.11, §4.1–4.2 (degrees_east, degrees_north).
def test_0_360_longitudes_match_twin(tmp_path):
    ref = open_climate([nc(tmp_path / "ref.nc", var="tasmin")], "tmin")
    wrapped = open_climate([nc(tmp_path / "w.nc", var="tasmin", lon_0_360=True)], "tmin")
    np.testing.assert_allclose(wrapped.x.values, expected_x())
    np.testing.assert_array_equal(wrapped.values, ref.values)
    np.testing.assert_array_equal(wrapped.values, TMIN)
    assert wrapped.x.attrs["units"] == "degrees_east" and wrapped.x.attrs["standard_name"] == "longitude"


def test_grid_across_antimeridian_keeps_0_360(tmp_path):
    path = nc(tmp_path / "pacific.nc", var="tasmin", lon0=170.0, res=5.0)
    with pytest.warns(SuitmapWarning, match="antimeridian"):
        da = open_climate([path], "tmin")
    np.testing.assert_allclose(da.x.values, cell_centres(5, 170.0, 5.0))
    np.testing.assert_array_equal(da.values, TMIN)


def test_south_up_matches_north_up(tmp_path):
    ref = open_climate([nc(tmp_path / "n.nc", var="tasmin")], "tmin")
    flipped = open_climate([nc(tmp_path / "s.nc", var="tasmin", south_up=True, lon_0_360=True)], "tmin")
    np.testing.assert_allclose(flipped.y.values, expected_y())
    assert np.all(np.diff(flipped.y.values) < 0) and np.all(np.diff(flipped.x.values) > 0)
    np.testing.assert_array_equal(flipped.values, ref.values)
    np.testing.assert_array_equal(flipped.values, TMIN)


@pytest.mark.parametrize("names", [("longitude", "latitude"), ("x", "y"), ("lon", "lat")])
def test_coordinate_names_recognised(tmp_path, names):
    da = open_climate([nc(tmp_path / "t.nc", var="tasmin", xy_names=names)], "tmin")
    assert da.dims == ("time", "y", "x")
    np.testing.assert_allclose(da.x.values, expected_x())
    np.testing.assert_allclose(da.y.values, expected_y())
    np.testing.assert_array_equal(da.values, TMIN)


def test_output_convention(tmp_path):
    da = open_climate([nc(tmp_path / "t.nc", var="tasmin")], "tmin")
    assert da.dims == ("time", "y", "x") and da.name == "tmin"
    assert {"units", "suitmap_role", "source_files", "source_variable", "original_units",
            "calendar"} <= set(da.attrs)
    assert da.attrs["suitmap_role"] == "tmin" and da.attrs["source_files"] == "t.nc"
    assert da.attrs["source_variable"] == "tasmin"
    assert da.y.attrs["units"] == "degrees_north" and da.y.attrs["standard_name"] == "latitude"
    # cell-centre coordinates ↔ edge-based affine transform (GDAL data model,
    # north-up: x = c + a·col, y = f + e·row at the top-left corner).
    assert da.rio.transform() == Affine(RES, 0.0, LON0, 0.0, -RES, LAT0)


# ----------------------------------------------------------------------------- GeoTIFF
# Band dates, units and calendar tags: suitmap's own convention (suitmap.climate
# docstring); the reference is the NetCDF twin written from the same field.
@pytest.mark.parametrize("style", ["descriptions", "tags", "sidecar"])
def test_geotiff_dates_match_netcdf_twin(tmp_path, style):
    ref = open_climate([nc(tmp_path / "ref.nc", var="tasmin")], "tmin")
    tif = write_geotiff_daily(tmp_path / "t.tif", TMIN, iso_dates(), units="K", date_style=style)
    da = open_climate([tif], "tmin")
    assert da.dims == ("time", "y", "x") and da.dtype == np.float32
    np.testing.assert_array_equal(da.time.values, ref.time.values)
    np.testing.assert_allclose(da.x.values, ref.x.values)
    np.testing.assert_allclose(da.y.values, ref.y.values)
    np.testing.assert_allclose(da.values, ref.values, rtol=0, atol=ATOL)
    assert da.rio.crs.to_epsg() == 4326 and da.attrs["original_units"] == "K"


def test_geotiff_without_dates_raises(tmp_path):
    tif = write_geotiff_daily(tmp_path / "nodates.tif", TMIN, iso_dates(), date_style=None)
    with pytest.raises(InputError, match=r"nodates\.tif.*dates"):
        open_climate([tif], "tmin")


def test_geotiff_sidecar_wrong_length_raises(tmp_path):
    tif = write_geotiff_daily(tmp_path / "t.tif", TMIN, iso_dates(), date_style="sidecar")
    side = tmp_path / "t.dates.txt"
    side.write_text("\n".join(side.read_text().splitlines()[:-1]))
    with pytest.raises(InputError, match="729 dates"):
        open_climate([tif], "tmin")


def test_geotiff_without_units_raises(tmp_path):
    tif = write_geotiff_daily(tmp_path / "nounits.tif", TMIN, iso_dates(), units=None)
    with pytest.raises(InputError, match=r"nounits\.tif.*units"):
        open_climate([tif], "tmin")


def test_geotiff_band_units_nodata_and_calendar(tmp_path):
    data = TMIN.copy()
    data[0, 0, 0] = np.nan
    tif = write_geotiff_daily(tmp_path / "t.tif", data, iso_dates(calendar="noleap"), units="degF",
                              units_in="band", calendar="noleap", nodata=-9999.0)
    da = open_climate([tif], "tmin")
    assert da.attrs["calendar"] == "noleap" and isinstance(da.time.values[0], cftime.DatetimeNoLeap)
    ref = open_climate([nc(tmp_path / "ref.nc", var="tasmin", calendar="noleap")], "tmin")
    np.testing.assert_array_equal(da.time.values, ref.time.values)
    vals = da.values
    assert np.isnan(vals[0, 0, 0]) and np.isnan(vals).sum() == 1
    np.testing.assert_allclose(vals, data, rtol=0, atol=ATOL)


def test_geotiff_without_crs_raises(tmp_path):
    tif = write_geotiff_daily(tmp_path / "nocrs.tif", TMIN, iso_dates(), crs=None)
    with pytest.raises(InputError, match=r"nocrs\.tif.*no CRS"):
        open_climate([tif], "tmin")


def test_geotiff_date_invalid_in_calendar_raises(tmp_path):
    dates = iso_dates(calendar="360_day")  # holds 2001-02-30
    tif = write_geotiff_daily(tmp_path / "t.tif", TMIN[:720], dates[:720], calendar="noleap")
    with pytest.raises(InputError, match="2001-02-29|2001-02-30"):
        open_climate([tif], "tmin")


# ----------------------------------------------------------------------------- variables
def test_variable_by_standard_name_before_common_name(tmp_path):
    # CF conventions 1.11, §7.3: cell_methods "time: minimum" marks a daily minimum.
    path = nc(tmp_path / "t.nc", var="q1", role="tmin", extra_vars={"tmin": TMIN + 100.0})
    da = open_climate([path], "tmin")
    assert da.attrs["source_variable"] == "q1"
    np.testing.assert_array_equal(da.values, TMIN)
    with pytest.raises(InputError, match=r"q1, tmin.*set variable"):
        open_climate([path], "tmax")


def test_variable_by_common_name_and_explicit(tmp_path):
    path = nc(tmp_path / "t.nc", var="TX", standard_name=False, data=TMAX, extra_vars={"foo": TMIN})
    da = open_climate([path], "tmax")
    assert da.attrs["source_variable"] == "TX"
    np.testing.assert_array_equal(da.values, TMAX)
    foo = open_climate([path], "tmin", variable="foo")
    np.testing.assert_array_equal(foo.values, TMIN)
    with pytest.raises(InputError, match=r"t\.nc.*'bar'.*TX, foo"):
        open_climate([path], "tmin", variable="bar")


# ----------------------------------------------------------------------------- files, time axis
# Reference: the days written into each file (consecutive days from ``start``).
def test_multi_file_glob_in_time_order(tmp_path):
    # names sort against time order on purpose
    nc(tmp_path / "b_first.nc", TMIN[:365], var="tasmin", start="2001-01-01")
    nc(tmp_path / "a_second.nc", TMIN[365:], var="tasmin", start="2002-01-01")
    da = open_climate(str(tmp_path / "*.nc"), "tmin", label="baseline tmin")
    assert da.sizes["time"] == NT and da.chunks[0] == (NT,)
    assert bool((da.time.diff("time") == np.timedelta64(1, "D")).all())
    np.testing.assert_array_equal(da.values, TMIN)
    assert da.attrs["source_files"] == "b_first.nc; a_second.nc"


def test_resolve_paths(tmp_path):
    for name in ("b.nc", "a.nc", "c.tif"):
        (tmp_path / name).write_bytes(b"")
    assert resolve_paths("*.nc", tmp_path) == [tmp_path / "a.nc", tmp_path / "b.nc"]
    assert resolve_paths(["c.tif", "a.nc"], tmp_path) == [tmp_path / "a.nc", tmp_path / "c.tif"]
    with pytest.raises(InputError, match=r"'nothing_\*\.nc'.*" + str(tmp_path).replace("\\", "\\\\")):
        resolve_paths("nothing_*.nc", tmp_path, what="baseline tmin")


def test_gap_overlap_and_non_daily_raise(tmp_path):
    nc(tmp_path / "y1.nc", TMIN[:365], var="tasmin", start="2001-01-01")
    nc(tmp_path / "y3.nc", TMIN[:365], var="tasmin", start="2003-01-01")
    with pytest.raises(InputError, match="missing between 2001-12-31 and 2003-01-01"):
        open_climate([tmp_path / "y1.nc", tmp_path / "y3.nc"], "tmin")
    with pytest.raises(InputError, match="daily data is needed"):
        open_climate([nc(tmp_path / "six_hourly.nc", var="tasmin", step_hours=6.0)], "tmin")


def test_overlapping_files_are_trimmed_with_a_warning(tmp_path):
    """Historical + scenario files that share days: the earlier-starting file's days are kept."""
    nc(tmp_path / "y1.nc", TMIN[:365], var="tasmin", start="2001-01-01")
    nc(tmp_path / "y1b.nc", TMIN[:365] + 5.0, var="tasmin", start="2001-06-01")
    with pytest.warns(SuitmapWarning, match="214 day"):
        da = open_climate([tmp_path / "y1.nc", tmp_path / "y1b.nc"], "tmin")
    # 2001-01-01 .. 2002-05-31 once each; 1 Jun - 31 Dec 2001 (214 days) from the first file
    assert da.sizes["time"] == 365 + 151
    np.testing.assert_allclose(da.values[:365], TMIN[:365], atol=1e-5)
    np.testing.assert_allclose(da.values[365:], TMIN[214:365] + 5.0, atol=1e-5)


def test_non_daily_raises(tmp_path):
    with pytest.raises(InputError, match="daily data is needed"):
        open_climate([nc(tmp_path / "six_hourly.nc", var="tasmin", step_hours=6.0)], "tmin")


def test_files_on_different_grids_raise(tmp_path):
    nc(tmp_path / "y1.nc", TMIN[:365], var="tasmin", start="2001-01-01")
    nc(tmp_path / "y2.nc", TMIN[365:], var="tasmin", start="2002-01-01", lon0=-1.0)
    with pytest.raises(GridMismatch, match=r"y1\.nc and y2\.nc.*extent"):
        open_climate([tmp_path / "y1.nc", tmp_path / "y2.nc"], "tmin")


# ----------------------------------------------------------------------------- lazy, chunks
def test_result_is_lazy_and_time_in_one_chunk(tmp_path):
    path = nc(tmp_path / "t.nc", var="tasmin")

    def no_compute(*args, **kwargs):
        raise AssertionError("open_climate computed data")

    with dask.config.set(scheduler=no_compute):
        da = open_climate([path], "tmin", chunks={"y": 2, "x": 2})
    assert isinstance(da.data, dask.array.Array)
    assert da.chunks == ((NT,), (2, 2), (2, 2, 1))
    # the graph reads the file on demand: no loaded copy of the data inside it
    graph = da.data.__dask_graph__()
    assert not any(isinstance(v, np.ndarray) and v.size >= TMIN.size for v in graph.values())


# ----------------------------------------------------------------------------- CRS
def test_latlon_without_grid_mapping_warns_and_gets_4326(tmp_path):
    path = write_netcdf_daily(tmp_path / "t.nc", TMIN, var="tasmin", crs=None)
    with pytest.warns(SuitmapWarning, match="EPSG:4326"):
        da = open_climate([path], "tmin")
    assert da.rio.crs.to_epsg() == 4326


def test_projected_grid_mapping_kept(tmp_path):
    x0, y0, res = 4_000_000.0, 3_000_000.0, 1000.0
    path = nc(tmp_path / "laea.nc", var="tasmin", crs="EPSG:3035", lon0=x0, lat0=y0, res=res)
    with warnings.catch_warnings():
        warnings.simplefilter("error", SuitmapWarning)
        da = open_climate([path], "tmin")
    assert CRS.from_user_input(da.rio.crs.to_wkt()).equals(CRS.from_epsg(3035))
    assert da.x.attrs["standard_name"] == "projection_x_coordinate" and da.x.attrs["units"] == "m"
    assert da.rio.transform() == Affine(res, 0.0, x0, 0.0, -res, y0)
    np.testing.assert_array_equal(da.values, TMIN)


def test_projected_without_grid_mapping_raises(tmp_path):
    path = nc(tmp_path / "nomap.nc", var="tasmin", crs="EPSG:3035", lon0=4e6, lat0=3e6, res=1000.0,
              write_grid_mapping=False)
    with pytest.raises(InputError, match=r"nomap\.nc.*no CRS"):
        open_climate([path], "tmin")


# ----------------------------------------------------------------------------- grids, years
# Grids built here by hand; edges = centres ± res/2 (GDAL raster data model).
def grid_da(ny=4, nx=5, lon0=LON0, lat0=LAT0, res=RES, crs="EPSG:4326"):
    da = xr.DataArray(np.zeros((1, ny, nx), "float32"), dims=("time", "y", "x"),
                      coords={"y": cell_centres(ny, lat0, res, descending=True), "x": cell_centres(nx, lon0, res)})
    return da.rio.write_crs(crs)


@pytest.mark.parametrize("other, word", [
    (dict(nx=6), "shape"),
    (dict(crs="EPSG:3857"), "CRS"),
    (dict(lon0=-1.5), "extent"),
    (dict(ny=8, nx=10, res=0.5), "resolution"),
])
def test_check_same_grid_says_what_differs(other, word):
    check_same_grid(grid_da(), grid_da(), "tmin", "tmax")  # same grid: no error
    with pytest.raises(GridMismatch, match=rf"tmin and tmax.*{word}"):
        check_same_grid(grid_da(), grid_da(**other), "tmin", "tmax")


def test_select_years(tmp_path):
    da = open_climate([nc(tmp_path / "t.nc", var="tasmin")], "tmin")
    one = select_years(da, 2002, 2002, label="baseline")
    assert one.sizes["time"] == 365 and set(one.time.dt.year.values) == {2002}
    np.testing.assert_array_equal(one.values, TMIN[365:])
    with pytest.raises(InputError, match=r"baseline.*2000–2002.*2001-01-01 to 2002-12-31.*2001–2002"):
        select_years(da, 2000, 2002, label="baseline")
    part = open_climate([nc(tmp_path / "p.nc", TMIN[59:], var="tasmin", start="2001-03-01")], "tmin")
    with pytest.raises(InputError, match="complete years: 2002–2002"):
        select_years(part, 2001, 2002, label="baseline")


# ----------------------------------------------------------------------------- repair, QA
# Constructed cases: the crossed cell-days and NaN cells are placed by hand, so
# the expected counts and shares are known without running suitmap.
def pair(tmp_path, tmin=TMIN, tmax=TMAX):
    a = open_climate([nc(tmp_path / "tn.nc", tmin, var="tasmin")], "tmin")
    b = open_climate([nc(tmp_path / "tx.nc", tmax, var="tasmax")], "tmax")
    return a, b


def crossed():
    tmin, tmax = TMIN.copy(), TMAX.copy()
    for t, j, i in ((10, 0, 0), (400, 3, 4)):  # two cell-days with Tmin > Tmax
        tmin[t, j, i], tmax[t, j, i] = TMAX[t, j, i], TMIN[t, j, i]
    return tmin, tmax


def test_repair_tmin_tmax_counts_and_swaps(tmp_path):
    tmin, tmax = crossed()
    a, b = pair(tmp_path, tmin, tmax)
    with pytest.warns(SuitmapWarning, match="^2 cell-days"):
        fixed_min, fixed_max, count = repair_tmin_tmax(a, b)
    assert count == 2
    assert isinstance(fixed_min.data, dask.array.Array) and fixed_min.attrs == a.attrs
    np.testing.assert_array_equal(fixed_min.values, TMIN)
    np.testing.assert_array_equal(fixed_max.values, TMAX)


def test_repair_refuses_different_days(tmp_path):
    a = open_climate([nc(tmp_path / "tn.nc", var="tasmin")], "tmin")
    b = open_climate([nc(tmp_path / "tx.nc", TMAX, var="tasmax", start="2001-01-02")], "tmax")
    with pytest.raises(InputError, match="different days"):
        repair_tmin_tmax(a, b)


def test_qa_summary_figures(tmp_path):
    tmin, tmax = crossed()
    tmin[5, 1, 1] = tmin[6, 1, 1] = tmin[7, 2, 3] = np.nan  # 3 missing cell-days
    a, b = pair(tmp_path, tmin, tmax)
    qa = qa_summary(a, b, "baseline")
    n_cell_days = NT * 4 * 5
    assert qa.shape == (NT, 4, 5) and qa.crs == "EPSG:4326" and qa.calendar == "standard"
    assert qa.swapped_cell_days == 2
    assert qa.missing_share == {"tmin": pytest.approx(3 / n_cell_days), "tmax": 0.0}
    assert qa.extent == pytest.approx((LON0, LAT0 - 4 * RES, LON0 + 5 * RES, LAT0))
    assert qa.resolution == pytest.approx((RES, RES))
    assert (qa.time_start, qa.time_end) == ("2001-01-01", "2002-12-31")
    assert qa.variables == {"tmin": "tasmin", "tmax": "tasmax"}
    assert qa.value_range["tmin"] == pytest.approx((np.nanmin(tmin), np.nanmax(tmin)), abs=ATOL)
    text = "\n".join(qa.lines())
    assert "cell-days with Tmin > Tmax: 2" in text and "EPSG:4326" in text
    assert f"missing {100 * 3 / n_cell_days:.2f} %" in text

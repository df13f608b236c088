"""suitmap.spatial.regrid: grid comparison, bilinear / class resampling, duplicate days."""

from __future__ import annotations

import warnings

import dask
import dask.array as dsa
import numpy as np
import pandas as pd
import pytest
import rioxarray  # noqa: F401
import xarray as xr
from pyproj import Geod, Transformer

from suitmap.errors import InputError, SuitmapWarning
from suitmap.spatial.regrid import grids_match, remove_duplicate_times, snap_to_grid


def field(west, north, res, ny, nx, func, *, crs="EPSG:4326", nt=None, dtype="float64", chunks=None):
    """A north-up grid with cell (j, i) centred at (west + (i+.5) res, north - (j+.5) res)."""
    x = west + (np.arange(nx) + 0.5) * res
    y = north - (np.arange(ny) + 0.5) * res
    xx, yy = np.meshgrid(x, y)
    v = np.asarray(func(xx, yy), dtype="float64")
    if nt is None:
        da = xr.DataArray(v.astype(dtype), dims=("y", "x"), coords={"y": y, "x": x}, name="f")
    else:
        v = v[None] + np.arange(nt, dtype="float64")[:, None, None]
        da = xr.DataArray(v.astype(dtype), dims=("time", "y", "x"),
                          coords={"time": pd.date_range("2001-01-01", periods=nt), "y": y, "x": x}, name="f")
    if chunks:
        da = da.chunk(chunks)
    return da.rio.write_crs(crs) if crs else da


def linear(a=3.0, b=0.5, c=-0.2):
    return lambda x, y: a + b * x + c * y


# --------------------------------------------------------------------------- grids_match
def test_grids_match_detects_shift_and_crs():
    a = field(-10, 60, 1.0, 5, 6, linear())
    assert grids_match(a, a.copy())
    assert grids_match(a, a.to_dataset())
    assert not grids_match(a, field(-9.5, 60, 1.0, 5, 6, linear()))       # half a cell east
    assert not grids_match(a, field(-10, 60, 1.0, 5, 7, linear()))        # one more column
    assert not grids_match(a, a.rio.write_crs("EPSG:4258"))                # another datum (ETRS89)


def test_identical_grid_returned_unchanged():
    a = field(-10, 60, 1.0, 5, 6, linear(), nt=3, chunks={"y": 2})
    template = field(-10, 60, 1.0, 5, 6, lambda x, y: 0 * x)
    out = snap_to_grid(a, template)
    assert out is a
    assert "suitmap_regrid" not in out.attrs


# --------------------------------------------------------------------------- continuous
def test_bilinear_reproduces_bilinear_function_exactly():
    # Bilinear interpolation reproduces any a + b x + c y + d x y exactly (it is the
    # tensor product of two linear interpolants): Press et al. 2007, Numerical Recipes
    # 3rd ed., section 3.6.
    f = lambda x, y: 3.0 + 0.5 * x - 0.2 * y + 0.01 * x * y
    src = field(-10, 60, 2.0, 10, 12, f)
    tgt = field(-7.3, 56.1, 0.37, 20, 30, lambda x, y: 0 * x)  # interior, unaligned cells
    out = snap_to_grid(src, tgt)
    xx, yy = np.meshgrid(tgt.x, tgt.y)
    np.testing.assert_allclose(out.values, f(xx, yy), rtol=0, atol=1e-12)
    assert out.rio.crs == tgt.rio.crs and np.array_equal(out.x, tgt.x) and np.array_equal(out.y, tgt.y)
    assert out.attrs["suitmap_regrid"].startswith("bilinear from EPSG:4326 grid of 10×12 cells")


def test_area_mean_kept_within_interpolation_error_bound():
    # A smooth field on a coarse 2.5° grid, snapped to a 0.25° grid inside it.
    A, Lx, Ly = 8.0, 40.0, 30.0

    def f(x, y):
        return 15.0 + A * np.cos(2 * np.pi * x / Lx) * np.sin(2 * np.pi * y / Ly)

    src = field(-20, 70, 2.5, 16, 20, f)
    tgt = field(-10, 60, 0.25, 80, 100, lambda x, y: 0 * x)
    out = snap_to_grid(src, tgt).values
    xx, yy = np.meshgrid(tgt.x, tgt.y)
    exact = f(xx, yy)
    # Linear interpolation error |f - p| <= h^2/8 max|f''| (Lagrange remainder
    # f''(xi)/2 (x-x0)(x-x1); e.g. Burden & Faires 2011, Numerical Analysis, 9th ed., sec. 3.1);
    # for the tensor-product (bilinear) interpolant the two axes add.
    h = 2.5
    bound = h**2 / 8 * (A * (2 * np.pi / Lx) ** 2 + A * (2 * np.pi / Ly) ** 2)
    assert np.abs(out - exact).max() <= bound
    # Area weights: on a sphere the zone between latitudes phi1 and phi2 has area
    # 2 pi R^2 (sin phi2 - sin phi1) (Archimedes' hat-box theorem), and for equal steps
    # sin(phi + d/2) - sin(phi - d/2) = 2 cos(phi) sin(d/2): cell area ∝ cos(latitude of
    # the centre) on a regular latitude/longitude grid.  Checked against pyproj below.
    w = np.cos(np.deg2rad(yy))
    geod = Geod(a=6371000.0, b=6371000.0)
    lon = np.linspace(0.0, 0.25, 100)  # densified: pyproj's polygon edges are geodesics, not parallels

    def cell_area(lat):
        xs = np.concatenate([lon, lon[::-1]])
        ys = np.concatenate([np.full(lon.size, lat - 0.125), np.full(lon.size, lat + 0.125)])
        return abs(geod.polygon_area_perimeter(xs, ys)[0])

    areas = np.array([cell_area(lat) for lat in tgt.y.values])
    np.testing.assert_allclose(areas / areas[0], w[:, 0] / w[0, 0], rtol=1e-8)
    mean_snapped = (w * out).sum() / w.sum()
    mean_exact = (w * exact).sum() / w.sum()
    assert abs(mean_snapped - mean_exact) <= bound
    # and much closer in practice: the interpolation error averages out (common practice, no source)
    assert abs(mean_snapped - mean_exact) <= 0.1 * bound


def test_projected_to_geographic_and_back_with_pyproj():
    # Source on ETRS89-LAEA (EPSG:3035), 20 km cells; field linear in projected metres.
    fp = lambda x, y: 5.0 + 1e-5 * (x - 4.3e6) - 2e-5 * (y - 3.2e6)
    src = field(4.0e6, 3.5e6, 20000.0, 30, 30, fp, crs="EPSG:3035")
    tgt = field(8.0, 54.0, 0.1, 40, 40, lambda x, y: 0 * x)          # 8–12 °E, 50–54 °N
    out = snap_to_grid(src, tgt)
    lon, lat = np.meshgrid(tgt.x, tgt.y)
    px, py = Transformer.from_crs("EPSG:4326", "EPSG:3035", always_xy=True).transform(lon, lat)
    # linear in source coordinates => bilinear is exact at the transformed centres (Press et al. 2007, 3.6)
    np.testing.assert_allclose(out.values, fp(px, py), rtol=0, atol=1e-9)
    assert out.rio.crs.to_epsg() == 4326
    # geographic -> projected: a field linear in lon/lat
    fg = lambda lo, la: 2.0 + 0.3 * lo - 0.1 * la
    gsrc = field(6.0, 56.0, 0.5, 12, 14, fg)
    ptgt = field(4.20e6, 3.30e6, 10000.0, 15, 15, lambda x, y: 0 * x, crs="EPSG:3035")
    back = snap_to_grid(gsrc, ptgt)
    xx, yy = np.meshgrid(ptgt.x, ptgt.y)
    glon, glat = Transformer.from_crs("EPSG:3035", "EPSG:4326", always_xy=True).transform(xx, yy)
    np.testing.assert_allclose(back.values, fg(glon, glat), rtol=0, atol=1e-9)


def test_0_360_source_equals_rolled_minus180_source_across_the_seam():
    # The same global field stored as 0…360 and as −180…180 longitudes must give the
    # same values on a target straddling 0°: independent of storage (property).
    g = lambda lon, lat: 10 + 5 * np.cos(np.deg2rad(lon)) * np.cos(np.deg2rad(lat)) + 0.1 * lat
    a = field(0.0, 90.0, 2.5, 72, 144, g)
    b = field(-180.0, 90.0, 2.5, 72, 144, g)
    tgt = field(-3.0, 52.0, 0.2, 10, 30, lambda x, y: 0 * x)
    va, vb = snap_to_grid(a, tgt).values, snap_to_grid(b, tgt).values
    assert np.isfinite(va).all()
    np.testing.assert_allclose(va, vb, rtol=0, atol=1e-12)


def test_missing_neighbours_renormalised_or_missing():
    src = field(0.0, 10.0, 1.0, 5, 5, lambda x, y: 7.0 + 0 * x)
    src[2, 2] = np.nan                                   # centre (2.5, 7.5)
    x = np.array([2.5, 2.75, 3.25, 0.25, -0.6, 5.6])     # on the hole, 1/4, 3/4 away; edges; outside
    tgt = xr.DataArray(np.zeros((1, x.size)), dims=("y", "x"), coords={"y": [7.5], "x": x}).rio.write_crs(
        "EPSG:4326")
    out = snap_to_grid(src, tgt).values[0]
    assert np.isnan(out[0])                  # all weight on the missing cell
    assert np.isnan(out[1])                  # 3/4 of the weight missing (< 1/2 valid)
    assert out[2] == 7.0                     # 1/4 missing: renormalised, constant stays exact
    assert out[3] == 7.0                     # within half a cell of the west edge: edge value
    assert np.isnan(out[4]) and np.isnan(out[5])  # outside the source's outer edges


def test_lazy_daily_input_stays_lazy_and_matches_eager():
    src = field(-10, 60, 2.0, 10, 12, linear(), nt=40, dtype="float32", chunks={"time": -1, "y": 4, "x": 5})
    tgt = field(-7.3, 56.1, 0.5, 20, 30, lambda x, y: 0 * x).chunk({"y": 8, "x": 16})

    def no_compute(*args, **kwargs):
        raise AssertionError("computed while building the graph")

    with dask.config.set(scheduler=no_compute):
        out = snap_to_grid(src, tgt)
    assert isinstance(out.data, dsa.Array) and out.dtype == np.float32
    assert out.chunks == ((40,), (8, 8, 4), (16, 14))
    eager = snap_to_grid(src.compute(), tgt.compute())
    np.testing.assert_array_equal(out.values, eager.values)
    xx, yy = np.meshgrid(tgt.x, tgt.y)
    # float32 input: reproduced to float32 rounding of values near 10 (Press et al. 2007, 3.6)
    np.testing.assert_allclose(out.values[7], linear()(xx, yy) + 7, rtol=0, atol=2e-5)


def test_crs_on_one_side_only_is_refused():
    a = field(0, 10, 1.0, 4, 4, linear(), crs=None)
    with pytest.raises(InputError, match="no CRS"):
        snap_to_grid(a, field(0.3, 10, 1.0, 4, 4, linear()))
    with pytest.raises(InputError, match="kind"):
        snap_to_grid(a, a, kind="cubic")


# --------------------------------------------------------------------------- classes
def _class_grid(codes, west, north, res, crs="EPSG:4326"):
    ny, nx = codes.shape
    da = xr.DataArray(codes.astype(np.uint8), dims=("y", "x"),
                      coords={"y": north - (np.arange(ny) + 0.5) * res, "x": west + (np.arange(nx) + 0.5) * res},
                      name="limiting_factor")
    return da.rio.write_crs(crs)


def test_class_coarse_to_fine_is_containing_cell():
    rng = np.random.default_rng(4)
    codes = rng.choice(np.array([0, 2, 5, 255]), size=(6, 8))
    src = _class_grid(codes, 0.0, 6.0, 1.0)
    tgt = field(0.05, 5.9, 0.3, 19, 26, lambda x, y: 0 * x)
    out = snap_to_grid(src, tgt, kind="class")
    assert out.dtype == np.uint8
    assert set(np.unique(out.values)) <= {0, 2, 5, 255}
    # expected: the source cell whose square contains the target centre (nearest neighbour)
    jj = np.floor((6.0 - tgt.y.values) / 1.0).astype(int)
    ii = np.floor((tgt.x.values - 0.0) / 1.0).astype(int)
    np.testing.assert_array_equal(out.values, codes[np.ix_(jj, ii)])


def test_class_fine_to_coarse_is_mode_with_smallest_code_on_ties():
    fine = np.zeros((3, 6), dtype=np.uint8)
    fine[:, :3] = [[2, 2, 0], [2, 0, 2], [0, 0, 2]]        # 5 × code 2, 4 × code 0 -> 2
    fine[:, 3:] = [[4, 4, 1], [1, 255, 4], [1, 1, 4]]      # 4 × 4, 4 × 1, 1 missing -> tie -> 1
    src = _class_grid(fine, 0.0, 3.0, 1.0)
    tgt = _class_grid(np.zeros((1, 2)), 0.0, 3.0, 3.0)
    out = snap_to_grid(src, tgt, kind="class").values
    np.testing.assert_array_equal(out, [[2, 1]])
    assert set(np.unique(out)) <= set(np.unique(fine))


# --------------------------------------------------------------------------- duplicate days
def _daily(start, n, value, calendar="standard"):
    t = xr.date_range(start, periods=n, freq="D", calendar=calendar, use_cftime=calendar != "standard")
    return xr.DataArray(np.full((n, 2, 2), value, dtype="float32"), dims=("time", "y", "x"),
                        coords={"time": t, "y": [1.5, 0.5], "x": [0.5, 1.5]})


@pytest.mark.parametrize("calendar", ["standard", "noleap"])
def test_overlapping_files_trimmed_keeping_first(calendar):
    hist = _daily("2014-12-01", 41, 1.0, calendar)       # to 2015-01-10
    scen = _daily("2015-01-01", 41, 2.0, calendar)       # from 2015-01-01: 10 days overlap
    joined = xr.concat([hist, scen], dim="time")
    with pytest.warns(SuitmapWarning, match=r"10 duplicated time step.*2015-01-01 to 2015-01-10"):
        out, n = remove_duplicate_times(joined, label="model-A tmin")
    assert n == 10 and out.sizes["time"] == 72
    assert out.indexes["time"].is_monotonic_increasing and out.indexes["time"].is_unique
    days = out["time"].dt.strftime("%Y-%m-%d").values
    assert (out.values[list(days).index("2015-01-05")] == 1.0).all()   # first occurrence kept
    assert (out.values[list(days).index("2015-01-11")] == 2.0).all()


def test_no_duplicates_no_warning():
    da = _daily("2001-01-01", 10, 3.0)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        out, n = remove_duplicate_times(da, label="x")
    assert n == 0 and out.sizes["time"] == 10

"""suitmap.spatial.areas: geodesic and planar cell areas, polygon areas."""

from __future__ import annotations

import numpy as np
import pytest
import rioxarray  # noqa: F401
import xarray as xr
from pyproj import CRS, Geod
from shapely.geometry import box

from suitmap.errors import InputError
from suitmap.spatial.areas import cell_areas_km2, polygon_area_km2


def grid(west, south, res, ny, nx, crs="EPSG:4326", north_up=True):
    x = west + (np.arange(nx) + 0.5) * res
    y = south + (np.arange(ny) + 0.5) * res
    if north_up:
        y = y[::-1]
    da = xr.DataArray(np.zeros((ny, nx)), dims=("y", "x"), coords={"y": y, "x": x})
    return da.rio.write_crs(crs)


def _parallel_box(geod, w, s, e, n, k):
    """Corners of a lat/lon box with k points per edge (parallels as dense polylines)."""
    t = np.linspace(0, 1, k, endpoint=False)
    lons = np.concatenate([w + (e - w) * t, np.full(k, e), e - (e - w) * t, np.full(k, w)])
    lats = np.concatenate([np.full(k, s), s + (n - s) * t, np.full(k, n), n - (n - s) * t])
    area, _ = geod.polygon_area_perimeter(lons, lats)
    return abs(area) / 1e6


@pytest.mark.parametrize("south", [-89.0, -45.5, -1.0, 0.0, 30.25, 59.0, 88.0])
def test_cell_areas_match_geod_polygon_on_corners(south):
    # reference: Karney (2013) geodesic polygon areas, pyproj Geod.polygon_area_perimeter
    geod = Geod(ellps="WGS84")
    g = grid(10.0, south, 0.5, 2, 3)
    ours = cell_areas_km2(g).values
    for j, yc in enumerate(g["y"].values):
        for i, xc in enumerate(g["x"].values):
            w, e, s, n = xc - 0.25, xc + 0.25, yc - 0.25, yc + 0.25
            corners, _ = geod.polygon_area_perimeter([w, e, e, w], [s, s, n, n])
            # four corners: geodesic edges instead of parallels, a tiny difference on 0.5° cells
            assert ours[j, i] == pytest.approx(abs(corners) / 1e6, rel=2e-4)
            # corners with the parallels densified: the same cell, so agreement to rounding
            assert ours[j, i] == pytest.approx(_parallel_box(geod, w, s, e, n, 200), rel=1e-6)


def test_grid_sum_equals_geodesic_area_of_outline():
    geod = Geod(ellps="WGS84")
    g = grid(-20.0, 35.0, 0.25, 80, 120, north_up=False)  # 30° × 20°, y ascending
    total = float(cell_areas_km2(g).sum())
    outline = _parallel_box(geod, -20.0, 35.0, 10.0, 55.0, 2000)
    assert total == pytest.approx(outline, rel=1e-6)


def test_whole_sphere_and_other_ellipsoid():
    # a sphere of radius R: total area 4πR² (common knowledge); another datum's ellipsoid is used
    r = 6371.0
    sphere = CRS.from_proj4(f"+proj=longlat +R={r * 1000} +no_defs")
    g = grid(-180.0, -90.0, 2.0, 90, 180, crs=sphere.to_wkt())
    assert float(cell_areas_km2(g).sum()) == pytest.approx(4 * np.pi * r * r, rel=1e-9)
    bessel = CRS.from_epsg(4314)  # DHDN, Bessel 1841 ellipsoid
    gb = grid(10.0, 50.0, 1.0, 2, 2, crs=bessel.to_wkt())
    s, _ = Geod(ellps="bessel").polygon_area_perimeter(
        *np.array([[10, 50], [11, 50], [11, 51], [10, 51]]).T.tolist())
    assert float(cell_areas_km2(gb).values[1, 0]) == pytest.approx(abs(s) / 1e6, rel=2e-4)


def test_projected_cells_are_planar():
    g = grid(4_000_000.0, 3_000_000.0, 1000.0, 3, 4, crs="EPSG:3035")
    np.testing.assert_allclose(cell_areas_km2(g).values, 1.0)
    feet = grid(0.0, 0.0, 100.0, 2, 2, crs="EPSG:2263")  # NY state plane, US survey feet
    np.testing.assert_allclose(cell_areas_km2(feet).values, (100 * 1200 / 3937) ** 2 / 1e6)


def test_polygon_area_projected_equal_area_matches_planar():
    # EPSG:3035 is equal-area (Lambert azimuthal), so its planar area is the true area
    poly = box(4_300_000, 2_900_000, 4_350_000, 2_960_000)
    assert polygon_area_km2(poly, CRS.from_epsg(3035)) == pytest.approx(poly.area / 1e6, rel=1e-5)


def test_no_crs_is_input_error():
    da = xr.DataArray(np.zeros((2, 2)), dims=("y", "x"), coords={"y": [1.0, 0.0], "x": [0.0, 1.0]})
    with pytest.raises(InputError, match="no CRS"):
        cell_areas_km2(da)

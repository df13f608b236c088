"""suitmap.spatial.dispersal: reachable discs and range-change classes."""

from __future__ import annotations

import numpy as np
import pytest
import rioxarray  # noqa: F401
import xarray as xr
from pyproj import Geod

from suitmap.spatial.dispersal import RANGE_CHANGE_CLASSES, range_change, reachable


def lonlat(values, west=9.0, north=47.0, res=0.02, crs="EPSG:4326"):
    ny, nx = values.shape
    x = west + (np.arange(nx) + 0.5) * res
    y = north - (np.arange(ny) + 0.5) * res
    return xr.DataArray(values, dims=("y", "x"), coords={"y": y, "x": x}).rio.write_crs(crs)


@pytest.mark.parametrize("speed_km_per_year, years", [(0.8, 30.0), (2.5, 50.0), (0.0, 40.0)])
def test_one_source_gives_a_geodesic_disc(speed_km_per_year, years):
    src = np.zeros((101, 121), dtype=bool)
    src[50, 60] = True
    source = lonlat(src)
    radius = speed_km_per_year * years
    got = reachable(source, radius).values
    # brute force with pyproj Geod.inv (Karney 2013) from the source centre to every centre
    xx, yy = np.meshgrid(source["x"].values, source["y"].values)
    lon0, lat0 = float(source["x"][60]), float(source["y"][50])
    _, _, d = Geod(ellps="WGS84").inv(np.full(xx.size, lon0), np.full(xx.size, lat0),
                                      xx.ravel(), yy.ravel())
    want = (d / 1000.0 <= radius).reshape(src.shape)
    np.testing.assert_array_equal(got, want)
    assert got[50, 60]
    if radius > 0:
        dist = (d / 1000.0).reshape(src.shape)
        assert dist[got].max() <= radius < dist[~got].min()
        assert dist[~got].min() - radius < 2.3  # the disc reaches to within a cell of its radius
        # east-west: a cell is cos(47°)·0.02° of longitude wide, north-south 0.02° of latitude
        assert got[50].sum() > got[:, 60].sum()


def test_several_sources_projected_grid():
    src = np.zeros((40, 40), dtype=bool)
    src[5, 5] = src[30, 25] = True
    x = 1000.0 * np.arange(40)
    y = 1000.0 * np.arange(40)[::-1]
    da = xr.DataArray(src, dims=("y", "x"), coords={"y": y, "x": x}).rio.write_crs("EPSG:3035")
    got = reachable(da, 7.5).values
    jj, ii = np.mgrid[0:40, 0:40]
    want = (np.hypot(jj - 5, ii - 5) <= 7.5) | (np.hypot(jj - 30, ii - 25) <= 7.5)  # 1 km cells
    np.testing.assert_array_equal(got, want)


def test_range_change_classes():
    now = np.zeros((30, 30))
    now[10:15, 10:15] = 1
    fut = np.zeros((30, 30))
    fut[12:17, 12:17] = 1      # overlaps, and gains next to the old range
    fut[27:, 27:] = 1          # gains far away
    now[0, 0] = np.nan         # missing
    codes = range_change(lonlat(now), lonlat(fut), 10.0).values
    c = RANGE_CHANGE_CLASSES.index
    assert codes[0, 0] == 255
    assert (codes[12:15, 12:15] == c("kept")).all()
    assert codes[10, 10] == c("loss")
    assert (codes[15:17, 15:17] == c("reachable_gain")).all()  # 2-4 cells (≤ 10 km) away
    assert (codes[27:, 27:] == c("unreachable_gain")).all()    # ≥ 12 cells (> 20 km) away
    assert codes[25, 0] == c("unsuitable")

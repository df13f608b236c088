"""suitmap.spatial.ranges: edges, centroid and elevation band, and their shifts."""

from __future__ import annotations

import numpy as np
import pytest
import rioxarray  # noqa: F401
import xarray as xr
from pyproj import CRS, Geod

from suitmap.spatial.ranges import range_shift, range_summary

RES = 0.05
GEOD = Geod(ellps="WGS84")
CELL_KM = 111.2 * RES  # one cell of latitude, km (from memory: ~111 km per degree)


def lonlat_grid(west, south, nx, ny):
    x = west + (np.arange(nx) + 0.5) * RES
    y = (south + (np.arange(ny) + 0.5) * RES)[::-1]
    return x, y


def band(x, y, lat_lo, lat_hi):
    """Suitable where the cell centre lies between two latitudes (per column)."""
    lo = np.broadcast_to(lat_lo, x.shape)
    hi = np.broadcast_to(lat_hi, x.shape)
    m = (y[:, None] >= lo[None, :]) & (y[:, None] <= hi[None, :])
    return xr.DataArray(m, dims=("y", "x"), coords={"y": y, "x": x}).rio.write_crs("EPSG:4326")


@pytest.mark.parametrize("south_hemisphere", [False, True])
def test_band_moved_100_km_poleward(south_hemisphere):
    x, y = lonlat_grid(10.0, -52.0 if south_hemisphere else 38.0, 40, 280)  # 2° × 14°
    lo, hi = (-48.0, -44.0) if south_hemisphere else (44.0, 48.0)
    az = 180.0 if south_hemisphere else 0.0
    # move each edge exactly 100 km along its meridian (pyproj Geod.fwd, Karney 2013)
    lo2 = GEOD.fwd(x, np.full(x.size, lo), np.full(x.size, az), np.full(x.size, 100e3))[1]
    hi2 = GEOD.fwd(x, np.full(x.size, hi), np.full(x.size, az), np.full(x.size, 100e3))[1]
    base = range_summary(band(x, y, lo, hi), band_deg=1.0)
    scen = range_summary(band(x, y, lo2, hi2), band_deg=1.0)
    rows = range_shift(base, scen, CRS.from_epsg(4326))
    assert [r["band"] for r in rows] == ["10..11", "11..12", "all"]
    for r in rows:
        assert abs(r["poleward_edge_shift_km"] - 100.0) <= CELL_KM
        assert abs(r["equatorward_edge_shift_km"] - 100.0) <= CELL_KM
        assert abs(r["centroid_shift_km"] - 100.0) <= CELL_KM
        assert abs((r["centroid_bearing_deg"] - az + 180.0) % 360.0 - 180.0) < 1.0
        assert np.isnan(r["elevation_shift_m"])
        assert not r["poleward_edge_at_grid_limit_scenario"]


def test_band_moved_equatorward_is_negative_and_empty_is_nan():
    x, y = lonlat_grid(10.0, 38.0, 20, 280)
    base = range_summary(band(x, y, 44.0, 48.0))
    scen = range_summary(band(x, y, 43.0, 47.0))
    r = range_shift(base, scen, CRS.from_epsg(4326))[-1]
    assert r["poleward_edge_shift_km"] < -100 and r["equatorward_edge_shift_km"] < -100
    # a range reaching the grid's northern row: its poleward edge may lie beyond the grid
    top = range_summary(band(x, y, 50.0, 60.0))[-1]
    assert top.poleward_edge_at_grid_limit and not top.equatorward_edge_at_grid_limit
    none = range_summary(band(x, y, 80.0, 81.0))
    r = range_shift(base, none, CRS.from_epsg(4326))[-1]
    assert r["suitable_cells_scenario"] == 0
    assert np.isnan(r["poleward_edge_shift_km"]) and np.isnan(r["centroid_shift_km"])


def test_elevation_band_moves_up_by_known_metres():
    x, y = lonlat_grid(10.0, 45.0, 10, 100)
    # a ramp: 12.5 m per row, rising northwards (y descends with the row index)
    rows = np.arange(y.size)[::-1]
    elev = xr.DataArray(np.broadcast_to(500.0 + 12.5 * rows[:, None], (y.size, x.size)).copy(),
                        dims=("y", "x"), coords={"y": y, "x": x})
    def suitable(e_lo, e_hi):
        m = (elev.values >= e_lo) & (elev.values <= e_hi)
        return xr.DataArray(m, dims=("y", "x"), coords={"y": y, "x": x}).rio.write_crs("EPSG:4326")
    base = range_summary(suitable(700, 900), elevation=elev)
    scen = range_summary(suitable(950, 1150), elevation=elev)  # 250 m = 20 rows up
    r = range_shift(base, scen, CRS.from_epsg(4326))[-1]
    assert r["elevation_shift_m"] == pytest.approx(250.0, abs=1e-9)
    assert r["elevation_low_m_scenario"] - r["elevation_low_m_baseline"] == pytest.approx(250.0)
    assert 700 <= r["elevation_low_m_baseline"] < r["elevation_high_m_baseline"] <= 900


def test_projected_grid_uses_geodesic_positions():
    # a band on a UTM grid moved 100 km north: the shift is measured on the ellipsoid
    x = 500_000 + (np.arange(20) + 0.5) * 5000.0
    y = (4_800_000 + (np.arange(100) + 0.5) * 5000.0)[::-1]
    def suitable(n0, n1):
        m = np.broadcast_to(((y >= n0) & (y <= n1))[:, None], (y.size, x.size)).copy()
        return xr.DataArray(m, dims=("y", "x"), coords={"y": y, "x": x}).rio.write_crs("EPSG:32633")
    base = range_summary(suitable(4_900_000, 5_000_000), band_deg=10.0)
    scen = range_summary(suitable(5_000_000, 5_100_000), band_deg=10.0)
    r = range_shift(base, scen, CRS.from_epsg(4326))[-1]
    # UTM northing scale is ~0.9996-1.0 near the central meridian (Snyder 1987, p. 57)
    assert r["poleward_edge_shift_km"] == pytest.approx(100.0, abs=5.0)
    assert r["centroid_shift_km"] == pytest.approx(100.0, abs=5.0)

"""Where a suitable area lies, and how far it moves between two periods.

Input is a boolean ``(y, x)`` field (True = suitable) on any grid with a CRS;
cell centres are placed on the ellipsoid with pyproj.

* **Edges per longitude band.**  Cells are grouped into bands of ``band_deg``
  degrees of longitude (west edge at a multiple of ``band_deg``).  In each band
  the *poleward edge* is the ``EDGE_PERCENTILE``-th percentile of the suitable
  cells' latitudes towards the pole and the *equatorward edge* the same
  percentile towards the equator (95th / 5th in the northern hemisphere,
  5th / 95th in the southern; the hemisphere is that of the band's median
  suitable latitude).  A percentile rather than the extreme cell keeps one
  isolated suitable cell from moving the edge; it is a convention, not a
  published rule (common practice, no source).
  An edge whose suitable cells reach the grid's outermost row of that band is
  flagged (``*_edge_at_grid_limit``): the true edge may lie beyond the grid.
* **Edge shift** along the band's central meridian, geodesic (a meridian is a
  geodesic), in km, positive towards the pole.
* **Centroid**: the mean of the suitable cells' unit vectors on the sphere,
  weighted by true cell area; shifts between centroids are geodesic distances
  on the ellipsoid.
* **Elevation band**: the ``EDGE_PERCENTILE``-th lower and upper percentiles of
  the elevation of suitable cells; its shift is that of the band's midpoint.

References
----------
Karney, C.F.F. (2013) Algorithms for geodesics.  *J. Geodesy* 87, 43–55
(geodesic distances via pyproj.Geod).
"""

from __future__ import annotations

from dataclasses import asdict, dataclass

import numpy as np
import xarray as xr
from pyproj import CRS, Transformer

from suitmap.spatial.areas import cell_areas_km2, grid_crs

__all__ = ["EDGE_PERCENTILE", "RangeSummary", "cell_lonlat", "range_shift", "range_summary"]

#: Percentile (towards the pole / towards the equator) that defines an edge.
EDGE_PERCENTILE = 95.0


def cell_lonlat(grid) -> tuple[np.ndarray, np.ndarray, CRS]:
    """Longitude and latitude (degrees, ``(y, x)``) of cell centres, and the geographic CRS."""
    crs = grid_crs(grid)
    xx, yy = np.meshgrid(grid["x"].values.astype(float), grid["y"].values.astype(float))
    geo = crs if crs.is_geographic else crs.geodetic_crs
    if not crs.is_geographic:
        xx, yy = Transformer.from_crs(crs, geo, always_xy=True).transform(xx, yy)
    return np.asarray(xx, float), np.asarray(yy, float), geo


@dataclass
class RangeSummary:
    """Edges, centroid and elevation band of a suitable area (NaN where undefined)."""

    band: str
    lon_west: float
    lon_east: float
    suitable_cells: int
    poleward_edge_lat: float = np.nan
    equatorward_edge_lat: float = np.nan
    centroid_lon: float = np.nan
    centroid_lat: float = np.nan
    elevation_low_m: float = np.nan
    elevation_high_m: float = np.nan
    poleward_edge_at_grid_limit: bool = False
    equatorward_edge_at_grid_limit: bool = False


def _centroid(lon, lat, w):
    lo, la = np.radians(lon), np.radians(lat)
    v = np.array([(w * np.cos(la) * np.cos(lo)).sum(), (w * np.cos(la) * np.sin(lo)).sum(),
                  (w * np.sin(la)).sum()])
    if not np.linalg.norm(v) > 0:
        return np.nan, np.nan
    return float(np.degrees(np.arctan2(v[1], v[0]))), float(np.degrees(np.arcsin(v[2] / np.linalg.norm(v))))


def _summary(band, west, east, lat, lon, w, elev, limits) -> RangeSummary:
    s = RangeSummary(band, west, east, int(lat.size))
    if lat.size == 0:
        return s
    north = np.median(lat) >= 0
    hi, lo = np.percentile(lat, [EDGE_PERCENTILE, 100 - EDGE_PERCENTILE])
    s.poleward_edge_lat, s.equatorward_edge_lat = (float(hi), float(lo)) if north else (float(lo), float(hi))
    at_north, at_south = bool(lat.max() >= limits[1]), bool(lat.min() <= limits[0])
    s.poleward_edge_at_grid_limit, s.equatorward_edge_at_grid_limit = (
        (at_north, at_south) if north else (at_south, at_north))
    s.centroid_lon, s.centroid_lat = _centroid(lon, lat, w)
    if elev is not None:
        e = elev[np.isfinite(elev)]
        if e.size:
            low, high = np.percentile(e, [100 - EDGE_PERCENTILE, EDGE_PERCENTILE])
            s.elevation_low_m, s.elevation_high_m = float(low), float(high)
    return s


def range_summary(suitable: xr.DataArray, *, band_deg: float = 1.0,
                  elevation: xr.DataArray | None = None) -> list[RangeSummary]:
    """Edges, centroid and elevation band per longitude band, then ``"all"`` bands together.

    Parameters
    ----------
    suitable : xarray.DataArray
        Boolean ``(y, x)`` (True = suitable; missing cells False) with a CRS.
    band_deg : float
        Width of the longitude bands in degrees.
    elevation : xarray.DataArray, optional
        Elevation (m) on the same grid.
    """
    lon, lat, _ = cell_lonlat(suitable)
    mask = np.asarray(suitable.transpose("y", "x").values, dtype=bool)
    w = cell_areas_km2(suitable).values
    elev = None if elevation is None else np.asarray(elevation.transpose("y", "x").values, float)
    band_of = np.floor(lon / band_deg).astype(np.int64)
    out = []
    for b in np.unique(band_of):
        inside = band_of == b
        sel = mask & inside
        west, east = float(b * band_deg), float((b + 1) * band_deg)
        out.append(_summary(f"{west:g}..{east:g}", west, east, lat[sel], lon[sel], w[sel],
                            None if elev is None else elev[sel], _limits(lat[inside])))
    out.append(_summary("all", float(lon.min()), float(lon.max()), lat[mask], lon[mask], w[mask],
                        None if elev is None else elev[mask], _limits(lat)))
    return out


def _limits(lat: np.ndarray) -> tuple[float, float]:
    """Latitudes of a band's southernmost and northernmost cell centres (a little inside)."""
    span = float(lat.max() - lat.min())
    return float(lat.min()) + 1e-9 * span, float(lat.max()) - 1e-9 * span


def _meridian_km(geod, lon, lat1, lat2) -> float:
    if not (np.isfinite(lat1) and np.isfinite(lat2)):
        return np.nan
    _, _, d = geod.inv(lon, lat1, lon, lat2)
    return float(d) / 1000.0


def range_shift(base: list[RangeSummary], scen: list[RangeSummary], crs: CRS) -> list[dict]:
    """Shifts between two :func:`range_summary` results of the same grid, per band.

    ``*_edge_shift_km`` are positive towards the pole (the baseline's hemisphere),
    ``centroid_shift_km`` a geodesic distance, ``elevation_shift_m`` the move of
    the elevation band's midpoint (positive upwards).
    """
    geod = crs.get_geod()
    scen_by = {s.band: s for s in scen}
    rows = []
    for b in base:
        s = scen_by.get(b.band)
        if s is None:
            continue
        mid = (b.lon_west + b.lon_east) / 2
        sign = 1.0 if not np.isfinite(b.poleward_edge_lat) or b.poleward_edge_lat >= b.equatorward_edge_lat \
            else -1.0
        row = {"band": b.band, "lon_west": b.lon_west, "lon_east": b.lon_east}
        for k, v in asdict(b).items():
            if k not in row and k != "band":
                row[f"{k}_baseline"] = v
        for k, v in asdict(s).items():
            if k not in ("band", "lon_west", "lon_east"):
                row[f"{k}_scenario"] = v
        for edge in ("poleward", "equatorward"):
            lat1, lat2 = getattr(b, f"{edge}_edge_lat"), getattr(s, f"{edge}_edge_lat")
            d = _meridian_km(geod, mid, lat1, lat2)
            row[f"{edge}_edge_shift_km"] = d * sign * np.sign(lat2 - lat1) if np.isfinite(d) else np.nan
        if np.isfinite(b.centroid_lat) and np.isfinite(s.centroid_lat):
            az, _, d = geod.inv(b.centroid_lon, b.centroid_lat, s.centroid_lon, s.centroid_lat)
            row["centroid_shift_km"] = float(d) / 1000.0
            row["centroid_bearing_deg"] = float(az) % 360.0 if d > 0 else np.nan
        else:
            row["centroid_shift_km"] = row["centroid_bearing_deg"] = np.nan
        row["elevation_shift_m"] = ((s.elevation_low_m + s.elevation_high_m) / 2
                                    - (b.elevation_low_m + b.elevation_high_m) / 2)
        rows.append(row)
    return rows

"""True areas of grid cells and polygons, in km².

* **Latitude/longitude grids**: a cell is bounded by two meridians and two
  parallels; its area on the CRS's ellipsoid is the area of the zone between
  the two parallels times the cell's share of 360° of longitude, with the
  zone area from the authalic function *q* (Snyder 1987, eq. 3-12)::

      area = a² Δλ / 2 · (q(φ_north) − q(φ_south))
      q(φ) = (1 − e²) [sin φ / (1 − e² sin² φ) − 1/(2e) ln((1 − e sin φ) / (1 + e sin φ))]

  (on a sphere, ``q = 2 sin φ``).  Cell edges lie half a cell from the
  centres; latitudes are clipped to ±90°.
* **Projected grids**: planar area ``|dx · dy|`` in the CRS's linear unit,
  converted to km².  This is the true area only on an equal-area projection.
* **Polygons**: geodesic area on the ellipsoid with pyproj
  (``Geod.geometry_area_perimeter``) after transforming to the CRS's
  geographic CRS.

References
----------
Snyder, J.P. (1987) *Map Projections — A Working Manual*.  USGS Professional
Paper 1395, p. 16 (authalic latitude, eq. 3-12) and p. 187.
Karney, C.F.F. (2013) Algorithms for geodesics.  *J. Geodesy* 87, 43–55
(the polygon areas pyproj computes).
"""

from __future__ import annotations

import numpy as np
import xarray as xr
from pyproj import CRS, Transformer

from suitmap.errors import InputError

__all__ = ["cell_areas_km2", "cell_edges", "grid_crs", "polygon_area_km2", "zone_area_km2"]


def grid_crs(obj) -> CRS:
    """The pyproj CRS of an xarray object (rioxarray); InputError when it has none."""
    crs = obj.rio.crs
    if crs is None:
        raise InputError(f"{getattr(obj, 'name', None) or 'grid'} has no CRS; areas need one "
                         "(write it with rioxarray .rio.write_crs)")
    return CRS.from_wkt(crs.to_wkt())


def cell_edges(centres: np.ndarray) -> np.ndarray:
    """Edges (n + 1) of cells with the given regularly spaced centres (n ≥ 1)."""
    c = np.asarray(centres, dtype=np.float64)
    if c.size < 2:
        raise InputError("a grid needs at least two cells along each axis to know its cell size")
    step = (c[-1] - c[0]) / (c.size - 1)
    return np.concatenate([c - step / 2, [c[-1] + step / 2]])


def _q(phi_deg: np.ndarray, e: float) -> np.ndarray:
    s = np.sin(np.radians(phi_deg))
    if e == 0.0:
        return 2.0 * s
    return (1 - e * e) * (s / (1 - e * e * s * s) - np.log((1 - e * s) / (1 + e * s)) / (2 * e))


def zone_area_km2(lat_south, lat_north, dlon_deg, crs: CRS | None = None) -> np.ndarray:
    """Area (km²) between two parallels over ``dlon_deg`` degrees of longitude.

    Parameters
    ----------
    lat_south, lat_north : array_like
        Bounding latitudes in degrees (either order; clipped to ±90°).
    dlon_deg : float or array_like
        Width in degrees of longitude.
    crs : pyproj.CRS, optional
        Geographic CRS whose ellipsoid is used (default WGS 84).

    References
    ----------
    Snyder (1987), eq. 3-12 (see the module docstring).
    """
    ell = (crs or CRS.from_epsg(4326)).ellipsoid
    a = ell.semi_major_metre
    b = ell.semi_minor_metre
    e = float(np.sqrt(max(0.0, 1 - (b / a) ** 2)))
    lo = np.clip(np.minimum(lat_south, lat_north), -90, 90)
    hi = np.clip(np.maximum(lat_south, lat_north), -90, 90)
    return a * a * np.radians(np.abs(dlon_deg)) / 2 * (_q(hi, e) - _q(lo, e)) / 1e6


def cell_areas_km2(obj) -> xr.DataArray:
    """Area (km²) of every cell of a grid, as a ``(y, x)`` DataArray.

    Geodesic on latitude/longitude grids, planar on projected ones (see the
    module docstring).  ``obj`` is a DataArray or Dataset with ``x``/``y``
    coordinates and a CRS.
    """
    crs = grid_crs(obj)
    x = obj["x"].values.astype(np.float64)
    y = obj["y"].values.astype(np.float64)
    xe, ye = cell_edges(x), cell_edges(y)
    if crs.is_geographic:
        unit = crs.axis_info[0].unit_conversion_factor  # radians per unit
        to_deg = np.degrees(unit) if unit else 1.0
        rows = zone_area_km2(ye[:-1] * to_deg, ye[1:] * to_deg, 1.0, crs)
        widths = np.abs(np.diff(xe)) * to_deg
        area = rows[:, None] * widths[None, :]
    else:
        factor = crs.axis_info[0].unit_conversion_factor or 1.0  # metres per unit
        area = np.abs(np.diff(ye))[:, None] * np.abs(np.diff(xe))[None, :] * factor ** 2 / 1e6
    return xr.DataArray(area, dims=("y", "x"), coords={"y": obj["y"], "x": obj["x"]},
                        name="cell_area", attrs={"units": "km2", "long_name": "area of the grid cell"})


def polygon_area_km2(geom, crs: CRS) -> float:
    """Geodesic area (km²) of a shapely (multi)polygon given in ``crs``."""
    import shapely

    geo = crs.geodetic_crs if not crs.is_geographic else crs
    if not crs.is_geographic:
        tr = Transformer.from_crs(crs, geo, always_xy=True)
        geom = shapely.transform(geom, lambda x, y: tr.transform(x, y), interleaved=False)
    area, _ = geo.get_geod().geometry_area_perimeter(geom)
    return abs(float(area)) / 1e6

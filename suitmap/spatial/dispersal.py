"""Can a range keep up?  Gains within reach of the present range, and the rest.

A future suitable cell is a *reachable gain* when its centre lies within
``distance_km`` of the centre of a currently suitable cell, an *unreachable
gain* otherwise.  Distances are geodesic on the CRS's ellipsoid for
latitude/longitude grids (pyproj.Geod) and planar on projected grids.

The search is exact but cheap: a k-d tree on unit vectors (scipy) finds each
cell's nearest source on a sphere of the ellipsoid's mean radius; cells clearly
inside or outside the reach by that measure are decided at once, and the
others (within 1 % of the reach) by geodesic distances to every source in a
slightly larger ball.

References
----------
Karney, C.F.F. (2013) Algorithms for geodesics.  *J. Geodesy* 87, 43–55.
Maneewongvatana, S., Mount, D.M. (1999) It's okay to be skinny, if your
friends are fat.  (The sliding-midpoint k-d tree of scipy.spatial.cKDTree.)
"""

from __future__ import annotations

import numpy as np
import xarray as xr

from suitmap.spatial.areas import grid_crs

__all__ = ["RANGE_CHANGE_CLASSES", "MISSING", "range_change", "reachable"]

#: Classes of ``range_change`` in code order (code = index); 255 marks missing cells.
RANGE_CHANGE_CLASSES = ("unsuitable", "kept", "loss", "reachable_gain", "unreachable_gain")
MISSING = 255
_MARGIN = 0.01


def _unit_vectors(lon, lat):
    lo, la = np.radians(lon), np.radians(lat)
    return np.column_stack([np.cos(la) * np.cos(lo), np.cos(la) * np.sin(lo), np.sin(la)])


def reachable(source: xr.DataArray, distance_km: float) -> xr.DataArray:
    """True for every cell whose centre lies within ``distance_km`` of a True cell's centre.

    Parameters
    ----------
    source : xarray.DataArray
        Boolean ``(y, x)`` with a CRS.
    distance_km : float
        Reach in km (≥ 0).
    """
    from scipy.spatial import cKDTree

    from suitmap.spatial.ranges import cell_lonlat

    src = np.asarray(source.transpose("y", "x").values, dtype=bool)
    out = np.zeros(src.shape, dtype=bool)
    if src.any():
        crs = grid_crs(source)
        if crs.is_geographic:
            lon, lat, geo = cell_lonlat(source)
            geod = geo.get_geod()
            ell = geo.ellipsoid
            radius = (2 * ell.semi_major_metre + ell.semi_minor_metre) / 3 / 1000.0  # mean radius, km
            pts = _unit_vectors(lon.ravel(), lat.ravel())
            tree = cKDTree(pts[src.ravel()])
            slon, slat = lon.ravel()[src.ravel()], lat.ravel()[src.ravel()]

            def chord(d):
                return 2 * np.sin(min(d / radius, np.pi) / 2)

            near, _ = tree.query(pts, k=1)
            arc = 2 * np.arcsin(np.clip(near / 2, 0, 1)) * radius
            flat = out.ravel()
            flat[arc <= distance_km * (1 - _MARGIN)] = True
            unsure = np.flatnonzero((arc > distance_km * (1 - _MARGIN)) & (arc <= distance_km * (1 + _MARGIN)))
            for i, cand in zip(unsure, tree.query_ball_point(pts[unsure], chord(distance_km * (1 + 2 * _MARGIN)))):
                cand = np.asarray(cand, dtype=np.int64)
                _, _, d = geod.inv(np.full(cand.size, lon.ravel()[i]), np.full(cand.size, lat.ravel()[i]),
                                   slon[cand], slat[cand])
                flat[i] = bool((np.asarray(d) / 1000.0 <= distance_km).any())
            out = flat.reshape(src.shape)
        else:
            factor = (crs.axis_info[0].unit_conversion_factor or 1.0) / 1000.0  # km per unit
            xx, yy = np.meshgrid(source["x"].values * factor, source["y"].values * factor)
            pts = np.column_stack([xx.ravel(), yy.ravel()])
            near, _ = cKDTree(pts[src.ravel()]).query(pts, k=1)
            out = (near <= distance_km).reshape(src.shape)
    return xr.DataArray(out, dims=("y", "x"), coords={"y": source["y"], "x": source["x"]})


def range_change(now: xr.DataArray, future: xr.DataArray, distance_km: float) -> xr.DataArray:
    """Class codes (:data:`RANGE_CHANGE_CLASSES`) of the move from ``now`` to ``future``.

    ``now``/``future`` are float ``(y, x)`` fields where 1 = suitable, 0 = not and
    NaN = missing, on one grid with a CRS; the result is uint8 with 255 where
    either is missing.
    """
    n = np.asarray(now.transpose("y", "x").values, dtype=np.float64)
    f = np.asarray(future.transpose("y", "x").values, dtype=np.float64)
    ok = np.isfinite(n) & np.isfinite(f)
    ns, fs = ok & (n > 0.5), ok & (f > 0.5)
    reach = reachable(now.copy(data=ns), distance_km).values
    code = np.full(n.shape, MISSING, dtype=np.uint8)
    c = RANGE_CHANGE_CLASSES.index
    code[ok] = c("unsuitable")
    code[ns & fs] = c("kept")
    code[ns & ~fs] = c("loss")
    code[~ns & fs & reach] = c("reachable_gain")
    code[~ns & fs & ~reach] = c("unreachable_gain")
    return xr.DataArray(code, dims=("y", "x"), coords={"y": now["y"], "x": now["x"]})

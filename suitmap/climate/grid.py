"""Grid checks of climate inputs: two fields on one grid (shape, CRS, cells, resolution)."""

from __future__ import annotations

import numpy as np
import xarray as xr
from pyproj import CRS

from suitmap.errors import GridMismatch

_TOL = 1e-3  # coordinate tolerance, as a fraction of the cell size

def _grid(da: xr.DataArray):
    x, y = da["x"].values.astype("float64"), da["y"].values.astype("float64")
    dx = float(np.median(np.abs(np.diff(x)))) if x.size > 1 else float("nan")
    dy = float(np.median(np.abs(np.diff(y)))) if y.size > 1 else float("nan")
    bounds = (x.min() - dx / 2, y.min() - dy / 2, x.max() + dx / 2, y.max() + dy / 2)
    return x, y, (dx, dy), tuple(float(b) for b in bounds)


def _crs_text(crs) -> str:
    if crs is None:
        return "none"
    c = CRS.from_wkt(crs.to_wkt())
    auth = c.to_authority()
    return f"{auth[0]}:{auth[1]}" if auth else c.name


def check_same_grid(a: xr.DataArray, b: xr.DataArray, a_name: str, b_name: str) -> None:
    """Raise :class:`GridMismatch` unless ``a`` and ``b`` share shape, CRS, cells and resolution."""
    diffs = []
    sa, sb = (a.sizes["y"], a.sizes["x"]), (b.sizes["y"], b.sizes["x"])
    if sa != sb:
        diffs.append(f"shape (y×x) {sa[0]}×{sa[1]} vs {sb[0]}×{sb[1]}")
    ca, cb = a.rio.crs, b.rio.crs
    same_crs = (ca is None and cb is None) or (ca is not None and cb is not None and CRS.from_wkt(
        ca.to_wkt()).equals(CRS.from_wkt(cb.to_wkt()), ignore_axis_order=True))
    if not same_crs:
        diffs.append(f"CRS {_crs_text(ca)} vs {_crs_text(cb)}")
    xa, ya, ra, ba = _grid(a)
    xb, yb, rb, bb = _grid(b)
    tol = _TOL * min(ra + rb)
    if not np.allclose(ra, rb, rtol=_TOL, atol=0):
        diffs.append(f"resolution {ra[0]:g}×{ra[1]:g} vs {rb[0]:g}×{rb[1]:g}")
    if not np.allclose(ba, bb, rtol=0, atol=tol):
        diffs.append("extent (left, bottom, right, top) "
                     f"({', '.join(f'{v:g}' for v in ba)}) vs ({', '.join(f'{v:g}' for v in bb)})")
    if not diffs and not (np.allclose(xa, xb, rtol=0, atol=tol) and np.allclose(ya, yb, rtol=0, atol=tol)):
        diffs.append("cell-centre coordinates (order or spacing)")
    if diffs:
        raise GridMismatch(f"grids of {a_name} and {b_name} differ: {'; '.join(diffs)}; "
                           "regrid them onto one grid")

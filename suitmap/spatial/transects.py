"""Transects of a layer: the median and interquartile range of its cells along latitude
(grid rows) or elevation (bands of equal height).

A latitude transect takes each grid row as one step: its position is the mean
latitude of the row's cell centres (the row's latitude on a latitude/longitude
grid), its value the median over the row's cells with a value, its band the
25th–75th percentiles (numpy "linear", Hyndman & Fan 1996 type 7).  An
elevation transect does the same over bands of elevation of one width, chosen
as the smallest of 10, 20, 25, 50, 100, 200, 250, 500 and 1000 m that gives at
most 15 bands over the cells' elevations (beyond, a multiple of 1000 m); the
position is the band's midpoint.
Statistics over cells (not area-weighted): a screening summary of the spread
across a row or band, common practice, no source.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

__all__ = ["Transect", "elevation_transect", "latitude_transect"]

_WIDTHS = (10.0, 20.0, 25.0, 50.0, 100.0, 200.0, 250.0, 500.0, 1000.0)
_MAX_BANDS = 15


@dataclass
class Transect:
    """One value per step: position (°N or m), median, 25th and 75th percentile, cells."""

    position: np.ndarray
    median: np.ndarray
    p25: np.ndarray
    p75: np.ndarray
    n_cells: np.ndarray


def _stats(values: np.ndarray, groups: list[np.ndarray], position: np.ndarray) -> Transect:
    med, lo, hi, n = (np.full(len(groups), np.nan) for _ in range(4))
    for i, cells in enumerate(groups):
        v = values[cells]
        v = v[np.isfinite(v)]
        n[i] = v.size
        if v.size:
            med[i] = np.median(v)
            lo[i], hi[i] = np.percentile(v, [25.0, 75.0])
    return Transect(np.asarray(position, float), med, lo, hi, n.astype(int))


def latitude_transect(values, lat) -> Transect:
    """Row by row (axis 0 of a ``(y, x)`` grid), ordered south to north."""
    values = np.asarray(values, dtype=float)
    lat = np.broadcast_to(np.asarray(lat, dtype=float), values.shape)
    rows = np.arange(values.shape[0])
    position = np.array([np.nanmean(lat[r]) for r in rows])
    order = np.argsort(position)
    groups = [np.s_[r, :] for r in rows[order]]
    return _stats(values, groups, position[order])


def band_width(elevation) -> float:
    """The width (m) of the elevation bands of :func:`elevation_transect`."""
    e = np.asarray(elevation, dtype=float)
    e = e[np.isfinite(e)]
    if not e.size:
        return _WIDTHS[0]
    for w in _WIDTHS:
        if math.floor(e.max() / w) - math.floor(e.min() / w) + 1 <= _MAX_BANDS:
            return w
    return 1000.0 * math.ceil((e.max() - e.min()) / (_MAX_BANDS - 1) / 1000.0)


def elevation_transect(values, elevation, width: float | None = None) -> Transect:
    """Bands ``[k·width, (k+1)·width)`` m of elevation, low to high; cells without an
    elevation are left out."""
    values = np.asarray(values, dtype=float)
    elev = np.asarray(elevation, dtype=float)
    w = band_width(elev) if width is None else float(width)
    ok = np.isfinite(elev)
    if not ok.any():
        return _stats(values, [], np.array([]))
    k = np.full(elev.shape, -1, dtype=np.int64)
    k[ok] = np.floor(elev[ok] / w).astype(np.int64)
    ks = np.arange(k[ok].min(), k[ok].max() + 1)
    groups = [k == j for j in ks]
    return _stats(values, groups, (ks + 0.5) * w)

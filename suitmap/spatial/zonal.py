"""Regional summaries of gridded layers: coverage fractions × true cell areas.

Each region's weights are the fraction of every grid cell that lies inside its
polygon (computed exactly by exactextract, not from cell centres) times the
cell's true area (:mod:`suitmap.spatial.areas`).  So a polygon smaller than a
cell still gets the value of the cell(s) it lies in, and a region straddling
a coast counts only the part of each cell it covers.

Regions in another CRS than the grid are reprojected onto the grid's CRS after
their edges are densified (straight edges in one CRS are curves in another).
Regions are read with pyogrio (any vector format GDAL reads); features sharing
a name are merged into one region.

Summary per region and layer group (a period, a comparison, ...):

* ``area_km2``: geodesic area of the region's polygon (whether or not the grid
  covers it);
* ``covered_km2``: Σ weights over cells where the reference layer has data;
* ``suitable_area_km2``, ``suitable_share``: Σ weights where the reference layer
  is at or above the level, and that area over ``covered_km2``;
* ``mean_<layer>``: weighted mean of every numeric layer over its valid cells;
* ``<layer>_<class>_km2``: area of each class of a class layer (CF ``flag_values``
  and ``flag_meanings``);
* with an elevation field, ``suitable_elevation_low_m`` / ``_high_m``: the
  weighted 5th and 95th percentiles of the suitable part's elevation
  (percentile of the weights' cumulative distribution, mid-point rule).

A region outside the grid, or lying wholly on missing cells, gets
``covered_km2 = 0`` and empty (NaN) values, never zeros, and a warning.

References
----------
Baston, D. (2023) exactextract: fast and accurate raster zonal statistics.
https://github.com/isciences/exactextract (coverage fractions of polygons on grids).
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import xarray as xr
from pyproj import CRS

from suitmap.errors import InputError, SuitmapWarning
from suitmap.spatial.areas import cell_areas_km2, cell_edges, grid_crs, polygon_area_km2

__all__ = ["RegionWeights", "read_regions", "region_weights", "summarize_group",
           "weighted_percentiles"]

#: Region edges are densified to this many segments across the regions' extent before reprojection.
DENSIFY_SEGMENTS = 400


def read_regions(path: str | Path, field: str, layer: str | None = None):
    """Read a vector file of regions as a GeoDataFrame with one row per name.

    Raises
    ------
    InputError
        Missing file, unknown layer or field, no CRS, no polygons.
    """
    import geopandas as gpd
    import pyogrio

    path = Path(path)
    if not path.exists():
        raise InputError(f"regions file {path} does not exist; give a GeoPackage, shapefile or GeoJSON")
    try:
        layers = [row[0] for row in pyogrio.list_layers(path)]
    except Exception as exc:  # noqa: BLE001 - GDAL's own message names the problem
        raise InputError(f"regions file {path} cannot be read as vector data: "
                         f"{str(exc).splitlines()[0]}") from None
    if layer is not None and layer not in layers:
        raise InputError(f"regions file {path} has no layer {layer!r}; it has {', '.join(layers)}")
    if layer is None and len(layers) > 1:
        warnings.warn(f"regions file {path} has several layers; using {layers[0]!r} "
                      "(set regions.layer to choose)", SuitmapWarning, stacklevel=2)
    gdf = gpd.read_file(path, layer=layer or layers[0], engine="pyogrio")
    if field not in gdf.columns or field == "geometry":
        cols = [c for c in gdf.columns if c != "geometry"]
        raise InputError(f"regions file {path} has no field {field!r}; its fields are "
                         f"{', '.join(cols) or '(none)'}")
    if gdf.crs is None:
        raise InputError(f"regions file {path} has no CRS; define one (e.g. in QGIS or with "
                         "ogr2ogr -a_srs) so the regions can be placed on the grid")
    gdf = gdf[gdf.geometry.notna() & ~gdf.geometry.is_empty]
    gdf = gdf[gdf.geometry.geom_type.isin(["Polygon", "MultiPolygon"])]
    if gdf.empty:
        raise InputError(f"regions file {path} holds no polygons")
    gdf = gdf.assign(**{field: gdf[field].astype(str)})
    gdf["geometry"] = gdf.geometry.make_valid()
    merged = gdf[[field, "geometry"]].dissolve(by=field, as_index=False, sort=False)
    return merged.rename(columns={field: "region"}).reset_index(drop=True)


@dataclass
class RegionWeights:
    """Per region: flat cell indices of the grid, their weights (km²), and the region's area."""

    names: list[str]
    cells: list[np.ndarray]
    weights_km2: list[np.ndarray]
    area_km2: np.ndarray
    grid_shape: tuple[int, int]


def _densified(gdf):
    minx, miny, maxx, maxy = gdf.total_bounds
    step = max(maxx - minx, maxy - miny) / DENSIFY_SEGMENTS
    return gdf.geometry.segmentize(step) if step > 0 else gdf.geometry


def region_weights(regions, grid) -> RegionWeights:
    """Coverage fraction × cell area of every cell each region touches.

    Parameters
    ----------
    regions : geopandas.GeoDataFrame
        Column ``region`` and polygon geometries with a CRS (see :func:`read_regions`).
    grid : xarray.DataArray or xarray.Dataset
        Regular grid with ``x``/``y`` coordinates and a CRS.
    """
    from exactextract import exact_extract

    crs = grid_crs(grid)
    rcrs = CRS.from_user_input(regions.crs)
    areas = np.array([polygon_area_km2(g, rcrs) for g in _densified(regions)])
    geoms = _densified(regions).to_crs(crs.to_wkt())
    ny, nx = grid.sizes["y"], grid.sizes["x"]
    xe, ye = cell_edges(grid["x"].values), cell_edges(grid["y"].values)
    src = _index_source(ny, nx, xe, ye, crs.to_wkt())
    if crs.is_geographic:
        geoms = _wrapped(geoms, float(min(xe[0], xe[-1])), float(max(xe[0], xe[-1])))
    import geopandas as gpd

    vec = gpd.GeoDataFrame({"region": list(regions["region"])}, geometry=geoms.values, crs=crs.to_wkt())
    table = exact_extract(src, vec, ["values", "coverage"], include_cols=["region"], output="pandas")
    cell_area = cell_areas_km2(grid).values.ravel()
    cells, weights = [], []
    for vals, cov in zip(table["values"], table["coverage"]):
        idx = np.asarray(vals, dtype=np.int64)
        frac = np.asarray(cov, dtype=np.float64)
        keep = frac > 0
        cells.append(idx[keep])
        weights.append(frac[keep] * cell_area[idx[keep]])
    return RegionWeights(list(table["region"]), cells, weights, areas, (ny, nx))


def _wrapped(geoms, west: float, east: float):
    """Regions given in −180…180 on a 0…360 grid (or the reverse): add copies 360° away
    and keep what lies within the grid's longitudes."""
    from shapely import affinity
    from shapely.geometry import box

    frame = box(west, -90.0, east, 90.0)
    out = []
    for g in geoms:
        if g.bounds[0] >= west and g.bounds[2] <= east:
            out.append(g)
            continue
        parts = [affinity.translate(g, xoff=k) for k in (-360.0, 0.0, 360.0)]
        inside = [p.intersection(frame) for p in parts]
        inside = [p for p in inside if not p.is_empty]
        out.append(inside[0].union_all(inside[1:]) if len(inside) > 1 else (inside[0] if inside else g))
    return type(geoms)(out, crs=geoms.crs)


def _index_source(ny: int, nx: int, xe: np.ndarray, ye: np.ndarray, wkt: str):
    """An exactextract raster whose values are the flat (y, x) index of each cell.

    Windows are computed on request, so no grid-sized array is held in memory.
    exactextract reads rows north first and columns west first.
    """
    from exactextract.raster import RasterSource

    flip_y, flip_x = ye[0] < ye[-1], xe[0] > xe[-1]
    ext = (float(min(xe[0], xe[-1])), float(min(ye[0], ye[-1])),
           float(max(xe[0], xe[-1])), float(max(ye[0], ye[-1])))

    class IndexSource(RasterSource):
        def res(self):
            return (ext[2] - ext[0]) / nx, (ext[3] - ext[1]) / ny

        def extent(self):
            return ext

        def srs_wkt(self):
            return wkt

        def nodata_value(self):
            return None

        def read_window(self, x0, y0, wnx, wny):
            rows = np.arange(y0, y0 + wny)
            cols = np.arange(x0, x0 + wnx)
            rows = ny - 1 - rows if flip_y else rows
            cols = nx - 1 - cols if flip_x else cols
            return (rows[:, None] * nx + cols[None, :]).astype(np.float64)

    return IndexSource()


def _class_codes(da: xr.DataArray) -> list[tuple[int, str]] | None:
    values, meanings = da.attrs.get("flag_values"), da.attrs.get("flag_meanings")
    if values is None or meanings is None:
        return None
    return list(zip(np.atleast_1d(values).tolist(), str(meanings).split()))


def weighted_percentiles(values: np.ndarray, weights: np.ndarray, q) -> np.ndarray:
    """Percentiles ``q`` (0–100) of ``values`` weighted by ``weights`` (mid-point rule).

    Each value stands for its weight's share of the cumulative distribution,
    centred on the middle of that share; between centres the percentile is
    linear, beyond them it is the smallest or largest value (common practice,
    no source: with equal weights this is the Hazen plotting position).
    """
    order = np.argsort(values)
    v, w = values[order], weights[order]
    cw = np.cumsum(w) - w / 2
    return np.interp(np.asarray(q, dtype=float) / 100 * w.sum(), cw, v)


def summarize_group(ds: xr.Dataset, weights: RegionWeights, *, reference: str | None = None,
                    level: float | None = None,
                    elevation: np.ndarray | None = None) -> tuple[list[dict], list[str]]:
    """One row (a dict) per region of the layers in ``ds`` (same grid as ``weights``).

    ``reference``: the layer whose valid cells define ``covered_km2`` and which,
    with ``level``, defines the suitable area (``None``: the first numeric layer,
    and no suitable area).  ``elevation``: flat (y, x) elevations (m) for the
    suitable part's elevation band.  Returns the rows and the names of regions
    without data.
    """
    numeric, classes = {}, {}
    for name, da in ds.data_vars.items():
        if set(da.dims) != {"y", "x"}:
            continue
        codes = _class_codes(da)
        if codes is not None:
            classes[name] = (np.asarray(da.transpose("y", "x").values).ravel(), codes)
        elif np.issubdtype(da.dtype, np.number) and not np.issubdtype(da.dtype, np.bool_):
            numeric[name] = np.asarray(da.transpose("y", "x").values, dtype=np.float64).ravel()
    if reference is None or reference not in numeric:
        reference = next(iter(numeric), None)
        level = None
    rows, empty = [], []
    for name, idx, w, area in zip(weights.names, weights.cells, weights.weights_km2,
                                  weights.area_km2):
        row: dict = {"region": name, "area_km2": float(area)}
        ok = np.isfinite(numeric[reference][idx]) if reference is not None else np.zeros(idx.size, bool)
        covered = float(w[ok].sum())
        row["covered_km2"] = covered
        if covered <= 0:
            empty.append(name)
        band = (np.nan, np.nan)
        if level is not None and covered > 0:
            is_suit = ok & (numeric[reference][idx] >= level)
            suit = float(w[is_suit].sum())
            row["suitable_area_km2"] = suit
            row["suitable_share"] = suit / covered
            if elevation is not None:
                e = elevation[idx]
                sel = is_suit & np.isfinite(e)
                if sel.any():
                    band = tuple(weighted_percentiles(e[sel], w[sel], [5.0, 95.0]))
        else:
            row["suitable_area_km2"] = np.nan
            row["suitable_share"] = np.nan
        if elevation is not None:
            row["suitable_elevation_low_m"], row["suitable_elevation_high_m"] = map(float, band)
        for lname, v in numeric.items():
            vals = v[idx]
            good = np.isfinite(vals)
            den = w[good].sum()
            row[f"mean_{lname}"] = float((w[good] * vals[good]).sum() / den) if den > 0 else np.nan
        for lname, (v, codes) in classes.items():
            vals = v[idx]
            for code, meaning in codes:
                hit = vals == code
                row[f"{lname}_{meaning}_km2"] = float(w[hit].sum()) if covered > 0 else np.nan
        rows.append(row)
    return rows, empty

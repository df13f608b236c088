"""Put fields onto another grid, and clean up joined time axes.

:func:`snap_to_grid` moves a ``(..., y, x)`` field onto a template's grid (its CRS
and its cell centres).  Rules:

* **Where a target cell looks.**  Each target cell centre is transformed into the
  source CRS with pyproj (``always_xy``) when the CRSs differ; on a geographic
  source its longitude is wrapped into the source's 360° window (so −180…180
  targets read 0…360 sources).  A source grid that spans 360° of longitude is
  periodic in x.  Elsewhere a target centre outside the source's outer cell
  *edges* is missing; one between the outermost source centres and the outer
  edges takes the value at the nearest edge centre (constant extrapolation
  over at most half a source cell).
* **continuous** (``kind="continuous"``): bilinear interpolation between the four
  surrounding source cell centres, applied as a precomputed sparse weight matrix
  (source cells × target cells) with scipy.  Missing source cells (NaN) are left
  out and the weights of the valid neighbours renormalised; a target cell is
  missing when its valid neighbours carry less than half of the bilinear weight
  (``MIN_WEIGHT``).  A linear field is therefore reproduced exactly (to float
  rounding) inside the source domain.
* **class** (``kind="class"``): codes are never averaged.  A target cell takes the
  *mode* of the source cells whose centres fall inside it (fine → coarse; ties go
  to the smallest code; missing codes do not vote); a target cell that contains
  no source centre (coarse → fine) takes the code of the source cell containing
  its centre (nearest neighbour).  Integer layers use their type's largest value
  (255 for uint8: ``layers.metadata.MISSING_CLASS``)
  and float layers NaN for missing target cells.
* **Lazy.**  Dask inputs stay lazy: the source is cut into blocks along its first
  leading dimension (e.g. ``time``) with the whole source grid in each block,
  and every spatial chunk of the target (the template's chunks, else 256 × 256)
  is one task per block; the leading dimension is joined into one chunk again
  at the end, as suitmap's daily convention wants.  Peak memory per task is one
  source block plus one target chunk.  The weight matrix is computed once.
* **Unchanged grids.**  When :func:`grids_match`, the input is returned as it is
  (same object, no resampling, no new attributes).

Otherwise the result carries the template's ``x``/``y`` coordinates and CRS,
the input's name and attributes, and ``suitmap_regrid`` (e.g. ``"bilinear from
EPSG:4326 grid of 4×5 cells ..."``).
"""

from __future__ import annotations

import warnings

import numpy as np
import xarray as xr
from pyproj import CRS, Transformer
from scipy import sparse

from suitmap.errors import InputError, SuitmapWarning

__all__ = ["MIN_WEIGHT", "grid_description", "grids_match", "remove_duplicate_times", "snap_to_grid"]

#: A bilinear target cell needs valid source neighbours carrying at least this weight.
MIN_WEIGHT = 0.5
#: Spatial chunks of the output when the template is not dask-backed.
DEFAULT_CHUNKS = {"y": 256, "x": 256}
#: Source elements per block (leading steps × source cells) of a lazy regrid (~32 MB in float64).
BLOCK_ELEMENTS = 4 * 2**20
_EPS = 1e-9  # index tolerance (fraction of a cell)


# --------------------------------------------------------------------------- grids
def _crs(obj) -> CRS | None:
    crs = obj.rio.crs
    return None if crs is None else CRS.from_wkt(crs.to_wkt())


def _axes(obj) -> tuple[np.ndarray, np.ndarray]:
    for dim in ("x", "y"):
        if dim not in obj.dims:
            raise InputError(f"{getattr(obj, 'name', None) or 'field'} has no '{dim}' dimension; "
                             "give arrays with dims (..., y, x)")
    return obj["x"].values.astype("float64"), obj["y"].values.astype("float64")


def _step(v: np.ndarray) -> float:
    return float(v[1] - v[0]) if v.size > 1 else float("nan")


def _same_crs(a: CRS | None, b: CRS | None) -> bool:
    if a is None or b is None:
        return a is None and b is None
    return a.equals(b, ignore_axis_order=True)


def grids_match(a, b, tol: float = 1e-6) -> bool:
    """True when ``a`` and ``b`` (DataArrays or Datasets) share CRS and cell centres.

    Parameters
    ----------
    a, b : xarray.DataArray or xarray.Dataset
        Objects with ``x`` and ``y`` dimensions and (optionally) a rioxarray CRS.
    tol : float
        Cell centres must agree within ``tol`` times the cell size (per axis).

    Returns
    -------
    bool
        Shapes equal, CRSs equal (or both absent) and every centre within tolerance.
    """
    xa, ya = _axes(a)
    xb, yb = _axes(b)
    if xa.shape != xb.shape or ya.shape != yb.shape or not _same_crs(_crs(a), _crs(b)):
        return False
    for va, vb in ((xa, xb), (ya, yb)):
        cell = abs(_step(va)) if va.size > 1 else 1.0
        if not np.allclose(va, vb, rtol=0.0, atol=tol * cell):
            return False
    return True


def grid_description(obj) -> str:
    """One line describing a grid: CRS, size, cell size and centre ranges."""
    x, y = _axes(obj)
    crs = _crs(obj)
    if crs is None:
        name = "no-CRS"
    else:
        auth = crs.to_authority()
        name = f"{auth[0]}:{auth[1]}" if auth else crs.name
    return (f"{name} grid of {y.size}×{x.size} cells, cell size {abs(_step(x)):g}×{abs(_step(y)):g}, "
            f"centres x {x[0]:g}…{x[-1]:g}, y {y[0]:g}…{y[-1]:g}")


# --------------------------------------------------------------------------- positions and weights
def _positions(src, tgt_x: np.ndarray, tgt_y: np.ndarray, tgt_crs: CRS | None):
    """Fractional source indices (fy, fx) of target centres, and whether x is periodic."""
    sx, sy = _axes(src)
    scrs = _crs(src)
    if (scrs is None) != (tgt_crs is None):
        which = "source field" if scrs is None else "template"
        raise InputError(f"the {which} has no CRS while the other has one; "
                         "write a CRS on both (rioxarray .rio.write_crs) before regridding")
    xx, yy = np.meshgrid(tgt_x, tgt_y)
    if scrs is not None and not _same_crs(scrs, tgt_crs):
        tr = Transformer.from_crs(tgt_crs, scrs, always_xy=True)
        xx, yy = tr.transform(xx, yy)
        xx, yy = np.asarray(xx, dtype=float), np.asarray(yy, dtype=float)
        xx[~np.isfinite(xx) | ~np.isfinite(yy)] = np.nan
    dx, dy = _step(sx), _step(sy)
    periodic = False
    if scrs is not None and scrs.is_geographic and sx.size > 1:
        lo = min(sx[0], sx[-1]) - abs(dx) / 2
        xx = lo + np.mod(xx - lo, 360.0)
        periodic = _periodic(sx, scrs)
    fx = (xx - sx[0]) / dx if sx.size > 1 else np.where(np.abs(xx - sx[0]) <= 0.5, 0.0, np.nan)
    fy = (yy - sy[0]) / dy if sy.size > 1 else np.where(np.abs(yy - sy[0]) <= 0.5, 0.0, np.nan)
    return fy.ravel(), fx.ravel(), periodic


def _axis_linear(f: np.ndarray, n: int, periodic: bool):
    """Lower/upper neighbour, fraction towards the upper one, and inside-flag along one axis."""
    finite = np.isfinite(f)
    g = np.where(finite, f, 0.0)
    if periodic:
        g = np.mod(g, n)
        i0 = np.floor(g).astype(np.int64)
        t = g - i0
        i0 %= n
        return i0, (i0 + 1) % n, t, finite
    inside = finite & (g >= -0.5 - _EPS) & (g <= n - 0.5 + _EPS)
    if n == 1:
        z = np.zeros(g.shape, dtype=np.int64)
        return z, z, np.zeros(g.shape), inside
    gc = np.clip(g, 0.0, n - 1.0)
    i0 = np.clip(np.floor(gc), 0, n - 2).astype(np.int64)
    return i0, i0 + 1, gc - i0, inside


def _axis_nearest(f: np.ndarray, n: int, periodic: bool):
    finite = np.isfinite(f)
    g = np.where(finite, f, 0.0)
    if periodic:
        return np.mod(np.floor(g + 0.5), n).astype(np.int64), finite
    inside = finite & (g >= -0.5 - _EPS) & (g <= n - 0.5 + _EPS)
    return np.clip(np.floor(g + 0.5), 0, n - 1).astype(np.int64), inside


def _bilinear_matrix(src, tgt_x, tgt_y, tgt_crs) -> sparse.csr_matrix:
    """Sparse (target cells × source cells) bilinear weights; rows of outside cells are empty."""
    nys, nxs = src.sizes["y"], src.sizes["x"]
    fy, fx, periodic = _positions(src, tgt_x, tgt_y, tgt_crs)
    y0, y1, ty, iny = _axis_linear(fy, nys, False)
    x0, x1, tx, inx = _axis_linear(fx, nxs, periodic)
    ok = np.flatnonzero(iny & inx)
    rows = np.tile(ok, 4)
    cols = np.concatenate([y0[ok] * nxs + x0[ok], y0[ok] * nxs + x1[ok],
                           y1[ok] * nxs + x0[ok], y1[ok] * nxs + x1[ok]])
    w = np.concatenate([(1 - ty[ok]) * (1 - tx[ok]), (1 - ty[ok]) * tx[ok],
                        ty[ok] * (1 - tx[ok]), ty[ok] * tx[ok]])
    return sparse.csr_matrix((w, (rows, cols)), shape=(fy.size, nys * nxs))


def _nearest_index(src, tgt_x, tgt_y, tgt_crs) -> np.ndarray:
    """Flat index of the source cell containing each target centre (−1 outside)."""
    nys, nxs = src.sizes["y"], src.sizes["x"]
    fy, fx, periodic = _positions(src, tgt_x, tgt_y, tgt_crs)
    iy, iny = _axis_nearest(fy, nys, False)
    ix, inx = _axis_nearest(fx, nxs, periodic)
    return np.where(iny & inx, iy * nxs + ix, -1)


def _periodic(x: np.ndarray, crs: CRS | None) -> bool:
    """A geographic grid whose cells span 360° of longitude wraps around in x."""
    return bool(crs is not None and crs.is_geographic and x.size > 1
                and abs(x.size * abs(_step(x)) - 360.0) <= 1e-6 * abs(_step(x)))


def _source_in_target(src, tgt_x: np.ndarray, tgt_y: np.ndarray, tcrs: CRS | None) -> np.ndarray:
    """Flat index of the target cell containing each source centre (−1 outside)."""
    sx, sy = _axes(src)
    xx, yy = np.meshgrid(sx, sy)
    scrs = _crs(src)
    if scrs is not None and not _same_crs(scrs, tcrs):
        xx, yy = Transformer.from_crs(scrs, tcrs, always_xy=True).transform(xx, yy)
        xx, yy = np.asarray(xx, dtype=float), np.asarray(yy, dtype=float)
    periodic = _periodic(tgt_x, tcrs)
    if tcrs is not None and tcrs.is_geographic and tgt_x.size > 1:
        lo = min(tgt_x[0], tgt_x[-1]) - abs(_step(tgt_x)) / 2
        xx = lo + np.mod(xx - lo, 360.0)
    fx = ((xx - tgt_x[0]) / _step(tgt_x)).ravel() if tgt_x.size > 1 else np.zeros(xx.size)
    fy = ((yy - tgt_y[0]) / _step(tgt_y)).ravel() if tgt_y.size > 1 else np.zeros(yy.size)
    iy, iny = _axis_nearest(fy, tgt_y.size, False)
    ix, inx = _axis_nearest(fx, tgt_x.size, periodic)
    return np.where(iny & inx, iy * tgt_x.size + ix, -1)


# --------------------------------------------------------------------------- block kernels
def _linear_block(block: np.ndarray, W: sparse.csr_matrix, shape: tuple[int, int],
                  out_dtype) -> np.ndarray:
    """Bilinear regrid of a (..., ys, xs) block with renormalisation over valid cells."""
    lead = block.shape[:-2]
    v = block.reshape(-1, block.shape[-2] * block.shape[-1]).astype(np.float64)
    valid = np.isfinite(v)
    num = (W @ np.where(valid, v, 0.0).T).T
    if valid.all():
        den = np.broadcast_to(np.asarray(W.sum(axis=1)).ravel(), num.shape)
    else:
        den = (W @ valid.T.astype(np.float64)).T
    with np.errstate(invalid="ignore", divide="ignore"):
        out = np.where(den >= MIN_WEIGHT, num / den, np.nan)
    return out.reshape(lead + shape).astype(out_dtype)


def _class_block(block: np.ndarray, nearest: np.ndarray, votes: np.ndarray, n_target: int,
                 shape: tuple[int, int], missing) -> np.ndarray:
    lead = block.shape[:-2]
    v = block.reshape(-1, block.shape[-2] * block.shape[-1])
    out = np.full((v.shape[0], n_target), missing, dtype=block.dtype)
    hit = nearest >= 0
    out[:, hit] = v[:, nearest[hit]]
    voters = votes >= 0
    if voters.any():
        for k in range(v.shape[0]):
            codes = v[k]
            is_missing = np.isnan(codes) if np.issubdtype(codes.dtype, np.floating) else codes == missing
            sel = voters & ~is_missing
            if not sel.any():
                continue
            uniq, inv = np.unique(codes[sel], return_inverse=True)
            counts = np.zeros((n_target, uniq.size), dtype=np.int32)
            np.add.at(counts, (votes[sel], inv), 1)
            has = counts.sum(axis=1) > 0
            out[k, has] = uniq[np.argmax(counts[has], axis=1)]  # argmax: first = smallest code on ties
    return out.reshape(lead + shape)


# --------------------------------------------------------------------------- snap_to_grid
def _template_chunks(template, ny: int, nx: int) -> tuple[tuple[int, ...], tuple[int, ...]]:
    ref = template
    if isinstance(template, xr.Dataset):
        ref = next((v for v in template.data_vars.values() if {"y", "x"} <= set(v.dims)), None)
    if ref is not None and ref.chunks is not None:
        c = dict(zip(ref.dims, ref.chunks))
        return tuple(c["y"]), tuple(c["x"])

    def split(n, size):
        return tuple([size] * (n // size) + ([n % size] if n % size else []))
    return split(ny, DEFAULT_CHUNKS["y"]), split(nx, DEFAULT_CHUNKS["x"])


def snap_to_grid(da: xr.DataArray, template: xr.DataArray | xr.Dataset, *,
                 kind: str = "continuous") -> xr.DataArray:
    """Resample ``da`` (dims ``(..., y, x)``) onto the grid of ``template``.

    Parameters
    ----------
    da : xarray.DataArray
        Field with ``y``/``x`` as its last two dimensions and a rioxarray CRS
        (or no CRS on both sides); leading dimensions (``time``, ``month``, ...)
        are carried through.  Numpy or dask-backed.
    template : xarray.DataArray or xarray.Dataset
        Provides the target cell centres (``x``, ``y``) and CRS.
    kind : {"continuous", "class"}
        Bilinear interpolation, or mode / nearest neighbour for class codes
        (see the module docstring for the exact rules).

    Returns
    -------
    xarray.DataArray
        On the template's grid; ``da`` itself when :func:`grids_match`.  Float
        inputs keep their float dtype (computed in float64).

    Raises
    ------
    InputError
        Unknown ``kind``, missing ``x``/``y`` dimensions, or a CRS on only one side.

    References
    ----------
    Press, W.H., Teukolsky, S.A., Vetterling, W.T., Flannery, B.P. (2007)
    *Numerical Recipes*, 3rd ed., section 3.6 (bilinear interpolation on a grid).
    """
    if kind not in ("continuous", "class"):
        raise InputError(f"regrid kind must be 'continuous' or 'class', not {kind!r}")
    tgt_x, tgt_y = _axes(template)
    _axes(da)
    if grids_match(da, template):
        return da
    lead_dims = [d for d in da.dims if d not in ("y", "x")]
    da = da.transpose(*lead_dims, "y", "x")
    tcrs = _crs(template)
    nyt, nxt = tgt_y.size, tgt_x.size
    ns = da.sizes["y"] * da.sizes["x"]
    is_int = not np.issubdtype(da.dtype, np.floating)
    if kind == "continuous":
        if is_int:
            da = da.astype(np.float64)
        W = _bilinear_matrix(da, tgt_x, tgt_y, tcrs)
        out_dtype = da.dtype
        method = "bilinear"
    else:
        nearest = _nearest_index(da, tgt_x, tgt_y, tcrs)
        votes = _source_in_target(da, tgt_x, tgt_y, tcrs)
        missing = np.iinfo(da.dtype).max if is_int else np.nan  # 255 = MISSING_CLASS for uint8
        method = "mode (fine to coarse) / nearest (coarse to fine)"

    if kind == "continuous":
        def kernel(block, sub, shape):
            return _linear_block(block, sub, shape, out_dtype)
    else:
        def kernel(block):
            return _class_block(block, nearest, votes, nyt * nxt, (nyt, nxt), missing)

    if da.chunks is None:
        data = kernel(da.values, W, (nyt, nxt)) if kind == "continuous" else kernel(da.values)
    else:
        import dask.array as dsa

        src = da.data
        if lead_dims:
            step = max(1, min(da.shape[0], BLOCK_ELEMENTS // max(ns, 1)))
            src = src.rechunk((step,) + (-1,) * (src.ndim - 1))
        else:
            src = src.rechunk(-1)
        ych, xch = _template_chunks(template, nyt, nxt)
        lead_chunks = src.chunks[:-2]
        meta = np.array((), dtype=da.dtype)
        if kind == "class":
            data = src.map_blocks(kernel, chunks=lead_chunks + ((nyt,), (nxt,)), dtype=da.dtype, meta=meta)
        else:
            y_edges, x_edges = np.cumsum((0,) + ych), np.cumsum((0,) + xch)
            cell = np.arange(nyt * nxt).reshape(nyt, nxt)
            grid = []
            for j in range(len(ych)):
                row = []
                for i in range(len(xch)):
                    idx = cell[y_edges[j]:y_edges[j + 1], x_edges[i]:x_edges[i + 1]].ravel()
                    row.append(src.map_blocks(kernel, sub=W[idx], shape=(ych[j], xch[i]),
                                              chunks=lead_chunks + ((ych[j],), (xch[i],)),
                                              dtype=da.dtype, meta=meta))
                grid.append(row)
            data = grid[0][0] if len(grid) == len(grid[0]) == 1 else dsa.block(grid)
        data = data.rechunk((-1,) * len(lead_dims) + (ych, xch))
    coords = {d: da[d] for d in lead_dims if d in da.coords}
    coords.update(y=("y", tgt_y, dict(template["y"].attrs)), x=("x", tgt_x, dict(template["x"].attrs)))
    out = xr.DataArray(data, dims=tuple(lead_dims) + ("y", "x"), coords=coords, name=da.name,
                       attrs=dict(da.attrs))
    out.attrs["suitmap_regrid"] = f"{method} from {grid_description(da)}"
    out.encoding = {k: v for k, v in da.encoding.items() if k in ("_FillValue", "dtype")}
    if tcrs is not None:
        out = out.rio.write_crs(tcrs).rio.set_spatial_dims(x_dim="x", y_dim="y")
        if nyt > 1 and nxt > 1:
            out = out.rio.write_transform(out.rio.transform(recalc=True))
    return out


# --------------------------------------------------------------------------- duplicate times
def _iso(t) -> str:
    return str(np.datetime64(t, "D")) if isinstance(t, np.datetime64) else t.strftime("%Y-%m-%d")


def _date_ranges(times: np.ndarray, limit: int = 4) -> str:
    """'2015-01-01 to 2015-12-31, 2016-03-01' — runs of consecutive days joined."""
    if times.size == 0:
        return ""
    if np.issubdtype(times.dtype, np.datetime64):
        day = (times.astype("datetime64[D]") - times[0].astype("datetime64[D]")).astype(np.int64)
    else:
        day = np.array([(t - times[0]).days for t in times], dtype=np.int64)
    breaks = np.flatnonzero(np.diff(day) != 1) + 1
    starts = np.concatenate([[0], breaks])
    ends = np.concatenate([breaks - 1, [times.size - 1]])
    parts = [_iso(times[s]) if s == e else f"{_iso(times[s])} to {_iso(times[e])}"
             for s, e in zip(starts, ends)]
    if len(parts) > limit:
        parts = parts[:limit] + [f"… ({len(parts) - limit} more runs)"]
    return ", ".join(parts)


def remove_duplicate_times(da: xr.DataArray, *, label: str) -> tuple[xr.DataArray, int]:
    """Drop repeated time steps (keeping the first occurrence) and sort by time.

    Files that overlap in time (a historical run to 2015 and a scenario from
    2015, say) give the same day twice once joined along ``time``.  The first
    occurrence in the order given is kept, later ones are dropped, and the
    result is returned in time order.  When anything is dropped a
    :class:`~suitmap.errors.SuitmapWarning` names ``label``, the count and the
    dropped dates.

    Parameters
    ----------
    da : xarray.DataArray
        Array with a ``time`` dimension (datetime64 or cftime), lazy or not.
    label : str
        Name of the input for the warning (e.g. ``"model-A tmin"``).

    Returns
    -------
    (xarray.DataArray, int)
        The cleaned array and the number of time steps removed.
    """
    if "time" not in da.dims:
        raise InputError(f"{label}: no 'time' dimension; give a daily array with dims (time, y, x)")
    index = da.indexes["time"]
    dup = np.asarray(index.duplicated(keep="first"))
    n = int(dup.sum())
    if n:
        dropped = np.sort(np.asarray(da["time"].values[dup]))
        warnings.warn(f"{label}: {n} duplicated time step(s) removed, first occurrence kept "
                      f"(overlapping files?): {_date_ranges(dropped)}", SuitmapWarning, stacklevel=2)
        da = da.isel(time=np.flatnonzero(~dup))
    if not da.indexes["time"].is_monotonic_increasing:
        da = da.isel(time=np.argsort(np.asarray(da["time"].values), kind="stable"))
    return da, n

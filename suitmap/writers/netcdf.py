"""CF-1.11 NetCDF4 writer of a dataset of layers.

Each layer keeps its CF attributes (``units``, ``long_name``,
``standard_name``, ``cell_methods``, ``description``) and points with
``grid_mapping`` at the ``spatial_ref`` variable that rioxarray writes (with
``crs_wkt`` and the CF grid-mapping parameters).  Continuous layers keep
their float dtype (float32 round-trips exactly) with NaN as ``_FillValue``;
class layers are uint8 with ``flag_values``/``flag_meanings`` and
``_FillValue`` 255.  Everything is zlib-compressed with the shuffle filter.  Given the period's
years, the layers get a climatological ``time`` coordinate with bounds
(:mod:`suitmap.writers.cf_time`).  ``Conventions`` is CF-1.11: unsigned
bytes need CF-1.9 and ``units_metadata`` of degree-days CF-1.11.
Dask-backed layers are computed chunk by chunk while xarray writes them.

References
----------
Eaton, B. et al. (2023) NetCDF Climate and Forecast (CF) Metadata
Conventions, version 1.11 — sections 2.2 (data types), 2.6 (attributes),
3.1.2 (temperature units_metadata), 3.5 (flags), 4.1–4.2 (coordinates),
5.6 (grid mappings), 7.3–7.4 (cell methods, climatological statistics).
"""

from __future__ import annotations

import contextlib
import datetime as _dt
import json
import math
import os
from collections.abc import Iterator, Mapping
from concurrent.futures import ThreadPoolExecutor
from pathlib import Path

import numpy as np
import pyproj
import xarray as xr

from suitmap.errors import OutputError
from suitmap.writers import styles
from suitmap.writers.atomic import atomic_path
from suitmap.writers.cf_time import BOUNDS_NAME, climatology_variables
from suitmap.writers.cog import class_codes

__all__ = ["write_netcdf", "CONVENTIONS"]

CONVENTIONS = "CF-1.11"
GRID_MAPPING = "spatial_ref"
_COMPLEVEL = 4
_CHUNK = 512
_DROP_ATTRS = ("grid_mapping", "_FillValue", "missing_value", "coordinates",
               "scale_factor", "add_offset", "dtype")
_UNIT_NAMES = {"metre": "m", "meter": "m", "kilometre": "km", "foot": "ft",
               "US survey foot": "US_survey_foot"}


def _attr_value(value):
    """An attribute value netCDF4 can store, or None to drop it."""
    if value is None:
        return None
    if isinstance(value, (bool, np.bool_)):
        return "true" if value else "false"
    if isinstance(value, (str, int, float, np.integer, np.floating)):
        return value
    if isinstance(value, os.PathLike):
        return os.fspath(value)
    if isinstance(value, (_dt.date, _dt.datetime)):
        return value.isoformat()
    if isinstance(value, np.ndarray) and value.dtype.kind in "iuf":
        return value
    if isinstance(value, (list, tuple)) and value and all(
            isinstance(v, (int, float, np.integer, np.floating))
            and not isinstance(v, (bool, np.bool_)) for v in value):
        return np.asarray(value)
    return json.dumps(value, sort_keys=True, default=str, ensure_ascii=False)


def _clean_attrs(attrs: Mapping) -> dict:
    out = {}
    for key, value in attrs.items():
        if key in _DROP_ATTRS:
            continue
        converted = _attr_value(value)
        if converted is not None:
            out[str(key)] = converted
    return out


def _axis_unit(crs: pyproj.CRS, directions: tuple[str, ...]) -> str:
    for axis in crs.axis_info:
        if axis.direction.lower() in directions:
            return _UNIT_NAMES.get(axis.unit_name, axis.unit_name)
    return _UNIT_NAMES.get(crs.axis_info[0].unit_name, crs.axis_info[0].unit_name)


def coordinate_attrs(crs) -> tuple[dict, dict]:
    """CF attributes of the x and y coordinates of a grid in *crs*."""
    crs = pyproj.CRS.from_user_input(crs.to_wkt() if hasattr(crs, "to_wkt") else crs)
    if crs.is_geographic:
        return ({"standard_name": "longitude", "long_name": "longitude",
                 "units": "degrees_east", "axis": "X"},
                {"standard_name": "latitude", "long_name": "latitude",
                 "units": "degrees_north", "axis": "Y"})
    return ({"standard_name": "projection_x_coordinate",
             "long_name": "x coordinate of projection",
             "units": _axis_unit(crs, ("east", "west")), "axis": "X"},
            {"standard_name": "projection_y_coordinate",
             "long_name": "y coordinate of projection",
             "units": _axis_unit(crs, ("north", "south")), "axis": "Y"})


def _fill_of(var: xr.DataArray):
    for source in (var.encoding, var.attrs):
        for key in ("_FillValue", "missing_value"):
            if source.get(key) is not None:
                return np.asarray(source[key]).ravel()[0].item()
    return None


def _class_variable(name: str, var: xr.DataArray, dims: tuple, chunks: tuple):
    try:
        flag_values, meanings = styles.parse_flags(var.attrs)
    except ValueError as exc:
        raise OutputError(f"class layer {name!r}: {exc}; set CF flag_values and "
                          "flag_meanings") from exc
    if any(not 0 <= v < styles.CLASS_NODATA for v in flag_values):
        raise OutputError(f"class layer {name!r}: flag_values {flag_values} must lie in "
                          f"0..{styles.CLASS_NODATA - 1} (255 marks missing cells)")
    fill = _fill_of(var)
    data = var.data
    if hasattr(data, "map_blocks") and not isinstance(data, np.ndarray):  # dask
        codes = data.map_blocks(class_codes, flag_values, layer=name, fill_value=fill,
                                dtype=np.uint8)
    else:
        codes = class_codes(np.asarray(data), flag_values, layer=name, fill_value=fill)
    attrs = _clean_attrs(var.attrs)
    attrs["flag_values"] = np.asarray(flag_values, dtype=np.uint8)
    attrs["flag_meanings"] = " ".join(meanings)
    attrs["grid_mapping"] = GRID_MAPPING
    encoding = {"dtype": "uint8", "_FillValue": np.uint8(styles.CLASS_NODATA),
                "zlib": True, "complevel": _COMPLEVEL, "shuffle": True, "chunksizes": chunks}
    return xr.Variable(dims, codes, attrs), encoding


def _continuous_variable(name: str, var: xr.DataArray, dims: tuple, chunks: tuple):
    if var.dtype.kind not in "fiu":
        raise OutputError(f"layer {name!r} has non-numeric data ({var.dtype}); "
                          "cannot write it to NetCDF")
    fill = _fill_of(var)
    if var.dtype.kind != "f":
        var = var.astype(np.float32)
    if fill is not None and not (isinstance(fill, float) and math.isnan(fill)):
        var = var.where(var != fill)
    attrs = _clean_attrs(var.attrs)
    attrs["grid_mapping"] = GRID_MAPPING
    encoding = {"_FillValue": var.dtype.type(np.nan), "zlib": True,
                "complevel": _COMPLEVEL, "shuffle": True, "chunksizes": chunks}
    return xr.Variable(dims, var.data, attrs), encoding


@contextlib.contextmanager
def _joined_dask_threads() -> Iterator[None]:
    """Run dask's default threaded scheduler on a private pool, joined on exit.

    When one chunk fails, dask raises at once while other chunk tasks may still
    be running; such a straggler would reopen the temporary file (xarray
    reopens in append mode, which recreates a deleted file).  Waiting for the
    pool before the atomic clean-up removes the temporary file prevents that.
    Other schedulers (synchronous, distributed) are left as configured.
    """
    try:
        import dask
        import dask.base
        import dask.threaded
    except ImportError:  # pragma: no cover - dask is a dependency
        yield
        return
    if dask.base.get_scheduler() not in (None, dask.threaded.get):
        yield
        return
    workers = dask.config.get("num_workers", None) or os.cpu_count() or 1
    pool = ThreadPoolExecutor(max_workers=workers)
    try:
        with dask.config.set(scheduler="threads", pool=pool):
            yield
    finally:
        pool.shutdown(wait=True, cancel_futures=True)


def _merge_history(new: str, old) -> str:
    if not old:
        return new
    old = str(old)
    return new if old in new else f"{new}\n{old}"


def write_netcdf(ds: xr.Dataset, path: str | os.PathLike, *, title: str, history: str,
                 source: str, extra_attrs: dict | None = None,
                 climatology: tuple[int, int] | None = None,
                 calendar: str = "standard") -> Path:
    """Write a dataset of layers as one CF-1.11 NetCDF4 file.

    Parameters
    ----------
    ds
        Layers on one (y, x) grid with a CRS (rioxarray).  Class layers are
        recognised by name or by CF ``flag_values``/``flag_meanings``.
    path
        Final file name; written atomically.
    title, history, source
        Global CF attributes.  An earlier ``history`` of *ds* is kept after
        the new one (newest first).
    extra_attrs
        More global attributes (provenance); dicts and lists are stored as
        JSON text.  They override *ds*'s attributes; ``Conventions``, *title*,
        *history* and *source* override them.
    climatology, calendar
        First and last year of the period the layers summarise, and its
        calendar: adds a climatological ``time`` coordinate with bounds.

    Returns
    -------
    Path
        *path*.

    Raises
    ------
    OutputError
        If *ds* has no CRS or no (y, x) grid, a class layer holds unknown
        codes, or the file cannot be written.
    """
    final = Path(path)
    crs = ds.rio.crs
    if crs is None:
        raise OutputError(f"dataset for {final.name} has no CRS; attach one with "
                          "ds.rio.write_crs(...) before writing")
    try:
        ydim, xdim = ds.rio.y_dim, ds.rio.x_dim
    except Exception as exc:
        raise OutputError(f"dataset for {final.name} has no (y, x) grid: {exc}") from exc
    if not ds.data_vars:
        raise OutputError(f"dataset for {final.name} has no layers to write")

    base = ds.drop_vars([GRID_MAPPING], errors="ignore")
    variables, encoding = {}, {}
    for name, var in base.data_vars.items():
        if ydim not in var.dims or xdim not in var.dims:
            raise OutputError(f"layer {name!r} for {final.name} is not on the ({ydim}, {xdim}) "
                              "grid; write it elsewhere")
        chunks = tuple(min(var.sizes[d], _CHUNK) if d in (ydim, xdim) else 1 for d in var.dims)
        build = (_class_variable if styles.is_class_layer(str(name), var.attrs)
                 else _continuous_variable)
        variables[name], encoding[name] = build(str(name), var, var.dims, chunks)

    coords = {}
    for name, coord in base.coords.items():
        coords[name] = xr.Variable(coord.dims, coord.data, _clean_attrs(coord.attrs))
        encoding[name] = {"_FillValue": None}
    x_attrs, y_attrs = coordinate_attrs(crs)
    coords[xdim].attrs.update(x_attrs)
    coords[ydim].attrs.update(y_attrs)

    attrs = _clean_attrs(ds.attrs)
    attrs.update(_clean_attrs(extra_attrs or {}))
    attrs.update(title=str(title), source=str(source),
                 history=_merge_history(str(history), ds.attrs.get("history")))
    attrs.pop("Conventions", None)
    attrs = {"Conventions": CONVENTIONS, **attrs}

    if climatology is not None:
        coords["time"], variables[BOUNDS_NAME] = climatology_variables(climatology, calendar)
        encoding["time"] = {"_FillValue": None}
        encoding[BOUNDS_NAME] = {"_FillValue": None}
    out = xr.Dataset(variables, coords=coords, attrs=attrs)
    out = out.rio.write_crs(crs, grid_mapping_name=GRID_MAPPING, inplace=False)
    out = out.rio.write_transform(base.rio.transform(recalc=True),
                                  grid_mapping_name=GRID_MAPPING, inplace=False)
    for name in variables:  # grid_mapping lives in attrs; keep encoding free of it
        if name == BOUNDS_NAME:
            continue
        out[name].encoding.pop("grid_mapping", None)
        out[name].attrs["grid_mapping"] = GRID_MAPPING
        if climatology is not None:
            out[name].encoding["coordinates"] = "time"
    # A grid-mapping variable is not an auxiliary coordinate (CF 5.6): store it as a
    # plain variable so xarray does not list it in each layer's ``coordinates``.
    out = out.reset_coords(GRID_MAPPING)
    encoding[GRID_MAPPING] = {}

    with atomic_path(final) as tmp, _joined_dask_threads():
        out.to_netcdf(tmp, mode="w", format="NETCDF4", engine="netcdf4", encoding=encoding)
    return final

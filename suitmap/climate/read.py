"""Open daily Tmin/Tmax grids (NetCDF, GeoTIFF) lazily and normalise them.

Every array :func:`open_climate` returns follows one convention:

* dims ``("time", "y", "x")``, ``y`` descending (north-up), ``x`` ascending,
  cell-centre coordinates on a regular grid; geographic longitudes in −180…180
  (0…360 kept, with a warning, only for grids that cross the antimeridian);
* float32 °C (``units = "degC"``), dask-backed, time in one chunk, spatial
  chunks of 256 (see ``chunks``); CRS, spatial dims and transform set with rioxarray;
* attrs ``suitmap_role``, ``source_files`` ('; '-joined names), ``source_variable``,
  ``original_units`` and ``calendar`` (CF name; ``gregorian`` → ``standard``,
  ``365_day`` → ``noleap``, ``366_day`` → ``all_leap``);
* time: ``standard`` and ``proleptic_gregorian`` give ``datetime64[ns]`` (xarray's
  default decoding), all other calendars cftime objects; both have ``.dt.year``,
  ``.dt.dayofyear``, ``.dt.month``, ``.dt.day``.  Only daily data without gaps.

NetCDF: the variable is ``variable`` if given, else the one with
``standard_name = air_temperature`` and ``cell_methods`` ``time: minimum`` (or
``maximum``), else a common name (``COMMON_NAMES``).  ``units`` must be a kelvin,
°C or °F spelling; anything else is an error, never a guess.  Packing and
``_FillValue`` are decoded; a CF grid mapping is read with rioxarray; a
latitude/longitude grid without one is taken as EPSG:4326 with a SuitmapWarning.

GeoTIFF (``.tif``/``.tiff``): one band per day.  Band dates come from, in order:
the band descriptions (ISO ``YYYY-MM-DD``), a band tag ``DATE=YYYY-MM-DD``, or a
sidecar ``<stem>.dates.txt`` (or ``<name>.tif.dates.txt``) beside the raster with
one ISO date per line in band order (blank and ``#`` lines skipped).  Units come
from the dataset tag ``units`` (else a ``units`` band tag or GDAL band unit
shared by all bands).  The calendar is ``standard`` unless a dataset tag
``calendar`` names another CF calendar.  nodata becomes NaN; scales/offsets apply.

Several files (of either kind) are sorted by their first day and joined on time.
"""

from __future__ import annotations

import glob
import os
import re
import warnings
from pathlib import Path

import cftime
import numpy as np
import rioxarray  # noqa: F401  (registers the .rio accessor)
import xarray as xr
from pyproj import CRS

from suitmap.climate.time_axis import _as_dates, _days, _iso, _ymd, select_years  # noqa: F401 (re-exported)
from suitmap.climate.time_axis import _check_daily, _check_monthly, _drop_overlap, _is_monthly, check_order
from suitmap.climate.conventions import (_CALENDARS, _CFTIME_TYPES, _ISO_DATE, ROLES,  # noqa: F401
                                         _canonical_calendar, _canonical_units, _to_celsius)
from suitmap.climate import plausibility
from suitmap.climate.geotiff import _open_geotiff
from suitmap.climate.grid import _TOL, _crs_text, _grid, check_same_grid  # noqa: F401
from suitmap.errors import InputError, SuitmapWarning

__all__ = ["COMMON_NAMES", "DEFAULT_CHUNKS", "open_climate", "resolve_paths"]

DEFAULT_CHUNKS = {"y": 256, "x": 256}
NETCDF_SUFFIXES = (".nc", ".nc4", ".netcdf", ".cdf")
GEOTIFF_SUFFIXES = (".tif", ".tiff")
ZARR_SUFFIXES = (".zarr",)   # a Zarr store: a folder, read with xarray's zarr engine
COMMON_NAMES = {
    "tmin": ("tasmin", "tmin", "tn", "mn2t", "mn2t24", "t2m_min", "t2min", "tmn",
             "minimum_temperature", "min_temperature", "temperature_min", "air_temperature_min"),
    "tmax": ("tasmax", "tmax", "tx", "mx2t", "mx2t24", "t2m_max", "t2max", "tmx",
             "maximum_temperature", "max_temperature", "temperature_max", "air_temperature_max"),
}
_CELL_METHOD = {"tmin": re.compile(r"time\s*:\s*min(imum)?\b"), "tmax": re.compile(r"time\s*:\s*max(imum)?\b")}
_X_NAMES = ("x", "lon", "longitude", "long")
_Y_NAMES = ("y", "lat", "latitude")
_GEO_NAMES = ("lon", "longitude", "long", "lat", "latitude")
_GEO_UNITS = re.compile(r"^degrees?_?(east|north|e|n)?$")


# --------------------------------------------------------------------------- paths
def resolve_paths(pattern, base_dir=None, *, what: str = "input") -> list[Path]:
    """Expand a path, a glob pattern or a list of them into sorted existing files.

    Relative patterns are taken relative to ``base_dir`` (default: the working
    directory); ``~`` is expanded and ``**`` matches folders recursively.
    Raises :class:`InputError` when a pattern matches no file.
    """
    base = Path(base_dir).expanduser() if base_dir is not None else Path.cwd()
    patterns = list(pattern) if isinstance(pattern, (list, tuple)) else [pattern]
    if not patterns:
        raise InputError(f"no {what} file given; name at least one file or glob pattern")
    found: set[Path] = set()
    for pat in patterns:
        p = Path(os.fspath(pat)).expanduser()
        full = p if p.is_absolute() else base / p
        hits = [Path(h) for h in glob.glob(str(full), recursive=True)
                if Path(h).is_file() or _is_zarr(Path(h))]
        if not hits:
            where = "" if p.is_absolute() else f" (looked in {base})"
            raise InputError(f"no {what} file matches '{os.fspath(pat)}'{where}; "
                             "check the path or glob pattern in the run file")
        found.update(hits)
    return sorted(found)


# --------------------------------------------------------------------------- NetCDF
def _pick_variable(ds: xr.Dataset, role: str, variable, path: Path) -> str:
    present = [str(v) for v in ds.data_vars]
    listing = ", ".join(present) or "none"
    if variable is not None:
        if variable not in ds.data_vars:
            raise InputError(f"{path.name} has no variable '{variable}' (data variables: {listing}); "
                             "set variable = ... in the run file to one of these")
        return variable
    cf = [v for v in present if ds[v].attrs.get("standard_name") == "air_temperature"
          and _CELL_METHOD[role].search(str(ds[v].attrs.get("cell_methods", "")))]
    if len(cf) == 1:
        return cf[0]
    by_name = {v.lower(): v for v in (cf or present)}
    for name in COMMON_NAMES[role]:
        if name in by_name:
            return by_name[name]
    if len(cf) > 1:
        raise InputError(f"{path.name}: several variables could be {role} ({', '.join(cf)}); "
                         "set variable = ... in the run file")
    raise InputError(f"{path.name}: no {role} variable found (data variables: {listing}); "
                     "set variable = ... in the run file")


def _spatial_dim(da: xr.DataArray, names, std_names, axis: str, where: str) -> str:
    for d in da.dims:
        if str(d).lower() in names:
            return str(d)
    for d in da.dims:
        attrs = da[d].attrs if d in da.coords else {}
        if attrs.get("standard_name") in std_names or str(attrs.get("axis", "")).upper() == axis:
            return str(d)
    raise InputError(f"{where}: cannot tell which dimension is {axis} among {tuple(map(str, da.dims))}; "
                     f"name it {' or '.join(names[:3])}")


def _aligned(file_chunk, target: int, size: int) -> int:
    """A dask chunk size: the multiple of the file's chunk nearest ``target`` (or ``target``)."""
    if not file_chunk or file_chunk >= size:
        return min(target, size)
    if file_chunk > target:  # an even part of the file's chunk (the HDF5 chunk cache serves the rest)
        return int(-(-file_chunk // -(-file_chunk // target)))
    return int(min(size, file_chunk * max(1, target // file_chunk)))


def _is_zarr(path: Path) -> bool:
    return path.suffix.lower() in ZARR_SUFFIXES and path.is_dir()


def _open_netcdf(path: Path, role: str, variable, cy, cx, file_chunks: bool = False) -> dict:
    """A NetCDF file or a Zarr store (the same CF conventions, another container)."""
    zarr = _is_zarr(path)
    try:
        if zarr:
            ds = xr.open_dataset(path, engine="zarr", decode_coords="all", mask_and_scale=True,
                                 chunks=None, consolidated=(path / ".zmetadata").is_file())
        else:
            ds = xr.open_dataset(path, engine="netcdf4", decode_coords="all", mask_and_scale=True,
                                 cache=False)
    except Exception as exc:  # netCDF4/zarr/xarray raise many kinds
        kind = "a Zarr store" if zarr else "NetCDF"
        raise InputError(f"cannot read {path} as {kind} ({exc}); check the file") from exc
    name = _pick_variable(ds, role, variable, path)
    da = ds[name]
    where = f"{path.name}, variable '{name}'"
    tdims = [d for d in da.dims if d in da.coords and da[d].size and (
        np.issubdtype(da[d].dtype, np.datetime64) or isinstance(da[d].values.flat[0], cftime.datetime))]
    if not tdims:
        raise InputError(f"{where} has no decodable time dimension; daily data with a CF time axis is needed")
    tdim = str(tdims[0])
    xdim = _spatial_dim(da, _X_NAMES, ("longitude", "projection_x_coordinate", "grid_longitude"), "X", where)
    ydim = _spatial_dim(da, _Y_NAMES, ("latitude", "projection_y_coordinate", "grid_latitude"), "Y", where)
    geo_names = any(
        str(d).lower() in _GEO_NAMES or da[d].attrs.get("standard_name") in ("longitude", "latitude")
        or _GEO_UNITS.match(str(da[d].attrs.get("units", "")).lower()) is not None
        for d in (xdim, ydim))
    try:
        crs = da.rio.crs
    except Exception as exc:
        raise InputError(f"{where}: its grid mapping cannot be read ({exc}); fix the CF grid_mapping") from exc
    tcoord = da[tdim]
    cal = tcoord.encoding.get("calendar") or (
        tcoord.values.flat[0].calendar if tcoord.dtype == object else "standard")
    if file_chunks:  # follow the file's own chunks: no read touches a file chunk twice
        sizes = da.encoding.get("chunksizes") or da.encoding.get("chunks")   # NetCDF or Zarr
        fc = dict(zip(da.dims, sizes or (None,) * da.ndim))
        da = da.chunk({tdim: _aligned(fc.get(tdim), 366, da.sizes[tdim]),
                       ydim: _aligned(fc.get(ydim), cy, da.sizes[ydim]),
                       xdim: _aligned(fc.get(xdim), cx, da.sizes[xdim])})
    else:
        da = da.chunk({tdim: -1, ydim: cy, xdim: cx})
    return dict(da=da, dims=(tdim, ydim, xdim), crs=crs, geo_names=geo_names, path=path,
                variable=name, units=da.attrs.get("units"), where=where,
                calendar=_canonical_calendar(cal, where))


# --------------------------------------------------------------------------- normalise
def _regular(values: np.ndarray) -> bool:
    steps = np.diff(values)
    return steps.size == 0 or bool(np.allclose(steps, steps[0], rtol=_TOL, atol=0))


def _normalise(p: dict, convert=None) -> tuple[xr.DataArray, CRS]:
    """``convert(da, p)``: the units conversion (default: temperature to °C)."""
    da, where = p["da"], p["where"]
    tdim, ydim, xdim = p["dims"]
    da = da.reset_coords(drop=True)
    da = da.rename({k: v for k, v in zip((tdim, ydim, xdim), ("time", "y", "x")) if k != v})
    extra = [d for d in da.dims if d not in ("time", "y", "x")]
    if any(da.sizes[d] != 1 for d in extra):
        raise InputError(f"{where} has extra dimensions {extra}; keep only time, y and x (one level)")
    da = da.squeeze(extra, drop=True).transpose("time", "y", "x")
    if da.sizes["y"] < 2 or da.sizes["x"] < 2:
        raise InputError(f"{where}: the grid needs at least 2 cells along x and along y")
    da = (convert(da, p) if convert is not None
          else _to_celsius(da, _canonical_units(p["units"], where)))
    if p["crs"] is None:
        if not p["geo_names"]:
            raise InputError(f"{where} has no CRS and no latitude/longitude coordinates; "
                             "add a CF grid_mapping (NetCDF) or a CRS (GeoTIFF)")
        warnings.warn(f"{where}: no grid mapping, latitude/longitude taken as EPSG:4326 (WGS 84)",
                      SuitmapWarning, stacklevel=3)
        crs = CRS.from_epsg(4326)
    else:
        crs = CRS.from_wkt(p["crs"].to_wkt())
    da = da.assign_coords(x=da["x"].values.astype("float64"), y=da["y"].values.astype("float64"))
    x = da["x"].values
    if crs.is_geographic and x.max() > 180.0:
        wrapped = (x + 180.0) % 360.0 - 180.0
        order = np.argsort(wrapped, kind="stable")
        if _regular(wrapped[order]):
            da = da.isel(x=order).assign_coords(x=wrapped[order])
        elif _regular(np.sort(x)):
            warnings.warn(f"{where}: the grid crosses the antimeridian, longitudes kept in 0–360",
                          SuitmapWarning, stacklevel=3)
    for dim, ascending in (("y", False), ("x", True)):
        vals = da[dim].values
        if not _regular(vals) or np.any(np.diff(vals) == 0):
            raise InputError(f"{where}: {dim} coordinates are not evenly spaced; regrid to a regular grid")
        if (vals[-1] > vals[0]) != ascending:
            da = da.isel({dim: slice(None, None, -1)})
    return da, crs


def _axis_attrs(crs: CRS) -> dict:
    if crs.is_geographic:
        return {"x": dict(standard_name="longitude", long_name="longitude", units="degrees_east", axis="X"),
                "y": dict(standard_name="latitude", long_name="latitude", units="degrees_north", axis="Y")}
    unit = str(crs.axis_info[0].unit_name if crs.axis_info else "metre")
    unit = {"metre": "m", "meter": "m", "kilometre": "km", "foot": "ft",
            "us survey foot": "US_survey_foot"}.get(unit.lower(), unit)
    return {d: dict(standard_name=f"projection_{d}_coordinate", long_name=f"{d} coordinate of projection",
                    units=unit, axis=d.upper()) for d in "xy"}


def open_climate(paths, role: str, *, variable: str | None = None, chunks: dict | None = None,
                 label: str = "", allow_monthly: bool = False,
                 file_chunks: bool = False, check_values: bool = False,
                 accept_implausible: bool = False) -> xr.DataArray:
    """Open daily ``tmin`` or ``tmax`` from NetCDF/GeoTIFF files as one lazy °C array.

    Parameters
    ----------
    paths : list of path-like, path-like or str
        Files, or a glob pattern (resolved with :func:`resolve_paths`).
    role : {"tmin", "tmax"}
        Which daily temperature the files hold.
    variable : str, optional
        NetCDF variable name; by default found from CF metadata or common names.
    chunks : dict, optional
        Spatial chunk sizes ``{"y": ..., "x": ...}`` (default 256 each).  Time is
        always one chunk; a ``time`` key other than ``-1`` is refused.
    label : str
        Name of the input (e.g. ``"baseline tmin"``) used in messages.
    allow_monthly : bool
        Accept monthly means too (one value per calendar month, consecutive
        months, or 12 months of a climatology); such arrays get
        ``attrs["frequency"] = "monthly"``.  Daily arrays get ``"daily"``.
    file_chunks : bool
        Chunk along time too, following the NetCDF files' own chunks (about a
        year per chunk, spatial chunks a multiple of the file's near ``chunks``)
        instead of one chunk for the whole time axis; for streaming pipelines.
    check_values : bool
        Read every file once to refuse impossible or suspicious temperatures
        (:mod:`suitmap.climate.plausibility`; one streamed pass per file).
        Off by default (the result stays fully lazy); ``check`` and ``run`` turn it on.
    accept_implausible : bool
        Let the *suspicious* values of that check pass (never the impossible ones).

    Returns
    -------
    xarray.DataArray
        Named ``role``, following the convention in the module docstring.
    """
    if role not in ROLES:
        raise ValueError(f"role must be one of {ROLES}, not {role!r}")
    chunks = dict(DEFAULT_CHUNKS, **(chunks or {}))
    if chunks.pop("time", -1) not in (-1, None):
        raise ValueError("time is always one chunk; leave 'time' out of chunks")
    cy, cx = chunks.pop("y"), chunks.pop("x")
    if chunks:
        raise ValueError(f"unknown chunk keys {sorted(chunks)}; use 'y' and 'x'")
    files = [Path(p) for p in (resolve_paths(paths, what=label or role)
                               if isinstance(paths, (str, os.PathLike)) else paths)]
    if not files:
        raise InputError(f"no {label or role} files given; name at least one file")
    pieces = []
    for path in files:
        suffix = path.suffix.lower()
        if not (path.is_file() or _is_zarr(path)):
            raise InputError(f"{label or role} file {path} does not exist; check the path")
        if suffix not in NETCDF_SUFFIXES + GEOTIFF_SUFFIXES + ZARR_SUFFIXES:
            raise InputError(f"{path.name}: unknown file type '{suffix}'; use NetCDF (.nc), "
                             "GeoTIFF (.tif) or a Zarr store (.zarr)")
        p = (_open_netcdf(path, role, variable, cy, cx, file_chunks)
             if suffix in NETCDF_SUFFIXES + ZARR_SUFFIXES else _open_geotiff(path, cy, cx))
        raw = p["da"]
        check_order(raw[p["dims"][0]].values, p["where"])
        p["da"], p["crs"] = _normalise(p)
        plausibility.check_coordinates(raw[p["dims"][2]].values, raw[p["dims"][1]].values,
                                       p["crs"].is_geographic, p["where"])
        if check_values:
            enc = raw.encoding
            integer = np.issubdtype(np.dtype(enc.get("dtype", raw.dtype)), np.integer) and \
                "scale_factor" not in enc
            plausibility.check_values(raw, _canonical_units(p["units"], p["where"]), p["where"],
                                      stored_integer=integer, accept_suspicious=accept_implausible)
        pieces.append(p)
    p0, crs = pieces[0], pieces[0]["crs"]
    for p in pieces[1:]:
        check_same_grid(p0["da"].rio.write_crs(crs), p["da"].rio.write_crs(p["crs"]), p0["path"].name, p["path"].name)
        if p["calendar"] != p0["calendar"]:
            raise InputError(f"{p['path'].name} uses the {p['calendar']} calendar but {p0['path'].name} "
                             f"the {p0['calendar']} calendar; use one calendar for all files")
    pieces.sort(key=lambda q: q["da"]["time"].values[0])
    da = pieces[0]["da"] if len(pieces) == 1 else xr.concat(
        [q["da"].assign_coords(x=p0["da"].x, y=p0["da"].y) for q in pieces], dim="time", coords="minimal",
        compat="override", join="override", combine_attrs="drop")
    names = "; ".join(q["path"].name for q in pieces)
    if len(pieces) > 1:
        da = _drop_overlap(da, f"{label or role} ({names})")
    if allow_monthly and _is_monthly(da["time"].values):
        _check_monthly(da["time"].values, f"{label or role} ({names})")
        frequency = "monthly"
    else:
        _check_daily(da["time"].values, f"{label or role} ({names})")
        frequency = "daily"
    if not file_chunks:
        da = da.chunk({"time": -1, "y": cy, "x": cx})
    for dim, attrs in _axis_attrs(crs).items():
        da[dim].attrs = attrs
    da["time"].attrs = {"standard_name": "time", "axis": "T"}
    da = da.rio.set_spatial_dims(x_dim="x", y_dim="y").rio.write_crs(crs)
    da = da.rio.write_transform(da.rio.transform(recalc=True))
    da.name = role
    stat = "minimum" if role == "tmin" else "maximum"
    da.attrs = {"units": "degC", "standard_name": "air_temperature", "long_name": f"daily {stat} air temperature",
                "cell_methods": f"time: {stat}", "suitmap_role": role, "source_files": names,
                "source_variable": "; ".join(dict.fromkeys(q["variable"] for q in pieces)),
                "original_units": "; ".join(dict.fromkeys(str(q["units"]) for q in pieces)),
                "calendar": p0["calendar"], "frequency": frequency}
    if frequency == "monthly":
        da.attrs["long_name"] = f"monthly mean of daily {stat} air temperature"
        da.attrs["cell_methods"] = f"time: {stat} within days time: mean over days"
    return da

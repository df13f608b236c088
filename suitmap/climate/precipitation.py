"""Open daily or monthly precipitation (NetCDF or GeoTIFF) lazily, as a mean rate in mm/day.

The variable is ``variable`` if given, else the one whose ``standard_name`` is
``precipitation_flux`` or ``precipitation_amount``, else a common name
(``pr``, ``precip``, ``prcp``, ``precipitation``, ``tp``, ``rr``, ``rain``).
A multi-band GeoTIFF is read as temperature GeoTIFFs are
(:mod:`suitmap.climate.geotiff`: one band per time step, dates from band
descriptions, ``DATE`` tags or a ``.dates.txt`` sidecar, units from a
``units`` tag).  Units are never guessed:

* a flux, ``kg m-2 s-1`` (CF ``precipitation_flux``) or ``mm s-1``: × 86400 s/day;
* a rate, ``mm/day`` (``mm d-1``, ``kg m-2 d-1`` …): as is;
* an amount per time step, ``mm`` or ``kg m-2`` (CF ``precipitation_amount``),
  or ``m``: divided by the step's days (1 for daily data, the month's days for
  monthly data; × 1000 for metres).

1 kg m-2 of water is 1 mm (density 1000 kg m-3).  The grid and time axis
follow :func:`suitmap.climate.read.open_climate` (same grid rules, calendars,
daily or monthly steps).  Values are checked when computed (see
:func:`checked_precipitation`): below -0.01 mm/day or above
:data:`MAX_MM_PER_DAY` is refused with the file named.
"""

from __future__ import annotations

import os
from pathlib import Path

import numpy as np
import xarray as xr

from suitmap.climate.geotiff import _open_geotiff
from suitmap.climate.read import (GEOTIFF_SUFFIXES, NETCDF_SUFFIXES, _axis_attrs, _normalise,
                                  _open_netcdf, resolve_paths)
from suitmap.climate.grid import check_same_grid
from suitmap.climate.time_axis import _check_daily, _check_monthly, _drop_overlap, _is_monthly
from suitmap.errors import InputError

__all__ = ["MAX_MM_PER_DAY", "checked_precipitation", "open_precipitation"]

#: Above the highest daily rainfall ever recorded (1825 mm, La Réunion, January 1966;
#: WMO world weather and climate extremes archive): an input error, not weather.
MAX_MM_PER_DAY = 2000.0
_NAMES = ("pr", "precip", "prcp", "precipitation", "tp", "rr", "rain", "ppt", "prec")
_STANDARD = ("precipitation_flux", "precipitation_amount")
_FLUX = ("kg m-2 s-1", "kg/m2/s", "kg/m^2/s", "kg m**-2 s**-1", "kg.m-2.s-1", "mm s-1", "mm/s")
_RATE = ("mm/day", "mm d-1", "mm day-1", "mm/d", "mm per day", "kg m-2 d-1", "kg m-2 day-1",
         "kg/m2/day", "kg/m2/d")
_AMOUNT = ("mm", "kg m-2", "kg/m2", "kg/m^2", "kg m**-2")


def _kind(units, where: str) -> tuple[str, float]:
    """('flux'|'rate'|'amount', factor to mm/day or mm)."""
    if units is None or str(units).strip() == "":
        raise InputError(f"{where} has no units attribute; add units = 'kg m-2 s-1', 'mm/day' "
                         "or 'mm' to the file")
    key = " ".join(str(units).strip().lower().split())
    if key in _FLUX:
        return "flux", 86400.0
    if key in _RATE:
        return "rate", 1.0
    if key in _AMOUNT:
        return "amount", 1.0
    if key in ("m", "metre", "meter", "metres", "meters"):
        return "amount", 1000.0
    raise InputError(f"{where} has units '{units}', not a precipitation flux (kg m-2 s-1), rate "
                     "(mm/day) or amount (mm); fix the units attribute (suitmap never guesses units)")


def _pick(path: Path, variable: str | None) -> str:
    try:
        with xr.open_dataset(path, engine="netcdf4", decode_times=False) as ds:
            present = [str(v) for v in ds.data_vars]
            if variable is not None:
                if variable not in present:
                    raise InputError(f"{path.name} has no variable '{variable}' (data variables: "
                                     f"{', '.join(present) or 'none'}); set pr.variable in the run file")
                return variable
            cf = [v for v in present if ds[v].attrs.get("standard_name") in _STANDARD]
    except (OSError, ValueError) as exc:
        raise InputError(f"cannot read {path} as NetCDF ({exc}); check the file") from exc
    if len(cf) == 1:
        return cf[0]
    by_name = {v.lower(): v for v in (cf or present)}
    for name in _NAMES:
        if name in by_name:
            return by_name[name]
    raise InputError(f"{path.name}: no precipitation variable found (data variables: "
                     f"{', '.join(present) or 'none'}); set pr.variable in the run file")


def open_precipitation(paths, *, variable: str | None = None, chunks: dict | None = None,
                       label: str = "", file_chunks: bool = False) -> xr.DataArray:
    """Open precipitation files as one lazy (time, y, x) float32 array in mm/day.

    ``attrs["frequency"]`` is ``"daily"`` or ``"monthly"`` (a monthly value is
    the month's mean rate: multiply by the month's days for its total).
    """
    chunks = dict({"y": 256, "x": 256}, **(chunks or {}))
    what = f"{label} pr".strip()
    files = [Path(p) for p in (resolve_paths(paths, what=what)
                               if isinstance(paths, (str, os.PathLike)) else paths)]
    if not files:
        raise InputError(f"no {what} files given; name at least one file")
    pieces, kinds = [], set()
    for path in files:
        suffix = path.suffix.lower()
        if suffix in GEOTIFF_SUFFIXES:
            if not path.is_file():
                raise InputError(f"{what} file {path} does not exist; check the path")
            p = _open_geotiff(path, chunks["y"], chunks["x"], check_units=_kind)
        elif suffix in NETCDF_SUFFIXES:
            name = _pick(path, variable)
            p = _open_netcdf(path, "pr", name, chunks["y"], chunks["x"], file_chunks)
        else:
            raise InputError(f"{path.name}: precipitation is read from NetCDF (.nc) or GeoTIFF "
                             "(.tif) files; convert the file to one of them")
        kind, factor = _kind(p["units"], p["where"])
        kinds.add(kind)

        def convert(da, piece, factor=factor):
            return (da.astype("float64") * factor).astype("float32")

        p["da"], p["crs"] = _normalise(p, convert)
        pieces.append(p)
    if len(kinds) > 1:
        raise InputError(f"{what}: the files mix precipitation fluxes, rates and amounts; "
                         "give one kind of units for all files")
    p0, crs = pieces[0], pieces[0]["crs"]
    for p in pieces[1:]:
        check_same_grid(p0["da"].rio.write_crs(crs), p["da"].rio.write_crs(p["crs"]),
                        p0["path"].name, p["path"].name)
        if p["calendar"] != p0["calendar"]:
            raise InputError(f"{p['path'].name} uses the {p['calendar']} calendar but "
                             f"{p0['path'].name} the {p0['calendar']}; use one calendar")
    pieces.sort(key=lambda q: q["da"]["time"].values[0])
    da = pieces[0]["da"] if len(pieces) == 1 else xr.concat(
        [q["da"].assign_coords(x=p0["da"].x, y=p0["da"].y) for q in pieces], dim="time",
        coords="minimal", compat="override", join="override", combine_attrs="drop")
    names = "; ".join(q["path"].name for q in pieces)
    if len(pieces) > 1:
        da = _drop_overlap(da, f"{what} ({names})")
    if _is_monthly(da["time"].values):
        _check_monthly(da["time"].values, f"{what} ({names})")
        frequency = "monthly"
        if kinds == {"amount"}:
            da = da / da["time"].dt.days_in_month.astype("float32")
    else:
        _check_daily(da["time"].values, f"{what} ({names})")
        frequency = "daily"
    if not file_chunks:
        da = da.chunk({"time": -1, "y": chunks["y"], "x": chunks["x"]})
    for dim, attrs in _axis_attrs(crs).items():
        da[dim].attrs = attrs
    da["time"].attrs = {"standard_name": "time", "axis": "T"}
    da = da.rio.set_spatial_dims(x_dim="x", y_dim="y").rio.write_crs(crs)
    da = da.rio.write_transform(da.rio.transform(recalc=True))
    da.name = "pr"
    da.attrs = {"units": "mm d-1", "long_name": f"{frequency} mean precipitation rate",
                "suitmap_role": "pr", "source_files": names,
                "source_variable": "; ".join(dict.fromkeys(q["variable"] for q in pieces)),
                "original_units": "; ".join(dict.fromkeys(str(q["units"]) for q in pieces)),
                "calendar": p0["calendar"], "frequency": frequency}
    return da


def _check_block(values: np.ndarray, where: str) -> np.ndarray:
    v = values[np.isfinite(values)]
    if v.size and v.min() < -0.01:
        raise InputError(f"{where}: precipitation below zero ({float(v.min()):.3g} mm/day); "
                         "check the file's values and units")
    if v.size and v.max() > MAX_MM_PER_DAY:
        raise InputError(f"{where}: precipitation of {float(v.max()):.4g} mm/day is above any "
                         f"recorded ({MAX_MM_PER_DAY:g}); check the file's units")
    return np.maximum(values, 0.0)   # numerical noise of models (> -0.01 mm/day) to 0


def checked_precipitation(pr: xr.DataArray) -> xr.DataArray:
    """``pr`` with its plausibility checked block by block when computed (lazy)."""
    where = f"precipitation {pr.attrs.get('source_files', '')}".strip()
    out = xr.apply_ufunc(_check_block, pr, dask="parallelized", output_dtypes=[pr.dtype],
                         kwargs={"where": where}, keep_attrs=True)
    return out

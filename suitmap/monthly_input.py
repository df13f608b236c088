"""Monthly climate input: two documented routes into suitmap's layers.

Route ``interpolate`` (default)
    Monthly mean Tmin/Tmax become smooth daily values that keep every month's
    mean (Epstein 1991 harmonic interpolation for a 12-month climatology,
    a mean-preserving spline for a monthly series; see
    :mod:`suitmap.kernels.monthly`), then go through the daily machinery.
    A 12-month climatology is repeated for every year of the period (each
    year in its own calendar length), so all seasons are alike.
    Interpolated days have no day-to-day weather: lethal days and the
    degree-days of cold spells are underestimated.

Route ``normal`` (quick screen)
    Degree-days of each month straight from its mean temperature
    (Tmin+Tmax)/2, with daily mean temperatures taken as normal with
    standard deviation ``daily_sd`` (Thom-type method).  Only degree-day
    layers, generations and a development score come out (no day of first
    generation, no lethal days: survival score 1).

Each output records its route in the attribute ``monthly_route``.
"""

from __future__ import annotations

import cftime
import numpy as np
import xarray as xr

from .errors import InputError
from .kernels.monthly import (monthly_degree_days_normal, monthly_series_to_daily,
                              monthly_to_daily)
from .metadata import LIMITING_FACTOR_CLASSES, MISSING_CLASS, layer_attrs
from .seasons import SeasonWindow, season_labels

ROUTES = ("interpolate", "normal")


def _days_in(year: int, month: int, calendar: str) -> int:
    a = cftime.datetime(year, month, 1, calendar=calendar)
    b = cftime.datetime(year + (month == 12), month % 12 + 1, 1, calendar=calendar)
    return (b - a).days


def _ym(da: xr.DataArray) -> tuple[np.ndarray, np.ndarray]:
    return (np.asarray(da["time"].dt.year.values, int), np.asarray(da["time"].dt.month.values, int))


def _daily_axis(first: int, last: int, calendar: str):
    use_cftime = calendar not in ("standard", "proleptic_gregorian", "gregorian")
    return xr.date_range(f"{first:04d}-01-01", periods=sum(
        _days_in(y, m, calendar) for y in range(first, last + 1) for m in range(1, 13)),
        freq="D", calendar=calendar, use_cftime=use_cftime)


def to_daily(da: xr.DataArray, years: tuple[int, int]) -> xr.DataArray:
    """Route ``interpolate``: daily values (lazy) whose monthly means equal ``da``'s."""
    calendar = da.attrs.get("calendar", "standard")
    first, last = years
    yrs, mons = _ym(da)
    if da.sizes["time"] == 12 and sorted(mons) == list(range(1, 13)):
        order = np.argsort(mons)
        clim = da.isel(time=order)
        pieces = []
        for y in range(first, last + 1):
            dim = np.array([_days_in(y, m, calendar) for m in range(1, 13)])
            pieces.append(xr.apply_ufunc(
                monthly_to_daily, clim, input_core_dims=[["time"]], output_core_dims=[["day"]],
                dask="parallelized", output_dtypes=[np.float64],
                kwargs={"days_in_month": dim, "axis": -1},
                dask_gufunc_kwargs={"output_sizes": {"day": int(dim.sum())}}))
        daily = xr.concat(pieces, dim="day")
        source = "12-month climatology repeated every year"
    else:
        keep = (yrs >= first) & (yrs <= last)
        sel = da.isel(time=np.flatnonzero(keep))
        y2, m2 = _ym(sel)
        if sel.sizes["time"] != 12 * (last - first + 1):
            raise InputError(f"{da.attrs.get('source_files', 'monthly input')}: monthly series does "
                             f"not cover every month of {first}-{last}; extend it or change the years")
        dim = np.array([_days_in(int(a), int(b), calendar) for a, b in zip(y2, m2)])
        daily = xr.apply_ufunc(
            monthly_series_to_daily, sel, input_core_dims=[["time"]], output_core_dims=[["day"]],
            dask="parallelized", output_dtypes=[np.float64],
            kwargs={"days_in_month": dim, "axis": -1},
            dask_gufunc_kwargs={"output_sizes": {"day": int(dim.sum())}})
        source = "monthly series"
    time = _daily_axis(first, last, calendar)
    daily = daily.rename(day="time").assign_coords(time=time).transpose("time", "y", "x")
    daily = daily.astype(np.float32).chunk({"time": -1})
    daily.attrs = {**da.attrs, "frequency": "daily",
                   "monthly_route": f"interpolate (mean-preserving daily interpolation of a {source})"}
    if da.rio.crs is not None:
        daily = daily.rio.write_crs(da.rio.crs)
    return daily


def normal_route_layers(tmin: xr.DataArray, tmax: xr.DataArray, profile, years: tuple[int, int],
                        daily_sd: float) -> xr.Dataset:
    """Route ``normal``: degree-day layers straight from monthly means (a quick screen)."""
    dev = profile.development
    if dev.degree_days_per_generation is None:
        raise InputError("the monthly 'normal' route needs development.degree_days_per_generation "
                         "in the profile (it computes degree-days, not rate summation)")
    calendar = tmin.attrs.get("calendar", "standard")
    first, last = years
    yrs, mons = _ym(tmin)
    keep = (yrs >= first) & (yrs <= last)
    n_days = np.array([_days_in(int(y), int(m), calendar) for y, m in zip(yrs, mons)], float)
    window = (SeasonWindow(profile.season.start, profile.season.end)
              if not profile.season.is_default else SeasonWindow((1, 1), (12, 31)))
    labels = season_labels(yrs, mons, np.full(yrs.shape, 15), window)  # month in season by its 15th
    use = keep & (labels >= first) & (labels <= last)
    if not use.any():
        raise InputError(f"monthly input: no month of {first}-{last} falls in the season "
                         f"{window.text()}; change the years or season")
    mean = (tmin + tmax) / 2
    nd = xr.DataArray(n_days, dims="time", coords={"time": tmin["time"]})
    dd_month = xr.apply_ufunc(monthly_degree_days_normal, mean, daily_sd, dev.lower_threshold,
                              dev.upper_threshold, nd, dask="parallelized",
                              output_dtypes=[np.float64])
    lab = xr.DataArray(np.where(use, labels, -1), dims="time", coords={"time": tmin["time"]})
    dd = dd_month.where(lab >= 0).groupby(lab.where(lab >= 0)).sum("time", min_count=1)
    dd = dd.rename({dd.dims[0]: "season_year"}) if dd.dims[0] != "season_year" else dd
    gens = dd / dev.degree_days_per_generation
    complete = np.floor(gens)
    present = dd.notnull().all("season_year")
    out = {
        "degree_days": dd.mean("season_year"),
        "generations": gens.mean("season_year"),
        "complete_generations": complete.mean("season_year"),
        "years_with_generation": (complete >= 1).mean("season_year"),
    }
    sat = profile.suitability.saturating_generations
    out["development_score"] = out["years_with_generation"] * np.minimum(1.0, out["generations"] / sat)
    out["suitability"] = out["development_score"]
    code = xr.where(out["suitability"] >= 1.0, LIMITING_FACTOR_CLASSES.index("none"),
                    LIMITING_FACTOR_CLASSES.index("too_cool"))
    out["limiting_factor"] = xr.where(present, code, MISSING_CLASS).astype(np.uint8)
    ds = xr.Dataset({k: v.where(present) if k != "limiting_factor" else v for k, v in out.items()})
    route = f"normal (Thom-type degree-days from monthly means, daily sd {daily_sd} degC)"
    for name in ds.data_vars:
        ds[name].attrs = {**layer_attrs(name), "monthly_route": route}
        if name != "limiting_factor":
            ds[name] = ds[name].astype(np.float32, keep_attrs=True)
    ds["limiting_factor"].encoding["_FillValue"] = MISSING_CLASS
    ds.attrs.update({"monthly_route": route, "seasons": int(dd.sizes["season_year"]),
                     "calendar": calendar, "years": f"{first}-{last}"})
    for c in ("x", "y"):
        ds[c].attrs = dict(tmin[c].attrs)
    if tmin.rio.crs is not None:
        ds = ds.rio.write_crs(tmin.rio.crs)
    return ds

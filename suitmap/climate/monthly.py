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

Each output records its route in the attribute ``monthly_route``.  This
module holds the ``interpolate`` route; the ``normal`` route makes layers
and lives in :mod:`suitmap.layers.monthly_normal`.
"""

from __future__ import annotations

import cftime
import numpy as np
import xarray as xr

from suitmap.errors import InputError
from suitmap.kernels.monthly import (monthly_series_to_daily,
                              monthly_to_daily)

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


def check_months_complete(da: xr.DataArray, years: tuple[int, int]) -> bool:
    """The rule both monthly routes apply: a series holds every month of ``years``.

    Returns True for a 12-month climatology (months 1-12 once each), which is
    exempt; raises :class:`InputError` naming the first missing month otherwise.
    """
    yrs, mons = _ym(da)
    if da.sizes["time"] == 12 and sorted(mons) == list(range(1, 13)):
        return True
    first, last = years
    have = set(zip(yrs.tolist(), mons.tolist()))
    missing = [(y, m) for y in range(first, last + 1) for m in range(1, 13) if (y, m) not in have]
    if missing:
        y, m = missing[0]
        raise InputError(f"{da.attrs.get('source_files', 'monthly input')}: monthly series does "
                         f"not cover every month of {first}-{last} ({len(missing)} missing, the first "
                         f"{y:04d}-{m:02d}); extend it or change the years")
    return False


def to_daily(da: xr.DataArray, years: tuple[int, int]) -> xr.DataArray:
    """Route ``interpolate``: daily values (lazy) whose monthly means equal ``da``'s."""
    calendar = da.attrs.get("calendar", "standard")
    first, last = years
    yrs, mons = _ym(da)
    if check_months_complete(da, years):
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

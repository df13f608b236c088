"""The time axis of opened climate: day counts, checks, overlap and year selection.

Helpers of :mod:`suitmap.climate` (which re-exports them): the days since the
first time step on any calendar (``numpy.datetime64`` or cftime), ISO date
text for messages, dropping days that several files hold, telling monthly
from daily data and checking that either has no gaps or repeats, and keeping
whole calendar years (:func:`select_years`).  Errors are :class:`InputError`
naming the input and the first offending date.
"""

from __future__ import annotations

import warnings

import numpy as np
import xarray as xr

from suitmap.errors import InputError, SuitmapWarning

__all__ = ["check_order", "check_same_calendar", "select_years"]

_TOL = 1e-3  # tolerance on a time step, as a fraction of a day


def _days(times: np.ndarray) -> np.ndarray:
    if np.issubdtype(times.dtype, np.datetime64):
        return (times - times[0]) / np.timedelta64(1, "D")
    return np.array([(t - times[0]).total_seconds() / 86400.0 for t in times])


def _iso(t) -> str:
    return str(np.datetime64(t, "D")) if isinstance(t, np.datetime64) else t.strftime("%Y-%m-%d")


def _drop_overlap(da: xr.DataArray, what: str) -> xr.DataArray:
    """Drop days that an earlier-starting file already holds (e.g. historical + scenario files)."""
    days = _days(da["time"].values)
    if days.size < 2:
        return da
    seen = np.maximum.accumulate(days)
    keep = np.ones(days.size, dtype=bool)
    keep[1:] = days[1:] > seen[:-1]
    n = int((~keep).sum())
    if n:
        dup = da["time"].values[~keep]
        warnings.warn(f"{what}: {n} day(s) from {_iso(dup[0])} to {_iso(dup[-1])} are held by more than "
                      "one file; the first file's values are kept", SuitmapWarning, stacklevel=3)
        da = da.isel(time=np.flatnonzero(keep))
    return da


def check_order(times: np.ndarray, what: str) -> None:
    """Refuse a file whose time axis runs backwards or is out of order (named plainly)."""
    if times.size < 2:
        return
    steps = np.diff(_days(times))
    if np.all(steps < 0):
        raise InputError(f"{what}: the time axis runs backwards ({_iso(times[0])} first, "
                         f"{_iso(times[-1])} last); store the days in increasing order")
    if np.any(steps < 0):
        i = int(np.argmax(steps < 0))
        raise InputError(f"{what}: time steps out of order ({_iso(times[i])} is followed by "
                         f"{_iso(times[i + 1])}); sort the file by time")


def check_same_calendar(tmin: xr.DataArray, tmax: xr.DataArray, what: str) -> None:
    """Refuse a Tmin/Tmax pair on different calendars (their days cannot be paired)."""
    a, b = tmin.attrs.get("calendar"), tmax.attrs.get("calendar")
    if a and b and a != b:
        raise InputError(f"{what}: tmin uses the {a} calendar and tmax the {b} calendar; "
                         "give both on one calendar")


def _is_monthly(times: np.ndarray) -> bool:
    if times.size < 2:
        return False
    return 27.5 <= float(np.median(np.diff(_days(times)))) <= 31.5


def _check_monthly(times: np.ndarray, what: str) -> None:
    ym = np.array([int(t.year) * 12 + int(t.month) - 1 for t in _as_dates(times)])
    if np.any(np.diff(ym) != 1):
        i = int(np.argmax(np.diff(ym) != 1))
        raise InputError(f"{what}: monthly values must be consecutive months; "
                         f"{_iso(times[i])} is followed by {_iso(times[i + 1])}")


def _as_dates(times: np.ndarray):
    if np.issubdtype(np.asarray(times).dtype, np.datetime64):
        import pandas as pd

        return list(pd.DatetimeIndex(times))
    return list(times)


def _check_daily(times: np.ndarray, what: str) -> None:
    if times.size < 2:
        return
    steps = np.diff(_days(times))
    if np.any(steps <= 0):
        i = int(np.argmax(steps <= 0))
        raise InputError(f"{what}: day {_iso(times[i + 1])} appears twice or out of order (overlapping files?); "
                         "give each day once")
    typical = float(np.median(steps))
    if abs(typical - 1.0) > _TOL:
        raise InputError(f"{what}: time step is {typical:g} days; daily data is needed (one value per day)")
    bad = np.flatnonzero(np.abs(steps - 1.0) > _TOL)
    if bad.size:
        i = int(bad[0])
        raise InputError(f"{what}: days missing between {_iso(times[i])} and {_iso(times[i + 1])}; "
                         "daily data without gaps is needed")


def _ymd(da: xr.DataArray) -> np.ndarray:
    t = da["time"].dt
    return (t.year * 10000 + t.month * 100 + t.day).values


def select_years(da: xr.DataArray, first: int, last: int, *, label: str) -> xr.DataArray:
    """Keep whole calendar years ``first``–``last``; :class:`InputError` unless the data holds all of them."""
    if first > last:
        raise InputError(f"{label}: first year {first} is after last year {last}; fix the period")
    ymd = _ymd(da)
    year, md = ymd // 10000, ymd % 10000
    end_md = 1230 if da.attrs.get("calendar") == "360_day" else 1231
    full = sorted(set(year[md == 101]) & set(year[md == end_md]))
    wanted = set(range(first, last + 1))
    if not wanted <= set(full):
        held = f"{full[0]}–{full[-1]}" if full else "none"
        raise InputError(f"{label}: years {first}–{last} requested but the files hold "
                         f"{_iso(da.time.values[0])} to {_iso(da.time.values[-1])} (complete years: {held}); "
                         "change the period or add files")
    idx = np.flatnonzero((year >= first) & (year <= last))
    return da.isel(time=slice(int(idx[0]), int(idx[-1]) + 1))

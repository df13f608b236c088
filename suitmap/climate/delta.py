"""Delta-change downscaling of daily Tmin/Tmax.

A coarse climate model says how much warmer (or cooler) each part of the year
becomes; the observed fine-grid baseline says what a day looks like.  The
scenario series is the observed baseline plus the model's change:

    scenario(day, cell) = baseline(day, cell) + Δ(part of year of day, cell)
    Δ = climatology(model future) − climatology(model historical)

(additive, for temperatures; the "delta method", e.g. Hay, Wilby & Leavesley
2000; Anandhi et al. 2011).  :func:`monthly_deltas` computes Δ on the model's
own grid and in the model's own calendar; :func:`apply_deltas` regrids Δ to the
baseline grid (bilinear, :func:`suitmap.spatial.regrid.snap_to_grid`) and adds it.

Parts of the year
-----------------
``smoothing="monthly"``
    12 values, Δ of the calendar-month means.  Each baseline day takes the
    value of its month (months exist in every calendar).
``smoothing="doy"``
    One value per day of the model's year, then a circular running mean of
    ``window_days`` (odd) days, so that day-to-day noise of two finite samples
    does not become a fake seasonal pattern.  The model year has 365 days on
    ``noleap`` and on the ``standard``/``proleptic_gregorian``/``julian``
    calendars (29 February is pooled with 28 February), 366 on ``all_leap``
    and 360 on ``360_day``.
    A baseline day reads Δ at the same (month, day) when both calendars have
    it (29 February reads 28 February on a 365-day Δ); when one of the two
    calendars is ``360_day`` and the other is not, it reads Δ at the same
    *fraction of the year*: index ⌊(d + ½)·N_Δ / N_year⌋, d the 0-based day of
    the baseline year and N_year its length.

Missing values: a model cell with a missing value on any day of a month (or
day of year) has a missing Δ for it, and a smoothed Δ is missing wherever its
window touches one; a missing Δ or baseline value gives a missing output.

Calendars and target years: the output always keeps the *baseline's* calendar
and time type.  With ``target_years`` each baseline day moves by a whole
number of years (the same month, day and time of day); on calendars with leap
years a target 29 February whose baseline year has none repeats the baseline's
28 February, and a baseline 29 February whose target year has none is dropped,
so every target year is complete and gap-free.

References
----------
Hay, L.E., Wilby, R.L., Leavesley, G.H. (2000) A comparison of delta change and
downscaled GCM scenarios for three mountainous basins in the United States.
*Journal of the American Water Resources Association* 36(2): 387–397.

Anandhi, A., Frei, A., Pierson, D.C., et al. (2011) Examination of change factor
methodologies for climate change impact assessment. *Water Resources Research*
47: W03501.
"""

from __future__ import annotations

import cftime
import numpy as np
import xarray as xr

from suitmap.errors import GridMismatch, InputError
from suitmap.spatial.regrid import grid_description, grids_match, snap_to_grid

__all__ = ["apply_deltas", "calendar_of", "monthly_deltas", "year_keys"]

_CAL_ALIASES = {"gregorian": "standard", "365_day": "noleap", "366_day": "all_leap"}
_NOLEAP = np.array([31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31])
_LEAP = np.array([31, 29, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31])
_CUM_NOLEAP = np.concatenate([[0], np.cumsum(_NOLEAP)[:-1]])
_CUM_LEAP = np.concatenate([[0], np.cumsum(_LEAP)[:-1]])
_DELTA_UNITS = ("degC", "K", "°C", "deg_C", "celsius")


# --------------------------------------------------------------------------- calendars
def calendar_of(da: xr.DataArray) -> str:
    """CF calendar of ``da``: its ``calendar`` attribute, else the time axis's."""
    cal = da.attrs.get("calendar")
    if not cal:
        try:
            cal = da["time"].dt.calendar
        except (AttributeError, KeyError):
            cal = "standard"
    cal = str(cal).lower()
    return _CAL_ALIASES.get(cal, cal)


def _is_leap(year: int, calendar: str) -> bool:
    if calendar == "all_leap":
        return True
    if calendar in ("noleap", "360_day"):
        return False
    return bool(cftime.is_leap_year(int(year), calendar))


def _fields(time: xr.DataArray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    t = time.dt
    return (np.asarray(t.year.values, dtype=np.int64), np.asarray(t.month.values, dtype=np.int64),
            np.asarray(t.day.values, dtype=np.int64))


def year_keys(months: np.ndarray, days: np.ndarray, calendar: str) -> tuple[np.ndarray, int]:
    """0-based day-of-year keys of a model calendar and the number of keys.

    ``360_day``: 360 keys; ``all_leap``: 366; every other calendar 365, with
    29 February pooled with 28 February.
    """
    m, d = np.asarray(months) - 1, np.asarray(days)
    if calendar == "360_day":
        return m * 30 + d - 1, 360
    if calendar == "all_leap":
        return _CUM_LEAP[m] + d - 1, 366
    return _CUM_NOLEAP[m] + np.where((m == 1) & (d == 29), 28, d) - 1, 365


# --------------------------------------------------------------------------- climatologies
def _group_mean(block: np.ndarray, key: np.ndarray, n: int) -> np.ndarray:
    """Mean over the last axis by group ``key`` (0..n-1); NaN in a group gives NaN."""
    order = np.argsort(key, kind="stable")
    sorted_key = key[order]
    starts = np.searchsorted(sorted_key, np.arange(n))
    counts = np.bincount(key, minlength=n)
    sums = np.add.reduceat(block[..., order].astype(np.float64), starts, axis=-1)
    return sums / counts


def _climatology(da: xr.DataArray, smoothing: str, label: str) -> tuple[xr.DataArray, int]:
    _, months, days = _fields(da["time"])
    if smoothing == "monthly":
        key, n, dim = months - 1, 12, "month"
    else:
        key, n = year_keys(months, days, calendar_of(da))
        dim = "dayofyear"
    have = np.bincount(key, minlength=n) > 0
    if not have.all():
        what = "month" if dim == "month" else "day of year"
        raise InputError(f"{label}: no data for {what} {int(np.flatnonzero(~have)[0]) + 1}; "
                         "give at least one whole year of daily data")
    src = da.chunk({"time": -1}) if da.chunks is not None else da
    clim = xr.apply_ufunc(_group_mean, src, input_core_dims=[["time"]], output_core_dims=[[dim]],
                          dask="parallelized", output_dtypes=[np.float64],
                          dask_gufunc_kwargs={"output_sizes": {dim: n}}, kwargs={"key": key, "n": n})
    return clim.assign_coords({dim: np.arange(1, n + 1)}), n


def _circular_mean(block: np.ndarray, window: int) -> np.ndarray:
    """Centred running mean of ``window`` (odd) values along the last axis, wrapping around."""
    if window == 1:
        return block
    h = window // 2
    padded = np.concatenate([block[..., -h:], block, block[..., :h]], axis=-1)
    return np.lib.stride_tricks.sliding_window_view(padded, window, axis=-1).mean(axis=-1)


def _years_text(da: xr.DataArray) -> str:
    y = _fields(da["time"])[0]
    return f"{y.min()}-{y.max()}"


def monthly_deltas(model_hist: xr.DataArray, model_future: xr.DataArray, *, smoothing: str = "monthly",
                   window_days: int = 31) -> xr.DataArray:
    """Additive change of one model's daily Tmin (or Tmax) climatology.

    Parameters
    ----------
    model_hist, model_future : xarray.DataArray
        Daily °C of one climate model (dims ``time, y, x``), historical and
        future period, on one grid and in one calendar (any CF calendar).
    smoothing : {"monthly", "doy"}
        12 calendar-month deltas, or one per day of the model year smoothed
        with a circular running mean of ``window_days``.
    window_days : int
        Odd window length (days) of the running mean, ``"doy"`` only; 1 = none.

    Returns
    -------
    xarray.DataArray
        Δ °C, float32, dims ``(month, y, x)`` (1–12) or ``(dayofyear, y, x)``
        (1–365, 1–366 or 1–360), on the model grid; lazy if the inputs are.

    Raises
    ------
    InputError
        Bad ``smoothing``/``window_days``, different calendars or roles, or a
        month / day of year without data.
    GridMismatch
        Historical and future grids differ.

    References
    ----------
    Hay, L.E., Wilby, R.L., Leavesley, G.H. (2000) *J. Am. Water Resour. Assoc.*
    36(2): 387–397 (delta change).
    """
    if smoothing not in ("monthly", "doy"):
        raise InputError(f"delta smoothing must be 'monthly' or 'doy', not {smoothing!r}")
    for da, what in ((model_hist, "historical"), (model_future, "future")):
        if set(da.dims) != {"time", "y", "x"}:
            raise InputError(f"model {what} data has dims {da.dims}; give (time, y, x)")
    cal_h, cal_f = calendar_of(model_hist), calendar_of(model_future)
    if cal_h != cal_f:
        raise InputError(f"model historical data uses the {cal_h} calendar but the future data {cal_f}; "
                         "give both periods of one model")
    role_h, role_f = model_hist.attrs.get("suitmap_role"), model_future.attrs.get("suitmap_role")
    if role_h and role_f and role_h != role_f:
        raise InputError(f"model historical data is {role_h} but the future data {role_f}; give the same variable")
    if not grids_match(model_hist, model_future):
        raise GridMismatch(f"model historical grid ({grid_description(model_hist)}) differs from the future grid "
                           f"({grid_description(model_future)}); give both periods on one grid")
    hist, n = _climatology(model_hist.transpose("time", "y", "x"), smoothing, "model historical data")
    fut, _ = _climatology(model_future.transpose("time", "y", "x"), smoothing, "model future data")
    dim = "month" if smoothing == "monthly" else "dayofyear"
    delta = fut - hist.assign_coords(x=fut["x"], y=fut["y"])
    if smoothing == "doy":
        window = int(window_days)
        if window != window_days or window < 1 or window % 2 == 0 or window > n:
            raise InputError(f"delta window_days must be an odd whole number from 1 to {n}, not {window_days}")
        delta = xr.apply_ufunc(_circular_mean, delta, input_core_dims=[[dim]], output_core_dims=[[dim]],
                               dask="parallelized", output_dtypes=[np.float64], kwargs={"window": window})
    delta = delta.transpose(dim, "y", "x").astype(np.float32)
    for c in ("x", "y"):
        delta[c].attrs = dict(model_future[c].attrs)
    if model_future.rio.crs is not None:
        delta = delta.rio.write_crs(model_future.rio.crs)
    files_h = model_hist.attrs.get("source_files", "")
    files_f = model_future.attrs.get("source_files", "")
    role = role_f or role_h
    delta.name = f"delta_{role}" if role else "delta"
    delta.attrs = {
        "units": "degC",
        "units_metadata": "temperature: difference",
        "long_name": ("additive change (future minus historical climatology) of "
                      + (f"daily {'minimum' if role == 'tmin' else 'maximum'} air temperature" if role
                         else "daily air temperature") + " of one climate model"),
        "delta_smoothing": smoothing if smoothing == "monthly" else f"doy, {window}-day circular running mean",
        "delta_window_days": window if smoothing == "doy" else 0,
        "calendar": cal_f,
        "historical_years": _years_text(model_hist),
        "future_years": _years_text(model_future),
        "historical_source_files": files_h,
        "future_source_files": files_f,
        "source_files": "; ".join(dict.fromkeys(f for f in (files_h + "; " + files_f).split("; ") if f)),
    }
    if role:
        delta.attrs["suitmap_role"] = role
    return delta


# --------------------------------------------------------------------------- applying
def _add_block(base: np.ndarray, delta: np.ndarray, idx: np.ndarray) -> np.ndarray:
    """baseline (..., time) + delta (..., n)[idx], in float64, returned as float32."""
    return (base.astype(np.float64) + delta.astype(np.float64)[..., idx]).astype(np.float32)


def _day_in_year(years, months, days, calendar):
    """0-based day of the year and the year's length, in ``calendar``."""
    if calendar == "360_day":
        return (months - 1) * 30 + days - 1, np.full(years.shape, 360)
    leap = np.array([_is_leap(y, calendar) for y in years]) if years.size else np.zeros(0, bool)
    d0 = np.where(leap, _CUM_LEAP[months - 1], _CUM_NOLEAP[months - 1]) + days - 1
    return d0, np.where(leap, 366, 365)


def _delta_index(years, months, days, calendar: str, dim: str, n: int) -> np.ndarray:
    if dim == "month":
        return months - 1
    if (n == 360) != (calendar == "360_day"):
        d0, length = _day_in_year(years, months, days, calendar)
        return np.minimum(np.floor((d0 + 0.5) * n / length).astype(np.int64), n - 1)
    cal = {360: "360_day", 366: "all_leap", 365: "noleap"}[n]
    return year_keys(months, days, cal)[0]


def _shift_years(time: xr.DataArray, calendar: str, first: int, last: int):
    """Target time values and the baseline index each one copies."""
    years, months, days = _fields(time)
    offset = first - int(years.min())
    if last - first != int(years.max()) - int(years.min()):
        raise InputError(f"target years {first}-{last} span {last - first + 1} years but the baseline "
                         f"{years.min()}-{years.max()} spans {years.max() - years.min() + 1}; give as many years")
    leap: dict[int, bool] = {}

    def is_leap(y):
        if y not in leap:
            leap[y] = _is_leap(y, calendar)
        return leap[y]

    keep = []  # (year, month, day, source index)
    for i, (y, m, d) in enumerate(zip(years, months, days)):
        ty = int(y) + offset
        if m == 2 and d == 29 and not is_leap(ty):
            continue
        keep.append((ty, int(m), int(d), i))
        if m == 2 and d == 28 and is_leap(ty) and not is_leap(int(y)):
            keep.append((ty, 2, 29, i))
    src = np.array([k[3] for k in keep], dtype=np.int64)
    values = time.values
    if np.issubdtype(values.dtype, np.datetime64):
        tod = values - values.astype("datetime64[D]")
        dates = np.array([f"{y:04d}-{m:02d}-{d:02d}" for y, m, d, _ in keep], dtype="datetime64[D]")
        unit = "ns" if 1678 <= first and last <= 2261 else "s"
        out = dates.astype(f"datetime64[{unit}]") + tod[src].astype(f"timedelta64[{unit}]")
    else:
        out = np.array([cftime.datetime(y, m, d, values[i].hour, values[i].minute, values[i].second,
                                        calendar=values[i].calendar) for y, m, d, i in keep], dtype=object)
    return out, src


def apply_deltas(baseline: xr.DataArray, deltas: xr.DataArray, template=None, *,
                 target_years: tuple[int, int] | None = None) -> xr.DataArray:
    """Observed daily baseline plus a model's (regridded) climatological change.

    Parameters
    ----------
    baseline : xarray.DataArray
        Observed daily °C, dims ``(time, y, x)`` (suitmap's climate convention).
    deltas : xarray.DataArray
        From :func:`monthly_deltas`: dims ``(month, y, x)`` or
        ``(dayofyear, y, x)``, on any grid with a CRS; regridded bilinearly.
    template : xarray.DataArray or xarray.Dataset, optional
        Grid to put the deltas on; default the baseline's.  The baseline must
        be on it.
    target_years : (int, int), optional
        First and last year of the output time axis; the baseline's years are
        relabelled to them (see the module docstring for leap days).

    Returns
    -------
    xarray.DataArray
        Daily °C float32 on the baseline grid, baseline calendar, lazy if the
        baseline is.  Attributes say how it was made (``suitmap_downscaling``,
        ``delta_*``) and from which files (``source_files``).

    Raises
    ------
    InputError
        Deltas of the wrong shape, units or variable, or target years that
        do not span as many years as the baseline.
    GridMismatch
        The baseline is not on ``template``.

    References
    ----------
    Anandhi, A., Frei, A., Pierson, D.C., et al. (2011) *Water Resources
    Research* 47: W03501 (change factor methods).
    """
    if set(baseline.dims) != {"time", "y", "x"}:
        raise InputError(f"baseline has dims {baseline.dims}; give daily data with dims (time, y, x)")
    dims = [d for d in deltas.dims if d not in ("y", "x")]
    if len(dims) != 1 or dims[0] not in ("month", "dayofyear"):
        raise InputError(f"deltas have dims {deltas.dims}; give (month, y, x) or (dayofyear, y, x) "
                         "from suitmap.climate.delta.monthly_deltas")
    dim, n = dims[0], deltas.sizes[dims[0]]
    if n not in ({12} if dim == "month" else {360, 365, 366}):
        raise InputError(f"deltas have {n} {dim} values; expected 12 months or 360/365/366 days of year")
    units = deltas.attrs.get("units", "degC")
    if units not in _DELTA_UNITS:
        raise InputError(f"deltas have units '{units}'; give a temperature difference in degC or K")
    rb, rd = baseline.attrs.get("suitmap_role"), deltas.attrs.get("suitmap_role")
    if rb and rd and rb != rd:
        raise InputError(f"deltas of {rd} cannot be added to a {rb} baseline; give the {rb} deltas")
    if template is not None and not grids_match(baseline, template):
        raise GridMismatch(f"baseline ({grid_description(baseline)}) is not on the template grid "
                           f"({grid_description(template)}); snap the baseline first")
    baseline = baseline.transpose("time", "y", "x")
    grid = baseline if template is None else template
    on_grid = snap_to_grid(deltas.transpose(dim, "y", "x"), grid, kind="continuous")
    on_grid = on_grid.assign_coords(x=baseline["x"], y=baseline["y"])
    if baseline.chunks is not None:
        ch = dict(zip(baseline.dims, baseline.chunks))
        on_grid = on_grid.chunk({dim: -1, "y": ch["y"], "x": ch["x"]})
    calendar = calendar_of(baseline)
    if target_years is None:
        out_time, src = baseline["time"].values, None
    else:
        first, last = (int(v) for v in target_years)
        if last < first:
            raise InputError(f"target years {first}-{last}: the first year is after the last; fix the period")
        out_time, src = _shift_years(baseline["time"], calendar, first, last)
    base = baseline if src is None else baseline.isel(time=src)
    base = base.assign_coords(time=out_time)
    if base.chunks is not None:
        base = base.chunk({"time": -1})
    years, months, days = _fields(base["time"])
    idx = _delta_index(years, months, days, calendar, dim, n)
    out = xr.apply_ufunc(_add_block, base, on_grid.drop_vars([c for c in on_grid.coords
                                                              if c not in (dim, "y", "x")]),
                         input_core_dims=[["time"], [dim]], output_core_dims=[["time"]],
                         dask="parallelized", output_dtypes=[np.float32], kwargs={"idx": idx},
                         keep_attrs=False)
    out = out.transpose("time", "y", "x")
    out.name = baseline.name
    for c in ("x", "y", "time"):
        out[c].attrs = dict(baseline[c].attrs)
    if baseline.rio.crs is not None:
        out = out.rio.write_crs(baseline.rio.crs)
    b_files = baseline.attrs.get("source_files", "")
    d_files = deltas.attrs.get("source_files", "")
    by = f"by day of year ({deltas.attrs.get('delta_smoothing', 'doy')})" if dim == "dayofyear" else "by month"
    out.attrs = dict(baseline.attrs)
    out.attrs.update({
        "calendar": calendar,
        "suitmap_downscaling": f"additive delta change: observed baseline plus model future minus model "
                               f"historical climatology, {by}, deltas regridded bilinearly",
        "delta_smoothing": deltas.attrs.get("delta_smoothing", "monthly" if dim == "month" else "doy"),
        "delta_window_days": deltas.attrs.get("delta_window_days", 0),
        "delta_calendar": deltas.attrs.get("calendar", ""),
        "delta_historical_years": deltas.attrs.get("historical_years", ""),
        "delta_future_years": deltas.attrs.get("future_years", ""),
        "delta_regrid": on_grid.attrs.get("suitmap_regrid", "none (deltas already on the baseline grid)"),
        "baseline_source_files": b_files,
        "delta_source_files": d_files,
        "source_files": "; ".join(dict.fromkeys(f for f in (b_files + "; " + d_files).split("; ") if f)),
        "baseline_years": _years_text(baseline),
    })
    if target_years is not None:
        out.attrs["years"] = f"{target_years[0]}-{target_years[1]}"
    return out

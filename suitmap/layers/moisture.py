"""Moisture layers of one period and their part in suitability.

Per calendar year of the period (one small computation per year and spatial
chunk, like the season statistics): the year's precipitation (mm), its dry
months (Bagnouls & Gaussen 1957: P in mm < 2 × mean temperature in °C, the
month's mean of (Tmin + Tmax)/2) and its Hargreaves-Samani reference
evapotranspiration (mm, FAO-56 eq. 52 with Ra from eq. 21).  Over the period:

    annual_precipitation = mean of the years' precipitation
    dry_months           = mean of the years' dry-month counts
    aridity_index        = sum of precipitation / sum of ET0 (ratio of period totals)
    moisture_score       = min(dry-side score, wet-side score)   (kernels.moisture.moisture_factors)
    suitability          = development × survival × moisture_score

``limiting_factor`` becomes ``too_dry`` / ``too_wet`` where the moisture score
is below both the development and the survival score.
"""

from __future__ import annotations

import numpy as np
import xarray as xr

from suitmap.climate.precipitation import checked_precipitation
from suitmap.errors import InputError
from suitmap.kernels.moisture import dry_month, extraterrestrial_radiation, hargreaves_et0
from suitmap.kernels.moisture import moisture_factors
from suitmap.layers.metadata import LIMITING_FACTOR_CLASSES, MISSING_CLASS, MOISTURE_CLASSES
from suitmap.layers.metadata import layer_attrs
from suitmap.layers.seasons import time_fields

_YEAR_STATS = ("precipitation", "dry_months", "et0")


def _year_block(tmin, tmax, pr, lat, *, t_month, p_month, p_days, doy, days_in_year):
    """(y, x, 3): the year's precipitation, dry months and ET0; arrays arrive as (y, x, time)."""
    tn, tx = np.minimum(tmin, tmax), np.maximum(tmin, tmax)
    ra = extraterrestrial_radiation(np.asarray(lat, float)[..., None], doy[None, None, :],
                                    days_in_year)
    et0 = hargreaves_et0(tn, tx, ra)
    tmean = 0.5 * (tn + tx)
    p_amount = pr * p_days                 # mm per step (rate × days of the step)
    out = np.empty(tmin.shape[:2] + (3,))
    dry = np.zeros(tmin.shape[:2])
    for m in range(1, 13):
        t_sel, p_sel = t_month == m, p_month == m
        pm = p_amount[..., p_sel].sum(axis=-1)   # NaN stays NaN
        tm = tmean[..., t_sel].mean(axis=-1)
        dry = dry + np.where(np.isnan(pm) | np.isnan(tm), np.nan, dry_month(pm, tm))
    out[..., 0] = p_amount.sum(axis=-1)
    out[..., 1] = dry
    out[..., 2] = et0.sum(axis=-1)
    return out


def _year_length(calendar: str, year: int) -> float:
    if calendar == "360_day":
        return 360.0
    if calendar == "noleap":
        return 365.0
    if calendar == "all_leap":
        return 366.0
    leap = year % 4 == 0 and (year % 100 != 0 or year % 400 == 0 or calendar == "julian")
    return 366.0 if leap else 365.0


def year_statistics(pr: xr.DataArray, tmin: xr.DataArray, tmax: xr.DataArray, lat: np.ndarray,
                    years: tuple[int, int], label: str = "") -> xr.Dataset:
    """Lazy per-year precipitation, dry months and ET0 (dims ``year, y, x``)."""
    t_year, t_mon, _, calendar = time_fields(tmin["time"])
    p_year, p_mon, _, _ = time_fields(pr["time"])
    doy_all = np.asarray(tmin["time"].dt.dayofyear.values, dtype=float)
    monthly = pr.attrs.get("frequency") == "monthly"
    p_days_all = (np.asarray(pr["time"].dt.days_in_month.values, dtype=float) if monthly
                  else np.ones(pr.sizes["time"]))
    pr = checked_precipitation(pr).rename(time="ptime")
    lat_da = xr.DataArray(lat, dims=("y", "x"), coords={"y": tmin["y"], "x": tmin["x"]})
    if tmin.chunks is not None:
        lat_da = lat_da.chunk({"y": tmin.chunks[1], "x": tmin.chunks[2]})
    per_year = []
    for year in range(years[0], years[1] + 1):
        ti = np.flatnonzero(t_year == year)
        pi = np.flatnonzero(p_year == year)
        if len(np.unique(p_mon[pi])) != 12 or len(np.unique(t_mon[ti])) != 12:
            raise InputError(f"{label}: precipitation or temperature does not cover all months of "
                             f"{year}; give whole years of data for the period")
        tn, tx = tmin.isel(time=ti), tmax.isel(time=ti)
        pp = pr.isel(ptime=pi)
        if tn.chunks is not None:
            tn, tx, pp = tn.chunk({"time": -1}), tx.chunk({"time": -1}), pp.chunk({"ptime": -1})
        per_year.append(xr.apply_ufunc(
            _year_block, tn, tx, pp, lat_da,
            input_core_dims=[["time"], ["time"], ["ptime"], []],
            output_core_dims=[["stat"]], dask="parallelized", output_dtypes=[np.float64],
            dask_gufunc_kwargs={"output_sizes": {"stat": 3}},
            kwargs=dict(t_month=t_mon[ti], p_month=p_mon[pi], p_days=p_days_all[pi],
                        doy=doy_all[ti], days_in_year=_year_length(calendar, year))))
    stats = xr.concat(per_year, dim="year").assign_coords(
        year=np.arange(years[0], years[1] + 1), stat=list(_YEAR_STATS))
    return stats.to_dataset(dim="stat").transpose("year", "y", "x")


def _factors(p, d, a, moisture):
    dry, wet = moisture_factors(p, d, a, **{k: v for k, v in moisture.__dict__.items()})
    return np.stack([dry, wet], axis=-1)


def _classify(lf, development, survival, side_dry, side_wet, suit):
    """too_dry / too_wet where the moisture score is below both other scores and suit < 1."""
    score = np.minimum(side_dry, side_wet)
    held = (score < development) & (score < survival) & (suit < 1.0)
    n = len(LIMITING_FACTOR_CLASSES)
    code = np.where(side_dry <= side_wet, n + MOISTURE_CLASSES.index("too_dry"),
                    n + MOISTURE_CLASSES.index("too_wet"))
    out = np.where(held, code, lf)
    return np.where(lf == MISSING_CLASS, MISSING_CLASS, out).astype(np.uint8)


def apply_moisture(ds: xr.Dataset, pr: xr.DataArray, tmin: xr.DataArray, tmax: xr.DataArray,
                   lat: np.ndarray, years: tuple[int, int], moisture, label: str = "") -> xr.Dataset:
    """Add the moisture layers to a period's layers; with a ``[moisture]`` table (``moisture``
    not None) also the moisture score, its part in suitability and the moisture classes."""
    if not (pr["x"].size == tmin["x"].size and pr["y"].size == tmin["y"].size and np.allclose(
            pr["x"].values, tmin["x"].values) and np.allclose(pr["y"].values, tmin["y"].values)):
        raise InputError(f"{label}: precipitation ({pr.attrs.get('source_files')}) is not on the "
                         "grid of tmin/tmax; regrid it to the temperature grid")
    stats = year_statistics(pr, tmin, tmax, lat, years, label)
    ann = stats["precipitation"].mean("year", skipna=False)
    dry = stats["dry_months"].mean("year", skipna=False)
    ai = stats["precipitation"].sum("year", skipna=False) / stats["et0"].sum("year", skipna=False)
    ds = ds.copy()
    new = {"annual_precipitation": ann, "dry_months": dry, "aridity_index": ai}
    if moisture is not None:
        f = xr.apply_ufunc(_factors, ann, dry, ai, dask="parallelized", output_dtypes=[float],
                           output_core_dims=[["side"]],
                           dask_gufunc_kwargs={"output_sizes": {"side": 2}},
                           kwargs={"moisture": moisture})
        side_dry, side_wet = f.isel(side=0, drop=True), f.isel(side=1, drop=True)
        score = np.minimum(side_dry, side_wet)
        new["moisture_score"] = score
        suit = ds["suitability"].astype(np.float64) * score
        ds["suitability"] = suit
        # the scores are re-issued: with dask 2026.8 an output of a dataset that also feeds
        # another of its outputs loses its key when the dataset is computed ("Missing dependency")
        dev = ds["development_score"].astype(np.float64)
        surv = ds["survival_score"].astype(np.float64)
        ds["development_score"] = dev.astype(np.float32, keep_attrs=True)
        ds["survival_score"] = surv.astype(np.float32, keep_attrs=True)
        ds["limiting_factor"] = xr.apply_ufunc(
            _classify, ds["limiting_factor"], dev, surv, side_dry, side_wet, suit,
            dask="parallelized", output_dtypes=[np.uint8])
    for name, da in new.items():
        ds[name] = da
    for name in (*new, "suitability", "limiting_factor"):
        attrs = layer_attrs(name)
        if name == "limiting_factor" and moisture is not None:
            classes = LIMITING_FACTOR_CLASSES + MOISTURE_CLASSES
            attrs.update(flag_values=list(range(len(classes))), flag_meanings=" ".join(classes))
        if name == "suitability" and moisture is not None:
            attrs["long_name"] = ("suitability (development score × survival score × moisture "
                                  "score), screening-level")
        ds[name].attrs = attrs
        if name != "limiting_factor":
            ds[name] = ds[name].astype(np.float32, keep_attrs=True)
    ds["limiting_factor"].encoding["_FillValue"] = MISSING_CLASS
    ds.attrs["moisture_from"] = (f"precipitation {pr.attrs.get('source_files', '')} "
                                 f"({pr.attrs.get('frequency')}); ET0 by Hargreaves-Samani (1985) "
                                 "with FAO-56 extraterrestrial radiation; calendar years "
                                 f"{years[0]}-{years[1]}")
    return ds

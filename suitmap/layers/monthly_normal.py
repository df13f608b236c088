"""Route ``normal`` of monthly climate input: degree-day layers straight from monthly means.

Degree-days of each month from its mean temperature (Tmin+Tmax)/2, with
daily mean temperatures taken as normal with standard deviation
``daily_sd`` (Thom-type method, :func:`suitmap.kernels.monthly.monthly_degree_days_normal`).
Only degree-day layers, generations and a development score come out (no
day of first generation, no lethal days: survival score 1).  See
:mod:`suitmap.climate.monthly` for the ``interpolate`` route.
"""

from __future__ import annotations

import numpy as np
import xarray as xr

from suitmap.climate.monthly import _days_in, _ym, check_months_complete
from suitmap.errors import InputError
from suitmap.kernels.monthly import monthly_degree_days_normal
from suitmap.layers.metadata import LIMITING_FACTOR_CLASSES, MISSING_CLASS, layer_attrs
from suitmap.layers.seasons import SeasonWindow, season_labels


def normal_route_layers(tmin: xr.DataArray, tmax: xr.DataArray, profile, years: tuple[int, int],
                        daily_sd: float) -> xr.Dataset:
    """Route ``normal``: degree-day layers straight from monthly means (a quick screen)."""
    dev = profile.development
    if dev.degree_days_per_generation is None:
        raise InputError("the monthly 'normal' route needs development.degree_days_per_generation "
                         "in the profile (it computes degree-days, not rate summation)")
    check_months_complete(tmin, years)  # the same rule as the interpolate route
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

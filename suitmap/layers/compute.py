"""Per-period layers over a chunked grid.

Daily Tmin/Tmax (dims ``time, y, x``, °C, time in one chunk) go through the
pure degree-day kernel block by block (``xr.apply_ufunc`` with
``dask="parallelized"``); each block is reduced to season-year statistics at
once, so memory is bounded by the spatial chunk size, never by the grid.
Seasonal sums are accumulated in float64.

The season statistics are then summarised over the period into the layers of
the glossary.  The suitability score is defined in the README:

    development_score = years_with_generation * min(1, generations / saturating_generations)
    survival_score    = fraction of seasons without any lethal cold or heat day
    suitability       = development_score * survival_score
"""

from __future__ import annotations

import numpy as np
import xarray as xr

from suitmap.errors import InputError
from suitmap.kernels.season import season_degree_days, season_reduce
from suitmap.layers.metadata import LIMITING_FACTOR_CLASSES, MISSING_CLASS, layer_attrs
from suitmap.config.profile import Profile
from suitmap.layers.daily_rates import _built_table, _daily_development, _fast_table  # noqa: F401
from suitmap.layers.seasons import (NORTH_DEFAULT, SOUTH_DEFAULT, SeasonWindow, complete_seasons,
                      day360_to_365, season_index, season_labels, time_fields)

#: Season statistics computed per cell and season-year, in this order.
SEASON_STATS = ("degree_days", "development", "first_generation_day", "cold_kill_days",
                "heat_kill_days", "mean_tmax")


def cell_latitudes(da: xr.DataArray) -> np.ndarray:
    """Latitude (degrees north) of every cell centre of a (y, x) grid."""
    crs = da.rio.crs
    xx, yy = np.meshgrid(da["x"].values, da["y"].values)
    if crs is None or crs.is_geographic:
        return yy.astype(float)
    from pyproj import Transformer

    tr = Transformer.from_crs(crs.to_wkt(), "EPSG:4326", always_xy=True)
    _, lat = tr.transform(xx, yy)
    return np.asarray(lat, dtype=float)


def season_windows(profile: Profile) -> tuple[SeasonWindow, SeasonWindow, bool]:
    """(north window, south window, per-hemisphere?) for a profile."""
    if profile.season.is_default:
        return SeasonWindow(*NORTH_DEFAULT), SeasonWindow(*SOUTH_DEFAULT), True
    w = SeasonWindow(profile.season.start, profile.season.end)
    return w, w, False


def _season_block(tmin: np.ndarray, tmax: np.ndarray, lat: np.ndarray, *,
                  slices_north, slices_south, per_hemisphere, doy, lower, upper, method, cutoff,
                  dd_per_gen, curve, lethal_cold, lethal_heat, table=None,
                  dd_diurnal="sine", fast=True) -> np.ndarray:
    """Season statistics of one block; arrays arrive as (y, x, time).

    Days with Tmin > Tmax are swapped here (the smaller value is the minimum).
    Degree-days come from one pass over the block in its own (time-major)
    order; rate summation (``curve``) also needs contiguous per-cell copies.
    """
    ny, nx, nt = tmin.shape
    tmin_t, tmax_t = np.moveaxis(tmin, -1, 0), np.moveaxis(tmax, -1, 0)
    if curve is not None:
        tmin, tmax = np.minimum(tmin, tmax), np.maximum(tmin, tmax)  # contiguous copies
    if slices_north is None:
        slices_north = [None] * len(slices_south)
    nseason = len(slices_north)
    out = np.full((ny, nx, len(SEASON_STATS), nseason), np.nan)
    lat = np.asarray(lat, dtype=float)
    south = (lat < 0) if per_hemisphere else np.zeros(lat.shape, dtype=bool)
    groups = []
    if (~south).any():
        groups.append((~south, slices_north))
    if south.any():
        groups.append((south, slices_south))
    for cells, slices in groups:
        for k, sl in enumerate(slices):
            if sl is None:
                continue
            i0, i1 = sl
            day_kw = ({"latitude": lat, "doy": doy} if dd_diurnal == "parton_logan" else {})
            total, first, cold, heat, mean_tmax = season_degree_days(
                tmin_t, tmax_t, i0, i1, lower, upper, method, cutoff, dd_per_gen or 1.0,
                lethal_cold, lethal_heat, fast=fast, **day_kw)
            if curve is None:
                stats = np.stack([total, total / dd_per_gen, first, cold, heat, mean_tmax], axis=-1)
                out[cells, :, k] = stats[cells]
                continue
            tn = np.ascontiguousarray(tmin[..., i0:i1])
            tx = np.ascontiguousarray(tmax[..., i0:i1])
            nxt = np.empty_like(tn)
            nxt[..., :-1] = tn[..., 1:]
            nxt[..., -1] = tmin[..., i1] if i1 < nt else tn[..., -1]
            daily = _daily_development(tn, tx, nxt, lat, doy[i0:i1], curve, table)
            development, first, cold, heat, mean_tmax = season_reduce(
                daily, tn, tx, 1.0, lethal_cold, lethal_heat)
            stats = np.stack([total, development, first, cold, heat, mean_tmax], axis=-1)
            stats[np.isnan(total) | np.isnan(development)] = np.nan
            out[cells, :, k] = stats[cells]
    return out


def season_statistics(tmin: xr.DataArray, tmax: xr.DataArray, profile: Profile,
                      years: tuple[int, int], *, label: str = "", fast: bool = True) -> xr.Dataset:
    """Lazy per-season statistics (dims ``season_year, y, x``) for one period.

    ``tmin``/``tmax`` must already be limited to (at least) the period's
    years; days outside whole seasons are ignored.
    """
    first, last = years
    yrs, mons, days, calendar = time_fields(tmin["time"])
    north_w, south_w, per_hemisphere = season_windows(profile)
    lat = cell_latitudes(tmin.isel(time=0))
    south = (lat < 0) if per_hemisphere else np.zeros(lat.shape, dtype=bool)
    valid_cells = np.ones(lat.shape, dtype=bool)

    lab_n = season_labels(yrs, mons, days, north_w)
    lab_s = season_labels(yrs, mons, days, south_w)
    seasons_n = complete_seasons(lab_n, north_w, calendar, first, last) if (~south & valid_cells).any() else []
    seasons_s = complete_seasons(lab_s, south_w, calendar, first, last) if (south & valid_cells).any() else []
    for cells, seas, w, hemi in ((~south, seasons_n, north_w, "northern"),
                                 (south, seasons_s, south_w, "southern")):
        if cells.any() and not seas:
            where = f" ({label})" if label else ""
            raise InputError(
                f"climate{where}: no complete season {w.text()} in years {first}-{last} "
                f"for {hemi}-hemisphere cells; extend the data or change the years or season"
            )
    season_years = sorted(set(seasons_n) | set(seasons_s))
    slices_n = season_index(lab_n, season_years) if seasons_n else [None] * len(season_years)
    slices_s = season_index(lab_s, season_years) if seasons_s else [None] * len(season_years)
    slices_n = [s if y in seasons_n else None for s, y in zip(slices_n, season_years)]
    slices_s = [s if y in seasons_s else None for s, y in zip(slices_s, season_years)]

    dev, surv = profile.development, profile.survival
    south_da = xr.DataArray(south, dims=("y", "x"), coords={"y": tmin["y"], "x": tmin["x"]})
    lat_da = xr.DataArray(lat, dims=("y", "x"), coords={"y": tmin["y"], "x": tmin["x"]})
    if tmin.chunks is not None:
        lat_da = lat_da.chunk({"y": tmin.chunks[1], "x": tmin.chunks[2]})
    rc = dev.rate_curve
    curve = None if rc is None else (rc.model, rc.as_dict(), dev.diurnal)
    table = None
    if fast and curve is not None:
        table = _fast_table(rc, dev.diurnal, lat, np.asarray(tmin["time"].dt.dayofyear.values))
    doy = np.asarray(tmin["time"].dt.dayofyear.values, dtype=float)
    nt = tmin.sizes["time"]
    common = dict(per_hemisphere=per_hemisphere, lower=dev.lower_threshold,
                  upper=dev.upper_threshold, method=dev.method, cutoff=dev.cutoff,
                  dd_per_gen=dev.degree_days_per_generation, curve=curve, table=table,
                  dd_diurnal=dev.diurnal, fast=fast,
                  lethal_cold=surv.lethal_cold, lethal_heat=surv.lethal_heat)
    # one small computation per season-year: each task holds one season of one spatial
    # chunk (plus the next day, for the double methods), so memory does not grow with the
    # length of the period
    per_season = []
    for k in range(len(season_years)):
        parts = [sl for sl in (slices_n[k], slices_s[k]) if sl is not None]
        s0, s1 = min(a for a, _ in parts), max(b for _, b in parts)
        stop = min(s1 + 1, nt)

        def rel(sl):
            return None if sl is None else [(sl[0] - s0, sl[1] - s0)]

        window = dict(time=slice(s0, stop))
        tn, tx = tmin.isel(window), tmax.isel(window)
        if tn.chunks is not None:
            tn, tx = tn.chunk({"time": -1}), tx.chunk({"time": -1})
        per_season.append(xr.apply_ufunc(
            _season_block, tn, tx, lat_da,
            input_core_dims=[["time"], ["time"], []],
            output_core_dims=[["stat", "season_year"]],
            dask="parallelized",
            output_dtypes=[np.float64],
            dask_gufunc_kwargs={"output_sizes": {"stat": len(SEASON_STATS), "season_year": 1}},
            kwargs=dict(slices_north=rel(slices_n[k]), slices_south=rel(slices_s[k]) or [None],
                        doy=doy[s0:stop], **common),
        ))
    stats = xr.concat(per_season, dim="season_year") if len(per_season) > 1 else per_season[0]
    stats.attrs = {}
    stats = stats.assign_coords(season_year=np.array(season_years, dtype=np.int64),
                                stat=list(SEASON_STATS))
    ds = stats.to_dataset(dim="stat")
    ds = ds.transpose("season_year", "y", "x")
    if calendar == "360_day":
        # day-of-season outputs made comparable with 365-day calendars (same month and day)
        fg = ds["first_generation_day"]
        if per_hemisphere:
            mapped = xr.where(south_da, xr.apply_ufunc(day360_to_365, fg, kwargs={"window": south_w},
                                                       dask="parallelized", output_dtypes=[float]),
                              xr.apply_ufunc(day360_to_365, fg, kwargs={"window": north_w},
                                             dask="parallelized", output_dtypes=[float]))
        else:
            mapped = xr.apply_ufunc(day360_to_365, fg, kwargs={"window": north_w},
                                    dask="parallelized", output_dtypes=[float])
        ds["first_generation_day"] = mapped.transpose("season_year", "y", "x")
        ds.attrs["day_of_season_note"] = ("360_day days of season mapped to a 365-day year keeping "
                                          "month and day (first_generation_day)")
    ds.attrs.update({
        "seasons_northern": ",".join(map(str, seasons_n)),
        "seasons_southern": ",".join(map(str, seasons_s)),
        "season_northern": north_w.text(),
        "season_southern": south_w.text() if per_hemisphere else north_w.text(),
        "calendar": calendar,
    })
    return ds


def period_layers(stats: xr.Dataset, profile: Profile) -> xr.Dataset:
    """Summarise season statistics over the period into the output layers."""
    dev, surv = profile.development, profile.survival
    dd = stats["degree_days"]
    valid = dd.notnull()
    n = valid.sum("season_year")
    present = n > 0
    nf = n.where(present)

    def mean(x):
        return x.where(valid).sum("season_year").where(present) / nf

    gens = stats["development"]  # degree-days / thermal constant, or summed daily development
    complete = np.floor(gens)
    first_day = stats["first_generation_day"]
    n_first = first_day.notnull().sum("season_year")
    out = {
        "degree_days": mean(dd),
        "generations": mean(gens),
        "complete_generations": mean(complete),
        "first_generation_day": first_day.sum("season_year").where(n_first > 0) / n_first.where(n_first > 0),
        "years_with_generation": mean((complete >= 1).astype(float)),
    }
    cold_free = (stats["cold_kill_days"] == 0)
    heat_free = (stats["heat_kill_days"] == 0)
    if surv.lethal_cold is not None:
        out["cold_kill_days"] = mean(stats["cold_kill_days"])
    if surv.lethal_heat is not None:
        out["heat_kill_days"] = mean(stats["heat_kill_days"])
    sat = profile.suitability.saturating_generations
    development = out["years_with_generation"] * np.minimum(1.0, out["generations"] / sat)
    survival = mean((cold_free & heat_free).astype(float))
    out["development_score"] = development
    out["survival_score"] = survival
    out["suitability"] = development * survival

    cold_s = mean(cold_free.astype(float))
    heat_s = mean(heat_free.astype(float))
    too_hot = mean(stats["mean_tmax"]) > dev.upper_threshold
    dev_class = xr.where(too_hot, LIMITING_FACTOR_CLASSES.index("too_hot"),
                         LIMITING_FACTOR_CLASSES.index("too_cool"))
    lowest = xr.concat([development, cold_s, heat_s], dim="factor").fillna(2.0).argmin("factor")
    code = xr.where(lowest == 0, dev_class,
                    xr.where(lowest == 1, LIMITING_FACTOR_CLASSES.index("cold_kill"),
                             LIMITING_FACTOR_CLASSES.index("heat_kill")))
    code = xr.where(out["suitability"] >= 1.0, LIMITING_FACTOR_CLASSES.index("none"), code)
    out["limiting_factor"] = xr.where(present, code, MISSING_CLASS).astype(np.uint8)

    ds = xr.Dataset(out)
    for name in ds.data_vars:
        ds[name].attrs = layer_attrs(name)
        if name != "limiting_factor":
            ds[name] = ds[name].astype(np.float32, keep_attrs=True)
    ds["limiting_factor"].encoding["_FillValue"] = MISSING_CLASS
    ds.attrs.update(stats.attrs)
    ds.attrs["seasons"] = int(stats.sizes["season_year"])
    rc = dev.rate_curve
    how = ("degree-days / degree_days_per_generation" if rc is None else
           f"rate summation: {rc.model} development rate integrated over a {dev.diurnal} day")
    ds.attrs["generations_from"] = how
    ds.attrs["degree_days_from"] = (
        f"Parton-Logan day (Parton & Logan 1981; daylength after Forsythe et al. 1995), "
        f"{dev.cutoff} cutoff; the {dev.method} method's own day curve is not used"
        if dev.diurnal == "parton_logan" else f"{dev.method} method, {dev.cutoff} cutoff")
    ds["degree_days"].attrs["comment"] = f"daily degree-days from the {ds.attrs['degree_days_from']}"
    for name in ("generations", "complete_generations", "first_generation_day",
                 "years_with_generation"):
        ds[name].attrs["comment"] = f"generations from {how}"
    return ds


def compute_layers(tmin: xr.DataArray, tmax: xr.DataArray, profile: Profile,
                   years: tuple[int, int], *, label: str = "", fast: bool = True,
                   pr: xr.DataArray | None = None) -> xr.Dataset:
    """Lazy output layers (dims ``y, x``) of one period; CRS copied from the input.

    ``fast``: rate summation uses precomputed tables (within 1e-3 of the
    exact integral; see :mod:`suitmap.kernels.tables`) and sine degree-days
    the float32 closed form (within about 1e-5 °C·day a day;
    :mod:`suitmap.kernels.degree_days32`).  ``pr``: precipitation (mm/day) for the
    moisture layers (:mod:`suitmap.layers.moisture`); [[stage]] tables add the
    life-stage layers (:mod:`suitmap.layers.stages`).
    """
    stats = season_statistics(tmin, tmax, profile, years, label=label, fast=fast)
    ds = period_layers(stats, profile)
    if profile.biology.stages:
        from suitmap.layers.stages import apply_stages

        ds = apply_stages(ds, tmin, tmax, profile, years, lat=cell_latitudes(tmin.isel(time=0)),
                          windows=season_windows(profile), label=label, fast=fast)
    if pr is not None:
        from suitmap.layers.moisture import apply_moisture

        ds = apply_moisture(ds, pr, tmin, tmax, cell_latitudes(tmin.isel(time=0)), years,
                            profile.biology.moisture, label=label)
    if profile.biology.tested_range is not None:
        from suitmap.layers.tested_range import add_outside_tested_range

        ds = add_outside_tested_range(ds, tmin, tmax, profile, years)
    if pr is None and profile.biology.moisture is not None:
        import warnings

        from suitmap.errors import SuitmapWarning

        warnings.warn(f"{label or 'period'}: the profile has [moisture] but no precipitation (pr) "
                      "is given; suitability is not limited by moisture", SuitmapWarning, stacklevel=2)
    crs = tmin.rio.crs
    for c in ("x", "y"):
        ds[c].attrs = dict(tmin[c].attrs)
    if crs is not None:
        ds = ds.rio.write_crs(crs)
    ds.attrs["period"] = label
    ds.attrs["years"] = f"{years[0]}-{years[1]}"
    return ds

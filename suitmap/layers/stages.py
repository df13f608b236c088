"""Life-stage layers of one period: event days, generations from the stages, the photoperiod cap.

With ``[[stage]]`` tables in the profile each season is walked stage by stage
(:func:`suitmap.kernels.stages.stage_walk`), each stage on its own thresholds'
daily degree-days (the profile's method and cutoff) or, for a stage with its own
``rate_curve``, on its daily development (the rate integrated over the profile's
day shape, :mod:`suitmap.layers.daily_rates`), from the biofix
(``[season] biofix``: a date, or the first day from a date that begins n days
with Tmax at or above a level; else the season's first day).  Per period:

    first_<stage>_day   mean day of season on which the first generation completes <stage>,
                        over the seasons in which it does
    years_with_<stage>  fraction of seasons in which it does (0 = never; missing = no data)
    generations, complete_generations, first_generation_day, years_with_generation
                        from the stages (a generation = every stage once)
    generations_before_diapause   with [diapause]: whole generations before one enters
                        its sensitive stage on short, shortening days (Forsythe et al. 1995
                        day length); it replaces generations in the development score

The development score and suitability are recomputed from these.
"""

from __future__ import annotations

import numpy as np
import xarray as xr

from suitmap.config.biology import BiofixRule
from suitmap.errors import ProfileError
from suitmap.kernels.degree_days import degree_days_block
from suitmap.kernels.diurnal import daylength
from suitmap.kernels.stages import rule_start, stage_walk
from suitmap.layers.daily_rates import _daily_development, _fast_table
from suitmap.layers.metadata import LIMITING_FACTOR_CLASSES, MISSING_CLASS, layer_attrs
from suitmap.layers.seasons import (complete_seasons, day360_to_365, season_index, season_labels,
                                    time_fields)


def _block(tmin, tmax, lat, *, slices_north, slices_south, starts_north, starts_south, doy,
           stages, method, cutoff, critical, sensitive, rule=None):
    """(y, x, n_stages + 2) of one season: first days per stage, generations, before-diapause."""
    ny, nx, nt = tmin.shape
    n = len(stages)
    out = np.full((ny, nx, n + 2), np.nan)
    tn, tx = np.minimum(tmin, tmax), np.maximum(tmin, tmax)
    south = np.asarray(lat) < 0
    need = np.array([1.0 if s[0] == "rate" else s[3] for s in stages])
    shares = (None if all(s[0] == "dd" for s in stages)
              else np.full(n, 1.0 / n))     # mixed: every stage an equal share (README)
    for cells, sl, start in ((~south, slices_north, starts_north),
                             (south, slices_south, starts_south)):
        if sl is None or not cells.any():
            continue
        i0, i1 = sl
        a = np.ascontiguousarray(tn[..., i0:i1])
        b = np.ascontiguousarray(tx[..., i0:i1])
        nxt = np.empty_like(a)
        nxt[..., :-1] = a[..., 1:]
        nxt[..., -1] = tn[..., i1] if i1 < nt else a[..., -1]
        dd = np.stack([
            degree_days_block(a, b, nxt, st[1], st[2], method, cutoff, parallel=False)
            if st[0] == "dd" else
            _daily_development(a, b, nxt, np.asarray(lat, float), doy[i0:i1], st[1], st[2])
            for st in stages])
        short = None
        if critical is not None:
            d = doy[i0:i1]
            la = np.asarray(lat, float)[..., None]
            today = daylength(la, d[None, None, :])
            before = daylength(la, d[None, None, :] - 1.0)
            short = (today < critical) & (today < before)
        if rule is not None:      # per cell: first day from the rule's date that begins the warm run
            start = rule_start(b, start, rule[0], rule[1])
        first, gens, capped = stage_walk(dd, need, start=start, short_days=short,
                                         sensitive_stage=sensitive, shares=shares)
        res = np.concatenate([first, gens[..., None], capped[..., None]], axis=-1)
        out[cells] = res[cells]
    return out


def _start(months, days, sl, biofix, what: str) -> int:
    if sl is None or biofix is None:
        return 0
    if isinstance(biofix, BiofixRule):
        biofix = biofix.after
    i0, i1 = sl
    hit = np.flatnonzero((months[i0:i1] == biofix[0]) & (days[i0:i1] == biofix[1]))
    if hit.size == 0:
        raise ProfileError(f"season.biofix {biofix[0]:02d}-{biofix[1]:02d} is not a day of the "
                           f"{what} season; choose a biofix inside the season window")
    return int(hit[0])


def _stage_specs(profile, lat, doy, fast: bool) -> tuple:
    """Per stage ("dd", lower, upper, degree_days) or ("rate", (model, params, day shape),
    fast table or None): a rate-curve stage uses the profile's day shape
    (``development.diurnal``) and, with ``fast``, the same tables as the profile's curve."""
    specs = []
    for s in profile.biology.stages:
        if s.rate_curve is None:
            specs.append(("dd", s.lower_threshold, s.upper_threshold, s.degree_days))
            continue
        diurnal = profile.development.diurnal
        table = _fast_table(s.rate_curve, diurnal, lat, doy) if fast else None
        specs.append(("rate", (s.rate_curve.model, s.rate_curve.as_dict(), diurnal), table))
    return tuple(specs)


def stage_statistics(tmin, tmax, profile, years, lat, windows, label="", fast=True):
    """Lazy per-season stage statistics (dims ``season_year, y, x``)."""
    bio = profile.biology
    north_w, south_w, per_hemisphere = windows
    yrs, mons, days, calendar = time_fields(tmin["time"])
    south = (lat < 0) if per_hemisphere else np.zeros(lat.shape, dtype=bool)
    lab_n = season_labels(yrs, mons, days, north_w)
    lab_s = season_labels(yrs, mons, days, south_w)
    seasons_n = complete_seasons(lab_n, north_w, calendar, *years) if (~south).any() else []
    seasons_s = complete_seasons(lab_s, south_w, calendar, *years) if south.any() else []
    season_years = sorted(set(seasons_n) | set(seasons_s))
    sl_n = season_index(lab_n, season_years) if seasons_n else [None] * len(season_years)
    sl_s = season_index(lab_s, season_years) if seasons_s else [None] * len(season_years)
    sl_n = [s if y in seasons_n else None for s, y in zip(sl_n, season_years)]
    sl_s = [s if y in seasons_s else None for s, y in zip(sl_s, season_years)]
    doy = np.asarray(tmin["time"].dt.dayofyear.values, dtype=float)
    stages = _stage_specs(profile, np.asarray(lat, float), doy, fast)
    names = [s.name for s in bio.stages]
    dia = bio.diapause
    lat_da = xr.DataArray(lat, dims=("y", "x"), coords={"y": tmin["y"], "x": tmin["x"]})
    if tmin.chunks is not None:
        lat_da = lat_da.chunk({"y": tmin.chunks[1], "x": tmin.chunks[2]})
    nt = tmin.sizes["time"]
    per = []
    for k in range(len(season_years)):
        parts = [s for s in (sl_n[k], sl_s[k]) if s is not None]
        s0, s1 = min(a for a, _ in parts), max(b for _, b in parts)
        stop = min(s1 + 1, nt)

        def rel(sl):
            return None if sl is None else (sl[0] - s0, sl[1] - s0)

        kw = dict(slices_north=rel(sl_n[k]), slices_south=rel(sl_s[k]) if per_hemisphere else None,
                  starts_north=_start(mons, days, sl_n[k], bio.biofix, "northern"),
                  starts_south=_start(mons, days, sl_s[k], bio.biofix, "southern")
                  if per_hemisphere else 0,
                  doy=doy[s0:stop], stages=stages, method=profile.development.method,
                  cutoff=profile.development.cutoff,
                  critical=None if dia is None else dia.critical_daylength,
                  sensitive=-1 if dia is None else names.index(dia.sensitive_stage),
                  rule=((bio.biofix.tmax_at_least, bio.biofix.days)
                        if isinstance(bio.biofix, BiofixRule) else None))
        if not per_hemisphere:   # one window for every cell: the north slot serves all
            kw["slices_south"] = kw["slices_north"]
            kw["starts_south"] = kw["starts_north"]
        tn, tx = tmin.isel(time=slice(s0, stop)), tmax.isel(time=slice(s0, stop))
        if tn.chunks is not None:
            tn, tx = tn.chunk({"time": -1}), tx.chunk({"time": -1})
        per.append(xr.apply_ufunc(
            _block, tn, tx, lat_da, input_core_dims=[["time"], ["time"], []],
            output_core_dims=[["stat"]], dask="parallelized", output_dtypes=[np.float64],
            dask_gufunc_kwargs={"output_sizes": {"stat": len(stages) + 2}}, kwargs=kw))
    stats = xr.concat(per, dim="season_year").assign_coords(
        season_year=np.array(season_years, dtype=np.int64),
        stat=[*(f"first_{n}_day" for n in names), "generations", "generations_before_diapause"])
    ds = stats.to_dataset(dim="stat").transpose("season_year", "y", "x")
    if calendar == "360_day":   # days of season comparable with 365-day models, as first_generation_day
        for n in names:
            name = f"first_{n}_day"
            north = xr.apply_ufunc(day360_to_365, ds[name], kwargs={"window": north_w},
                                   dask="parallelized", output_dtypes=[float])
            south_m = xr.apply_ufunc(day360_to_365, ds[name], kwargs={"window": south_w},
                                     dask="parallelized", output_dtypes=[float])
            south_da = xr.DataArray(south, dims=("y", "x"), coords={"y": ds["y"], "x": ds["x"]})
            ds[name] = xr.where(south_da, south_m, north).transpose("season_year", "y", "x")
    return ds


def apply_stages(ds: xr.Dataset, tmin, tmax, profile, years, *, lat, windows,
                 label: str = "", fast: bool = True) -> xr.Dataset:
    """Replace the generation layers of ``ds`` by the stage walk's and add the stage layers."""
    stats = stage_statistics(tmin, tmax, profile, years, lat, windows, label, fast)
    bio = profile.biology
    gens = stats["generations"]
    valid = gens.notnull()
    n = valid.sum("season_year")
    present = n > 0

    def mean(x):
        return x.where(valid).sum("season_year").where(present) / n.where(present)

    ds = ds.copy()
    new = {}
    for s in bio.stages:
        fd = stats[f"first_{s.name}_day"]
        hit = fd.notnull() & valid
        nh = hit.sum("season_year")
        new[f"first_{s.name}_day"] = fd.where(hit).sum("season_year").where(nh > 0) / nh.where(nh > 0)
        new[f"years_with_{s.name}"] = mean(hit.astype(float))
    complete = np.floor(gens)
    new["generations"] = mean(gens)
    new["complete_generations"] = mean(complete)
    new["first_generation_day"] = new[f"first_{bio.stages[-1].name}_day"]
    new["years_with_generation"] = mean((complete >= 1).astype(float))
    counted = new["generations"]
    if bio.diapause is not None:
        new["generations_before_diapause"] = mean(stats["generations_before_diapause"])
        counted = new["generations_before_diapause"]
    sat = profile.suitability.saturating_generations
    development = new["years_with_generation"] * np.minimum(1.0, counted / sat)
    new["development_score"] = development
    # survival_score is re-issued: with dask 2026.8 an output of a dataset that also feeds
    # another of its outputs loses its key when the dataset is computed ("Missing dependency")
    survival = ds["survival_score"].astype(np.float64)
    new["survival_score"] = survival
    suit = development * survival
    new["suitability"] = suit
    lf = ds["limiting_factor"]
    none = LIMITING_FACTOR_CLASSES.index("none")
    code = xr.where(suit >= 1.0, none,
                    xr.where(lf == none, LIMITING_FACTOR_CLASSES.index("too_cool"), lf))
    ds["limiting_factor"] = xr.where(lf == MISSING_CLASS, MISSING_CLASS, code).astype(np.uint8)
    for name, da in new.items():
        ds[name] = da.astype(np.float32)
        ds[name].attrs = layer_attrs(name)
    fix = ("the season start" if bio.biofix is None else
           f"biofix {bio.biofix.text()}" if isinstance(bio.biofix, BiofixRule) else
           "biofix %02d-%02d" % bio.biofix)
    parts = [s.name if s.rate_curve is None else
             f"{s.name} ({s.rate_curve.model} rate curve, {profile.development.diurnal} day)"
             for s in bio.stages]
    mixed = any(s.rate_curve is not None for s in bio.stages)
    how = (f"life stages {', '.join(parts)} (degree-day stages each on its own thresholds; "
           + ("a part-done generation counts each stage as an equal share" if mixed else
              "a part-done generation counts each stage by its degree-days")
           + f"), from {fix}")
    ds.attrs["generations_from"] = how
    for name in ("generations", "complete_generations", "first_generation_day",
                 "years_with_generation"):
        ds[name].attrs["comment"] = f"generations from {how}"
    if bio.diapause is not None:
        ds.attrs["diapause"] = (f"critical day length {bio.diapause.critical_daylength} h at "
                                f"stage {bio.diapause.sensitive_stage} (Forsythe et al. 1995 "
                                "day length)")
    return ds

"""A period's precipitation beside its Tmin/Tmax: opened, limited to the period's years,
checked against the temperature grid (see :mod:`suitmap.climate.precipitation`)."""

from __future__ import annotations

import numpy as np

from suitmap import climate
from suitmap.climate.precipitation import open_precipitation
from suitmap.errors import InputError


def _open_years(src, label: str, years: tuple[int, int], side: int):
    """Precipitation of ``src`` limited to ``years`` (daily: every day; monthly: whole years)."""
    paths = []
    for pattern in src.patterns:
        paths.extend(climate.resolve_paths(pattern, what=f"{label} pr"))
    pr = open_precipitation(paths, variable=src.variable, label=label,
                            chunks={"y": side, "x": side}, file_chunks=True)
    first, last = years
    yrs = pr["time"].dt.year
    if pr.attrs["frequency"] == "daily":
        climate.select_years(pr, first, last, label=f"{label} pr")
    else:   # monthly: each year of the period needs its twelve months
        months = (yrs * 100 + pr["time"].dt.month).values
        missing = [y for y in range(first, last + 1)
                   if np.unique(months[(months // 100) == y]).size != 12]
        if missing:
            raise InputError(f"{label} pr ({pr.attrs['source_files']}): monthly values do "
                             f"not cover all twelve months of {missing[0]}; give whole years "
                             f"{first}-{last}")
    return pr.isel(time=np.flatnonzero(((yrs >= first) & (yrs <= last)).values)), paths


def open_period_precipitation(pc, side: int) -> None:
    """Open ``pc.period.pr`` into ``pc.pr`` (mm/day) and record its files in ``pc.files``."""
    period = pc.period
    pr, paths = _open_years(period.pr, period.name, period.years, side)
    pc.files["pr"] = [str(p) for p in paths]
    try:
        climate.check_same_grid(pc.tmin.isel(time=0), pr.isel(time=0), f"{period.name} tmin",
                                f"{period.name} pr")
    except InputError as exc:
        raise InputError(f"{exc} (precipitation must be on the temperature grid)") from None
    pc.pr = pr.assign_coords(y=pc.tmin["y"], x=pc.tmin["x"])
    pc.notes.append(f"precipitation: {pr.attrs['frequency']}, {pr.attrs['original_units']}")


def delta_precipitation(pc, baseline, side: int) -> None:
    """``pc.pr`` of a delta-change scenario: the baseline's observed precipitation times the
    model's monthly future / historical ratio (:mod:`suitmap.climate.delta_precipitation`)."""
    from suitmap.climate.delta_precipitation import apply_ratios, monthly_ratios

    period, d = pc.period, pc.period.delta
    if baseline.pr is None:
        raise InputError(f"{period.name}: precipitation (pr) is given for the scenario but not "
                         "for the baseline; give the baseline's observed pr too")
    fut, fpaths = _open_years(period.pr, period.name, period.years, side)
    hist, hpaths = _open_years(d.historical_pr, f"{period.name} historical", d.historical_years,
                               side)
    pc.pr = apply_ratios(baseline.pr, monthly_ratios(hist, fut))
    pc.files["pr"] = [str(p) for p in fpaths + hpaths]
    pc.notes.append("precipitation: observed baseline times the model's monthly ratio")

"""A period's precipitation beside its Tmin/Tmax: opened, limited to the period's years,
checked against the temperature grid (see :mod:`suitmap.climate.precipitation`)."""

from __future__ import annotations

import numpy as np

from suitmap import climate
from suitmap.climate.precipitation import open_precipitation
from suitmap.errors import InputError


def open_period_precipitation(pc, side: int) -> None:
    """Open ``pc.period.pr`` into ``pc.pr`` (mm/day) and record its files in ``pc.files``."""
    period = pc.period
    src = period.pr
    paths = []
    for pattern in src.patterns:
        paths.extend(climate.resolve_paths(pattern, what=f"{period.name} pr"))
    pc.files["pr"] = [str(p) for p in paths]
    pr = open_precipitation(paths, variable=src.variable, label=period.name,
                            chunks={"y": side, "x": side}, file_chunks=True)
    first, last = period.years
    years = pr["time"].dt.year
    if pr.attrs["frequency"] == "daily":
        climate.select_years(pr, first, last, label=f"{period.name} pr")
    else:   # monthly: each year of the period needs its twelve months
        months = (years * 100 + pr["time"].dt.month).values
        missing = [y for y in range(first, last + 1)
                   if np.unique(months[(months // 100) == y]).size != 12]
        if missing:
            raise InputError(f"{period.name} pr ({pr.attrs['source_files']}): monthly values do "
                             f"not cover all twelve months of {missing[0]}; give whole years "
                             f"{first}-{last}")
    pr = pr.isel(time=np.flatnonzero(((years >= first) & (years <= last)).values))
    try:
        climate.check_same_grid(pc.tmin.isel(time=0), pr.isel(time=0), f"{period.name} tmin",
                                f"{period.name} pr")
    except InputError as exc:
        raise InputError(f"{exc} (precipitation must be on the temperature grid)") from None
    pc.pr = pr.assign_coords(y=pc.tmin["y"], x=pc.tmin["x"])
    pc.notes.append(f"precipitation: {pr.attrs['frequency']}, {pr.attrs['original_units']}")

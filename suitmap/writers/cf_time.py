"""The climatological time axis of a period's layers (CF section 7.4).

A period layer is a statistic over the seasons of many years
(``cell_methods = "time: sum within years time: mean over years"``), so its
time coordinate is a *climatological* one: a scalar ``time`` whose
``climatology`` attribute names a bounds variable holding the start of the
first year and the end of the last year of the period.  The time value is
the middle of the first year, as in the CF examples of climatological
statistics.

References
----------
Eaton, B. et al. (2023) NetCDF Climate and Forecast (CF) Metadata
Conventions, version 1.11 — section 7.4 "Climatological statistics"
(Example 7.12), section 4.4 (time coordinate, calendars).
"""

from __future__ import annotations

import cftime
import numpy as np
import xarray as xr

__all__ = ["climatology_variables", "BOUNDS_NAME"]

BOUNDS_NAME = "climatology_bounds"


def climatology_variables(years: tuple[int, int], calendar: str = "standard"
                          ) -> tuple[xr.Variable, xr.Variable]:
    """Scalar ``time`` coordinate and its ``climatology_bounds`` of the years *years*.

    Parameters
    ----------
    years
        First and last year of the period (inclusive).
    calendar
        CF calendar of the input climate.

    Returns
    -------
    (time, bounds)
        ``time`` (no dimension) in days since the first year's 1 January,
        ``bounds`` with dimension ``nv`` of size 2.
    """
    first, last = int(years[0]), int(years[1])
    calendar = calendar or "standard"
    units = f"days since {first:04d}-01-01"

    def days(y: int, m: int = 1, d: int = 1) -> float:
        return float(cftime.date2num(cftime.datetime(y, m, d, calendar=calendar), units,
                                     calendar=calendar))

    start, end = days(first), days(last + 1)
    middle = (start + days(first + 1)) / 2
    time = xr.Variable((), np.float64(middle), {
        "standard_name": "time", "long_name": "time (climatological: the period's seasons)",
        "units": units, "calendar": calendar, "axis": "T", "climatology": BOUNDS_NAME,
        "units_metadata": "leap_seconds: none"})
    bounds = xr.Variable(("nv",), np.array([start, end], dtype=np.float64))
    return time, bounds

"""Season-years on any CF calendar.

A season is a window of (month, day) from ``start`` to ``end``; when ``end``
comes before ``start`` the season wraps the new year and is labelled by the
year in which it starts.  Labels are computed from the time axis alone, so
standard, noleap, all_leap and 360_day calendars all work.  A season counts
only where the data hold every one of its days.
"""

from __future__ import annotations

from dataclasses import dataclass

import cftime
import numpy as np

NORTH_DEFAULT = ((1, 1), (12, 31))
SOUTH_DEFAULT = ((7, 1), (6, 30))
NO_SEASON = -(2**31)


@dataclass(frozen=True)
class SeasonWindow:
    start: tuple[int, int]
    end: tuple[int, int]

    @property
    def wraps(self) -> bool:
        return self.end < self.start

    def text(self) -> str:
        return f"{self.start[0]:02d}-{self.start[1]:02d} to {self.end[0]:02d}-{self.end[1]:02d}"


def time_fields(time) -> tuple[np.ndarray, np.ndarray, np.ndarray, str]:
    """Years, months, days and calendar name of an xarray time coordinate."""
    years = np.asarray(time.dt.year.values, dtype=np.int64)
    months = np.asarray(time.dt.month.values, dtype=np.int64)
    days = np.asarray(time.dt.day.values, dtype=np.int64)
    try:
        calendar = time.dt.calendar
    except AttributeError:  # pragma: no cover - old xarray
        calendar = "standard"
    return years, months, days, calendar


def _days_in_month(year: int, month: int, calendar: str) -> int:
    first = cftime.datetime(year, month, 1, calendar=calendar)
    nxt = cftime.datetime(year + (month == 12), month % 12 + 1, 1, calendar=calendar)
    return (nxt - first).days


def season_length(window: SeasonWindow, year: int, calendar: str) -> int:
    """Number of calendar days in the season starting in ``year``."""
    (sm, sd), (em, ed) = window.start, window.end
    if sd > _days_in_month(year, sm, calendar):
        # start day does not exist this year (e.g. 02-29): season starts next day
        start = cftime.datetime(year + (sm == 12), sm % 12 + 1, 1, calendar=calendar)
    else:
        start = cftime.datetime(year, sm, sd, calendar=calendar)
    end_year = year + 1 if window.wraps else year
    end = cftime.datetime(end_year, em, min(ed, _days_in_month(end_year, em, calendar)),
                          calendar=calendar)
    return (end - start).days + 1


def season_labels(years: np.ndarray, months: np.ndarray, days: np.ndarray,
                  window: SeasonWindow) -> np.ndarray:
    """Season-year label of each day (``NO_SEASON`` outside the window)."""
    md = months * 100 + days
    s = window.start[0] * 100 + window.start[1]
    e = window.end[0] * 100 + window.end[1]
    if not window.wraps:
        inside = (md >= s) & (md <= e)
        label = years.copy()
    else:
        inside = (md >= s) | (md <= e)
        label = np.where(md >= s, years, years - 1)
    return np.where(inside, label, NO_SEASON).astype(np.int64)


def complete_seasons(labels: np.ndarray, window: SeasonWindow, calendar: str,
                     first: int, last: int) -> list[int]:
    """Season-years in [first, last] whose every day is present in ``labels``."""
    out = []
    for year in range(first, last + 1):
        n = int(np.count_nonzero(labels == year))
        if n and n == season_length(window, year, calendar):
            out.append(year)
    return out


def season_index(labels: np.ndarray, season_years: list[int]) -> list[tuple[int, int] | None]:
    """For each wanted season-year, the (start, stop) slice of its days, or None."""
    out: list[tuple[int, int] | None] = []
    for year in season_years:
        idx = np.flatnonzero(labels == year)
        if idx.size == 0:
            out.append(None)
        else:
            if idx[-1] - idx[0] + 1 != idx.size:  # pragma: no cover - labels are contiguous
                raise ValueError("season days are not contiguous")
            out.append((int(idx[0]), int(idx[-1]) + 1))
    return out


_NOLEAP_DIM = np.array([31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31], dtype=float)


def day360_to_365(day_of_season: np.ndarray, window: SeasonWindow) -> np.ndarray:
    """Map 1-based days of a season on the 360_day calendar to a 365-day year.

    Each 360_day date keeps its month and its fraction of the month, so a
    generation that completes on 360_day "15 June" lands on 15 June: days
    of season become comparable with standard and noleap models.
    """
    raw = np.asarray(day_of_season, dtype=float)
    d = np.where(np.isnan(raw), 1.0, raw)
    sm, sd = window.start
    start360 = (sm - 1) * 30 + (min(sd, 30) - 1)          # 0-based day of year of season start
    pos360 = (start360 + d - 1) % 360                       # 0-based day of year in 360_day
    month = np.floor(pos360 / 30).astype(int)
    frac = (pos360 - month * 30 + 0.5) / 30.0              # centre of the day within its month
    cum = np.concatenate([[0.0], np.cumsum(_NOLEAP_DIM)])
    month = np.clip(month, 0, 11)
    pos365 = cum[month] + frac * _NOLEAP_DIM[month] - 0.5  # 0-based, fractional
    start365 = cum[sm - 1] + (min(sd, int(_NOLEAP_DIM[sm - 1])) - 1)
    out = (pos365 - start365) % 365 + 1
    return np.where(np.isnan(raw), np.nan, out)

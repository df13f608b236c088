"""Season-year labels and completeness on several calendars."""

import numpy as np
import pytest
import xarray as xr

from suitmap.layers.seasons import (NO_SEASON, SeasonWindow, complete_seasons, season_labels,
                             season_length, time_fields)


def axis(calendar, start, end):
    t = xr.date_range(start, end, freq="D", calendar=calendar, use_cftime=True)
    return xr.DataArray(t, dims="time", name="time")


@pytest.mark.parametrize("calendar, year, days", [
    ("standard", 2000, 366), ("standard", 2001, 365), ("noleap", 2000, 365),
    ("all_leap", 2001, 366), ("360_day", 2001, 360),
])
def test_whole_year_length_matches_calendar(calendar, year, days):
    # calendar year lengths as defined by the CF conventions (CF 1.8, sec. 4.4.1)
    assert season_length(SeasonWindow((1, 1), (12, 31)), year, calendar) == days


def test_wrapping_season_labels_by_start_year():
    t = axis("standard", "2000-01-01", "2002-12-31")
    y, m, d, cal = time_fields(t)
    w = SeasonWindow((7, 1), (6, 30))
    lab = season_labels(y, m, d, w)
    # 1 Jan 2000 belongs to the season that started 1 Jul 1999
    assert lab[0] == 1999
    i = int(np.flatnonzero((y == 2000) & (m == 7) & (d == 1))[0])
    assert lab[i - 1] == 1999 and lab[i] == 2000
    # only the 2000/01 and 2001/02 seasons are whole in the data
    assert complete_seasons(lab, w, cal, 1999, 2002) == [2000, 2001]
    assert season_length(w, 2000, cal) == 365  # 1 Jul 2000 - 30 Jun 2001


def test_partial_window_and_360_day():
    t = axis("360_day", "2001-01-01", "2002-12-30")
    y, m, d, cal = time_fields(t)
    w = SeasonWindow((3, 1), (10, 31))  # 10-31 does not exist in 360_day: ends 10-30
    lab = season_labels(y, m, d, w)
    assert np.count_nonzero(lab == 2001) == 8 * 30
    assert lab[0] == NO_SEASON
    assert complete_seasons(lab, w, cal, 2001, 2002) == [2001, 2002]


def test_360_day_days_land_on_the_same_dates():
    from suitmap.layers.seasons import day360_to_365

    whole = SeasonWindow((1, 1), (12, 31))
    # 360_day 15 June is day 5*30+15 = 165 of the year; in a 365-day year 15 June is day 166
    assert day360_to_365(np.array([165.0]), whole)[0] == pytest.approx(166.0, abs=0.6)
    # 1 Jan -> 1 Jan, 30 Dec (day 360) -> 31 Dec region (day 364-365)
    assert day360_to_365(np.array([1.0]), whole)[0] == pytest.approx(1.0, abs=0.6)
    assert 363.5 <= day360_to_365(np.array([360.0]), whole)[0] <= 365.0
    # a season from 1 July: 360_day 15 Aug is day 45 of the season; 15 Aug is day 46 from 1 July
    july = SeasonWindow((7, 1), (6, 30))
    assert day360_to_365(np.array([45.0]), july)[0] == pytest.approx(46.0, abs=0.6)
    assert np.isnan(day360_to_365(np.array([np.nan]), whole)[0])

"""Life stages, event dates and the photoperiod cap: the kernel against hand computations,
the layers through a run file with constant-temperature days, day length against astral."""

from __future__ import annotations

import datetime as dt
import math

import numpy as np
import pytest

import suitmap
from conftest import write_period, write_profile, write_runfile
from suitmap.config.profile import profile_from_dict
from suitmap.errors import ProfileError
from suitmap.kernels.stages import rule_start, stage_walk


def const(rate, n=100, cells=1):
    return np.full((cells, n), float(rate))


# ------------------------------------------------------------------ kernel
def test_event_days_equal_cumulative_degree_days_by_hand():
    # constant 20 °C, both stages above 10 °C: 10 °C·day a day.  By hand: egg (55) is done
    # when 55 °C·day have accumulated, on day 6 (50 by day 5, 60 by day 6); larva (100 more,
    # 155 in all) on day 16 (150 by day 15, 160 by day 16).
    first, gens, _ = stage_walk(np.stack([const(10), const(10)]), np.array([55.0, 100.0]))
    assert first[0].tolist() == [6.0, 16.0]
    # 100 days × 10 = 1000 °C·day = 6 generations of 155 and 70/155 of the seventh
    assert gens[0] == pytest.approx(6 + 70 / 155)


def test_a_higher_threshold_delays_its_event_by_the_right_amount():
    # constant 20 °C: egg from 10 °C gets 10 °C·day a day (50 → day 5); larva 100 °C·day from
    # 10 °C takes 100/10 = 10 days (day 15), from 15 °C 100/5 = 20 days (day 25): a delay of
    # 100/5 - 100/10 = 10 days; the egg event is unchanged
    same, _, _ = stage_walk(np.stack([const(20 - 10), const(20 - 10)]), np.array([50.0, 100.0]))
    late, _, _ = stage_walk(np.stack([const(20 - 10), const(20 - 15)]), np.array([50.0, 100.0]))
    assert same[0].tolist() == [5.0, 15.0]
    assert late[0].tolist() == [5.0, 25.0]
    assert late[0, 1] - same[0, 1] == 100 / 5 - 100 / 10


def test_stage_done_mid_day_passes_the_rest_of_the_day_on():
    # egg 15 °C·day at 10 a day: done after 1.5 days; the other half of day 2 goes to the
    # larva at its own 4 °C·day a day: 2 of its 10, then 2 more days of 4 -> done on day 4
    first, _, _ = stage_walk(np.stack([const(10, 10), const(4, 10)]), np.array([15.0, 10.0]))
    assert first[0].tolist() == [2.0, 4.0]


def test_biofix_never_and_missing():
    dd = np.stack([np.full((3, 40), 10.0), np.full((3, 40), 10.0)])
    dd[:, 1] = 0.0                     # too cold: never
    dd[0, 2, 7] = np.nan               # before the biofix: not used
    dd[1, 2, 17] = np.nan              # missing input
    first, gens, _ = stage_walk(dd, np.array([50.0, 50.0]), start=10)
    assert first[0].tolist() == [15.0, 20.0]       # counted from day 11
    assert np.isnan(first[1]).all() and gens[1] == 0.0   # never: NaN day, zero generations
    assert np.isnan(gens[2])                               # missing: NaN everywhere


def test_short_days_stop_the_generation_entering_its_sensitive_stage():
    # 20-day generations (egg 5 d, larva 10 d, pupa 5 d); the larva (sensitive) is entered on
    # day 5 + 20 k.  Days from day 50 on are short: the generation entering its larva on
    # day 65 (k = 3) enters diapause, 3 whole generations before it.
    dd = np.stack([const(10, 200)] * 3)
    short = np.zeros((1, 200), bool)
    short[0, 49:] = True
    first, gens, before = stage_walk(dd, np.array([50.0, 100.0, 50.0]), short_days=short,
                                     sensitive_stage=1)
    assert before[0] == 3.0
    assert gens[0] == pytest.approx(3 + 50 / 200)   # stopped as it entered the larva
    _, gens_free, before_free = stage_walk(dd, np.array([50.0, 100.0, 50.0]))
    assert before_free[0] == 10.0 and gens_free[0] == 10.0


# ------------------------------------------------------------------ profile
BASE = {"organism": {"name": "x"},
        "development": {"lower_threshold": 10, "upper_threshold": 30,
                        "degree_days_per_generation": 200}}


@pytest.mark.parametrize("extra, needle", [
    ({"stage": [{"name": "egg"}]}, "stage[0].degree_days"),
    ({"stage": [{"name": "Egg!", "degree_days": 5}]}, "stage[0].name"),
    ({"stage": [{"name": "egg", "degree_days": 5, "lower_threshold": 40}]}, "stage[0] lower"),
    ({"stage": [{"name": "egg", "degree_days": 5}] * 2}, "unique"),
    ({"stage": [{"name": "egg", "degree_days": 5}],
      "diapause": {"critical_daylength": 14, "sensitive_stage": "pupa"}}, "sensitive_stage"),
    ({"stage": [{"name": "egg", "degree_days": 5}],
      "diapause": {"critical_daylength": 25, "sensitive_stage": "egg"}}, "critical_daylength"),
    ({"season": {"biofix": "13-01"}}, "season.biofix"),
])
def test_bad_stage_tables_are_refused(extra, needle):
    with pytest.raises(ProfileError, match=None) as err:
        profile_from_dict({**BASE, **extra})
    assert needle in str(err.value)


# ------------------------------------------------------------------ layers
STAGES = """
[[stage]]
name = "egg"
degree_days = 50.0

[[stage]]
name = "larva"
degree_days = 100.0
lower_threshold = 15.0

[[stage]]
name = "pupa"
degree_days = 50.0
"""


def _constant_run(tmp_path, extra_profile, *, t=20.0, lat0=51.0, season=""):
    tmp_path.mkdir(parents=True, exist_ok=True)
    tmin = np.full((730, 2, 2), t)
    prof = write_profile(tmp_path, lower=10.0, upper=30.0, ddg=200.0, season=season)
    prof.write_text(prof.read_text() + extra_profile)
    b = write_period(tmp_path / "c", "b", tmin, tmin.copy(), lat0=lat0)
    return write_runfile(tmp_path, prof, [{"name": "baseline", "years": (2001, 2002),
                                           "tmin": f"c/{b[0]}", "tmax": f"c/{b[1]}"}])


def test_stage_layers_from_constant_days(tmp_path):
    # 20 °C every day (Tmin = Tmax): egg 10/day -> day 5; larva from 15 °C 5/day, 20 days ->
    # day 25; pupa 10/day, 5 days -> day 30.  Cycle 30 days: 365 = 12 × 30 + 5, the 13th
    # generation has its egg (50 of 200 °C·day) -> 12.25 generations
    run = _constant_run(tmp_path, STAGES)
    ds = suitmap.compute_run(run).compute().periods["baseline"]
    assert np.all(ds["first_egg_day"].values == 5)
    assert np.all(ds["first_larva_day"].values == 25)
    assert np.all(ds["first_pupa_day"].values == 30)
    assert np.all(ds["first_generation_day"].values == 30)
    np.testing.assert_allclose(ds["generations"].values, 12.25, rtol=1e-6)
    assert np.all(ds["complete_generations"].values == 12)
    assert np.all(ds["years_with_larva"].values == 1.0)
    assert ds["first_larva_day"].attrs["units"] == "days"


def test_biofix_shifts_events_and_never_is_not_missing(tmp_path):
    run = _constant_run(tmp_path, STAGES.replace('name = "egg"', 'name = "egg"'),
                        season='[season]\nstart = "01-01"\nend = "12-31"\nbiofix = "02-01"\n')
    ds = suitmap.compute_run(run).compute().periods["baseline"]
    assert np.all(ds["first_egg_day"].values == 31 + 5)     # 1 February is day 32
    cold = _constant_run(tmp_path / "cold", STAGES, t=13.0)  # the larva (from 15 °C) never grows
    dc = suitmap.compute_run(cold).compute().periods["baseline"]
    assert np.all(dc["first_egg_day"].values == 17)          # 50 / 3 = 16.7 -> day 17
    assert np.isnan(dc["first_larva_day"].values).all()
    assert np.all(dc["years_with_larva"].values == 0.0)     # "never", distinct from no data
    assert np.all(dc["complete_generations"].values == 0)


def _astral_short_day(lat: float, start: dt.date, critical: float) -> dt.date:
    """First day from ``start`` on whose sunrise-to-sunset span (astral 3.2, refraction and
    solar disc included) is below ``critical`` hours: an independent day-length route."""
    from astral import Observer
    from astral.sun import sun

    obs = Observer(latitude=lat, longitude=0.0)
    d = start
    while True:
        s = sun(obs, date=d)
        if (s["sunset"] - s["sunrise"]).total_seconds() / 3600 < critical:
            return d
        d += dt.timedelta(days=1)


DIAPAUSE = """
[[stage]]
name = "egg"
degree_days = 50.0

[[stage]]
name = "larva"
degree_days = 100.0

[[stage]]
name = "pupa"
degree_days = 50.0

[diapause]
critical_daylength = 14.0
sensitive_stage = "larva"
"""


@pytest.mark.parametrize("lat0, season_start, solstice", [
    (51.0, dt.date(2001, 1, 1), dt.date(2001, 6, 22)),      # cells at 50.5 and 49.5 °N
    (-49.0, dt.date(2001, 7, 1), dt.date(2001, 12, 22)),    # cells at -49.5 and -50.5 °S
])
def test_photoperiod_cap_falls_on_the_right_generation(tmp_path, lat0, season_start, solstice):
    # 20 °C every day, every stage from 10 °C: generations of 5 + 10 + 5 = 20 days; the larva
    # (sensitive) is entered on day of season 5 + 20 k.  The cap is the first k whose entry
    # day is on or after the first day shorter than 14 h after the solstice (from astral, not
    # from suitmap's own Forsythe et al. 1995 day length).  Southern cells use the
    # July-June season: the mirrored date gives the same cap.
    run = _constant_run(tmp_path, DIAPAUSE, lat0=lat0)
    ds = suitmap.compute_run(run).compute().periods["baseline"]
    for row, lat in enumerate((lat0 - 0.5, lat0 - 1.5)):
        short = _astral_short_day(lat, solstice, 14.0)
        day = (short - season_start).days + 1
        k = math.ceil((day - 5) / 20)
        # the astral and Forsythe dates may differ by a day or two: the test needs the date
        # well inside one generation's window
        assert 5 + 20 * (k - 1) + 2 < day <= 5 + 20 * k - 2, (lat, day)
        np.testing.assert_array_equal(ds["generations_before_diapause"].values[row], k)
    assert (ds["generations"].values < 18).all()       # 365 / 20 = 18.25 without the cap
    assert "generations_before_diapause" in ds and "diapause" in ds.attrs


def test_360_day_calendar_keeps_month_and_day(tmp_path):
    # 360_day: 20 °C every day, egg done on 360_day day 5, larva (from 15 °C) day 25, pupa
    # day 30, all in January.  As for first_generation_day, each day keeps the place of its
    # centre within the month: by hand, day d of a 30-day January is (d - 0.5) / 30 × 31 + 0.5
    # in the 31-day January of a 365-day season.
    from climate_fixtures import write_netcdf_daily

    t = np.full((720, 2, 2), 20.0)
    prof = write_profile(tmp_path, lower=10.0, upper=30.0, ddg=200.0)
    prof.write_text(prof.read_text() + STAGES)
    for v in ("tmin", "tmax"):
        write_netcdf_daily(tmp_path / f"{v}.nc", t, var=v, role=v, calendar="360_day",
                           crs="EPSG:4326")
    run = write_runfile(tmp_path, prof, [{"name": "baseline", "years": (2001, 2002),
                                          "tmin": "tmin.nc", "tmax": "tmax.nc"}])
    ds = suitmap.compute_run(run).compute().periods["baseline"]
    for name, d in (("first_egg_day", 5), ("first_larva_day", 25), ("first_pupa_day", 30)):
        np.testing.assert_allclose(ds[name].values, (d - 0.5) / 30 * 31 + 0.5, rtol=1e-6)


def test_biofix_rule_by_hand():
    # first index >= after that begins `days` days with Tmax >= 15 (by hand from the rows)
    t = np.array([[20, 20, 5, 20, 20, 20, 20], [5] * 7, [20] * 7], float)
    assert rule_start(t, 0, 15.0, 3).tolist() == [3, 7, 0]      # 7 = never
    assert rule_start(t, 4, 15.0, 3).tolist() == [4, 7, 4]
    first, gens, _ = stage_walk(np.full((1, 2, 7), 10.0), np.array([20.0]),
                                start=np.array([5, 7]))
    assert first[:, 0].tolist()[0] == 7.0 and np.isnan(first[1, 0]) and gens[1] == 0.0


def test_biofix_rule_in_a_run(tmp_path):
    # 10 °C (no development above 10 °C) with a 2-day warm spell on days 20-21 and warmth from
    # day 40 on, in the first row; the second row stays at 10 °C.  Rule: from 01-10, 3 days with
    # Tmax >= 15 -> biofix day 40; egg (50 °C·day at 10 a day) done on day 44.  The spell is too
    # short to start the count (from the season start the egg would be done on day 42).
    t = np.full((730, 2, 2), 10.0)
    for y0 in (0, 365):
        t[y0 + 19:y0 + 21, 0] = 20.0
        t[y0 + 39:y0 + 365, 0] = 20.0
    rule = '[season]\nstart = "01-01"\nend = "12-31"\n'
    rule += 'biofix = { after = "01-10", tmax_at_least = 15.0, days = 3 }\n'
    prof = write_profile(tmp_path, lower=10.0, upper=30.0, ddg=200.0, season=rule)
    prof.write_text(prof.read_text() + '\n[[stage]]\nname = "egg"\ndegree_days = 50.0\n')
    b = write_period(tmp_path / "c", "b", t, t.copy())
    run = write_runfile(tmp_path, prof, [{"name": "baseline", "years": (2001, 2002),
                                          "tmin": f"c/{b[0]}", "tmax": f"c/{b[1]}"}])
    ds = suitmap.compute_run(run).compute().periods["baseline"]
    assert (ds["first_egg_day"].values[0] == 44).all()
    assert np.isnan(ds["first_egg_day"].values[1]).all()
    assert (ds["years_with_egg"].values[1] == 0).all()
    assert "Tmax >= 15" in ds.attrs["generations_from"]

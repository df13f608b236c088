"""Life stages with their own development-rate curve: stage durations against the published
curve's formula by hand, equivalence with a degree-day stage, mixed stages, bad tables."""

from __future__ import annotations

import math

import numpy as np
import pytest

import suitmap
from climate_fixtures import make_tmin_tmax
from conftest import write_period, write_profile, write_runfile
from suitmap.config.profile import profile_from_dict
from suitmap.errors import ProfileError
from suitmap.kernels.stages import stage_walk

# Briere-1 (Briere et al. 1999, Environ. Entomol. 28:22-29, eq. 2):
#   r(T) = a T (T - T0) sqrt(TL - T)   for T0 <= T <= TL, else 0
A, T0, TL = 1.0e-4, 10.0, 35.0


def briere1_by_hand(t: float) -> float:
    return A * t * (t - T0) * math.sqrt(TL - t)


EGG_CURVE = f"""
[[stage]]
name = "egg"

[stage.rate_curve]
model = "briere1"
a = {A}
t_low = {T0}
t_high = {TL}
"""

LARVA_DD = """
[[stage]]
name = "larva"
degree_days = 50.0
lower_threshold = 15.0
"""


def _run(tmp_path, stages, tmin, tmax, *, fast=False):
    tmp_path.mkdir(parents=True, exist_ok=True)
    prof = write_profile(tmp_path, lower=10.0, upper=30.0, ddg=200.0)
    prof.write_text(prof.read_text() + stages)
    b = write_period(tmp_path / "c", "b", tmin, tmax)
    extra = "" if fast else "[compute]\nfast_tables = false\n"
    run = write_runfile(tmp_path, prof, [{"name": "baseline", "years": (2001, 2002),
                                          "tmin": f"c/{b[0]}", "tmax": f"c/{b[1]}"}], extra=extra)
    return suitmap.compute_run(run).compute().periods["baseline"]


# ------------------------------------------------------------------ kernel
def test_rate_stage_needs_one_and_mixed_generations_count_equal_shares():
    # egg: development 0.125 a day (needs 1) -> done after 8 days; larva: 10 °C·day a day of
    # 50 -> 5 days.  Cycle 13 days; 40 days = 3 cycles (39 days) + 1 day of the egg (0.125 of
    # it).  With equal shares (0.5 each): 3 + 0.5 × 0.125.  By hand.
    dd = np.stack([np.full((1, 40), 0.125), np.full((1, 40), 10.0)])
    first, gens, _ = stage_walk(dd, np.array([1.0, 50.0]), shares=np.array([0.5, 0.5]))
    assert first[0].tolist() == [8.0, 13.0]
    assert gens[0] == pytest.approx(3 + 0.5 * 0.125)
    with pytest.raises(ValueError, match="shares"):
        stage_walk(dd, np.array([1.0, 50.0]), shares=np.array([0.5, 0.6]))


# ------------------------------------------------------------------ layers
@pytest.mark.parametrize("t", [25.0, 30.0])
def test_constant_days_give_a_stage_duration_of_one_over_the_rate(tmp_path, t):
    # Tmin = Tmax = T: the sine day is constant, development per day = r(T), the egg takes
    # 1/r(T) days and is done on day ceil(1/r(T)).  25 °C: r = 1e-4·25·15·√10 = 0.11859/day,
    # 8.43 days -> day 9; 30 °C: r = 1e-4·30·20·√5 = 0.13416/day, 7.45 days -> day 8.
    # The larva (degree-days from 15 °C, T − 15 a day) takes the rest of the egg's last day
    # and then 50/(T − 15) days more: done on day ceil(1/r + 50/(T − 15)).
    r = briere1_by_hand(t)
    tt = np.full((730, 2, 2), t)
    ds = _run(tmp_path, EGG_CURVE + LARVA_DD, tt, tt.copy())
    egg_days = 1.0 / r
    assert np.all(ds["first_egg_day"].values == math.ceil(egg_days))
    cycle = egg_days + 50.0 / (t - 15.0)
    assert np.all(ds["first_larva_day"].values == math.ceil(cycle))
    assert np.all(ds["first_generation_day"].values == math.ceil(cycle))
    # a 365-day season: n whole cycles, the remainder in the egg (or larva) stage; each stage
    # counts half a generation when stages are mixed (README)
    n = math.floor(365 / cycle)
    rest = 365 - n * cycle
    part = 0.5 * min(rest * r, 1.0) + (0.5 * (rest - egg_days) * (t - 15) / 50
                                       if rest > egg_days else 0.0)
    np.testing.assert_allclose(ds["generations"].values, n + part, rtol=1e-6)   # float32 layer
    assert np.all(ds["complete_generations"].values == n)
    assert "briere1 rate curve" in ds.attrs["generations_from"]


def test_fast_tables_give_the_same_stage_days(tmp_path):
    # the run's default fast tables (within 1e-3 of the exact integral) on the 25 °C case:
    # 8.43 and 13.43 days lie far from whole days, so the days are unchanged
    tt = np.full((730, 2, 2), 25.0)
    ds = _run(tmp_path, EGG_CURVE + LARVA_DD, tt, tt.copy(), fast=True)
    assert np.all(ds["first_egg_day"].values == 9)
    assert np.all(ds["first_larva_day"].values == 14)


def test_linear_rate_stage_equals_the_degree_day_stage(tmp_path):
    # A linear rate r(T) = (T − 11)/180 integrated over the sine day is single-sine degree-days
    # above 11 °C with no upper threshold, divided by 180 (Baskerville & Emin 1969; the
    # linear curve's definition): a stage with that curve and a stage of 180 °C·day above
    # 11 °C (upper threshold 50 °C, never reached) complete on the same days, on varied days.
    tmin, tmax = make_tmin_tmax(730, 3, 4, mean=14.0, seed=11)
    assert np.nanmax(tmax) < 50.0
    rate = """
[[stage]]
name = "egg"

[stage.rate_curve]
model = "linear"
t_low = 11.0
thermal_constant = 180.0
"""
    dd = """
[[stage]]
name = "egg"
degree_days = 180.0
lower_threshold = 11.0
upper_threshold = 50.0
"""
    a = _run(tmp_path / "rate", rate + LARVA_DD, tmin, tmax)
    b = _run(tmp_path / "dd", dd + LARVA_DD, tmin, tmax)
    assert np.isfinite(a["first_larva_day"].values).any()
    for name in ("first_egg_day", "first_larva_day", "complete_generations"):
        np.testing.assert_array_equal(a[name].values, b[name].values)


# ------------------------------------------------------------------ profile
BASE = {"organism": {"name": "x"},
        "development": {"lower_threshold": 10, "upper_threshold": 30,
                        "degree_days_per_generation": 200}}
CURVE = {"model": "briere1", "a": 1e-4, "t_low": 10.0, "t_high": 35.0}


@pytest.mark.parametrize("stage, needle", [
    ({"name": "egg", "rate_curve": {**CURVE, "model": "weibull"}}, "stage[0].rate_curve.model"),
    ({"name": "egg", "rate_curve": {k: v for k, v in CURVE.items() if k != "a"}},
     "missing parameter 'a'"),
    ({"name": "egg", "rate_curve": {**CURVE, "t_high": 5.0}}, "parameter 't_high'"),
    ({"name": "egg", "rate_curve": {**CURVE, "b": 1.0}}, "unknown parameter 'b'"),
    ({"name": "egg", "rate_curve": {**CURVE, "a": "fast"}}, "stage[0].rate_curve.a"),
    ({"name": "egg", "rate_curve": {**CURVE, "a": math.inf}}, "stage[0].rate_curve.a"),
    ({"name": "egg", "rate_curve": "briere1"}, "stage[0].rate_curve must be a table"),
    ({"name": "egg", "rate_curve": CURVE, "degree_days": 50}, "stage[0].degree_days is not used"),
    ({"name": "egg", "rate_curve": CURVE, "lower_threshold": 9}, "stage[0].lower_threshold"),
    ({"name": "egg"}, "stage[0].rate_curve"),
])
def test_bad_stage_rate_curves_are_refused(stage, needle):
    with pytest.raises(ProfileError) as err:
        profile_from_dict({**BASE, "stage": [stage]})
    assert needle in str(err.value)
    assert "\n" not in str(err.value)


def test_degree_day_stages_describe_themselves_as_before():
    # the profile's provenance (and cache key) of degree-day stages is unchanged
    p = profile_from_dict({**BASE, "stage": [{"name": "egg", "degree_days": 50}]})
    assert p.to_dict()["stage"] == [{"name": "egg", "lower_threshold": 10.0,
                                     "upper_threshold": 30.0, "degree_days": 50.0}]
    q = profile_from_dict({**BASE, "stage": [{"name": "egg", "rate_curve": CURVE}]})
    assert q.to_dict()["stage"] == [{"name": "egg", "rate_curve": CURVE}]


@pytest.mark.parametrize("diurnal", ["sine", "parton_logan"])
def test_a_one_stage_rate_curve_follows_the_profiles_day_shape(tmp_path, diurnal):
    # One rate-curve stage with the profile's own [development.rate_curve] is the profile's
    # rate summation split into one stage: its event day equals first_generation_day of the
    # same profile without stages, on varied days, for the sine and the Parton & Logan (1981)
    # day alike (the stage integrates the rate over the profile's day shape).  The two day
    # shapes give different development (checked below), so a stage that ignored the
    # profile's day shape would fail one of the two cases.
    tmin, tmax = make_tmin_tmax(730, 3, 4, mean=14.0, seed=12)
    curve = f'model = "briere1"\na = {A}\nt_low = {T0}\nt_high = {TL}\n'
    day = f'diurnal = "{diurnal}"\n'

    def run(folder, stages):
        folder.mkdir(parents=True)
        prof = write_profile(folder, lower=10.0, upper=30.0, ddg=200.0)
        text = prof.read_text().replace("[survival]", day + "\n[development.rate_curve]\n"
                                        + curve + "\n[survival]")
        prof.write_text(text + stages)
        b = write_period(folder / "c", "b", tmin, tmax)
        r = write_runfile(folder, prof, [{"name": "baseline", "years": (2001, 2002),
                                          "tmin": f"c/{b[0]}", "tmax": f"c/{b[1]}"}],
                          extra="[compute]\nfast_tables = false\n")
        return suitmap.compute_run(r).compute().periods["baseline"]

    plain = run(tmp_path / "plain", "")
    staged = run(tmp_path / "staged", EGG_CURVE)
    assert np.isfinite(plain["first_generation_day"].values).all()
    np.testing.assert_array_equal(staged["first_egg_day"].values,
                                  plain["first_generation_day"].values)
    np.testing.assert_allclose(staged["generations"].values, plain["generations"].values,
                               rtol=1e-6)
    assert diurnal in staged.attrs["generations_from"]
    if diurnal == "parton_logan":
        day = 'diurnal = "sine"\n'
        sine = run(tmp_path / "sine", "")
        assert np.abs(sine["generations"].values - staged["generations"].values).min() > 1e-3

"""Two organisms out of step: mismatch_days against hand computations on constant days."""

from __future__ import annotations

import numpy as np
import pytest

import suitmap
from conftest import write_period, write_profile, write_runfile
from suitmap.errors import RunFileError


def _case(tmp_path, mismatch):
    # 20 °C every day in the baseline, 22 °C in the scenario (Tmin = Tmax)
    t = np.full((730, 2, 2), 20.0)
    first = write_profile(tmp_path, lower=10.0, upper=30.0, ddg=200.0)
    (tmp_path / "second").mkdir()
    second = write_profile(tmp_path / "second", lower=15.0, upper=30.0, ddg=150.0)
    b = write_period(tmp_path / "c", "b", t, t.copy())
    s = write_period(tmp_path / "c", "s", t + 2.0, t + 2.0, start="2053-01-01")
    run = write_runfile(tmp_path, first, [
        {"name": "baseline", "years": (2001, 2002), "tmin": f"c/{b[0]}", "tmax": f"c/{b[1]}"},
        {"name": "warm", "years": (2053, 2054), "tmin": f"c/{s[0]}", "tmax": f"c/{s[1]}"}],
        extra=f"\n[mismatch]\nprofile = \"{second.relative_to(tmp_path)}\"\n{mismatch}")
    return run


def test_mismatch_days_by_hand(tmp_path):
    # baseline: first organism 200 / (20 - 10) = 20 days, second 150 / (20 - 15) = 30 days:
    # mismatch +10.  Scenario at 22 °C: 200 / 12 = 16.7 -> day 17; 150 / 7 = 21.4 -> day 22:
    # mismatch +5, change -5
    out = suitmap.compute_run(_case(tmp_path, "")).compute()
    assert (out.periods["baseline"]["mismatch_days"].values == 10).all()
    assert (out.periods["warm"]["mismatch_days"].values == 5).all()
    assert (out.comparisons["warm_vs_baseline"]["change_mismatch_days"].values == -5).all()
    assert "minus" in out.periods["baseline"].attrs["mismatch"]


def test_unknown_event_is_refused(tmp_path):
    run = _case(tmp_path, 'event = "first_adult_day"\n')
    with pytest.raises(RunFileError, match="first_adult_day"):
        suitmap.compute_run(run)

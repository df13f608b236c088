"""Per-individual lab rows grouped by temperature (suitmap.fit.group_by_temperature).

Synthetic individuals are drawn (seeded) from a Briere-1 curve written out here
from the paper (Briere et al. 1999, eq. 2); the table of means is computed
here with plain numpy, independently of suitmap.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from suitmap.cli import main
from suitmap.config.profile import load_profile
from suitmap.fit import LabData, fit_model, group_by_temperature, linear_part

BRIERE1 = dict(a=1.7e-4, t_low=10.55, t_high=34.0)  # Briere et al. 1999 T0, TL; a from memory
TEMPS = np.array([13.0, 16, 19, 22, 25, 28, 30, 32])
COUNTS = np.array([6, 14, 9, 20, 11, 17, 8, 12])  # individuals reared at each temperature


def briere1(t, a, t_low, t_high):
    """r = a T (T - T0) sqrt(TL - T) on (T0, TL), else 0 (Briere et al. 1999, eq. 2)."""
    t = np.asarray(t, float)
    inside = (t > t_low) & (t < t_high)
    return np.where(inside, a * t * (t - t_low) * np.sqrt(np.clip(t_high - t, 0, None)), 0.0)


def individuals(seed=5, cv=0.12):
    """One row per insect: development time = 1/rate times lognormal scatter."""
    rng = np.random.default_rng(seed)
    t = np.repeat(TEMPS, COUNTS)
    days = 1.0 / briere1(t, **BRIERE1) * np.exp(rng.normal(0.0, cv, t.size))
    order = rng.permutation(t.size)  # the file's row order does not matter
    return t[order], days[order]


def table_of_means(t, days):
    """What a paper would print: mean development time and n per temperature."""
    temps = np.unique(t)
    return temps, np.array([days[t == x].mean() for x in temps]), np.array(
        [float((t == x).sum()) for x in temps])


def test_grouping_gives_the_table_of_means():
    t, days = individuals()
    g = group_by_temperature(LabData(t, days, source="ind.csv"))
    temps, means, n = table_of_means(t, days)
    np.testing.assert_array_equal(g.temperature, temps)
    np.testing.assert_allclose(g.days, means, rtol=1e-12)
    np.testing.assert_array_equal(g.n, n)
    assert g.source == "ind.csv"


def test_rows_with_n_pool_into_their_weighted_mean():
    # two sub-cohorts at 20 °C: 10 insects at 12 days and 30 at 14 days -> 40 at 13.5 days
    data = LabData([15, 20, 20, 25, 30], [30.0, 12.0, 14.0, 8.0, 6.0], [5, 10, 30, 8, 9])
    g = group_by_temperature(data)
    np.testing.assert_array_equal(g.temperature, [15, 20, 25, 30])
    np.testing.assert_allclose(g.days, [30.0, (10 * 12 + 30 * 14) / 40, 8.0, 6.0])
    np.testing.assert_array_equal(g.n, [5, 40, 8, 9])


def test_one_row_per_temperature_without_n_is_unchanged():
    data = LabData([15, 20, 25, 30], [30.0, 12.0, 8.0, 6.0])
    assert group_by_temperature(data) is data


def test_individuals_and_their_table_of_means_give_the_same_fit():
    t, days = individuals()
    grouped = group_by_temperature(LabData(t, days))
    table = LabData(*table_of_means(t, days))
    for model in ("briere1", "linear"):
        a, b = fit_model(grouped, model), fit_model(table, model)
        assert a.converged and b.converged
        assert a.n_obs == b.n_obs == TEMPS.size
        for key in a.params:
            assert a.params[key] == pytest.approx(b.params[key], rel=1e-6)
            assert a.se[key] == pytest.approx(b.se[key], rel=1e-4)
        assert a.aicc == pytest.approx(b.aicc, rel=1e-9)
    la, lb = linear_part(grouped), linear_part(table)
    assert la.lower_threshold == pytest.approx(lb.lower_threshold, rel=1e-12)
    assert la.lower_threshold_se == pytest.approx(lb.lower_threshold_se, rel=1e-12)


def test_duplicated_rows_do_not_shrink_the_standard_errors():
    # Entering every insect twice adds no information.  Grouped: the group means are
    # unchanged and all weights double, and WLS with an estimated residual variance is
    # invariant to scaling all weights, so the SEs are unchanged.  Fitting every row as
    # an observation shrinks them by sqrt((N - k) / (2N - k)) ~ 0.71 (pseudo-replication).
    t, days = individuals()
    once = LabData(t, days)
    twice = LabData(np.concatenate([t, t]), np.concatenate([days, days]))
    g1, g2 = fit_model(group_by_temperature(once), "briere1"), fit_model(
        group_by_temperature(twice), "briere1")
    i1, i2 = fit_model(once, "briere1"), fit_model(twice, "briere1")
    k = 3
    for key in g1.params:
        assert g2.se[key] == pytest.approx(g1.se[key], rel=1e-4), key
        assert g2.ci95[key][1] == pytest.approx(g1.ci95[key][1], rel=1e-6), key
        assert i2.se[key] == pytest.approx(
            i1.se[key] * math.sqrt((t.size - k) / (2 * t.size - k)), rel=1e-3), key
    l1, l2 = linear_part(group_by_temperature(once)), linear_part(group_by_temperature(twice))
    assert l2.lower_threshold_se == pytest.approx(l1.lower_threshold_se, rel=1e-10)
    assert l2.degree_days_per_generation_se == pytest.approx(l1.degree_days_per_generation_se,
                                                             rel=1e-10)


def test_grouped_intervals_cover_the_truth():
    # 60 draws of individuals; the grouped Briere-1 interval for t_high should cover 34 °C in
    # roughly 95 % of draws (linearised, so only approximately; band [0.85, 1.0], binomial
    # sd 0.028).  A check that grouping does not produce overconfident intervals.
    hits = 0
    for seed in range(60):
        t, days = individuals(seed=100 + seed)
        res = fit_model(group_by_temperature(LabData(t, days)), "briere1")
        hits += res.ci95["t_high"][0] <= BRIERE1["t_high"] <= res.ci95["t_high"][1]
    assert hits / 60 >= 0.85


def _write(path, rows):
    path.write_text("temperature,days" + (",n" if len(rows[0]) == 3 else "") + "\n"
                    + "\n".join(",".join(repr(float(v)) for v in r) for r in rows) + "\n")
    return path


def test_cli_groups_rows_and_says_so(tmp_path, capsys):
    t, days = individuals()
    ind = _write(tmp_path / "ind.csv", list(zip(t, days)))
    tab = _write(tmp_path / "tab.csv", list(zip(*table_of_means(t, days))))
    assert main(["fit", str(ind), "--model", "briere1,linear",
                 "--profile", str(tmp_path / "ind.toml"), "--figure", str(tmp_path / "i.png")]) == 0
    out = capsys.readouterr().out
    assert f"grouped by temperature into {TEMPS.size} groups" in out
    assert main(["fit", str(tab), "--model", "briere1,linear",
                 "--profile", str(tmp_path / "tab.toml"), "--figure", str(tmp_path / "t.png")]) == 0
    assert "one per temperature (weight = n)" in capsys.readouterr().out
    a, b = load_profile(tmp_path / "ind.toml"), load_profile(tmp_path / "tab.toml")
    assert a.development.lower_threshold == pytest.approx(b.development.lower_threshold, rel=1e-9)
    assert a.development.rate_curve.as_dict() == pytest.approx(b.development.rate_curve.as_dict(),
                                                               rel=1e-6)
    assert main(["fit", str(ind), "--model", "briere1", "--rows", "individual",
                 "--profile", str(tmp_path / "x.toml"), "--figure", str(tmp_path / "x.png"),
                 "--ranking", str(tmp_path / "x.csv")]) == 0
    assert f"each of the {t.size} rows is one observation" in capsys.readouterr().out

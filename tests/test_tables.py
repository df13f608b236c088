"""Tests of suitmap.kernels.tables and suitmap.kernels.tables.daylength: the
fast daily kernels against the exact ones on seeded random days and seasons
(every degree-day method x cutoff, every rate curve with the sine and the
Parton-Logan day, the Parton-Logan day-length tables), NaN, the range
limits, and independence of the parallel flag, the array layout and the
chunking; the day-length tables also against scipy quad of the hourly
Parton & Logan (1981) curve.

The references are the exact kernels: degree_days_block (checked against
Zalom et al. 1983 Table 7, McMaster & Wilhelm 1997 Table 1 and scipy quad in
tests/test_degree_days.py) and daily_development (checked against scipy quad
in tests/test_development.py)."""

from __future__ import annotations

import numpy as np
import pytest
# published parameter sets (sources there); scipy quad of diurnal.parton_logan_hourly
from test_development import CURVES, quad_parton_logan_day

from suitmap.kernels.degree_days import CUTOFFS, METHODS, degree_days_block
from suitmap.kernels.development import daily_development
from suitmap.kernels.tables import (
    T_RANGE,
    build_table,
    degree_day_table,
    development_table,
)

L, U = 10.0, 30.0
REL = 1e-3          # the accuracy target: relative, where the value > 1 % of its peak
TABLED = ("single_triangle", "double_triangle", "single_sine", "double_sine")


def days(n: int, seed: int):
    """Realistic random days, many crossing 10, 30 and the curves' limits."""
    rng = np.random.default_rng(seed)
    tmin = rng.uniform(-15.0, 38.0, n)
    tmax = tmin + rng.gamma(2.0, 5.0, n)
    tnext = tmin + rng.normal(0.0, 3.0, n)
    return tmin.astype(np.float32), tmax.astype(np.float32), tnext.astype(np.float32)


def seasons(ncell: int, seed: int):
    """(365, ncell) float32 series: a seasonal cycle, weather noise, daylength
    of 30-65 deg N (Forsythe et al. 1995 model, suitmap.kernels.diurnal)."""
    from suitmap.kernels.diurnal import daylength
    rng = np.random.default_rng(seed)
    doy = np.arange(1, 366)[:, None]
    lat = rng.uniform(30.0, 65.0, ncell)[None, :]
    mean = 30.0 - 0.5 * (lat - 30.0) - (10.0 + 0.1 * lat) * np.cos(2 * np.pi * (doy - 15) / 365)
    tmin = mean - 6.0 + rng.normal(0.0, 3.0, (365, ncell))
    tmax = tmin + rng.gamma(4.0, 3.0, (365, ncell))
    return (tmin.astype(np.float32), tmax.astype(np.float32),
            np.vstack([tmin[1:], tmin[-1:]]).astype(np.float32), daylength(lat, doy))


def assert_close(fast, exact, rel=REL):
    """|error| <= rel x |exact| where exact > 1 % of its peak, and <= rel x 1 %
    of the peak below that."""
    floor = 0.01 * np.max(np.abs(exact))
    err = np.abs(fast - exact) / np.maximum(np.abs(exact), floor)
    assert err.max() <= rel, f"max relative error {err.max():.2e}"


def assert_season_sums(fast, exact, rel=REL):
    fs, es = fast.sum(axis=0), exact.sum(axis=0)
    sel = es > 0.01 * es.max()
    assert np.max(np.abs(fs[sel] - es[sel]) / es[sel]) <= rel


# -------------------------------------------------------------- degree-days
@pytest.fixture(scope="module")
def dd_tables():
    tabs = {}
    for m in METHODS:
        for c in CUTOFFS:
            strategy = "table" if m in TABLED else "closed_form"
            tabs[m, c] = degree_day_table(L, U, m, c, strategy=strategy)
    return tabs


@pytest.mark.parametrize("cutoff", CUTOFFS)
@pytest.mark.parametrize("method", METHODS)
def test_degree_days_fast_equals_exact(dd_tables, method, cutoff):
    table = dd_tables[method, cutoff]
    tmin, tmax, tnext = days(60000, seed=1)
    exact = degree_days_block(tmin, tmax, tnext, L, U, method, cutoff)
    assert_close(table.evaluate(tmin, tmax, tmin_next=tnext), exact)
    s = seasons(300, seed=2)
    exact = degree_days_block(s[0], s[1], s[2], L, U, method, cutoff)
    assert_season_sums(table.evaluate(s[0], s[1], tmin_next=s[2]), exact)
    assert table.max_rel_error <= 5e-4 and 0.0 <= table.marked_fraction < 0.02


@pytest.mark.parametrize("cutoff", CUTOFFS)
def test_degree_day_table_across_the_kinks(dd_tables, cutoff):
    # The single-sine value has kinks along Tmin = L, Tmax = L, Tmin = U and
    # Tmax = U (the case boundaries of Zalom et al. 1983 Table 5).  Nodes lie
    # on the thresholds, so fine sweeps across each line stay within the
    # accuracy target (a kink inside a cell would give an O(h) error there).
    table = dd_tables["single_sine", cutoff]
    sweep = np.linspace(-1.5, 1.5, 3001)
    for th in (L, U):
        for other in (-5.0, 5.0, 20.0, 36.0, 45.0):
            tmin = np.where(other < th, other, th + sweep).astype(np.float32)
            tmax = np.where(other < th, th + sweep, other).astype(np.float32)
            tmin, tmax = np.minimum(tmin, tmax), np.maximum(tmin, tmax)
            exact = degree_days_block(tmin, tmax, None, L, U, "single_sine", cutoff)
            err = np.abs(table.evaluate(tmin, tmax) - exact)
            assert np.all(err <= REL * np.maximum(exact, 0.01 * (U - L))), (th, other)


def test_double_methods_without_next_minimum_are_single(dd_tables):
    # Allen (1976): both half-days equal -> the single method.
    tmin, tmax, _ = days(5000, seed=4)
    for c in CUTOFFS:
        d = dd_tables["double_sine", c].evaluate(tmin, tmax)
        s = degree_days_block(tmin, tmax, None, L, U, "single_sine", c)
        assert_close(d, s)


# -------------------------------------------------------------- development
@pytest.fixture(scope="module")
def dev_tables():
    return {(m, d): development_table(m, CURVES[m], diurnal=d)
            for m in CURVES for d in ("sine", "parton_logan")}


@pytest.mark.parametrize("diurnal", ["sine", "parton_logan"])
@pytest.mark.parametrize("model", sorted(CURVES))
def test_development_fast_equals_exact(dev_tables, model, diurnal):
    table = dev_tables[model, diurnal]
    tmin, tmax, tnext = days(20000 if diurnal == "sine" else 5000, seed=5)
    dl = np.random.default_rng(6).uniform(0.0, 24.0, tmin.size)
    kw = dict(tmin_next=tnext, daylength=dl) if diurnal == "parton_logan" else {}
    exact = daily_development(tmin, tmax, model, CURVES[model], diurnal=diurnal, **kw)
    assert_close(table.evaluate(tmin, tmax, **kw), exact)
    s = seasons(60 if diurnal == "sine" else 12, seed=7)
    kw = dict(tmin_next=s[2], daylength=s[3]) if diurnal == "parton_logan" else {}
    exact = daily_development(s[0], s[1], model, CURVES[model], diurnal=diurnal, **kw)
    assert_season_sums(table.evaluate(s[0], s[1], **kw), exact)
    assert table.max_rel_error <= REL


# ------------------------------------------------ NaN, range, layout, chunks
def test_nan_in_nan_out(dd_tables, dev_tables):
    a = np.array([np.nan, 20.0, 20.0, 20.0], dtype=np.float32)
    b = np.array([25.0, np.nan, 25.0, 25.0], dtype=np.float32)
    w = np.array([15.0, 15.0, np.nan, 15.0], dtype=np.float32)
    got = dd_tables["double_sine", "intermediate"].evaluate(a, b, tmin_next=w)
    assert np.isnan(got[:3]).all() and np.isfinite(got[3])
    got = dev_tables["briere1", "sine"].evaluate(a, b)
    assert np.isnan(got[:2]).all() and np.isfinite(got[2:]).all()
    dl = np.array([12.0, 12.0, 12.0, np.nan])
    got = dev_tables["briere1", "parton_logan"].evaluate(a, b, tmin_next=w, daylength=dl)
    assert np.isnan(got).all()


def test_outside_the_range_is_exact(dd_tables, dev_tables):
    # Beyond T_RANGE the exact kernel is used.
    a = np.array([T_RANGE[0] - 20.0, -10.0, 40.0, T_RANGE[0]], dtype=np.float32)
    b = np.array([T_RANGE[0] - 5.0, T_RANGE[1] + 5.0, T_RANGE[1] + 1.0, 0.0],
                 dtype=np.float32)
    for c in CUTOFFS:
        got = dd_tables["single_sine", c].evaluate(a, b)
        exact = degree_days_block(a, b, None, L, U, "single_sine", c)
        np.testing.assert_allclose(got[:3], exact[:3], rtol=1e-12)
    for d in ("sine", "parton_logan"):
        got = dev_tables["sharpe_schoolfield", d].evaluate(a, b, tmin_next=a,
                                                           daylength=np.full(4, 10.0))
        exact = daily_development(a, b, "sharpe_schoolfield", CURVES["sharpe_schoolfield"],
                                  diurnal=d, tmin_next=a, daylength=np.full(4, 10.0))
        np.testing.assert_allclose(got[:3], exact[:3], rtol=1e-12)


@pytest.mark.parametrize("key", [("single_sine", "vertical"), ("double_sine", "intermediate"),
                                 ("briere1", "sine"), ("lactin2", "parton_logan"),
                                 ("lactin2", "daylength_table")])
def test_parallel_layout_and_chunks_do_not_matter(dd_tables, dev_tables, pl_tables, key):
    table = dd_tables.get(key) or dev_tables.get(key) or pl_tables[key[0]]
    rng = np.random.default_rng(8)
    shape = (40, 45, 50)               # 90000 values: above the parallel threshold
    tmin = rng.uniform(-10.0, 35.0, shape).astype(np.float32)
    tmax = (tmin + rng.gamma(2.0, 5.0, shape)).astype(np.float32)
    tnext = (tmin + rng.normal(0.0, 3.0, shape)).astype(np.float32)
    dl = rng.uniform(8.0, 16.0, shape)
    tmin[3, 4, :7] = np.nan
    kw = dict(tmin_next=tnext, daylength=dl)
    ref = table.evaluate(tmin, tmax, **kw)
    np.testing.assert_array_equal(table.evaluate(tmin, tmax, parallel=False, **kw), ref)
    f = [np.asfortranarray(x) for x in (tmin, tmax, tnext, dl)]          # layout
    np.testing.assert_array_equal(table.evaluate(f[0], f[1], tmin_next=f[2], daylength=f[3]),
                                  ref)
    np.testing.assert_array_equal(                                         # float64 input
        table.evaluate(tmin.astype(np.float64), tmax.astype(np.float64),
                       tmin_next=tnext.astype(np.float64), daylength=dl), ref)
    for axis in (0, 2):                                                    # pieces
        parts = [table.evaluate(*p[:2], tmin_next=p[2], daylength=p[3])
                 for p in zip(*(np.array_split(x, 7, axis=axis) for x in (tmin, tmax, tnext, dl)))]
        np.testing.assert_array_equal(np.concatenate(parts, axis=axis), ref)
    out = np.empty(shape)
    assert table.evaluate(tmin, tmax, out, **kw) is out
    np.testing.assert_array_equal(out, ref)


def test_table_attributes_and_errors(dev_tables):
    t = dev_tables["logan6", "sine"]
    assert t.kind == "development" and t.strategy == "table" and t.nodes > 100
    assert 0 < t.nbytes < 20e6 and t.peak > 0 and t.build_seconds >= 0
    assert "DailyTable" in repr(t)
    with pytest.raises(ValueError, match="kind"):
        build_table("rates", model="linear")
    with pytest.raises(ValueError, match="option"):
        degree_day_table(L, U, "single_sine", "horizontal", spacing=0.1)
    with pytest.raises(ValueError, match="closed_form"):
        degree_day_table(L, U, "average", "horizontal", strategy="table")
    with pytest.raises(ValueError, match="threshold"):
        degree_day_table(U, L, "single_sine", "horizontal")
    with pytest.raises(ValueError, match="daylength"):
        dev_tables["logan6", "parton_logan"].evaluate(np.zeros(3), np.ones(3))
    with pytest.raises(ValueError, match="shape"):
        t.evaluate(np.zeros(3), np.ones(4))


# ----------------------------------------- Parton-Logan day-length tables
# The day-length tables (tables_daylength) must give the exact Parton & Logan
# (1981) daily integral of development._pl_day within the accuracy target,
# with or without the fast path.  Three curves: no upper limit (linear), a
# square root at t_high (Briere-1), kinks at both limits (Lactin-2).
PL_CURVES = ("linear", "briere1", "lactin2")
PL_RANGE = (8.8, 15.6)      # day lengths (h) of 30-44 deg N all year (Forsythe et al. 1995)
PL_T = (-5.0, 45.0)         # a narrower table range keeps the builds short; beyond: exact


@pytest.fixture(scope="module")
def pl_tables():
    return {m: development_table(m, CURVES[m], diurnal="parton_logan", daylength_range=PL_RANGE,
                                 t_range=PL_T) for m in PL_CURVES}


def pl_seasons(ncell: int, seed: int):
    """As ``seasons``, milder, at 30-44 deg N (day lengths within PL_RANGE)."""
    from suitmap.kernels.diurnal import daylength
    rng = np.random.default_rng(seed)
    doy = np.arange(1, 366)[:, None]
    lat = rng.uniform(30.0, 44.0, ncell)[None, :]
    mean = 22.0 - 0.3 * (lat - 30.0) - 8.0 * np.cos(2 * np.pi * (doy - 15) / 365)
    tmin = mean - 5.0 + rng.normal(0.0, 3.0, (365, ncell))
    tmax = tmin + rng.gamma(4.0, 2.0, (365, ncell))
    return (tmin.astype(np.float32), tmax.astype(np.float32),
            np.vstack([tmin[1:], tmin[-1:]]).astype(np.float32), daylength(lat, doy))


def pl_exact(model, tmin, tmax, tnext, dl, **kw):
    return daily_development(tmin, tmax, model, CURVES[model], diurnal="parton_logan",
                             tmin_next=tnext, daylength=dl, **kw)


@pytest.mark.parametrize("model", PL_CURVES)
def test_daylength_table_equals_exact_on_random_days(pl_tables, model):
    # Fast vs exact development._pl_day on random days; the first cells are
    # NaN or outside the tables (temperature, day length, crossed days,
    # Tmax - Tmin > max_range), which the exact kernel must compute.
    table = pl_tables[model]
    tmin, tmax, tnext = days(20000, seed=11)
    dl = np.random.default_rng(12).uniform(*PL_RANGE, tmin.size)
    special = [(np.nan, 20, 15, 12), (15, np.nan, 15, 12), (15, 25, np.nan, 12),
               (15, 25, 15, np.nan), (-30, -20, -25, 12), (30, 52, 31, 12), (30, 35, 50, 12),
               (15, 25, 15, 5.0), (15, 25, 15, 0.0), (15, 25, 15, 24.0), (15, 25, 15, 17.0),
               (25, 15, 20, 12), (-8, 40, 0, 12)]
    k = len(special)
    for arr, col in zip((tmin, tmax, tnext, dl), zip(*special)):
        arr[:k] = col
    exact = pl_exact(model, tmin, tmax, tnext, dl)
    got = table.evaluate(tmin, tmax, tmin_next=tnext, daylength=dl)
    nan = np.isnan(exact)
    np.testing.assert_array_equal(np.isnan(got), nan)
    assert nan[:4].all() and not nan[4:].any()
    np.testing.assert_allclose(got[4:k], exact[4:k], rtol=1e-12)      # computed exactly
    assert table.last_exact_count >= k - 4
    assert_close(got[~nan], exact[~nan])          # 1e-3 where > 1 % of the peak


@pytest.mark.parametrize("model", PL_CURVES)
def test_daylength_table_seasons_daily_and_sums(pl_tables, model):
    # Daily values within 1e-3 above 1 % of the peak and 365-day sums within
    # 1e-3 of the exact kernel on seasons at 30-44 deg N; almost all values
    # from the tables.
    table = pl_tables[model]
    s = pl_seasons(60, seed=13)
    exact = pl_exact(model, *s)
    got = table.evaluate(s[0], s[1], tmin_next=s[2], daylength=s[3])
    assert_close(got, exact)
    assert_season_sums(got, exact)
    outside = ((s[0] < PL_T[0]) | (s[1] >= PL_T[1]) | (s[2] < PL_T[0]) | (s[2] >= PL_T[1])
               | (s[1] - s[0] > 40.0))
    assert table.last_exact_count <= outside.sum() + 0.001 * got.size


def test_daylength_table_against_quadrature(pl_tables):
    # Reference: scipy.integrate.quad of the rate over the Parton & Logan
    # (1981) hourly curve (diurnal.parton_logan_hourly: day sine from
    # sunrise, decay toward the next minimum after sunset), sunrise to the
    # next sunrise, helper of tests/test_development.py.
    cases = [(5.0, 18.0, 7.0, 9.5), (12.0, 30.0, 14.0, 14.0), (20.0, 36.5, 21.0, 15.0),
             (9.0, 11.0, 10.0, 12.0), (25.0, 41.0, 24.0, 15.5), (-2.0, 12.0, 3.0, 8.9)]
    for model in PL_CURVES:
        ref = np.array([quad_parton_logan_day(model, *c) for c in cases])
        tn, tx, tw, y = (np.array(v) for v in zip(*cases))
        got = pl_tables[model].evaluate(tn, tx, tmin_next=tw, daylength=y)
        assert np.all(np.abs(got - ref) <= REL * np.maximum(ref, 0.01 * ref.max())), model


def test_daylength_table_custom_coefficients():
    # Other Parton & Logan (1981) coefficients (invented, within -3a <= c <=
    # a; c > 0 puts the sunrise phase below 0, so the day dips below Tmin):
    # still the exact kernel's values.
    co = dict(a=1.2, b=3.0, c=0.4)
    table = development_table("linear", CURVES["linear"], diurnal="parton_logan",
                              daylength_range=(10.0, 14.0), t_range=(0.0, 40.0),
                              coefficients=co)
    tmin, tmax, tnext = days(5000, seed=14)
    dl = np.random.default_rng(15).uniform(10.0, 14.0, tmin.size)
    exact = pl_exact("linear", tmin, tmax, tnext, dl, coefficients=co)
    assert_close(table.evaluate(tmin, tmax, tmin_next=tnext, daylength=dl), exact)


def test_daylength_table_attributes_and_errors(pl_tables):
    t = pl_tables["briere1"]
    assert t.kind == "development" and t.strategy == "table" and t.needs_daylength
    assert t.y_range == PL_RANGE and t.planes >= 3 and t.stored_cells > 0
    assert 0 < t.nbytes < 60e6 and t.max_rel_error <= REL and t.marked_fraction < 0.02
    assert "PartonLoganTable" in repr(t)
    for bad in [(10.0, 5.0), (-1.0, 5.0), (0.0, 30.0), "long", (1.0, 2.0)]:
        with pytest.raises(ValueError, match="daylength_range"):
            development_table("linear", CURVES["linear"], diurnal="parton_logan",
                              daylength_range=bad)
    with pytest.raises(ValueError, match="daylength_range"):
        development_table("linear", CURVES["linear"], daylength_range=PL_RANGE)
    with pytest.raises(ValueError, match="option"):
        development_table("linear", CURVES["linear"], diurnal="parton_logan",
                          daylength_range=PL_RANGE, spacing=0.1)
    with pytest.raises(ValueError, match="daylength"):
        t.evaluate(np.zeros(3), np.ones(3))

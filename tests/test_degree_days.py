"""Tests of suitmap.kernels.degree_days against published tables, worked
examples and numerical integration (scipy.integrate.quad) of the assumed
daily temperature curve."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.integrate import quad

from suitmap.kernels import degree_days as dd_mod
from suitmap.kernels.degree_days import (
    CUTOFFS,
    METHODS,
    daily_degree_days_along_time,
    degree_days,
    degree_days_block,
)

CURVE_METHODS = ("single_triangle", "double_triangle", "single_sine", "double_sine")

# --------------------------------------------------------------------------
# Zalom, F.G., Goodell, P.B., Wilson, L.T., Barnett, W.W. & Bentley, W.J. (1983)
# Degree-days: the calculation and use of heat units in pest management.
# Univ. California DANR Leaflet 21373, Table 7 (deg F, L = 55, U = 90,
# horizontal cutoff).  Columns: Tmin, Tmax, next day's Tmin, single triangle,
# double triangle, single sine, double sine.  The row 60/100/75 is left out:
# its double-triangle cell (24.88) is a misprint (the formula gives 27.12).
ZALOM_TABLE_7 = [
    (96, 110, 91, 35, 35, 35, 35),
    (45, 54, 38, 0, 0, 0, 0),
    (60, 80, 75, 15, 18.75, 15, 18.75),
    (75, 88, 60, 26.5, 22.75, 26.5, 22.75),
    (50, 82, 45, 11.39, 10.62, 11.85, 11.31),
    (45, 70, 50, 4.50, 5.06, 5.31, 5.70),
    (75, 95, 60, 29.38, 25.76, 28.91, 25.30),
    (50, 101, 48, 19.56, 19.19, 18.95, 18.69),
    (48, 95, 50, 16.76, 17.13, 16.96, 17.23),
]
TABLE_TOL = 0.006  # the table is rounded to 0.01 deg F.day


@pytest.mark.parametrize("row", ZALOM_TABLE_7, ids=lambda r: f"{r[0]}-{r[1]}-{r[2]}")
@pytest.mark.parametrize("col", range(4), ids=CURVE_METHODS)
def test_zalom_1983_table_7_fahrenheit(row, col):
    # Run in deg F directly: every formula is equivariant under T -> aT + b
    # applied to temperatures and thresholds alike (degree-days scale by a),
    # so the table is checked without rounding from a unit conversion.
    # test_celsius_equals_fahrenheit_times_5_9 checks that equivariance.
    tmin, tmax, tnext = row[:3]
    got = degree_days(tmin, tmax, 55.0, 90.0, method=CURVE_METHODS[col],
                      cutoff="horizontal", tmin_next=tnext)
    assert abs(got - row[3 + col]) <= TABLE_TOL


@pytest.mark.parametrize("method", METHODS)
@pytest.mark.parametrize("cutoff", CUTOFFS)
def test_celsius_equals_fahrenheit_times_5_9(method, cutoff):
    # Linearity of all the formulas in the temperature unit (Zalom et al. 1983
    # state them in deg F, suitmap uses deg C): DD_C = DD_F * 5/9.
    rng = np.random.default_rng(5)
    tmin_f = rng.uniform(20, 110, 200)
    tmax_f = tmin_f + rng.uniform(0, 40, 200)
    tnext_f = rng.uniform(20, 110, 200)
    c = lambda f: (f - 32.0) * 5.0 / 9.0  # noqa: E731
    dd_f = degree_days(tmin_f, tmax_f, 55.0, 90.0, method=method, cutoff=cutoff,
                       tmin_next=tnext_f)
    dd_c = degree_days(c(tmin_f), c(tmax_f), c(55.0), c(90.0), method=method,
                       cutoff=cutoff, tmin_next=c(tnext_f))
    np.testing.assert_allclose(dd_c, dd_f * 5.0 / 9.0, rtol=1e-12, atol=1e-11)


# McMaster, G.S. & Wilhelm, W.W. (1997) Growing degree-days: one equation, two
# interpretations. Agric. For. Meteorol. 87:291-300, Table 1 (base 0 deg C, no
# upper threshold).  Columns: Tmax, Tmin, method 1, method 2.
MCMASTER_TABLE_1 = [
    (20, 10, 15, 15), (10, 1, 5.5, 5.5), (8, -2, 3, 4), (6, 0, 3, 3), (10, 5, 7.5, 7.5),
    (5, -5, 0, 2.5), (-2, -7, 0, 0), (-5, -10, 0, 0), (10, -2, 4, 5), (15, 2, 8.5, 8.5),
]


@pytest.mark.parametrize("upper", [1e6, np.inf])
def test_mcmaster_wilhelm_1997_table_1(upper):
    tmax, tmin, method1, method2 = np.array(MCMASTER_TABLE_1, dtype=float).T
    np.testing.assert_allclose(degree_days(tmin, tmax, 0.0, upper, method="average"),
                               method1, atol=1e-12)
    np.testing.assert_allclose(degree_days(tmin, tmax, 0.0, upper, method="modified_average"),
                               method2, atol=1e-12)


# Corn modified growing degree-days, base 50 deg F, cap 86 deg F, in deg F.
# Columns: Tmax, Tmin, GDD.  Sources of the worked examples:
#   [a] US extension example listed in shared/REFERENCES.md s.1 (original not located)
#   [b] "Calculating growing degree days", Waushara Argus (Wisconsin) ag news, 2018-04-25
#   [c] Karhoff, S. (2023) Corn growing degree days, Ohio State University Extension
#   [d] Eckert, D.J. & Thomison, P.R. (2017) Growing degree days as a method of rating
#       the maturity of corn hybrids, Ohio State University Extension fact sheet AGF-101
CORN_GDD = [
    (92, 68, 27.0),   # [a]
    (90, 65, 25.5),   # [b]
    (72, 46, 11.0),   # [b]
    (63, 42, 6.5),    # [b]
    (87, 63, 24.5),   # [c]
    (80, 60, 20.0),   # [d]
    (60, 40, 5.0),    # [d]
    (90, 70, 28.0),   # [d]
]


@pytest.mark.parametrize("tmax,tmin,expected", CORN_GDD)
def test_corn_modified_growing_degree_days(tmax, tmin, expected):
    got = degree_days(tmin, tmax, 50.0, 86.0, method="modified_average", cutoff="horizontal")
    assert got == pytest.approx(expected, abs=1e-12)


# --------------------------------------------------------------------------
# Independent reference: integrate the assumed daily temperature curve with
# scipy.integrate.quad, the cutoff applied to the integrand.  Sine: one period
# of M + alpha*sin(t) (Baskerville & Emin 1969); triangle: a linear rise from
# Tmin to Tmax and back (Zalom et al. 1983); double methods: two half-days,
# Tmin -> Tmax and Tmax -> next day's Tmin (Allen 1976).
L, U = 10.0, 30.0


def _rate(temp, cutoff):
    """Development (degree-days per day) at one temperature."""
    if cutoff == "horizontal":
        return max(0.0, min(temp, U) - L)
    if cutoff == "vertical":
        return temp - L if L < temp <= U else 0.0
    # intermediate: above U the rate is reduced by the excess over U.  Not
    # clipped at zero point by point: the whole-day value is clamped at the
    # vertical value instead, which for a day wholly above U gives
    # max(0, 2U - L - M) (REFERENCES.md s.1).
    if temp <= L:
        return 0.0
    return temp - L if temp <= U else (U - L) - (temp - U)


def _curve(kind, start, peak):
    """T(t) for t in [0, 1] rising from ``start`` to ``peak`` (half-day shape)."""
    if kind == "sine":
        return lambda t: start + (peak - start) * 0.5 * (1.0 - math.cos(math.pi * t))
    return lambda t: start + (peak - start) * t


def _mean_over(curve, cutoff):
    """Mean development over t in [0, 1] of a monotone curve, by quadrature."""
    lo, hi = sorted((curve(0.0), curve(1.0)))
    # break points where the curve crosses a threshold (found by bisection)
    points = []
    for thr in (L, U):
        if lo < thr < hi:
            a, b = 0.0, 1.0
            for _ in range(60):
                mid = 0.5 * (a + b)
                if (curve(mid) - thr) * (curve(a) - thr) > 0:
                    a = mid
                else:
                    b = mid
            points.append(0.5 * (a + b))
    val, _ = quad(lambda t: _rate(curve(t), cutoff), 0.0, 1.0, points=points or None,
                  epsabs=1e-12, epsrel=1e-12, limit=200)
    return val


def reference(kind, tmin, tmax, tnext, cutoff):
    """Degree-days of one day by numerical integration.

    The single curve's rising and falling halves are mirror images, so the
    whole-day mean is the mean of the rising half; the double curve is the
    mean of its two half-days.
    """
    halves = [(tmin, tmax)] if tnext is None else [(tmin, tmax), (tnext, tmax)]
    def day(c):
        return sum(_mean_over(_curve(kind, a, b), c) for a, b in halves) / len(halves)
    if cutoff == "intermediate":
        return max(day("vertical"), day("intermediate"))
    return day(cutoff)


def test_reference_single_sine_over_full_period():
    # The quadrature of one full period of M + alpha*sin(t) equals the
    # half-period reference used below, for one day crossing both thresholds.
    tmin, tmax = 4.0, 38.0
    m, a = 0.5 * (tmin + tmax), 0.5 * (tmax - tmin)
    kinks = [k % (2 * math.pi) for thr in (L, U)
             for k in (math.asin((thr - m) / a), math.pi - math.asin((thr - m) / a))]
    full, _ = quad(lambda t: _rate(m + a * math.sin(t), "horizontal"), 0, 2 * math.pi,
                   points=kinks, epsabs=1e-12, epsrel=1e-12, limit=400)
    assert full / (2 * math.pi) == pytest.approx(reference("sine", tmin, tmax, None,
                                                           "horizontal"), abs=1e-9)


def _random_days(n=300, seed=1969):
    rng = np.random.default_rng(seed)
    tmin = rng.uniform(-5.0, 45.0, n)
    tmax = tmin + rng.uniform(0.0, 30.0, n)
    tnext = tmin + rng.normal(0.0, 6.0, n)   # now and then above tmax
    return tmin, tmax, tnext


def test_random_days_cover_every_case():
    tmin, tmax, tnext = _random_days()
    cases = [tmax <= L, tmin >= U, (tmin >= L) & (tmax <= U), (tmin < L) & (tmax > L) & (tmax <= U),
             (tmin >= L) & (tmin < U) & (tmax > U), (tmin < L) & (tmax > U),
             tmax > 2 * U - L, tnext > tmax]
    assert all(c.sum() >= 5 for c in cases)


@pytest.mark.parametrize("method", CURVE_METHODS)
@pytest.mark.parametrize("cutoff", CUTOFFS)
def test_against_quadrature_random_days(method, cutoff):
    tmin, tmax, tnext = _random_days()
    kind = method.split("_")[1]
    double = method.startswith("double")
    got = degree_days(tmin, tmax, L, U, method=method, cutoff=cutoff,
                      tmin_next=tnext if double else None)
    want = [reference(kind, a, b, c if double else None, cutoff)
            for a, b, c in zip(tmin, tmax, tnext)]
    np.testing.assert_allclose(got, want, rtol=0, atol=1e-8)


BOUNDARY_DAYS = [
    (L, 24.0), (L, 40.0), (5.0, U), (L, U), (U, 45.0), (3.0, L), (0.0, 40.0),
    (20.0, 20.0), (5.0, 5.0), (40.0, 40.0), (L, L), (U, U), (55.0, 55.0), (48.0, 62.0),
]


@pytest.mark.parametrize("method", CURVE_METHODS)
@pytest.mark.parametrize("cutoff", CUTOFFS)
@pytest.mark.parametrize("tmin,tmax", BOUNDARY_DAYS)
def test_against_quadrature_boundary_days(method, cutoff, tmin, tmax):
    # Tmin = L, Tmax = U, Tmin = Tmax (below, inside, above, at L, at U, above
    # 2U - L): constant days need no division.
    kind = method.split("_")[1]
    double = method.startswith("double")
    tnext = 0.5 * (tmin + tmax) if double else None
    got = degree_days(tmin, tmax, L, U, method=method, cutoff=cutoff, tmin_next=tnext)
    assert np.isfinite(got)
    assert got == pytest.approx(reference(kind, tmin, tmax, tnext, cutoff), abs=1e-9)


def test_single_sine_day_that_never_falls_below_lower_threshold():
    # Derived from Baskerville & Emin (1969), shared/REFERENCES.md s.1: M - L.
    got = degree_days(12.0, 24.0, 12.0, 30.0, method="single_sine")
    assert got == pytest.approx(6.0, abs=1e-12)


@pytest.mark.parametrize("cutoff", CUTOFFS)
def test_average_is_a_constant_day_at_the_mean(cutoff):
    # McMaster & Wilhelm (1997) method 1: the day counts as constant at
    # M = (Tmin + Tmax)/2, with the cutoff applied to that temperature.
    tmin, tmax, _ = _random_days(200, seed=7)
    got = degree_days(tmin, tmax, L, U, method="average", cutoff=cutoff)
    want = []
    for m in 0.5 * (tmin + tmax):
        v, i = _rate(m, "vertical"), _rate(m, "intermediate")
        want.append(max(v, i) if cutoff == "intermediate" else _rate(m, cutoff))
    np.testing.assert_allclose(got, want, atol=1e-12)
    assert degree_days(20.0, 50.0, L, U, method="average", cutoff="vertical") == 0.0
    assert degree_days(20.0, 50.0, L, U, method="average", cutoff="intermediate") == \
        pytest.approx(max(0.0, 2 * U - L - 35.0))


@pytest.mark.parametrize("cutoff", CUTOFFS)
def test_modified_average_is_two_half_days_at_the_extremes(cutoff):
    # McMaster & Wilhelm (1997) method 2 (Tmin, Tmax raised to L) read as two
    # half-days at the raised extremes, the cutoff applied to each and the
    # intermediate clamp to the whole day (our documented rule).
    tmin, tmax, _ = _random_days(200, seed=8)
    got = degree_days(tmin, tmax, L, U, method="modified_average", cutoff=cutoff)
    def day(c, a, b):
        return 0.5 * (_rate(max(a, L), c) + _rate(max(b, L), c))
    want = [max(day("vertical", a, b), day("intermediate", a, b)) if cutoff == "intermediate"
            else day(cutoff, a, b) for a, b in zip(tmin, tmax)]
    np.testing.assert_allclose(got, want, atol=1e-12)
    # horizontal = raise to L, cap at U, average, subtract L (REFERENCES.md s.1)
    if cutoff == "horizontal":
        np.testing.assert_allclose(got, 0.5 * (np.clip(tmin, L, U) + np.clip(tmax, L, U)) - L,
                                   atol=1e-12)


# --------------------------------------------------------------------------
# Interface behaviour
@pytest.mark.parametrize("method", METHODS)
def test_nan_in_any_used_input_gives_nan(method):
    tmin = np.array([np.nan, 12.0, 12.0, 12.0])
    tmax = np.array([25.0, np.nan, 25.0, 25.0])
    tnext = np.array([11.0, 11.0, np.nan, 11.0])
    got = degree_days(tmin, tmax, L, U, method=method, tmin_next=tnext)
    assert np.isnan(got[:2]).all() and np.isfinite(got[3])
    assert np.isnan(got[2]) == method.startswith("double")   # single methods ignore tmin_next


def test_scalar_input_gives_float64_scalar():
    got = degree_days(15, 25, L, U)
    assert np.ndim(got) == 0 and isinstance(got, np.float64)


@pytest.mark.parametrize("method", METHODS)
def test_broadcasting_equals_elementwise_calls(method):
    tmin = np.array([[0.0], [12.0], [28.0]])
    tmax = np.array([[14.0, 26.0, 33.0, 41.0]])
    got = degree_days(tmin, tmax + tmin, L, U, method=method, cutoff="intermediate", tmin_next=15.0)
    assert got.shape == (3, 4) and got.dtype == np.float64
    for i in range(3):
        for j in range(4):
            one = degree_days(tmin[i, 0], tmax[0, j] + tmin[i, 0], L, U, method=method,
                              cutoff="intermediate", tmin_next=15.0)
            assert got[i, j] == one


@pytest.mark.parametrize("method", METHODS)
def test_float32_input_is_computed_in_float64(method):
    tmin, tmax, tnext = (a.astype(np.float32) for a in _random_days(100, seed=3))
    got = degree_days(tmin, tmax, L, U, method=method, tmin_next=tnext)
    want = degree_days(tmin.astype(np.float64), tmax.astype(np.float64), L, U, method=method,
                       tmin_next=tnext.astype(np.float64))
    assert got.dtype == np.float64
    np.testing.assert_array_equal(got, want)


@pytest.mark.parametrize("method", [m for m in METHODS if not m.startswith("double")])
def test_order_of_tmin_and_tmax_does_not_matter(method):
    # The curve only depends on the pair of extremes (Baskerville & Emin 1969;
    # McMaster & Wilhelm 1997): a swapped pair gives the same day.
    tmin, tmax, tnext = _random_days(100, seed=4)
    np.testing.assert_array_equal(
        degree_days(tmin, tmax, L, U, method=method, cutoff="intermediate", tmin_next=tnext),
        degree_days(tmax, tmin, L, U, method=method, cutoff="intermediate", tmin_next=tnext))


@pytest.mark.parametrize("single", ["single_sine", "single_triangle"])
def test_double_method_without_next_minimum_is_the_single_method(single):
    tmin, tmax, _ = _random_days(100, seed=6)
    double = single.replace("single", "double")
    for cutoff in CUTOFFS:
        np.testing.assert_array_equal(degree_days(tmin, tmax, L, U, method=double, cutoff=cutoff),
                                      degree_days(tmin, tmax, L, U, method=single, cutoff=cutoff))


@pytest.mark.parametrize("method", METHODS)
@pytest.mark.parametrize("cutoff", CUTOFFS)
def test_infinite_upper_threshold_is_a_very_high_one(method, cutoff):
    tmin, tmax, tnext = _random_days(100, seed=9)
    np.testing.assert_allclose(
        degree_days(tmin, tmax, L, np.inf, method=method, cutoff=cutoff, tmin_next=tnext),
        degree_days(tmin, tmax, L, 1e6, method=method, cutoff=cutoff, tmin_next=tnext),
        rtol=0, atol=1e-9)


def test_invalid_names_and_thresholds_raise():
    with pytest.raises(ValueError, match="single_sine.*double_sine"):
        degree_days(1.0, 2.0, L, U, method="sine")
    with pytest.raises(ValueError, match="horizontal, vertical, intermediate"):
        degree_days(1.0, 2.0, L, U, cutoff="flat")
    with pytest.raises(ValueError, match="upper threshold"):
        degree_days(1.0, 2.0, 10.0, 10.0)
    with pytest.raises(ValueError, match="upper threshold"):
        degree_days(1.0, 2.0, 12.0, 10.0)
    with pytest.raises(ValueError, match="lower threshold"):
        degree_days(1.0, 2.0, np.nan, 10.0)
    with pytest.raises(ValueError):
        degree_days_block(np.ones(3), np.ones(3), None, L, U, 6, 0)
    with pytest.raises(ValueError, match="same shape"):
        degree_days_block(np.ones(3), np.ones(4), None, L, U, 0, 0)
    with pytest.raises(ValueError, match="out must be"):
        degree_days_block(np.ones(3), np.ones(3), None, L, U, 0, 0, out=np.empty(3, np.float32))


def test_block_parallel_and_serial_agree_and_fill_out():
    rng = np.random.default_rng(11)
    n = 3 * dd_mod._PARALLEL_MIN + 17      # several parallel work items, ragged end
    tmin = rng.uniform(-5, 35, n).astype(np.float32)
    tmax = tmin + rng.uniform(0, 20, n).astype(np.float32)
    tnext = np.roll(tmin, -1)
    out = np.empty(n)
    got = degree_days_block(tmin, tmax, tnext, L, U, "double_sine", "intermediate", out=out)
    assert got is out
    serial = degree_days_block(tmin, tmax, tnext, L, U, METHODS.index("double_sine"),
                               CUTOFFS.index("intermediate"), parallel=False)
    np.testing.assert_array_equal(out, serial)
    head = degree_days(tmin[:50], tmax[:50], L, U, method="double_sine", cutoff="intermediate",
                       tmin_next=tnext[:50])
    np.testing.assert_array_equal(out[:50], head)


@pytest.mark.parametrize("method", ["double_sine", "double_triangle", "single_sine", "average"])
def test_along_time_uses_the_next_days_minimum(method):
    rng = np.random.default_rng(12)
    tmin = rng.uniform(-5, 30, (9, 4, 5)).astype(np.float32)
    tmax = tmin + rng.uniform(0, 20, (9, 4, 5)).astype(np.float32)
    got = daily_degree_days_along_time(tmin, tmax, L, U, method, "intermediate", axis=0)
    for t in range(9):
        nxt = tmin[t + 1] if t < 8 else tmin[t]      # last day: its own minimum
        want = degree_days(tmin[t], tmax[t], L, U, method=method, cutoff="intermediate",
                           tmin_next=nxt)
        np.testing.assert_array_equal(got[t], want)
    moved = daily_degree_days_along_time(np.moveaxis(tmin, 0, 2), np.moveaxis(tmax, 0, 2), L, U,
                                         method, "intermediate", axis=-1)
    np.testing.assert_array_equal(moved, np.moveaxis(got, 0, 2))


def test_polynomial_arcsine_matches_numpy():
    # The vectorisable arcsine inside the sine methods, against numpy.arcsin.
    x = np.concatenate([np.linspace(-1.0, 1.0, 4001), np.random.default_rng(2).uniform(-1, 1, 2000),
                        [0.5, np.nextafter(0.5, 1.0), np.nextafter(0.5, 0.0), 1e-300]])
    got = np.array([dd_mod._asin(v) for v in x])
    assert np.max(np.abs(got - np.arcsin(x))) <= 5e-16
    assert dd_mod._asin(1.0) == math.pi / 2 and dd_mod._asin(-1.0) == -math.pi / 2

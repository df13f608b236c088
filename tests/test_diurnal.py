"""Tests of suitmap.kernels.diurnal: daylength (Forsythe et al. 1995) against
derived values and the astronomical library astral; the Parton & Logan (1981)
curve against derived values and the published formulas; the sine day
(Baskerville & Emin 1969) and the day quadrature against scipy.integrate.quad
and the closed-form single-sine degree-days."""

from __future__ import annotations

import datetime as dt
import math

import numba
import numpy as np
import pytest
from scipy.integrate import quad

from suitmap.kernels import diurnal
from suitmap.kernels.degree_days import degree_days
from suitmap.kernels.diurnal import (
    _daylength,
    _pl_nodes,
    _pl_temp,
    _pl_temp_prev,
    _sine_temp,
    daily_mean_of,
    day_nodes,
    daylength,
    parton_logan_hourly,
    parton_logan_nodes,
    sine_hourly,
    sine_nodes,
    sun_times,
)

A, B, C = 1.86, 2.20, -0.17   # Parton & Logan 1981, 150-cm air temperature


# ------------------------------------------------------------------ daylength
# Forsythe, Rykiel, Stahl, Wu & Schoolfield (1995) A model comparison for
# daylength as a function of latitude and day of year. Ecol. Model. 80:87-95,
# CBM model with p = 0.8333; values derived from the published formula
# (REFERENCES.md section 3), given to 3 decimals.
@pytest.mark.parametrize("lat, doy, hours", [
    (0, 80, 12.111), (40, 172, 15.016), (40, 355, 9.324), (60, 172, 18.870),
    (70, 172, 24.0),
])
def test_forsythe_derived_values(lat, doy, hours):
    assert float(daylength(lat, doy)) == pytest.approx(hours, abs=6e-4)


def test_forsythe_polar_night_and_clipping():
    # Forsythe et al. 1995: the acos argument clipped to [-1, 1]; at 70 N on
    # day 355 the argument is below -1 (polar night) and at the poles it is
    # far outside [-1, 1] (cos(lat) ~ 0), never NaN.
    assert float(daylength(70, 355)) == 0.0
    assert float(daylength(90, 172)) == 24.0 and float(daylength(-90, 172)) == 0.0
    assert float(daylength(-90, 355)) == 24.0


def test_forsythe_hemispheres_mirror_when_p_is_zero():
    # From the formula (Forsythe et al. 1995): with p = 0 the acos argument
    # is odd in latitude, and acos(-x) = pi - acos(x), so D(-lat) = 24 - D(lat).
    lat = np.linspace(-65, 65, 27)[:, None]
    doy = np.arange(1, 366, 9)[None, :]
    d = daylength(lat, doy, p=0.0)
    assert d.shape == (27, 41)
    np.testing.assert_allclose(d + daylength(-lat, doy, p=0.0), 24.0, atol=1e-12)


def test_sun_times_symmetric_about_noon():
    # Forsythe et al. 1995 daylength; sunrise/sunset = 12 -/+ D/2 (solar time).
    lat, doy = np.array([-35.0, 10.0, 52.0]), np.array([30, 200, 300])
    rise, sset = sun_times(lat, doy)
    np.testing.assert_allclose(rise + sset, 24.0, atol=1e-12)
    np.testing.assert_allclose(sset - rise, daylength(lat, doy), atol=1e-12)


def test_daylength_rejects_bad_latitude_and_keeps_nan():
    with pytest.raises(ValueError, match="lat_deg"):
        daylength(91.0, 100)
    assert np.isnan(daylength(45.0, np.nan))


def _astral_hours(lat: float, date: dt.date) -> float:
    # astral is a test dependency; only the tests that use it skip without it
    astral = pytest.importorskip("astral")
    from astral.sun import sunrise, sunset

    obs = astral.Observer(latitude=lat, longitude=0.0)
    return (sunset(obs, date) - sunrise(obs, date)).total_seconds() / 3600.0


@pytest.mark.parametrize("lat", [-50.0, -23.0, 0.0, 23.0, 45.0, 60.0])
def test_daylength_against_astral(lat):
    # Independent reference: astral (PyPI) sunrise -> sunset at longitude 0,
    # UTC, with its own solar-position algorithm and 0.833 deg of refraction
    # plus semidiameter, i.e. Forsythe's p = 0.8333.
    # Tolerance 1.5 + 5 tan|lat| minutes, justified as follows.  Forsythe's
    # declination is one function of the day of year for every year: it
    # ignores the leap-year cycle (the sun's position on a calendar date
    # shifts by up to ~3/4 day over four years, up to ~0.3 deg of declination
    # near the equinoxes) and astral measures one civil date's sunrise and
    # sunset (declination moves up to 0.4 deg/day).  Near the equinoxes
    # dD/d(declination) = (24/pi)(pi/180) tan(lat) h/deg = 8 tan(lat) min/deg
    # (differentiating D = 24 - (24/pi) acos(-tan(lat) tan(decl))), so ~0.6
    # deg of combined declination mismatch is ~5 tan(lat) minutes; the 1.5 min
    # covers the model's own fit and refraction conventions at the equator.
    # Over 2021-2024 this holds with some margin at every latitude tested
    # (largest misfit ~8 min at 60 deg in 2021, when the tolerance is 10 min).
    tol_h = (1.5 + 5.0 * math.tan(math.radians(abs(lat)))) / 60.0
    for year in (2021, 2022, 2023, 2024):
        for doy in range(1, 366, 7):
            date = dt.date(year, 1, 1) + dt.timedelta(days=doy - 1)
            got = float(daylength(lat, doy))
            assert abs(got - _astral_hours(lat, date)) <= tol_h, (year, doy)


def test_polar_day_and_night_agree_with_astral():
    # astral raises ValueError when the sun does not cross the horizon that
    # day; Forsythe et al. 1995 clip to 24 h (polar day) and 0 h (night).
    for doy, expected in ((172, 24.0), (355, 0.0)):
        date = dt.date(2023, 1, 1) + dt.timedelta(days=doy - 1)
        with pytest.raises(ValueError):
            _astral_hours(72.0, date)
        assert float(daylength(72.0, doy)) == expected


# --------------------------------------------------------------- Parton-Logan
def test_parton_logan_derived_values():
    # Parton & Logan (1981) A model for diurnal variation in soil and air
    # temperature. Agric. Meteorol. 23:205-216; derived check values
    # (REFERENCES.md section 3): Tx = 30, Tn = 10, sunrise 06:00, sunset 18:00.
    # The day sine is Tn + (Tx - Tn) sin(pi (t - sunrise - c)/(Y + 2a)) with
    # c = -0.17 entering with its sign: at noon t - sunrise - c = 6.17 h, so
    # the sine's zero (the modelled minimum) is at sunrise + c = 05:50, 10 min
    # BEFORE sunrise.  28.870 needs exactly that; taking the minimum 0.17 h
    # after sunrise (t - sunrise + c) would give 28.38.  Sunrise = 12 - D/2
    # with D = 12 is the reference's 06:00.
    t = parton_logan_hourly(10.0, 30.0, 10.0, 12.0, [12.0, 18.0], a=A, b=B, c=C)
    np.testing.assert_allclose(t, [28.870, 23.028], atol=6e-4)
    # The night starts where the day ends: 18 h is the first night hour, and
    # the day sine just before it has the same value (no jump at sunset).
    assert float(parton_logan_hourly(10.0, 30.0, 10.0, 12.0, 18.0 - 1e-9)) == \
        pytest.approx(float(t[1]), abs=1e-7)


def _pl_reference(tn_prev, tx_prev, tn, tx, tn_next, y, t):
    """The Parton & Logan (1981) equations written out independently of the
    module (REFERENCES.md section 3): day sine; night exp(-b n / Z) from the
    sunset temperature toward the following minimum, n hours after sunset."""
    rise, sset, z = 12.0 - y / 2, 12.0 + y / 2, 24.0 - y

    def day(lo, hi, tt):
        return lo + (hi - lo) * math.sin(math.pi * (tt - rise - C) / (y + 2 * A))

    if t < rise:      # previous night: previous day's sunset -> today's minimum
        ts = day(tn_prev, tx_prev, sset)
        return tn + (ts - tn) * math.exp(-B * (t + 24.0 - sset) / z)
    if t < sset:
        return day(tn, tx, t)
    ts = day(tn, tx, sset)
    return tn_next + (ts - tn_next) * math.exp(-B * (t - sset) / z)


def test_parton_logan_matches_published_equations():
    rng = np.random.default_rng(7)
    n = 40
    tn_prev, tn, tn_next = (rng.uniform(-5, 15, n) for _ in range(3))
    tx_prev, tx = tn_prev + rng.uniform(2, 18, n), tn + rng.uniform(2, 18, n)
    y = rng.uniform(8.0, 16.5, n)
    hours = np.linspace(0.0, 23.9, 61)
    got = parton_logan_hourly(tn, tx, tn_next, y, hours, tmin_prev=tn_prev, tmax_prev=tx_prev)
    assert got.shape == (n, 61)
    want = np.array([[_pl_reference(tn_prev[i], tx_prev[i], tn[i], tx[i], tn_next[i], y[i], h)
                      for h in hours] for i in range(n)])
    np.testing.assert_allclose(got, want, rtol=0, atol=1e-12)
    # Without the previous day, today's Tmin/Tmax stand in for it (documented).
    np.testing.assert_allclose(parton_logan_hourly(tn, tx, tn_next, y, hours),
                               parton_logan_hourly(tn, tx, tn_next, y, hours,
                                                   tmin_prev=tn, tmax_prev=tx), atol=0)


def test_parton_logan_night_continues_across_midnight():
    # Parton & Logan 1981: one night runs from sunset to the next sunrise.
    # Day k's evening and day k+1's early morning (given day k as the
    # previous day) are one exponential: continuous at midnight, and the
    # same curve as the formula evaluated at n = t + 24 - sunset.
    y = 10.5
    day_k = dict(tmin=4.0, tmax=17.0, tmin_next=7.0, daylength_h=y)
    evening = float(parton_logan_hourly(**day_k, hours=24.0 - 1e-9))
    morning = float(parton_logan_hourly(7.0, 20.0, 3.0, y, 0.0, tmin_prev=4.0, tmax_prev=17.0))
    assert morning == pytest.approx(evening, abs=1e-8)
    # The maximum of the day sine (Parton & Logan: at 12 + a + c) is Tmax.
    h = np.linspace(6.0, 18.0, 120001)
    t = parton_logan_hourly(**day_k, hours=h)
    assert t.max() == pytest.approx(17.0, abs=1e-8)
    assert h[t.argmax()] == pytest.approx(12.0 + A + C, abs=1e-3)


def test_parton_logan_polar_and_bad_input():
    # Documented degenerate cases: polar day is the day sine all day, polar
    # night has no day sine; both finite.
    h = np.arange(24.0)
    full = parton_logan_hourly(0.0, 10.0, 2.0, 24.0, h)
    np.testing.assert_allclose(full, 10.0 * np.sin(np.pi * (h + 0.17) / (24.0 + 2 * A)), atol=1e-12)
    dark = parton_logan_hourly(0.0, 10.0, 2.0, 0.0, h)
    assert np.isfinite(dark).all() and dark.max() < 10.0
    with pytest.raises(ValueError, match="hours"):
        parton_logan_hourly(0.0, 10.0, 2.0, 12.0, [0.0, 24.0])
    with pytest.raises(ValueError, match="tmin_prev"):
        parton_logan_hourly(0.0, 10.0, 2.0, 12.0, 3.0, tmin_prev=1.0)


def test_compiled_scalars_agree_with_array_functions():
    rng = np.random.default_rng(3)
    for _ in range(50):
        tn, tx, tn2, tn0 = rng.uniform(-5, 25, 4)
        tx += 20.0 if tx < tn else 0.0
        y, t = rng.uniform(0, 24), rng.uniform(0, 24)
        assert _pl_temp(tn, tx, tn2, y, t, A, B, C) == float(parton_logan_hourly(tn, tx, tn2, y, t))
        assert _pl_temp_prev(tn0, tn0 + 9, tn, tx, tn2, y, t, A, B, C) == float(
            parton_logan_hourly(tn, tx, tn2, y, t, tmin_prev=tn0, tmax_prev=tn0 + 9))
        assert _sine_temp(tn, tx, t, 4.0) == float(sine_hourly(tn, tx, t, hour_of_min=4.0))
        lat, doy = rng.uniform(-89, 89), rng.uniform(1, 366)
        assert _daylength(lat, doy, 0.8333) == float(daylength(lat, doy))


# Lactin et al. (1995) Improved rate model of temperature-dependent
# development by arthropods. Environ. Entomol. 24:68-75: Lactin-1 for
# Leptinotarsa decemlineata eggs, rho = 0.15543, TL = 38.0487, Delta = 6.4212;
# negative rates set to 0 (common practice, no source).
@numba.njit
def _lactin1(t):
    r = math.exp(0.15543 * t) - math.exp(0.15543 * 38.0487 - (38.0487 - t) / 6.4212)
    return r if r > 0.0 else 0.0


@numba.njit
def _mean_rate_pl(tn, tx, tn_next, y, x, w):
    # How a compiled kernel integrates a rate curve over the Parton-Logan day.
    t = np.empty(3 * x.size)
    wt = np.empty(3 * x.size)
    _pl_nodes(y, x, w, t, wt)
    s = 0.0
    for k in range(t.size):
        s += wt[k] * _lactin1(_pl_temp(tn, tx, tn_next, y, t[k], 1.86, 2.20, -0.17))
    return s


@pytest.mark.parametrize("tn, tx, tn2, y, n, rel", [
    (12.0, 31.0, 14.0, 14.5, 16, 1e-10),   # smooth: below TL all day
    (5.0, 22.0, 9.0, 9.5, 16, 1e-10),
    (20.0, 40.0, 21.0, 13.0, 64, 1e-3),    # crosses TL: a kink, O(n^-2) error
])
def test_compiled_rate_integration_over_parton_logan_day(tn, tx, tn2, y, n, rel):
    # Reference: scipy.integrate.quad of the same rate over the same curve,
    # split at sunrise and sunset where the curve jumps or bends.
    x, w = np.polynomial.legendre.leggauss(n)
    rise, sset = 12.0 - y / 2, 12.0 + y / 2
    ref = sum(quad(lambda h: _lactin1(_pl_temp(tn, tx, tn2, y, h, A, B, C)), lo, hi,
                   epsabs=1e-12, limit=200)[0]
              for lo, hi in ((0.0, rise), (rise, sset), (sset, 24.0))) / 24.0
    assert _mean_rate_pl(tn, tx, tn2, y, x, w) == pytest.approx(ref, rel=rel)


# ------------------------------------------------------------ sine and nodes
def test_sine_day_mean_min_max():
    # Baskerville & Emin (1969) Ecology 50:514-517: the day is one period of
    # a sine between Tmin and Tmax, whose mean is (Tmin + Tmax)/2.
    for tn, tx, h0 in ((3.0, 21.0, 3.0), (-4.0, 9.5, 6.0), (15.0, 15.0, 0.0)):
        mean = quad(lambda t, tn=tn, tx=tx, h0=h0: float(sine_hourly(tn, tx, t, hour_of_min=h0)),
                    0.0, 24.0)[0] / 24.0
        assert mean == pytest.approx((tn + tx) / 2, abs=1e-10)
        assert float(sine_hourly(tn, tx, h0, hour_of_min=h0)) == pytest.approx(tn, abs=1e-12)
        assert float(sine_hourly(tn, tx, h0 + 12.0, hour_of_min=h0)) == pytest.approx(tx, abs=1e-12)
        dense = sine_hourly(tn, tx, np.linspace(0, 24, 2401), hour_of_min=h0)
        assert dense.min() >= tn - 1e-12 and dense.max() <= tx + 1e-12
    assert diurnal.SINE_HOUR_OF_MIN == 3.0          # the documented default
    assert float(sine_hourly(2.0, 8.0, 3.0)) == pytest.approx(2.0)


def test_sine_hourly_shapes():
    tn, tx = np.array([1.0, 2.0, 3.0]), np.array([9.0, 8.0, 7.0])
    assert sine_hourly(tn, tx, np.arange(24.0)).shape == (3, 24)
    per_day = sine_hourly(tn, tx, np.full((3, 2), 15.0))    # max at 15:00
    np.testing.assert_allclose(per_day, np.repeat(tx[:, None], 2, axis=1))
    assert sine_hourly(tn, tx, 3.0).shape == (3,)


@pytest.mark.parametrize("nodes", ["day", "sine"])
def test_day_nodes_integrate_degree_days(nodes):
    # Closed-form single sine (Baskerville & Emin 1969; Zalom et al. 1983,
    # Table 5), itself checked against scipy quad of the same integrand.
    # The threshold kinks make the midpoint error O(n^-2), bounded by
    # (pi/2)(Tmax - Tmin)/n^2 (derivation in day_nodes: a kink at s in a cell
    # of width h costs |jump of f'| s^2/2 <= |jump| h^2/8); n Gauss-Chebyshev
    # nodes equal 2n midpoints, so their bound is (pi/8)(Tmax - Tmin)/n^2.
    for tn, tx, lo, up in ((10.0, 30.0, 12.0, 26.0), (2.0, 19.0, 10.0, 30.0), (18.0, 36.0, 10.0, 32.0)):
        closed = float(degree_days(tn, tx, lo, up, method="single_sine", cutoff="horizontal"))
        ref = quad(lambda t, tn=tn, tx=tx, lo=lo, up=up:
                   max(0.0, min(float(sine_hourly(tn, tx, t)), up) - lo),
                   0.0, 24.0, limit=200)[0] / 24.0
        assert closed == pytest.approx(ref, abs=1e-7)      # quad's own accuracy
    rng = np.random.default_rng(11)
    tn = rng.uniform(-5.0, 30.0, 3000)
    tx = tn + rng.uniform(0.5, 25.0, 3000)
    for lo, up in ((10.0, 30.0), (12.0, 26.0), (5.0, 25.0)):
        closed = degree_days(tn, tx, lo, up, method="single_sine", cutoff="horizontal")
        for n in (12, 24, 48, 96):
            if nodes == "day":
                t, w = day_nodes(n)
                temp = sine_hourly(tn, tx, t)
                bound = (math.pi / 2) * (tx - tn) / n**2
            else:
                s, w = sine_nodes(n)
                temp = ((tn + tx) / 2)[:, None] + ((tx - tn) / 2)[:, None] * s
                bound = (math.pi / 8) * (tx - tn) / n**2
            got = daily_mean_of(np.maximum(np.minimum(temp, up) - lo, 0.0), w)
            assert (np.abs(got - closed) <= bound + 1e-12).all(), (lo, up, n)


def test_nodes_exact_for_polynomials_in_temperature():
    # Midpoint rule on a periodic integrand: exact for trigonometric
    # polynomials of degree < n (Davis & Rabinowitz 1984); Gauss-Chebyshev:
    # exact for polynomials of degree <= 2n - 1 (Abramowitz & Stegun 25.4.38).
    tn, tx = 4.0, 26.0
    poly = lambda temp: 1e-4 * temp**5 - 0.01 * temp**3 + temp
    ref = quad(lambda t: poly(float(sine_hourly(tn, tx, t))), 0.0, 24.0, epsabs=1e-13)[0] / 24.0
    t, w = day_nodes(6)
    assert w.sum() == pytest.approx(1.0) and ((t > 0) & (t < 24)).all()
    assert float(daily_mean_of(poly(sine_hourly(tn, tx, t)), w)) == pytest.approx(ref, rel=1e-12)
    s, w = sine_nodes(3)
    assert float(daily_mean_of(poly(15.0 + 11.0 * s), w)) == pytest.approx(ref, rel=1e-12)
    with pytest.raises(ValueError):
        day_nodes(0)


def test_parton_logan_nodes_against_quad():
    # Reference: scipy quad over [0, sunrise], [sunrise, sunset], [sunset, 24]
    # of a smooth function of the Parton & Logan (1981) curve.
    g = lambda temp: np.exp(0.1 * temp)
    for y in (9.0, 13.3, 16.0):
        t, w = parton_logan_nodes(y, 12)
        assert t.shape == (36,) and w.sum() == pytest.approx(1.0, abs=1e-14)
        got = float(daily_mean_of(g(parton_logan_hourly(8.0, 27.0, 11.0, y, t)), w))
        rise, sset = 12.0 - y / 2, 12.0 + y / 2
        ref = sum(quad(lambda h, y=y: g(_pl_temp(8.0, 27.0, 11.0, y, h, A, B, C)), lo, hi,
                       epsabs=1e-13)[0] for lo, hi in ((0, rise), (rise, sset), (sset, 24.0))) / 24.0
        assert got == pytest.approx(ref, rel=1e-10)
    # per-cell nodes feed parton_logan_hourly directly (hours of shape S + (3n,))
    ys = np.array([[0.0, 10.0], [14.0, 24.0]])
    t, w = parton_logan_nodes(ys, 4)
    assert t.shape == w.shape == (2, 2, 12)
    temps = parton_logan_hourly(np.zeros((2, 2)), np.full((2, 2), 10.0), 1.0, ys, t)
    assert temps.shape == (2, 2, 12) and np.isfinite(temps).all()
    np.testing.assert_allclose(w.sum(axis=-1), 1.0, atol=1e-14)

"""Tests of the pieces of the Parton-Logan tables (suitmap.kernels.tables._pl_arcs)
against scipy.integrate.quad: the rate's primitive, the folding of the day
sine into arcs, and the chord between planes.

The rate curves are the published parameter sets of tests/test_development.py
(sources cited there).  The day is Parton & Logan (1981) Agricultural
Meteorology 23:205-216: T = Tn + (Tx - Tn) sin(π(τ - c)/(Y + 2a)), τ hours
after sunrise, coefficients for air at 150 cm (a, b, c) = (1.86, 2.20, -0.17).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.integrate import quad

from suitmap.kernels.tables import _pl_arcs as arcs
from suitmap.kernels.rates import development_rate, model_code, pack_params, rate_limits
from suitmap.kernels.tables.grid import _graded_axis, _locator
from test_development import CURVES

A, C = 1.86, -0.17          # Parton & Logan (1981), air at 150 cm
MODELS = ("linear", "briere1", "lactin2")


def rate(model):
    return lambda t: float(development_rate(np.array([t]), model, **CURVES[model])[0])


def kern(model):
    """The exact-kernel tuple of tables_daylength.build_parton_logan."""
    from suitmap.kernels import development as dev
    code = model_code(model)
    lo, hi = rate_limits(model, CURVES[model])
    return (np.array([0.0, 0.0, lo, hi, A, 2.2, C]), np.array([0, 0, code, code in dev._POWER_HI]),
            pack_params(code, CURVES[model]), *dev.quadrature_nodes(20),
            *dev.quadrature_nodes(1))


def axis(model):
    lo, hi = rate_limits(model, CURVES[model])
    nodes, dj = _graded_axis((-10.0, 50.0), [lo, hi], 1 / 32, 0.25, 0.05)
    return nodes, arcs.compact_locator(_locator(nodes, dj))


def quad_rate(model, t1, t2):
    lo, hi = rate_limits(model, CURVES[model])
    pts = [p for p in (lo, hi) if min(t1, t2) < p < max(t1, t2)]
    return quad(rate(model), t1, t2, points=pts or None, epsabs=1e-13, epsrel=1e-11,
                limit=200)[0]


@pytest.mark.parametrize("model", MODELS)
def test_mean_rate_from_the_primitive_matches_quadrature(model):
    # (P(v) - P(u))/(v - u) from the cubic Hermite primitive against scipy
    # quad of the rate, on intervals inside cells, across cells and across
    # the rate limits; and the rate itself where v = u.
    nodes, day = axis(model)
    code = model_code(model)
    ptab = arcs.primitive_table(nodes, code, pack_params(code, CURVES[model]))
    rng = np.random.default_rng(3)
    lo, hi = rate_limits(model, CURVES[model])
    us = np.concatenate([rng.uniform(-5, 45, 40), [lo - 0.3, hi - 0.2 if math.isfinite(hi) else 30]])
    widths = np.concatenate([rng.uniform(0.01, 8.0, 40), [0.6, 0.5]])
    peak = max(rate(model)(t) for t in np.linspace(-10, 50, 601))
    for u, w in zip(us.astype(np.float32), widths):
        v = np.float32(u + w)
        ku, fu = arcs._locate(u, day)
        kv, fv = arcs._locate(v, day)
        got = arcs._mean_rate(ku, fu, u, kv, fv, v, ptab, day[2])
        ref = quad_rate(model, float(u), float(v)) / (float(v) - float(u))
        # the kernel locates float32 temperatures (ulp 2e-6 degC at 20 degC):
        # P off by up to ~r x 4e-6 at each end, over the interval's width
        assert abs(got - ref) <= 1e-5 * abs(ref) + 8e-6 * peak / w, (model, u, v)
    t = np.float32(20.5)
    k, f = arcs._locate(t, day)
    assert arcs._mean_rate(k, f, t, k, f, t, ptab, day[2]) == pytest.approx(
        rate(model)(20.5), rel=1e-4)


@pytest.mark.parametrize("model", MODELS)
def test_folded_arcs_equal_the_daytime_integral(model):
    # g/π [2 Q - K(p0) - K(φ1)], the arcs computed exactly, against scipy
    # quad of r(T(τ)) over the daylight hours of the Parton & Logan day.
    k = kern(model)
    r = rate(model)
    for tn, tx, y in [(5.0, 18.0, 9.5), (12.0, 30.0, 14.0), (20.0, 36.5, 15.0), (-2.0, 12.0, 8.9),
                      (25.0, 41.0, 15.5)]:
        g = y + 2 * A
        p0, f1 = -math.pi * C / g, math.pi * (2 * A + C) / g
        amp = tx - tn
        q = arcs._arc_exact(tn, tx, math.pi / 2, k)
        k0 = arcs._arc_exact(tn, tn + amp * math.sin(p0), p0, k)
        k1 = arcs._arc_exact(tn, tn + amp * math.sin(f1), f1, k)
        got = g / math.pi * (2 * q - k0 - k1)
        ref = quad(lambda tau: r(tn + amp * math.sin(math.pi * (tau - C) / g)), 0.0, y,
                   limit=400, epsabs=1e-12, epsrel=1e-10)[0]
        assert got == pytest.approx(ref, rel=1e-6, abs=1e-9), (model, tn, tx, y)


@pytest.mark.parametrize("model", MODELS)
def test_chord_between_planes_is_within_its_stated_error(model):
    # K(φ) = K(φ_k) + (φ - φ_k) × mean rate between the arc ends (module
    # notes): against scipy quad of K(φ) itself, for the largest gap the
    # default planes leave (half of plane_step = 0.15 rad), relative to Q
    # (a lower bound of the day's arcs): <= 2e-4, the bound measured while
    # choosing plane_step (tables_daylength, benchmarks/README.md).
    nodes, day = axis(model)
    code = model_code(model)
    ptab = arcs.primitive_table(nodes, code, pack_params(code, CURVES[model]))
    k = kern(model)
    r = rate(model)
    rng = np.random.default_rng(5)
    for _ in range(40):
        tn = float(rng.uniform(-2, 32))
        amp = float(rng.gamma(2.0, 6.0))
        phi_k = float(rng.uniform(0.55, 1.0))
        phi = phi_k + float(rng.choice([-1, 1])) * 0.075
        ts_k, ts = (np.float32(tn + amp * math.sin(p)) for p in (phi_k, phi))
        ka, fa = arcs._locate(ts_k, day)
        kb, fb = arcs._locate(ts, day)
        got = arcs._arc_exact(tn, tn + amp * math.sin(phi_k), phi_k, k) + (phi - phi_k) * \
            arcs._mean_rate(ka, fa, ts_k, kb, fb, ts, ptab, day[2])
        ref = quad(lambda p: r(tn + amp * math.sin(p)), 0.0, phi, limit=400,
                   epsabs=1e-13, epsrel=1e-11)[0]
        qv = quad(lambda p: r(tn + amp * math.sin(p)), 0.0, math.pi / 2, limit=400)[0]
        peak = max(r(t) for t in np.linspace(-10, 50, 601))
        assert abs(got - ref) <= 2e-4 * max(qv, 0.01 * peak), (model, tn, amp, phi_k, phi)


def test_long_sunrise_arc_uses_per_day_quadrature():
    # Invented coefficients (within -3a <= c <= a) whose sunrise arc p0 =
    # πc/(Y + 2a) exceeds MAX_SUNRISE: the chord would not be accurate, so
    # the build takes the quadrature strategy, still within 1e-3 of the
    # exact Parton & Logan (1981) day.
    from suitmap.kernels.development import daily_development
    from suitmap.kernels.tables import development_table
    co = dict(a=1.0, b=2.0, c=0.9)
    assert math.pi * 0.9 / (14.0 + 2.0) > arcs.MAX_SUNRISE
    table = development_table("lactin2", CURVES["lactin2"], diurnal="parton_logan",
                              daylength_range=(10.0, 14.0), t_range=(-5.0, 45.0),
                              coefficients=co)
    assert table.strategy == "quadrature"
    rng = np.random.default_rng(8)
    tn = rng.uniform(0, 30, 3000)
    tx = tn + rng.gamma(3.0, 3.0, tn.size)
    tw = tn + rng.normal(0, 2, tn.size)
    y = rng.uniform(10.0, 14.0, tn.size)
    exact = daily_development(tn, tx, "lactin2", CURVES["lactin2"], diurnal="parton_logan",
                              daylength=y, tmin_next=tw, coefficients=co)
    got = table.evaluate(tn, tx, tmin_next=tw, daylength=y)
    big = exact > 0.01 * exact.max()
    assert np.max(np.abs(got - exact)[big] / exact[big]) <= 1e-3

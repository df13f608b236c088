"""Tests of suitmap.kernels.rates: published parameter sets and the values
derived from them (REFERENCES.md section 2), the published formulas evaluated
independently here in plain Python, numerical optimisation and root finding
with scipy.optimize, and properties (hypothesis) on random valid curves."""

from __future__ import annotations

import math

import numba
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.optimize import minimize_scalar

from suitmap.kernels import rates
from suitmap.kernels.rates import (
    MODELS,
    PARAMS,
    development_rate,
    model_code,
    optimum_temperature,
    pack_params,
    peak_rate,
    practical_limits,
    rate_array,
    rate_limits,
    rate_scalar,
    validate_params,
)

PROPS = settings(max_examples=60, deadline=None)


# ------------------------------------------------ the published formulas, plainly
# Written from REFERENCES.md section 2, as published (no expm1, no log-sum-exp),
# each clipped at 0 as the kernel's contract says.
def ref_linear(t, t_low, thermal_constant):
    # linear degree-day model: common practice, no source
    return (t - t_low) / thermal_constant if t > t_low else 0.0


def ref_briere2(t, a, t_low, t_high, m):
    # Briere et al. 1999, Environ. Entomol. 28:22-29, model 2
    if not t_low < t < t_high:
        return 0.0
    return max(0.0, a * t * (t - t_low) * (t_high - t) ** (1.0 / m))


def ref_briere1(t, a, t_low, t_high):
    # Briere et al. 1999, model 1: the square root
    if not t_low < t < t_high:
        return 0.0
    return max(0.0, a * t * (t - t_low) * math.sqrt(t_high - t))


def ref_lactin2(t, rho, t_high, delta, lam):
    # Lactin et al. 1995, Environ. Entomol. 24:68-75
    return max(0.0, math.exp(rho * t) - math.exp(rho * t_high - (t_high - t) / delta) + lam)


def ref_lactin1(t, rho, t_high, delta):
    return ref_lactin2(t, rho, t_high, delta, 0.0)


def ref_logan6(t, psi, rho, t_high, delta):
    # Logan et al. 1976, Environ. Entomol. 5:1133-1140
    return max(0.0, psi * (math.exp(rho * t) - math.exp(rho * t_high - (t_high - t) / delta)))


def ref_sharpe_schoolfield(t, rho25, ha, hl, tl_half, hh, th_half):
    # Schoolfield, Sharpe & Magnuson 1981, J. Theor. Biol. 88:719-731; T in K
    tk = t + 273.15
    r = 1.987
    num = rho25 * (tk / 298.0) * math.exp(ha / r * (1.0 / 298.0 - 1.0 / tk))
    den = 1.0 + math.exp(hl / r * (1.0 / tl_half - 1.0 / tk)) + math.exp(
        hh / r * (1.0 / th_half - 1.0 / tk))
    return num / den


REF = {"linear": ref_linear, "briere1": ref_briere1, "briere2": ref_briere2,
       "lactin1": ref_lactin1, "lactin2": ref_lactin2, "logan6": ref_logan6,
       "sharpe_schoolfield": ref_sharpe_schoolfield}


def ref(model, t, p):
    return REF[model](t, **p)


# --------------------------------------------------------- published parameters
# Briere et al. 1999, Lobesia botrana eggs; the scale a is from memory
BRIERE1_LB = dict(a=1.7e-4, t_low=10.55, t_high=34.0)
BRIERE2_LB = dict(a=1.57e-4, t_low=11.26, t_high=34.0, m=1.75)
# Aghdam et al. 2009, Cydia pomonella eggs (Briere-1 and Logan-6 fits)
BRIERE1_CP = dict(a=1.453e-4, t_low=9.645, t_high=37.6185)
LOGAN6_CP = dict(psi=0.0613, rho=0.1689, t_high=36.6712, delta=5.7836)
# Lactin et al. 1995, Leptinotarsa decemlineata eggs
LACTIN1_LD = dict(rho=0.15543, t_high=38.0487, delta=6.4212)
# Hilbert & Logan 1983, Melanoplus sanguinipes (Sharpe-Schoolfield fit)
SS_MS = dict(rho25=0.0455, ha=8814.36, hl=-14877.95, tl_half=298.81, hh=47258.52,
             th_half=316.695)
# no published source: lam added to the Lactin et al. 1995 set and a plain
# linear model, to check the formulas only (common practice, no source)
LACTIN2_X = dict(LACTIN1_LD, lam=-0.05)
LINEAR_X = dict(t_low=10.0, thermal_constant=250.0)

CURVES = {"linear": LINEAR_X, "briere1": BRIERE1_CP, "briere2": BRIERE2_LB,
          "lactin1": LACTIN1_LD, "lactin2": LACTIN2_X, "logan6": LOGAN6_CP,
          "sharpe_schoolfield": SS_MS}


def test_params_are_the_glossary_names():
    # GLOSSARY.md, "Rate-curve parameters"
    assert PARAMS == {
        "linear": ("t_low", "thermal_constant"), "briere1": ("a", "t_low", "t_high"),
        "briere2": ("a", "t_low", "t_high", "m"), "lactin1": ("rho", "t_high", "delta"),
        "lactin2": ("rho", "t_high", "delta", "lam"),
        "logan6": ("psi", "rho", "t_high", "delta"),
        "sharpe_schoolfield": ("rho25", "ha", "hl", "tl_half", "hh", "th_half")}
    assert MODELS == tuple(PARAMS)
    assert [model_code(m) for m in MODELS] == list(range(7))


# ---------------------------------------------------------- published checks
def _numeric_optimum(model, p, lo, hi):
    res = minimize_scalar(lambda t: -ref(model, t, p), bounds=(lo, hi), method="bounded",
                          options={"xatol": 1e-10})
    return res.x


def test_briere1_optimum_lobesia():
    # Briere et al. 1999: Topt = [4TL + 3T0 + sqrt(16TL^2 + 9T0^2 - 16 T0 TL)]/10;
    # 28.4947 for T0 = 10.55, TL = 34 (REFERENCES section 2, derived)
    t0, tl = BRIERE1_LB["t_low"], BRIERE1_LB["t_high"]
    closed = (4 * tl + 3 * t0 + math.sqrt(16 * tl**2 + 9 * t0**2 - 16 * t0 * tl)) / 10
    got = optimum_temperature("briere1", BRIERE1_LB)
    assert got == pytest.approx(closed, abs=1e-12)
    assert got == pytest.approx(28.4947, abs=5e-5)
    assert got == pytest.approx(_numeric_optimum("briere1", BRIERE1_LB, t0, tl), abs=1e-6)
    assert peak_rate("briere1", BRIERE1_LB) == pytest.approx(
        ref("briere1", closed, BRIERE1_LB), rel=1e-13)


def test_briere2_optimum_lobesia():
    # Briere et al. 1999, model 2: A = 2m+1, B = 2m TL + (m+1) T0, C = m T0 TL,
    # Topt = [B + sqrt(B^2 - 4AC)]/(2A) = 28.0103 (REFERENCES section 2, derived)
    t0, tl, m = BRIERE2_LB["t_low"], BRIERE2_LB["t_high"], BRIERE2_LB["m"]
    a, b, c = 2 * m + 1, 2 * m * tl + (m + 1) * t0, m * t0 * tl
    got = optimum_temperature("briere2", BRIERE2_LB)
    assert got == pytest.approx((b + math.sqrt(b * b - 4 * a * c)) / (2 * a), abs=1e-12)
    assert got == pytest.approx(28.0103, abs=5e-5)
    assert got == pytest.approx(_numeric_optimum("briere2", BRIERE2_LB, t0, tl), abs=1e-6)


def test_lactin1_leptinotarsa():
    # Lactin et al. 1995: r(20) = 0.12256, r(30) = 0.25902 from the rounded
    # parameters (REFERENCES section 2, derived): compared at the 5 decimals
    # the values carry, and to the formula at full precision.
    got = development_rate([20.0, 30.0], "lactin1", **LACTIN1_LD)
    assert got == pytest.approx([0.12256, 0.25902], abs=5e-6)
    assert got == pytest.approx([ref("lactin1", t, LACTIN1_LD) for t in (20.0, 30.0)],
                                rel=1e-12)


def test_logan6_cydia():
    # Aghdam et al. 2009 parameters, Logan et al. 1976 model: r(25) = 0.19082
    # (REFERENCES section 2, derived)
    got = development_rate(25.0, "logan6", **LOGAN6_CP)
    assert got == pytest.approx(0.19082, abs=5e-6)
    assert got == pytest.approx(ref("logan6", 25.0, LOGAN6_CP), rel=1e-12)


def test_sharpe_schoolfield_melanoplus():
    # Hilbert & Logan 1983 parameters, Schoolfield et al. 1981 model with
    # T = degC + 273.15, R = 1.987: r(25) = 0.022196, r(35) = 0.048241
    # (REFERENCES section 2, derived)
    got = development_rate([25.0, 35.0], "sharpe_schoolfield", **SS_MS)
    assert got == pytest.approx([0.022196, 0.048241], abs=5e-7)
    assert got == pytest.approx([ref("sharpe_schoolfield", t, SS_MS) for t in (25.0, 35.0)],
                                rel=1e-12)
    topt = optimum_temperature("sharpe_schoolfield", SS_MS)
    assert topt == pytest.approx(_numeric_optimum("sharpe_schoolfield", SS_MS, 0, 60),
                                 abs=1e-5)


@pytest.mark.parametrize("model", ["lactin1", "lactin2", "logan6"])
def test_lactin_logan_optimum_against_numeric(model):
    # closed form t_high - delta ln(rho delta)/(rho delta - 1) vs scipy's bounded
    # maximisation of the published formula
    p = CURVES[model]
    topt = optimum_temperature(model, p)
    assert topt == pytest.approx(_numeric_optimum(model, p, p["t_high"] - 40, p["t_high"]),
                                 abs=1e-5)
    assert peak_rate(model, p) == pytest.approx(ref(model, topt, p), rel=1e-12)


# ---------------------------------------------- the kernel vs the formulas, grid
GRID = np.concatenate([np.linspace(-40.0, 70.0, 2201), [0.0, 9.645, 10.0, 11.26, 34.0,
                                                        36.6712, 37.6185, 38.0487]])


@pytest.mark.parametrize("model", MODELS)
def test_kernel_equals_published_formula_on_grid(model):
    p = CURVES[model]
    got = development_rate(GRID, model, **p)
    want = np.array([ref(model, float(t), p) for t in GRID])
    # atol: the plain difference of exponentials near t_high loses ~exp(rho t_high) ulps
    np.testing.assert_allclose(got, want, rtol=1e-11, atol=1e-12)
    assert got.dtype == np.float64 and got.shape == GRID.shape
    assert (got > 0).any()


@pytest.mark.parametrize("model", MODELS)
def test_array_paths_agree(model):
    # parallel loop vs serial loop, float32 vs float64 input, n-d shape, NaN
    p = CURVES[model]
    code, packed = model_code(model), pack_params(model, p)
    t32 = np.random.default_rng(1).uniform(-20, 60, (300, 250)).astype(np.float32)
    t32[5, 7] = np.nan
    par = rate_array(t32, code, packed)
    ser = rate_array(t32.astype(np.float64), code, packed, parallel=False)
    np.testing.assert_array_equal(par, ser)
    assert par.shape == t32.shape and math.isnan(par[5, 7])
    for t in t32.ravel()[:50]:
        if not math.isnan(t):
            assert rate_scalar(code, *packed, float(t)) == pytest.approx(ref(model, float(t), p),
                                                                         rel=1e-11, abs=1e-12)
    s = development_rate(np.float32(20.0), model, **p)
    assert np.ndim(s) == 0 and s == pytest.approx(ref(model, float(np.float32(20.0)), p),
                                                  rel=1e-11, abs=1e-12)
    assert math.isnan(development_rate(math.nan, model, **p))


def test_rate_scalar_from_compiled_code():
    # the contract for other kernels: rate_scalar is callable inside njit code
    @numba.njit
    def total(temps, code, pk):
        s = 0.0
        for t in temps:
            s += rate_scalar(code, pk[0], pk[1], pk[2], pk[3], pk[4], pk[5], t)
        return s
    temps = np.array([15.0, 20.0, 25.0])
    want = sum(ref("lactin2", t, LACTIN2_X) for t in temps)
    assert total(temps, 4, pack_params("lactin2", LACTIN2_X)) == pytest.approx(want, rel=1e-11)


def test_lactin2_limits_are_roots_of_the_formula():
    lo, hi = rate_limits("lactin2", LACTIN2_X)
    rho, th, d, lam = (LACTIN2_X[k] for k in ("rho", "t_high", "delta", "lam"))

    def f(t):  # unclipped Lactin et al. 1995 model 2
        return math.exp(rho * t) - math.exp(rho * th - (th - t) / d) + lam
    assert abs(f(lo)) < 1e-12 and abs(f(hi)) < 1e-12
    assert f(lo - 1e-6) < 0 < f(lo + 1e-6) and f(hi + 1e-6) < 0 < f(hi - 1e-6)
    assert lo < optimum_temperature("lactin2", LACTIN2_X) < hi < th


def test_other_limits():
    # the formulas' zeros: Briere at t_low, t_high; Lactin-1/Logan-6 at t_high only
    assert rate_limits("briere1", BRIERE1_CP) == (9.645, 37.6185)
    assert rate_limits("briere2", dict(BRIERE2_LB, t_low=-3.0)) == (0.0, 34.0)
    assert rate_limits("lactin1", LACTIN1_LD) == (-math.inf, 38.0487)
    assert rate_limits("logan6", LOGAN6_CP) == (-math.inf, 36.6712)
    assert rate_limits("linear", LINEAR_X) == (10.0, math.inf)
    assert rate_limits("sharpe_schoolfield", SS_MS) == (-273.15, math.inf)
    assert rate_limits("lactin2", dict(LACTIN2_X, lam=0.0)) == (-math.inf, 38.0487)
    assert optimum_temperature("linear", LINEAR_X) == math.inf
    assert peak_rate("linear", LINEAR_X) == math.inf


@pytest.mark.parametrize("model", ["lactin1", "logan6", "sharpe_schoolfield", "briere1"])
def test_practical_limits(model):
    p = CURVES[model]
    lo, hi = practical_limits(model, p, rel=1e-3)
    peak = ref(model, optimum_temperature(model, p), p)
    assert ref(model, lo, p) == pytest.approx(1e-3 * peak, rel=1e-6)
    assert ref(model, hi, p) == pytest.approx(1e-3 * peak, rel=1e-6)
    inside = np.linspace(lo, hi, 501)[1:-1]
    assert (np.array([ref(model, t, p) for t in inside]) > 1e-3 * peak).all()
    with pytest.raises(ValueError, match="rel"):
        practical_limits(model, p, rel=1.5)


def test_practical_limits_unbounded_side():
    # hh only ~8000 cal/mol above ha: in the Schoolfield et al. 1981 formula the
    # rate above th_half falls so slowly that it never drops below ~1e-4 x peak
    # (it grows again as T_K/298 for T -> inf): no upper limit at 1e-5 x peak
    p = dict(rho25=0.5, ha=26887.0, hl=-5000.0, tl_half=275.0, hh=35000.0, th_half=305.0)
    lo, hi = practical_limits("sharpe_schoolfield", p, rel=1e-5)
    topt = optimum_temperature("sharpe_schoolfield", p)
    peak = ref("sharpe_schoolfield", topt, p)
    assert hi == math.inf and math.isfinite(lo)
    assert ref("sharpe_schoolfield", lo, p) == pytest.approx(1e-5 * peak, rel=1e-6)
    assert min(ref("sharpe_schoolfield", t, p)
               for t in np.linspace(topt, topt + 8192, 4001)) > 1e-5 * peak
    # at 1e-4 x peak the (far) upper crossing exists and is found
    hi4 = practical_limits("sharpe_schoolfield", p, rel=1e-4)[1]
    assert ref("sharpe_schoolfield", hi4, p) == pytest.approx(1e-4 * peak, rel=1e-6)


# ----------------------------------------------------------------- properties
def _u(draw, lo, hi):
    return draw(st.floats(lo, hi, allow_nan=False, allow_infinity=False))


@st.composite
def curves(draw, models=MODELS):
    """A model and random valid parameters within sensible insect ranges."""
    model = draw(st.sampled_from(models))
    if model == "linear":
        return model, dict(t_low=_u(draw, -5, 20), thermal_constant=_u(draw, 10, 2000))
    if model.startswith("briere"):
        t_low = _u(draw, -5, 20)
        p = dict(a=_u(draw, 1e-5, 1e-3), t_low=t_low, t_high=t_low + _u(draw, 8, 30))
        if model == "briere2":
            p["m"] = _u(draw, 0.5, 6)
        return model, p
    if model == "sharpe_schoolfield":
        tl = _u(draw, 275, 300)
        ha = _u(draw, 5e3, 3e4)
        return model, dict(rho25=_u(draw, 0.005, 0.5), ha=ha, hl=_u(draw, -8e4, -5e3),
                           tl_half=tl, hh=ha + _u(draw, 1.5e4, 1.2e5),
                           th_half=tl + _u(draw, 8, 30))
    rho = _u(draw, 0.02, 0.3)
    p = dict(rho=rho, t_high=_u(draw, 25, 45), delta=_u(draw, 0.5, 0.995) / rho)
    if model == "logan6":
        return model, dict(psi=_u(draw, 0.005, 0.5), **p)
    if model == "lactin2":
        # the peak of the lam-free curve, by brute force over a fine grid
        peak = max(ref_lactin1(t, **p) for t in np.linspace(p["t_high"] - 100, p["t_high"], 4001))
        p["lam"] = -_u(draw, 0.0, 0.95) * peak
    return model, p


TEMPS = st.lists(st.floats(-1e4, 1e4, allow_nan=False), min_size=1, max_size=30)


@PROPS
@given(curves(), TEMPS)
def test_rate_nonnegative_finite_and_formula(curve, temps):
    model, p = curve
    got = development_rate(np.array(temps), model, **p)
    assert np.isfinite(got).all() and (got >= 0).all()
    for t, g in zip(temps, got):
        if -100 < t < 100:   # the plain formula overflows far outside this range
            assert g == pytest.approx(ref(model, t, p), rel=1e-9, abs=1e-12)


def _walk(x, direction, n=40):
    out = [x]
    for _ in range(n):
        out.append(np.nextafter(out[-1], direction))
    return out


@PROPS
@given(curves(), st.lists(st.floats(0, 1e4, allow_nan=False), min_size=1, max_size=10))
def test_exactly_zero_outside_limits(curve, offsets):
    model, p = curve
    lo, hi = rate_limits(model, p)
    outside = []
    if math.isfinite(lo):
        outside += [lo - d for d in offsets] + _walk(lo, -np.inf)
    if math.isfinite(hi):
        outside += [hi + d for d in offsets] + _walk(hi, np.inf)
    if outside:
        assert (development_rate(np.array(outside), model, **p) == 0.0).all()
    # and the limits are tight: the rate is positive just inside them
    eps = 1e-6
    for t in (lo + eps * (1 + abs(lo)), hi - eps * (1 + abs(hi))):
        if math.isfinite(t) and model != "sharpe_schoolfield":
            assert development_rate(t, model, **p) > 0.0


UNIMODAL = ("briere1", "briere2", "lactin1", "lactin2", "logan6")


@PROPS
@given(curves(UNIMODAL), st.floats(0, 1), st.floats(0, 1))
def test_monotone_on_each_side_of_the_optimum(curve, u1, u2):
    model, p = curve
    u1, u2 = sorted((u1, u2))
    lo, hi = rate_limits(model, p)
    topt = optimum_temperature(model, p)
    start = lo if math.isfinite(lo) else topt - 60.0
    r1, r2 = development_rate([start + u1 * (topt - start), start + u2 * (topt - start)],
                              model, **p)
    assert r1 <= r2 * (1 + 1e-12)
    r3, r4 = development_rate([topt + u1 * (hi - topt), topt + u2 * (hi - topt)], model, **p)
    assert r4 <= r3 * (1 + 1e-12)


@PROPS
@given(curves(UNIMODAL + ("sharpe_schoolfield",)))
def test_optimum_is_the_maximum(curve):
    model, p = curve
    topt = optimum_temperature(model, p)
    peak = peak_rate(model, p)
    lo, hi = practical_limits(model, p, rel=1e-4)
    grid = np.linspace(lo, hi, 2001)
    assert development_rate(grid, model, **p).max() <= peak * (1 + 1e-12)
    # independent: scipy's bounded maximisation of the published formula
    width = hi - lo
    num = _numeric_optimum(model, p, max(lo, topt - width / 4), min(hi, topt + width / 4))
    assert topt == pytest.approx(num, abs=1e-4 * (1 + width))


# --------------------------------------------------------------------- errors
BAD = [
    ("briere9", dict(a=1.0), "briere9"),
    ("briere1", dict(a=1e-4, t_low=10.0), "t_high"),
    ("linear", dict(t_low=10.0, thermal_constant=200.0, t_high=30.0), "t_high"),
    ("lactin1", dict(LACTIN1_LD, rho=math.nan), "rho"),
    ("lactin1", dict(LACTIN1_LD, t_high=math.inf), "t_high"),
    ("lactin1", dict(LACTIN1_LD, delta="6.4"), "delta"),
    ("briere1", dict(BRIERE1_CP, a=True), "a"),
    ("briere2", dict(BRIERE2_LB, t_low=34.0), "t_low"),
    ("briere1", dict(a=1e-4, t_low=-5.0, t_high=0.0), "t_high"),
    ("briere1", dict(BRIERE1_CP, a=0.0), "a"),
    ("logan6", dict(LOGAN6_CP, psi=-0.1), "psi"),
    ("lactin2", dict(LACTIN2_X, rho=0.0), "rho"),
    ("sharpe_schoolfield", dict(SS_MS, rho25=0.0), "rho25"),
    ("linear", dict(LINEAR_X, thermal_constant=-5.0), "thermal_constant"),
    ("logan6", dict(LOGAN6_CP, delta=-1.0), "delta"),
    ("briere2", dict(BRIERE2_LB, m=0.0), "m"),
    ("lactin1", dict(LACTIN1_LD, delta=1 / 0.15543), "delta"),   # rho*delta = 1
    ("lactin2", dict(LACTIN2_X, lam=0.01), "lam"),
    ("lactin2", dict(LACTIN2_X, lam=-5.0), "lam"),
    ("sharpe_schoolfield", dict(SS_MS, hl=14877.95), "hl"),
    ("sharpe_schoolfield", dict(SS_MS, tl_half=25.66), "tl_half"),
    ("sharpe_schoolfield", dict(SS_MS, th_half=290.0), "th_half"),
    ("sharpe_schoolfield", dict(SS_MS, hh=0.0), "hh"),
]


@pytest.mark.parametrize("model,params,name", BAD, ids=[f"{b[0]}-{b[2]}" for b in BAD])
def test_bad_parameters_name_the_parameter(model, params, name):
    for call in (lambda: validate_params(model, params),
                 lambda: development_rate(20.0, model, **params),
                 lambda: pack_params(model, params)):
        with pytest.raises(ValueError) as err:
            call()
        msg = str(err.value)
        assert f"'{name}'" in msg and "\n" not in msg


def test_validate_returns_floats_in_order():
    got = validate_params("briere2", dict(m=2, t_high=34, a=np.float32(1e-4), t_low=10))
    assert list(got) == ["a", "t_low", "t_high", "m"]
    assert all(type(v) is float for v in got.values())


def test_rate_array_rejects_bad_code_and_packing():
    with pytest.raises(ValueError, match="unknown rate curve model"):
        rate_array(np.zeros(3), 7, np.zeros(6))
    with pytest.raises(ValueError, match="packed"):
        rate_array(np.zeros(3), 0, np.zeros(4))
    assert rates.model_code("sharpe_schoolfield") == 6

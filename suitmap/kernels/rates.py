"""Development rate (1/day) as a function of constant temperature.

Seven published curves (``MODELS``), parameter names as in the project
glossary (``PARAMS``).  Each curve is a numba scalar function; ``rate_scalar``
dispatches on an integer model code with six packed parameters so that
other kernels (e.g. a rate-table builder) can call it from compiled code, and
``rate_array`` runs the compiled (optionally parallel) array loop.  The
compiled part lives in :mod:`suitmap.kernels.rates_curves` and is re-exported
here; this module validates and packs parameters and derives limits, the
optimum and the peak rate of a curve.  Rates are float64, never negative,
exactly 0 outside ``rate_limits``; NaN stays NaN.  No I/O.

References
----------
Logan et al. (1976) Environmental Entomology 5:1133-1140; Schoolfield, Sharpe
& Magnuson (1981) Journal of Theoretical Biology 88:719-731; Lactin et al.
(1995) Environmental Entomology 24:68-75; Briere et al. (1999) Environmental
Entomology 28:22-29 (full citations in ``development_rate``).  Linear
degree-day model: common practice.
"""

from __future__ import annotations

import math
from numbers import Real

import numpy as np
from numpy.typing import ArrayLike
from scipy.optimize import brentq, minimize_scalar

from suitmap.kernels.rates_curves import (_BRIERE1, _BRIERE2, _LACTIN1, _LACTIN2, _LINEAR, _LOGAN6,
                           _PARALLEL_MIN, _SHARPE, KELVIN, MODELS, R_CAL, _fill_parallel,
                           _fill_range, _lactin_core, rate_scalar)
from suitmap.kernels.rates_curves import _CHUNK, _JIT, _briere, _lactin, _linear, _sharpe_schoolfield  # noqa: F401

__all__ = ["MODELS", "PARAMS", "R_CAL", "validate_params", "model_code", "pack_params",
           "rate_scalar", "rate_array", "development_rate", "rate_limits",
           "optimum_temperature", "peak_rate", "practical_limits"]

PARAMS: dict[str, tuple[str, ...]] = {
    "linear": ("t_low", "thermal_constant"),
    "briere1": ("a", "t_low", "t_high"),
    "briere2": ("a", "t_low", "t_high", "m"),
    "lactin1": ("rho", "t_high", "delta"),
    "lactin2": ("rho", "t_high", "delta", "lam"),
    "logan6": ("psi", "rho", "t_high", "delta"),
    "sharpe_schoolfield": ("rho25", "ha", "hl", "tl_half", "hh", "th_half"),
}
_POSITIVE = ("a", "psi", "rho", "rho25", "thermal_constant", "delta", "m", "ha", "hh")


# ---------------------------------------------------------------- validation
def _fail(model: str, name: str, what: str, value: object) -> None:
    raise ValueError(f"rate curve {model!r}: parameter {name!r} {what}, got {value!r}")


def model_code(model: str | int) -> int:
    """Index of ``model`` in ``MODELS`` (an int code is checked); ValueError
    for an unknown model, listing the names."""
    if isinstance(model, (int, np.integer)) and not isinstance(model, bool):
        if 0 <= int(model) < len(MODELS):
            return int(model)
    elif isinstance(model, str) and model in MODELS:
        return MODELS.index(model)
    raise ValueError(f"unknown rate curve model {model!r}; use one of: {', '.join(MODELS)}")


def validate_params(model: str, params: dict) -> dict[str, float]:
    """Check the parameters of one rate curve; return them as floats.

    ``params`` must hold exactly the names of ``PARAMS[model]``, finite real
    numbers; returns them as floats in that order.

    Raises
    ------
    ValueError
        One line naming the model and the parameter: unknown model; missing
        or unknown parameter; not a finite real number; ``t_low >= t_high``;
        Briere ``t_high <= 0``;
        ``a``, ``psi``, ``rho``, ``rho25``, ``thermal_constant``, ``delta``,
        ``m``, ``ha`` or ``hh`` <= 0; ``rho*delta >= 1`` (Lactin/Logan: no
        positive part); ``lam > 0``, or so negative that Lactin-2 is 0
        everywhere; ``hl >= 0`` (sign convention of Schoolfield et al.
        1981); a half-temperature <= 173.15 K (°C for K); tl_half >= th_half.

    References
    ----------
    As ``development_rate``.
    """
    name = MODELS[model_code(model)]
    need = PARAMS[name]
    if not isinstance(params, dict):
        raise ValueError(f"rate curve {name!r}: parameters must be a mapping of "
                         f"{', '.join(need)}, got {type(params).__name__}")
    for key in [k for k in params if k not in need] + [k for k in need if k not in params]:
        raise ValueError(f"rate curve {name!r}: {'unknown' if key in params else 'missing'} "
                         f"parameter {key!r}; expected {', '.join(need)}")
    p: dict[str, float] = {}
    for key in need:
        v = params[key]
        try:
            ok = not isinstance(v, bool) and isinstance(v, Real) and math.isfinite(float(v))
        except OverflowError:
            ok = False
        if not ok:
            _fail(name, key, "must be a finite real number", v)
        p[key] = float(v)
        if key in _POSITIVE and not p[key] > 0.0:
            _fail(name, key, "must be > 0", v)
    if "t_low" in p and "t_high" in p and not p["t_low"] < p["t_high"]:
        _fail(name, "t_high", f"must be greater than 't_low' ({p['t_low']!r})", p["t_high"])
    if name.startswith("briere") and not p["t_high"] > 0.0:
        _fail(name, "t_high", "must be > 0 °C (the factor T makes the rate 0 below 0 °C)",
              p["t_high"])
    if name in ("lactin1", "lactin2", "logan6") and not p["rho"] * p["delta"] < 1.0:
        _fail(name, "delta", f"must be below 1/rho ({1.0 / p['rho']!r}) or the curve has no "
              "positive part below t_high", p["delta"])
    if name == "lactin2":
        if p["lam"] > 0.0:
            _fail(name, "lam", "must be <= 0 (lam > 0 gives a positive rate at any cold "
                  "temperature)", p["lam"])
        top = _lactin_core(_lactin_topt(p["rho"], p["t_high"], p["delta"]), p["rho"],
                           p["t_high"], p["delta"])
        if not top + p["lam"] > 0.0:
            _fail(name, "lam", f"must be above -{top!r} or the rate is 0 at every "
                  "temperature", p["lam"])
    if name == "sharpe_schoolfield":
        if not p["hl"] < 0.0:
            _fail(name, "hl", "must be < 0 cal/mol (Schoolfield et al. 1981 convention: "
                  "exp[(hl/R)(1/tl_half - 1/T)])", p["hl"])
        for key in ("tl_half", "th_half"):
            if not p[key] > 173.15:
                _fail(name, key, "is in kelvin and must exceed 173.15 K (add 273.15 to °C)",
                      p[key])
        if not p["tl_half"] < p["th_half"]:
            _fail(name, "th_half", f"must be greater than 'tl_half' ({p['tl_half']!r})",
                  p["th_half"])
    return p


def _lactin_topt(rho: float, t_high: float, delta: float) -> float:
    """Maximum of exp(rho T) - exp(rho t_high - (t_high - T)/delta).

    Derivative zero: rho*delta*exp(rho T) = exp(rho t_high - (t_high - T)/delta),
    so T* = t_high - delta*ln(rho delta)/(rho delta - 1) (derived; needs
    rho*delta < 1); the peak is exp(rho T*)(1 - rho delta).
    """
    x = rho * delta - 1.0
    return t_high - delta * math.log1p(x) / x


def pack_params(model: str | int, params: dict) -> np.ndarray:
    """Validated parameters as the six floats ``rate_scalar`` takes.

    float64, shape (6,).  Slots follow ``PARAMS[model]``, unused slots 0;
    ``lactin2`` also stores its two roots (``rate_limits``) in slots 4, 5.
    Raises ValueError as ``validate_params``.
    """
    name = MODELS[model_code(model)]
    p = validate_params(name, params)
    packed = np.zeros(6, dtype=np.float64)
    packed[:len(p)] = list(p.values())
    if name == "lactin2":
        packed[4:6] = _lactin2_roots(p["rho"], p["t_high"], p["delta"], p["lam"])
    return packed


def _lactin2_roots(rho: float, t_high: float, delta: float, lam: float) -> tuple[float, float]:
    """Lower and upper zero of the Lactin-2 curve (brentq on both branches)."""
    if lam == 0.0:
        return -math.inf, t_high
    t_opt = _lactin_topt(rho, t_high, delta)

    def f(t: float) -> float:
        return _lactin_core(t, rho, t_high, delta) + lam

    step = 1.0
    while f(t_opt - step) >= 0.0:   # f -> lam < 0 as T -> -inf
        step *= 2.0
    lo = brentq(f, t_opt - step, t_opt, xtol=1e-13, rtol=4 * np.finfo(float).eps)
    hi = brentq(f, t_opt, t_high, xtol=1e-13, rtol=4 * np.finfo(float).eps)  # f(t_high) = lam
    return float(lo), float(hi)


# -------------------------------------------------------------------- public
def rate_array(temp: np.ndarray, code: int, packed: np.ndarray, *,
               parallel: bool = True) -> np.ndarray:
    """Development rate of an array of temperatures (the kernel entry point).

    ``temp``: °C, any shape (C-contiguous float32/float64 read without a
    copy); ``code`` from ``model_code``; ``packed`` from ``pack_params``;
    ``parallel``: all numba threads for large arrays (turn off in callers
    that already run blocks in parallel threads).  Returns float64 rates
    (1/day) of the shape of ``temp``.  Raises ValueError for an unknown
    code or a ``packed`` that is not 6 non-NaN floats.

    References
    ----------
    As ``development_rate``.
    """
    code = model_code(code)
    packed = np.ascontiguousarray(packed, dtype=np.float64)
    if packed.shape != (6,) or np.isnan(packed).any():
        raise ValueError("packed rate parameters must be 6 numbers from pack_params, "
                         f"got shape {packed.shape}")
    temp = np.asarray(temp)
    if temp.dtype not in (np.float32, np.float64):
        temp = temp.astype(np.float64)
    flat = np.ascontiguousarray(temp).reshape(-1)
    out = np.empty(flat.size, dtype=np.float64)
    if parallel and flat.size >= _PARALLEL_MIN:
        _fill_parallel(flat, out, code, packed)
    else:
        _fill_range(flat, out, code, packed, 0, flat.size)
    return out.reshape(temp.shape)


def development_rate(temp: ArrayLike, model: str, **params: float) -> np.ndarray:
    """Development rate (1/day) at constant temperature(s) ``temp`` (°C).

    Parameters
    ----------
    temp : array_like
        Temperature, °C.
    model : str
        One of ``MODELS``.
    **params : float
        The model's parameters, names from ``PARAMS`` (project glossary).

    Returns
    -------
    numpy.ndarray
        float64 rates of the shape of ``temp`` (a numpy float64 scalar for a
        scalar ``temp``); never negative; exactly 0 outside ``rate_limits``;
        NaN where ``temp`` is NaN.

    Raises
    ------
    ValueError
        As ``validate_params``.

    Notes
    -----
    T in °C; rates clipped at 0.

    * ``linear``: (T − t_low)/thermal_constant for T > t_low, else 0; no
      upper limit (the rate keeps rising).  Common practice.
    * ``briere1`` [4]_: a·T·(T − t_low)·√(t_high − T) on (t_low, t_high).
    * ``briere2`` [4]_: a·T·(T − t_low)·(t_high − T)^(1/m) on (t_low, t_high).
    * ``lactin1`` [3]_: exp(ρT) − exp(ρ·t_high − (t_high − T)/Δ) below
      t_high, 0 above.  Positive for every T < t_high (it only tends to 0
      as T → −∞): no lower limit.
    * ``lactin2`` [3]_: the ``lactin1`` curve + λ (λ ≤ 0); zero below its
      lower and above its upper root (the upper root lies below t_high).
    * ``logan6`` [1]_: ψ·[exp(ρT) − exp(ρ·t_high − (t_high − T)/Δ)], with
      t_high the published T_M; as ``lactin1`` otherwise.
    * ``sharpe_schoolfield`` [2]_: with T_K = T + 273.15, R = 1.987,
      ρ25·(T_K/298)·exp[(HA/R)(1/298 − 1/T_K)] / {1 + exp[(HL/R)(1/T½L −
      1/T_K)] + exp[(HH/R)(1/T½H − 1/T_K)]}, HL < 0; positive above
      absolute zero.

    The Lactin/Logan difference of exponentials is evaluated as
    −exp(ρT)·expm1((ρ − 1/Δ)(t_high − T)), which is the same function
    without cancellation.

    References
    ----------
    .. [1] Logan, J.A., Wollkind, D.J., Hoyt, S.C. & Tanigoshi, L.K. (1976)
       Environmental Entomology 5:1133-1140.
    .. [2] Schoolfield, R.M., Sharpe, P.J.H. & Magnuson, C.E. (1981) Journal
       of Theoretical Biology 88:719-731.
    .. [3] Lactin, D.J., Holliday, N.J., Johnson, D.L. & Craigen, R. (1995)
       Environmental Entomology 24:68-75.
    .. [4] Briere, J.-F., Pracros, P., Le Roux, A.-Y. & Pierre, J.-S. (1999)
       Environmental Entomology 28:22-29.

    Examples
    --------
    >>> float(development_rate(20.0, "linear", t_low=10.0, thermal_constant=200.0))
    0.05
    """
    code = model_code(model)
    packed = pack_params(code, params)
    arr = np.asarray(temp)
    out = rate_array(arr, code, packed)
    return out[()] if arr.ndim == 0 else out


def rate_limits(model: str, params: dict) -> tuple[float, float]:
    """Temperatures (°C) outside which the rate is exactly zero.

    ``(lower, upper)``: the rate is 0 for T <= lower and for T >= upper.
    linear: (t_low, inf); briere1/2: (max(t_low, 0), t_high); lactin1,
    logan6: (-inf, t_high), positive at every lower temperature; lactin2:
    its two roots (brentq), (-inf, t_high) when lam = 0; sharpe_schoolfield:
    (-273.15, inf), positive above absolute zero (``practical_limits`` gives
    a useful range).  Raises ValueError as ``validate_params``.

    References
    ----------
    As ``development_rate``.
    """
    code = model_code(model)
    p = [float(x) for x in pack_params(code, params)]
    return {_LINEAR: (p[0], math.inf), _BRIERE1: (max(p[1], 0.0), p[2]),
            _BRIERE2: (max(p[1], 0.0), p[2]), _LACTIN1: (-math.inf, p[1]),
            _LACTIN2: (p[4], p[5]), _LOGAN6: (-math.inf, p[2]),
            _SHARPE: (-KELVIN, math.inf)}[code]


def _sharpe_topt(packed: np.ndarray) -> float:
    """Numeric maximum: 0.05 K grid scan, then bounded minimize_scalar."""
    lo = max(-KELVIN + 0.05, packed[3] - KELVIN - 100.0)
    hi = packed[5] - KELVIN + 150.0
    grid = np.arange(lo, hi, 0.05)
    r = rate_array(grid, _SHARPE, packed, parallel=False)
    i = int(np.argmax(r))
    if i == 0 or i == grid.size - 1:
        raise ValueError("rate curve 'sharpe_schoolfield': no maximum between "
                         f"{lo:.2f} and {hi:.2f} °C; check parameters 'ha' and 'hh'")
    res = minimize_scalar(lambda t: -rate_scalar(_SHARPE, *packed, t),
                          bounds=(grid[i - 1], grid[i + 1]), method="bounded",
                          options={"xatol": 1e-9})
    return float(res.x)


def optimum_temperature(model: str, params: dict) -> float:
    """Temperature (°C) of the maximum development rate.

    Briere-1/-2 [1]_, closed form: A = 2m + 1, B = 2m·t_high + (m + 1)·t_low,
    C = m·t_low·t_high (m = 2 for Briere-1), Topt = [B + √(B² − 4AC)]/(2A).
    Lactin-1/-2 [2]_, Logan-6 [3]_, closed form (derivative set to zero; λ
    and ψ do not move it): Topt = t_high − Δ·ln(ρΔ)/(ρΔ − 1).
    Sharpe–Schoolfield [4]_: numeric (grid scan, then bounded
    ``scipy.optimize.minimize_scalar``).  Linear: ``inf`` (no maximum).
    Raises ValueError as ``validate_params``, or when a Sharpe–Schoolfield
    curve has no maximum from 100 K below tl_half to 150 K above th_half.

    References
    ----------
    .. [1] Briere et al. (1999) Environmental Entomology 28:22-29.
    .. [2] Lactin et al. (1995) Environmental Entomology 24:68-75.
    .. [3] Logan et al. (1976) Environmental Entomology 5:1133-1140.
    .. [4] Schoolfield et al. (1981) Journal of Theoretical Biology 88:719-731.
    """
    code = model_code(model)
    packed = pack_params(code, params)
    if code == _LINEAR:
        return math.inf
    if code in (_BRIERE1, _BRIERE2):
        t_low, t_high = packed[1], packed[2]
        m = 2.0 if code == _BRIERE1 else packed[3]
        a, b, c = 2.0 * m + 1.0, 2.0 * m * t_high + (m + 1.0) * t_low, m * t_low * t_high
        return float((b + math.sqrt(b * b - 4.0 * a * c)) / (2.0 * a))
    if code == _SHARPE:
        return _sharpe_topt(packed)
    rho, t_high, delta = packed[1:4] if code == _LOGAN6 else packed[0:3]
    return _lactin_topt(float(rho), float(t_high), float(delta))


def peak_rate(model: str, params: dict) -> float:
    """Development rate (1/day) at ``optimum_temperature``; ``inf`` for linear.

    References
    ----------
    As ``optimum_temperature``.
    """
    code = model_code(model)
    t_opt = optimum_temperature(code, params)
    if math.isinf(t_opt):
        return math.inf
    return float(rate_scalar(code, *pack_params(code, params), t_opt))


def practical_limits(model: str, params: dict, rel: float = 1e-6) -> tuple[float, float]:
    """Temperatures (°C) between which the rate exceeds ``rel`` × peak rate.

    The useful range of curves with no exact lower zero (Lactin-1, Logan-6)
    or none at all (Sharpe–Schoolfield): ``scipy.optimize.brentq`` on each
    side of the optimum; ±inf where the rate stays above the level within
    8192 K of the optimum; linear: ``rate_limits``.  ``0 < rel < 1``;
    returns (lower, upper) in °C.  Raises ValueError as ``validate_params``.

    References
    ----------
    As ``development_rate``.
    """
    if not 0.0 < rel < 1.0:
        raise ValueError(f"practical_limits: rel must be between 0 and 1, got {rel!r}")
    code = model_code(model)
    if code == _LINEAR:
        return rate_limits(code, params)
    packed = pack_params(code, params)
    t_opt = optimum_temperature(code, params)
    target = rel * rate_scalar(code, *packed, t_opt)
    exact = rate_limits(code, params)

    def g(t: float) -> float:
        return rate_scalar(code, *packed, t) - target

    ends = []
    for side, bound in ((-1.0, exact[0]), (1.0, exact[1])):
        near, far = t_opt, bound
        if not math.isfinite(far):   # first 0.25 K step below the level
            probe = t_opt + side * np.arange(0.25, 8192.25, 0.25)
            below = np.flatnonzero(rate_array(probe, code, packed, parallel=False) < target)
            if below.size == 0:      # not within 8192 K: unbounded on that side
                ends.append(side * math.inf)
                continue
            far = float(probe[below[0]])
            near = float(probe[below[0] - 1]) if below[0] > 0 else t_opt
        ends.append(float(brentq(g, min(far, near), max(far, near), xtol=1e-10)))
    return ends[0], ends[1]

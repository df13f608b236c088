"""Fit development-rate curves to laboratory rearing data (``suitmap fit``).

Laboratory data are development times (days) of one stage reared at a few
constant temperatures.  The development rate is ``1/days``; each model of
:mod:`suitmap.kernels.rates` is fitted to the rates by weighted nonlinear
least squares, the linear part of the data gives the degree-day parameters
(lower threshold and thermal constant), and the models are ranked by AIC.

Statistics (the same for every model):

* Weights ``w_i = n_i`` (sample size of the row) when the file has a sample
  size column, else 1: the variance of a mean of ``n`` individuals is
  ``sigma**2 / n``.  ``suitmap fit`` first pools the rows that share a
  temperature (:func:`suitmap.fit.data.group_by_temperature`), so ``N`` below
  is then the number of rearing temperatures, and ``s**2`` (hence the
  standard errors) does not change when every row is entered twice.  The residual variance is ``s**2 = RSS_w / (N - k)`` with
  ``RSS_w = sum(w_i * (r_i - f(T_i))**2)``, ``N`` rows and ``k`` parameters.
* Standard errors come from the linearised covariance ``s**2 (J' W J)^-1``
  at the estimate, ``J`` the Jacobian in the published parameters; 95 %
  intervals are ``estimate +- t(0.975, N - k) * se`` with Student's t
  (linear-approximation intervals, Bates & Watts 1988, ch. 2).  They are
  exact for the linear model's slope and intercept, approximate otherwise.
* Gaussian log-likelihood at the maximum, ``sigma**2`` estimated as
  ``RSS_w / N``: ``log L = -N/2 * (log(2 pi RSS_w / N) + 1) + 1/2 sum(log w_i)``.
  ``AIC = -2 log L + 2K`` (Akaike 1974; Burnham & Anderson 2002, sec. 2.2),
  ``AICc = AIC + 2K(K+1)/(N-K-1)`` (sec. 2.4), ``BIC = -2 log L + K log N``
  (Schwarz 1978), with ``K = k + 1`` (the variance counts as a parameter).

References
----------
Akaike, H. (1974) A new look at the statistical model identification.
IEEE Trans. Automatic Control 19:716-723.
Bates, D.M. & Watts, D.G. (1988) Nonlinear Regression Analysis and Its
Applications. Wiley.
Burnham, K.P. & Anderson, D.R. (2002) Model Selection and Multimodel
Inference, 2nd ed. Springer.
Schwarz, G. (1978) Estimating the dimension of a model. Ann. Stat. 6:461-464.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import NamedTuple

import numpy as np
from scipy import optimize, stats

from suitmap.errors import InputError
from suitmap.fit.data import MIN_TEMPERATURES, LabData, _needed_text, _weights  # noqa: F401
from suitmap.fit.start import model_spec
from suitmap.kernels.rates import MODELS, PARAMS, development_rate

__all__ = ["FitResult", "LinearPart", "fit_model", "fit_all", "linear_part"]

#: Fewest distinct temperatures a lab file must have (a 3-parameter curve needs > 3).
class LinearPart(NamedTuple):
    """Degree-day parameters from the linear part of the rate (Campbell et al. 1974)."""

    lower_threshold: float             #: x-intercept -intercept/slope (°C)
    degree_days_per_generation: float  #: thermal constant K = 1/slope (°C·day)
    lower_threshold_se: float
    degree_days_per_generation_se: float
    slope: float
    intercept: float
    temperatures: tuple[float, ...]    #: distinct temperatures used
    n_obs: int                         #: rows used
    r_squared: float
    #: covariance of (lower_threshold, degree_days_per_generation), delta method
    covariance: tuple[tuple[float, float], tuple[float, float]] = ((math.nan,) * 2,) * 2


def linear_part(data: LabData, *, weights: str | None = "n",
                max_temperature: float | None = None) -> LinearPart:
    """Weighted linear regression of rate on temperature over the linear part.

    Rule for the linear part: with ``max_temperature`` given, the rows at or
    below it.  Otherwise the distinct temperatures strictly below the one
    with the highest (weighted) mean rate; if the hottest temperature has the
    highest rate, no decline was observed and every row is used.

    The lower threshold is the x-intercept ``-intercept/slope`` and the
    thermal constant ``K = 1/slope``; their standard errors follow Campbell
    et al. (1974): ``se(t) = (rbar/b) sqrt(s**2/(sum(w) rbar**2) + (se_b/b)**2)``
    and ``se(K) = se_b / b**2`` (first-order, rbar the weighted mean rate).
    ``covariance`` is the first-order (delta-method) covariance of the pair
    ``(t, K) = (-a/b, 1/b)``: ``G V G'`` with ``V = s**2 (X' W X)^-1`` the
    coefficient covariance of ``(a, b)`` and ``G = [[-1/b, a/b**2], [0, -1/b**2]]``;
    its diagonal is the two squared standard errors above.

    References
    ----------
    Campbell, A., Frazer, B.D., Gilbert, N., Gutierrez, A.P. & Mackauer, M.
    (1974) Temperature requirements of some aphids and their parasites.
    J. Appl. Ecol. 11:431-438.
    """
    where = f"lab data {data.source}"
    t, r, w = data.temperature, data.rate, _weights(data, weights)
    if max_temperature is None:
        temps = data.distinct_temperatures
        means = np.array([np.average(r[t == x], weights=w[t == x]) for x in temps])
        peak = int(np.argmax(means))
        keep = t < temps[peak] if peak < temps.size - 1 else np.ones(t.size, bool)
        rule = f"below the rate peak at {temps[peak]:g} °C"
    else:
        keep = t <= max_temperature
        rule = f"at or below {max_temperature:g} °C"
    used = np.unique(t[keep])
    if used.size < 3:
        raise InputError(f"{where}: only {used.size} temperatures {rule}; the linear part needs "
                         "at least 3; add temperatures or choose another max_temperature")
    t, r, w = t[keep], r[keep], w[keep]
    sw = w.sum()
    tbar, rbar = (w * t).sum() / sw, (w * r).sum() / sw
    sxx = (w * (t - tbar) ** 2).sum()
    b = (w * (t - tbar) * (r - rbar)).sum() / sxx
    a = rbar - b * tbar
    if not b > 0:
        raise InputError(f"{where}: the rate does not increase with temperature {rule} "
                         f"(slope {b:.3g}); check the data")
    resid = r - a - b * t
    s2 = (w * resid**2).sum() / (t.size - 2)  # >= 3 distinct temperatures: dof >= 1
    se_b = math.sqrt(s2 / sxx)
    se_t = (rbar / b) * math.sqrt(s2 / (sw * rbar**2) + (se_b / b) ** 2)
    r2 = 1.0 - (w * resid**2).sum() / (w * (r - rbar) ** 2).sum()
    var_b = s2 / sxx
    v = np.array([[s2 / sw + tbar**2 * var_b, -tbar * var_b],   # (a, b)
                  [-tbar * var_b, var_b]])
    g = np.array([[-1.0 / b, a / b**2], [0.0, -1.0 / b**2]])
    c = g @ v @ g.T
    c12 = float(0.5 * (c[0, 1] + c[1, 0]))
    cov = ((float(c[0, 0]), c12), (c12, float(c[1, 1])))
    return LinearPart(float(-a / b), float(1.0 / b), float(se_t), float(se_b / b**2),
                      float(b), float(a), tuple(float(x) for x in used), int(t.size), float(r2),
                      cov)


@dataclass
class FitResult:
    """One fitted rate curve.  ``params`` use the glossary names of the model."""

    model: str
    params: dict[str, float]
    ci95: dict[str, tuple[float, float]]
    se: dict[str, float]
    aic: float
    bic: float
    rss: float            #: weighted residual sum of squares (1/day)**2
    n_obs: int
    converged: bool
    message: str
    aicc: float = math.nan
    dof: int = 0
    extra: dict = field(default_factory=dict)
    #: covariance of ``params`` (rows and columns in ``PARAMS[model]`` order), or None
    covariance: tuple[tuple[float, ...], ...] | None = None

    def rate(self, temp) -> np.ndarray:
        """Fitted development rate (1/day) at ``temp`` (°C)."""
        return development_rate(np.asarray(temp, dtype=float), self.model, **self.params)

    def summary(self) -> str:
        """One line: model, AIC and each parameter with its 95 % interval (for the CLI)."""
        if not self.converged:
            return f"{self.model}: not converged ({self.message})"
        ps = "; ".join(f"{k} = {v:.5g} [{self.ci95[k][0]:.4g}, {self.ci95[k][1]:.4g}]"
                       for k, v in self.params.items())
        return f"{self.model}: AIC {self.aic:.2f}, {ps}"


def _line_start(data: LabData) -> tuple[float, float] | None:
    """(lower threshold, thermal constant) of the unweighted linear part, if it has one."""
    try:
        lp = linear_part(data, weights=None)
    except InputError:
        return None
    return lp.lower_threshold, lp.degree_days_per_generation


def _criteria(rss: float, w: np.ndarray, k: int) -> tuple[float, float, float]:
    n = w.size
    big_k = k + 1
    loglik = (-0.5 * n * (math.log(2 * math.pi * rss / n) + 1) + 0.5 * np.log(w).sum()
              if rss > 0 else math.inf)
    aic = -2 * loglik + 2 * big_k
    aicc = aic + 2 * big_k * (big_k + 1) / (n - big_k - 1) if n - big_k - 1 > 0 else math.nan
    bic = -2 * loglik + big_k * math.log(n)
    return float(aic), float(aicc), float(bic)


def _failed(model: str, data: LabData, message: str) -> FitResult:
    nan = math.nan
    names = PARAMS[model]
    return FitResult(model, {p: nan for p in names}, {p: (nan, nan) for p in names},
                     {p: nan for p in names}, nan, nan, nan, len(data), False, message)


def fit_model(data: LabData, model: str, *, weights: str | None = "n",
              max_nfev: int | None = None) -> FitResult:
    """Fit one rate model to ``1/days`` by weighted nonlinear least squares.

    Starting values come from a coarse grid around values derived from the
    data (lower threshold from the linear part, upper limits above the
    hottest temperature, Arrhenius slope for Sharpe–Schoolfield), the scale
    parameter solved exactly at each grid point; the best few starts are
    refined with :func:`scipy.optimize.least_squares` (trust-region
    reflective, with bounds).  Statistics: see the module docstring.

    Returns
    -------
    FitResult
        ``converged`` is False (with the reason in ``message``) when the
        optimiser stopped without converging or the covariance is singular.

    Raises
    ------
    InputError
        If the data have too few distinct temperatures for the model.
    ValueError
        For an unknown model or weights option.
    """
    if model not in MODELS:
        raise ValueError(f"unknown rate model {model!r}; choose one of {', '.join(MODELS)}")
    names = PARAMS[model]
    k = len(names)
    m = data.distinct_temperatures.size
    if m <= k:
        raise InputError(f"lab data {data.source}: {model} has {k} parameters and needs more "
                         f"than {k} distinct temperatures, the data have {m}; add temperatures "
                         "or choose a model with fewer parameters")
    w = _weights(data, weights)
    spec = model_spec(model, data, w, _line_start(data))
    t, r, sw = data.temperature, data.rate, np.sqrt(w)

    def residuals(x):
        with np.errstate(all="ignore"):
            try:
                f = development_rate(t, model, **spec.to_params(x))
            except (ValueError, FloatingPointError):
                return np.full(t.size, 1e3)
        res = sw * (r - f)
        return np.where(np.isfinite(res), res, 1e3)

    starts = sorted(spec.starts, key=lambda x: float(np.sum(residuals(x) ** 2)))[:4]
    best = None
    for x0 in starts:
        try:
            sol = optimize.least_squares(residuals, x0, bounds=(spec.lower, spec.upper),
                                         method="trf", x_scale="jac", max_nfev=max_nfev,
                                         ftol=1e-12, xtol=1e-12, gtol=1e-12)
        except ValueError:  # e.g. infeasible start after clipping
            continue
        key = (sol.status > 0, -sol.cost)
        if best is None or key > (best.status > 0, -best.cost):
            best = sol
    if best is None:
        return _failed(model, data, "no feasible starting value; check the data")
    params = spec.to_params(best.x)
    rss = float(np.sum(residuals(best.x) ** 2))
    dof = len(data) - k
    cov = _covariance(t, sw, model, params, rss / dof)
    tq = float(stats.t.ppf(0.975, dof))
    notes = []
    if best.status <= 0:
        notes.append(f"optimiser stopped without converging ({best.message})")
    if cov is None:
        notes.append("covariance singular: the parameters are not all identifiable from "
                      "these data; no intervals")
        se = {p: math.nan for p in names}
    else:
        se = {p: float(math.sqrt(max(cov[i, i], 0.0))) for i, p in enumerate(names)}
    ci = {p: (params[p] - tq * se[p], params[p] + tq * se[p]) for p in names}
    at_bound = [spec.names[i] for i in range(k)
                if np.isclose(best.x[i], spec.lower[i], rtol=1e-6, atol=1e-9)
                or np.isclose(best.x[i], spec.upper[i], rtol=1e-6, atol=1e-9)]
    if at_bound:
        notes.append(f"{', '.join(at_bound)} at the search bound; intervals unreliable")
    converged = best.status > 0 and cov is not None and math.isfinite(rss)
    aic, aicc, bic = _criteria(rss, w, k)
    return FitResult(model, params, ci, se, aic, bic, rss, len(data), converged,
                     "; ".join(notes) if notes else "converged", aicc=aicc, dof=dof,
                     extra={"nfev": int(best.nfev), "weights": weights or "equal"},
                     covariance=None if cov is None else tuple(
                         tuple(float(v) for v in row) for row in 0.5 * (cov + cov.T)))


def _covariance(t, sw, model, params, s2) -> np.ndarray | None:
    """``s2 (J' W J)^-1``, J by central differences in the published parameters
    (one-sided where a step would leave the model's valid range)."""
    names = list(params)
    jac = np.empty((t.size, len(names)))

    def f(p):
        with np.errstate(all="ignore"):
            return development_rate(t, model, **p)

    for j, p in enumerate(names):
        h = 1e-5 * max(abs(params[p]), 1e-8)
        up, dn = dict(params), dict(params)
        up[p] += h
        dn[p] -= h
        for a, b, step in ((up, dn, 2 * h), (up, params, h), (params, dn, h)):
            try:
                jac[:, j] = (f(a) - f(b)) / step
                break
            except ValueError:
                continue
        else:
            return None
    jac *= sw[:, None]
    if not np.isfinite(jac).all():
        return None
    norms = np.linalg.norm(jac, axis=0)
    if (norms == 0).any():
        return None
    u, s, vt = np.linalg.svd(jac / norms, full_matrices=False)
    if s[-1] <= s[0] * 1e-10:
        return None
    inv = (vt.T / s**2) @ vt
    return s2 * inv / np.outer(norms, norms)


def fit_all(data: LabData, models: Sequence[str] = MODELS, *, weights: str | None = "n",
            criterion: str = "aic") -> list[FitResult]:
    """Fit several models; return them best first by ``criterion`` (``aic``, ``aicc``, ``bic``).

    Models that do not converge, or that have too many parameters for the
    data, are returned last with ``converged=False`` and the reason.

    Raises
    ------
    InputError
        If no model converges.
    """
    if criterion not in ("aic", "aicc", "bic"):
        raise ValueError(f"criterion must be 'aic', 'aicc' or 'bic', got {criterion!r}")
    results = []
    for model in models:
        try:
            results.append(fit_model(data, model, weights=weights))
        except InputError as exc:
            results.append(_failed(model, data, str(exc).split(": ", 1)[-1]))
    ok = [res for res in results if res.converged]
    if not ok:
        reasons = "; ".join(f"{res.model}: {res.message}" for res in results)
        raise InputError(f"lab data {data.source}: no rate model converged ({reasons})")

    def score(res):  # NaN (AICc undefined) last; -inf (exact fit) first
        v = getattr(res, criterion)
        return math.inf if math.isnan(v) else v

    return sorted(ok, key=score) + [res for res in results if not res.converged]

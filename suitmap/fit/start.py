"""Bounds and starting values of each rate model for :mod:`suitmap.fit`.

Derived from the lab data themselves (temperature range, the linear part of
the rates, the fastest rate), so every fit starts inside its curve's limits.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from suitmap.kernels.rates import PARAMS, R_CAL, development_rate

if TYPE_CHECKING:
    from suitmap.fit.data import LabData

@dataclass
class _Spec:
    """Internal parameters of one model: names, bounds, starts, map to published names."""

    names: tuple[str, ...]
    lower: np.ndarray
    upper: np.ndarray
    starts: list[np.ndarray]
    to_params: Callable[[np.ndarray], dict[str, float]]


def model_spec(model: str, data: LabData, w: np.ndarray,
               line: tuple[float, float] | None) -> _Spec:
    """Bounds and starting values derived from the data.

    Temperatures of the data must lie inside the curve: ``t_low < min(T)``
    and ``t_high > max(T)`` (every row developed).  Lactin-1/2 and Logan-6 are
    fitted with ``log(kappa)``, ``kappa = 1/delta - rho > 0``, for ``delta``
    (Logan-6 with ``psi * kappa`` for ``psi``): ``exp(rho T)(1 - exp(-kappa
    (t_high - T)))`` is a small difference of large exponentials when ``delta``
    is near ``1/rho``, and ``psi * kappa`` has a finite limit as ``kappa -> 0``,
    where Logan-6 otherwise runs down a valley ``psi -> inf``.  The covariance
    is computed in the published parameters, whatever the parametrisation.
    ``line``: (lower threshold, thermal constant) of the data's linear part,
    or None when it has too few points.
    """
    t, r = data.temperature, data.rate
    tmin, tmax = float(t.min()), float(t.max())
    if line is not None:
        tl0, k0 = min(line[0], tmin - 0.1), line[1]
    else:
        tl0, k0 = tmin - 5.0, float(np.mean((t - tmin + 5.0) / r))
    tl0 = max(tl0, tmin - 49.0)
    temps = data.distinct_temperatures
    tpeak = float(temps[np.argmax([r[t == x].mean() for x in temps])])
    highs = tmax + np.array([0.5, 1.5, 3.0, 6.0, 12.0])
    eps, big = 1e-6, 50.0

    def scale(g):
        d = float((w * g * g).sum())
        return max(float((w * g * r).sum()) / d, 1e-12) if d > 0 else 1e-12

    def ident(names):
        return lambda x: {n: float(v) for n, v in zip(names, x, strict=True)}

    def via_kappa(names):  # log_kappa for delta; Logan-6: psi_kappa = psi * kappa for psi
        def conv(x):
            d = dict(zip(names, map(float, x), strict=True))
            kappa = math.exp(d.pop("log_kappa"))
            d["delta"] = 1.0 / (d["rho"] + kappa)
            if "psi_kappa" in d:
                d["psi"] = d.pop("psi_kappa") / kappa
            return {n: d[n] for n in PARAMS[model]}
        return conv

    def bracket(th, rho, kappa):
        return np.exp(rho * t) * -np.expm1(-kappa * (th - t))

    starts: list[list[float]] = []
    if model == "linear":
        names = PARAMS[model]
        lo, hi = [tmin - 100.0, 1e-6], [tmin - eps, 1e7]
        starts = [[tl0, k0]]
    elif model in ("briere1", "briere2"):
        names = PARAMS[model]
        lo, hi = [1e-12, tmin - big, tmax + eps], [1.0, tmin - eps, tmax + big]
        ms = (2.0,) if model == "briere1" else (1.0, 2.0, 4.0)
        if model == "briere2":
            lo, hi = lo + [0.1], hi + [50.0]
        for tl in (tl0, tmin - 3.0, tmin - 8.0):
            for th in highs:
                for m in ms:
                    g = t * (t - tl) * (th - t) ** (1.0 / m)
                    starts.append([scale(g), tl, th] + ([m] if model == "briere2" else []))
    elif model in ("lactin1", "lactin2", "logan6"):
        names = {"lactin1": ("rho", "t_high", "log_kappa"),
                 "lactin2": ("rho", "t_high", "log_kappa", "lam"),
                 "logan6": ("psi_kappa", "rho", "t_high", "log_kappa")}[model]
        lo, hi = [1e-4, tmax + eps, math.log(1e-10)], [2.0, tmax + big, math.log(10.0)]
        if model == "lactin2":
            lo, hi = lo + [-20.0], hi + [0.0]
        if model == "logan6":
            lo, hi = [1e-14] + lo, [10.0] + hi
        grid = [(rho, kap, th) for rho in (0.05, 0.1, 0.15, 0.2, 0.3)
                for kap in (1e-3, 1e-2, 0.05, 0.2) for th in highs]
        for th in highs:  # small-kappa approximation: log r ~ log kappa + log(th - T) + rho T
            slope, icpt = np.polyfit(t, np.log(r) - np.log(th - t), 1, w=np.sqrt(w))
            grid.append((float(np.clip(slope, 1e-3, 1.0)), float(np.clip(np.exp(icpt), 1e-9, 5.0)),
                         th))
        for rho, kap, th in grid:
            g = bracket(th, rho, kap)
            if model == "lactin1":
                starts.append([rho, th, math.log(kap)])
            elif model == "lactin2":
                lam = min(float(np.average(r - g, weights=w)), 0.0)
                starts.append([rho, th, math.log(kap), lam])
            else:
                starts.append([scale(g) * kap, rho, th, math.log(kap)])
    else:  # sharpe_schoolfield, temperatures of the half-points in kelvin
        names = PARAMS[model]
        tk = t + 273.15
        cool = t < tpeak if (t < tpeak).sum() >= 2 else np.ones(t.size, bool)
        slope = np.polyfit(1.0 / tk[cool], np.log(r[cool] / tk[cool]), 1)[0]
        ha0 = float(np.clip(-slope * R_CAL, 2e3, 5e4))
        tmid = 0.5 * (tmin + tmax) + 273.15  # tl_half below, th_half above the middle
        lo = [1e-8, 1e-3, -5e5, tmin - 40.0 + 273.15, 1e-3, tmid + eps]
        hi = [10.0, 2e5, -1e-3, tmid - eps, 5e5, tmax + 40.0 + 273.15]
        for tl in (tmin - 5.0, tmin, tmin + 5.0):
            for hl in (-2e4, -5e4, -1e5):
                for th in (tpeak - 2.0, tpeak + 2.0, tpeak + 6.0):
                    for hh in (3e4, 7e4, 1.5e5):
                        x = [1.0, ha0, hl, tl + 273.15, hh, th + 273.15]
                        with np.errstate(all="ignore"):
                            g = development_rate(t, model, **ident(names)(x))
                        x[0] = scale(np.nan_to_num(g))
                        starts.append(x)
    lo_a, hi_a = np.array(lo, float), np.array(hi, float)
    pad = 1e-9 * (hi_a - lo_a)
    conv = via_kappa(names) if "log_kappa" in names else ident(names)
    return _Spec(tuple(names), lo_a, hi_a,
                 [np.clip(np.array(s, float), lo_a + pad, hi_a - pad) for s in starts], conv)

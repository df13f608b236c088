"""Parameter uncertainty as probability maps (``[compute] parameter_draws``).

The profile's ``[uncertainty]`` table gives the covariance of fitted
development parameters: degree-day keys, or the rate curve's parameters
(``rate_curve.<name>``, as ``suitmap fit`` writes them).  ``parameter_draws`` parameter sets are drawn from the
multivariate normal around the profile's values (numpy ``default_rng`` seeded
with ``parameter_seed``, both recorded); a draw that gives an impossible
profile (lower threshold not below the upper, non-positive degree-days) is
drawn again, and the number of such redraws is recorded.  The period's layers
are computed for every draw (each draw is a full computation: the cost grows
with the number of draws), giving

    probability_generations_ge_<n>   share of draws whose complete_generations >= n, n = 1, 2, 3
    suitability_p10, _p50, _p90      percentiles of suitability over the draws (numpy "linear")
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import xarray as xr

from suitmap.layers.compute import compute_layers
from suitmap.layers.metadata import layer_attrs

LEVELS = (1, 2, 3)

TABLE_WORTH_CELL_DAYS = 5e7
"""Below this many cell-days a period's draws of a rate curve integrate each day exactly
instead of building a table per draw: a table takes 3-12 s to build, the exact sine
and Parton-Logan days run at about 1-7 Mcell-days/s (benchmarks/bench_tables.py)."""


def _candidate(dev, values: dict):
    """``dev`` with the drawn ``values``, or None when they give an impossible profile
    (lower threshold not below the upper, non-positive degree-days, curve parameters
    outside their model's domain)."""
    from suitmap.config.biology import CURVE_PREFIX
    from suitmap.config.rate_curve import RateCurve
    from suitmap.kernels.rates import validate_params

    plain = {k: v for k, v in values.items() if not k.startswith(CURVE_PREFIX)}
    cand = replace(dev, **plain)
    curve = {k[len(CURVE_PREFIX):]: v for k, v in values.items() if k.startswith(CURVE_PREFIX)}
    if curve:
        params = dict(dev.rate_curve.as_dict(), **curve)
        try:
            params = validate_params(dev.rate_curve.model, params)
        except ValueError:
            return None
        cand = replace(cand, rate_curve=RateCurve(dev.rate_curve.model, tuple(params.items())))
    ok = cand.lower_threshold < cand.upper_threshold and (
        cand.degree_days_per_generation is None or cand.degree_days_per_generation > 0)
    return cand if ok else None


def draw_profiles(profile, n: int, seed: int):
    """``n`` profiles with development parameters drawn from the profile's covariance;
    returns (profiles, draws array (n, k), redraws)."""
    from suitmap.config.biology import CURVE_PREFIX

    unc = profile.biology.uncertainty
    dev = profile.development
    curve = dev.rate_curve.as_dict() if dev.rate_curve is not None else {}
    mean = np.array([curve[p[len(CURVE_PREFIX):]] if p.startswith(CURVE_PREFIX) else
                     getattr(dev, p) for p in unc.parameters], dtype=float)
    rng = np.random.default_rng(seed)
    out, rows, redraws = [], [], 0
    while len(out) < n:
        x = rng.multivariate_normal(mean, np.array(unc.covariance))
        cand = _candidate(dev, dict(zip(unc.parameters, x.tolist())))
        if cand is None:
            redraws += 1
            if redraws > 100 * n:
                raise ValueError("parameter draws keep giving impossible profiles; check "
                                 "[uncertainty] covariance")
            continue
        out.append(replace(profile, development=cand))
        rows.append(x)
    return out, np.array(rows), redraws


def add_probability_layers(ds: xr.Dataset, tmin, tmax, profile, years, run,
                           label: str = "") -> xr.Dataset:
    """``ds`` with the probability and percentile layers of ``run.parameter_draws`` draws."""
    profiles, draws, redraws = draw_profiles(profile, run.parameter_draws, run.parameter_seed)
    from suitmap.config.biology import CURVE_PREFIX

    unc = profile.biology.uncertainty
    # a drawn curve needs its own fast table (seconds to build, see benchmarks/README.md);
    # on small periods integrating each day exactly costs less
    new_tables = any(p.startswith(CURVE_PREFIX) for p in unc.parameters)
    fast = run.fast_tables and not (new_tables and tmin.size < TABLE_WORTH_CELL_DAYS)
    gens, suit = [], []
    for p in profiles:
        layers = compute_layers(tmin, tmax, p, years, label=label, fast=fast)
        gens.append(layers["complete_generations"].astype(np.float64))
        suit.append(layers["suitability"].astype(np.float64))
    g = xr.concat(gens, dim="draw")
    s = xr.concat(suit, dim="draw")
    ds = ds.copy()
    present = g.notnull().all("draw")
    for n in LEVELS:
        name = f"probability_generations_ge_{n}"
        ds[name] = (g >= n).mean("draw").where(present).astype(np.float32)
        ds[name].attrs = layer_attrs(name)
    s = s.chunk({"draw": -1}) if s.chunks is not None else s
    for q in (10, 50, 90):
        name = f"suitability_p{q}"
        ds[name] = s.quantile(q / 100, dim="draw", method="linear").drop_vars("quantile").where(
            present).astype(np.float32)
        ds[name].attrs = layer_attrs(name)
    ds.attrs["parameter_draws"] = (f"{len(profiles)} draws of {', '.join(unc.parameters)} from the "
                                   f"profile's covariance, seed {run.parameter_seed}, "
                                   f"{redraws} impossible draws redrawn; means "
                                   + ", ".join(f"{m:.4g}" for m in draws.mean(axis=0)))
    return ds

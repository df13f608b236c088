"""Parameter uncertainty as probability maps (``[compute] parameter_draws``).

The profile's ``[uncertainty]`` table gives the covariance of fitted
development parameters.  ``parameter_draws`` parameter sets are drawn from the
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


def draw_profiles(profile, n: int, seed: int):
    """``n`` profiles with development parameters drawn from the profile's covariance;
    returns (profiles, draws array (n, k), redraws)."""
    unc = profile.biology.uncertainty
    dev = profile.development
    mean = np.array([getattr(dev, p) for p in unc.parameters], dtype=float)
    rng = np.random.default_rng(seed)
    out, rows, redraws = [], [], 0
    while len(out) < n:
        x = rng.multivariate_normal(mean, np.array(unc.covariance))
        values = dict(zip(unc.parameters, x.tolist()))
        cand = replace(dev, **values)
        ok = cand.lower_threshold < cand.upper_threshold and (
            cand.degree_days_per_generation is None or cand.degree_days_per_generation > 0)
        if not ok:
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
    gens, suit = [], []
    for p in profiles:
        layers = compute_layers(tmin, tmax, p, years, label=label, fast=run.fast_tables)
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
    unc = profile.biology.uncertainty
    ds.attrs["parameter_draws"] = (f"{len(profiles)} draws of {', '.join(unc.parameters)} from the "
                                   f"profile's covariance, seed {run.parameter_seed}, "
                                   f"{redraws} impossible draws redrawn; means "
                                   + ", ".join(f"{m:.4g}" for m in draws.mean(axis=0)))
    return ds

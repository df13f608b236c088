"""Against what a change is measured: route labels and model bias layers.

A climate model's change is best measured against that model's own historical
run: its bias against the observations then cancels (see
:mod:`suitmap.config.set_reference` for the routes).  :func:`model_bias`
shows how far each model's historical run is from the observed baseline;
:func:`label_route` writes the route into a dataset and each of its layers.
"""

from __future__ import annotations

import numpy as np
import xarray as xr

from suitmap.layers.metadata import NUMERIC_LAYERS, layer_attrs

__all__ = ["ROUTE_NOTES", "label_route", "model_bias", "route_of"]

#: ``change_reference`` value → the sentence written beside it.
ROUTE_NOTES = {
    "model_historical": "change = the model's future minus the same model's own historical run "
                        "(the model's bias against the observations cancels); absolute layers of "
                        "the future are raw model climate",
    "delta_change": "the model's change against its own historical run added to the observed "
                    "baseline days (delta change); change = that scenario minus the observed baseline",
    "observations": "change = the model's future minus the OBSERVED baseline: the model's bias "
                    "against the observations is counted as change",
    "observations_asked": "change = the model's future minus the OBSERVED baseline, as asked with "
                          "change_against = \"observations\": the model's bias is counted as change",
    "observed_periods": "change = scenario minus the observed baseline",
}


def route_of(period) -> str:
    """The ``change_reference`` of a run-file period (see :data:`ROUTE_NOTES`)."""
    if period.delta is not None:
        return "delta_change"
    if period.reference is not None:
        return "model_historical"
    if period.change_against == "observations":
        return "observations_asked"
    return "observations" if period.model else "observed_periods"


def label_route(ds: xr.Dataset, route: str, reference: str) -> xr.Dataset:
    """Record ``change_reference`` (route), its note and the reference period on ``ds`` and its layers."""
    tags = {"change_reference": route, "change_reference_note": ROUTE_NOTES[route],
            "change_reference_period": reference}
    ds = ds.assign_attrs(tags)
    for name in ds.data_vars:
        ds[name].attrs.update(tags)
    return ds


def model_bias(observed: xr.Dataset, historical: xr.Dataset) -> xr.Dataset:
    """``model_bias_<layer>`` = the model's historical layer minus the observed one.

    Parameters
    ----------
    observed, historical : xarray.Dataset
        Period layers of the observed baseline and of one model's historical
        run, on one grid (snap the model first).

    Returns
    -------
    xarray.Dataset
        float32 layers for every numeric layer in both, missing where either is.
    """
    out = {}
    for name in NUMERIC_LAYERS:
        if name in observed and name in historical:
            diff = historical[name].astype(np.float64) - observed[name].astype(np.float64)
            out[f"model_bias_{name}"] = diff.astype(np.float32)
            out[f"model_bias_{name}"].attrs = layer_attrs(f"model_bias_{name}")
    ds = xr.Dataset(out)
    for c in ("x", "y"):
        ds[c].attrs = dict(observed[c].attrs)
    if observed.rio.crs is not None:
        ds = ds.rio.write_crs(observed.rio.crs)
    obs, hist = observed.attrs.get("period", "baseline"), historical.attrs.get("period", "historical")
    ds.attrs.update(comparison=f"model bias: {hist} minus {obs}", baseline=obs, scenario=hist,
                    observed_years=str(observed.attrs.get("years", "")),
                    historical_years=str(historical.attrs.get("years", "")))
    return ds

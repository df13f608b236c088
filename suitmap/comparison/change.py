"""Comparisons between periods: change layers and change classes."""

from __future__ import annotations

import numpy as np
import xarray as xr

from suitmap.layers.metadata import CHANGE_CLASSES, MISSING_CLASS, NUMERIC_LAYERS, layer_attrs
from suitmap.layers.metadata import OPTIONAL_NUMERIC_LAYERS


def compare(baseline: xr.Dataset, scenario: xr.Dataset, *, suitable_level: float = 0.5) -> xr.Dataset:
    """Scenario minus baseline for every numeric layer, plus ``change_class``.

    A cell is *suitable* where ``suitability >= suitable_level``.  Cells
    missing in either period are missing in every change layer.

    Parameters
    ----------
    baseline, scenario : xarray.Dataset
        Period layers from :func:`suitmap.compute_layers` on the same grid.
    suitable_level : float
        Suitability at or above which a cell counts as suitable.
    """
    out = {}
    for name in NUMERIC_LAYERS + OPTIONAL_NUMERIC_LAYERS:
        if name in baseline and name in scenario:
            diff = (scenario[name].astype(np.float64) - baseline[name].astype(np.float64))
            out[f"change_{name}"] = diff.astype(np.float32)
    b = baseline["suitability"]
    s = scenario["suitability"]
    present = b.notnull() & s.notnull()
    bs = b >= suitable_level
    ss = s >= suitable_level
    code = xr.where(bs, xr.where(ss, CHANGE_CLASSES.index("stays_suitable"),
                                 CHANGE_CLASSES.index("becomes_unsuitable")),
                    xr.where(ss, CHANGE_CLASSES.index("becomes_suitable"),
                             CHANGE_CLASSES.index("stays_unsuitable")))
    out["change_class"] = xr.where(present, code, MISSING_CLASS).astype(np.uint8)
    ds = xr.Dataset(out)
    for name in ds.data_vars:
        ds[name].attrs = layer_attrs(name)
    ds["change_class"].attrs["suitable_level"] = suitable_level
    ds["change_class"].encoding["_FillValue"] = MISSING_CLASS
    for c in ("x", "y"):
        ds[c].attrs = dict(baseline[c].attrs)
    if baseline.rio.crs is not None:
        ds = ds.rio.write_crs(baseline.rio.crs)
    ds.attrs["comparison"] = f"{scenario.attrs.get('period', 'scenario')} minus {baseline.attrs.get('period', 'baseline')}"
    ds.attrs["baseline"] = baseline.attrs.get("period", "")
    ds.attrs["scenario"] = scenario.attrs.get("period", "")
    return ds

"""``outside_tested_range``: where a period's days leave the temperatures a profile was fitted at.

1 in cells where some day of the period's years has a daily mean temperature
((Tmin + Tmax) / 2) above the profile's highest rearing temperature, or below
its lowest one while above the lower developmental threshold (development is
then extrapolated from the fitted curve; below the threshold the model has no
development anyway).  0 elsewhere, missing where the input is.  The range is
the profile's ``[tested_range]``, written by ``suitmap fit``.
"""

from __future__ import annotations

import numpy as np
import xarray as xr

from suitmap.layers.metadata import layer_attrs


def add_outside_tested_range(ds: xr.Dataset, tmin: xr.DataArray, tmax: xr.DataArray, profile,
                             years: tuple[int, int]) -> xr.Dataset:
    lo, hi = profile.biology.tested_range
    year = tmin["time"].dt.year.values
    idx = np.flatnonzero((year >= years[0]) & (year <= years[1]))
    tmean = 0.5 * (tmin.isel(time=idx).astype(np.float64) + tmax.isel(time=idx).astype(np.float64))
    lower = profile.development.lower_threshold
    out = (tmean > hi) | ((tmean < lo) & (tmean > lower))
    flag = out.any("time").astype(np.float32).where(tmean.notnull().all("time"))
    ds = ds.copy()
    ds["outside_tested_range"] = flag
    ds["outside_tested_range"].attrs = dict(layer_attrs("outside_tested_range"),
                                            comment=f"tested range {lo:g} to {hi:g} °C")
    ds.attrs["tested_range"] = f"{lo:g} to {hi:g} degC"
    return ds

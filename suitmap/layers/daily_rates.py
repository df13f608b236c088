"""Development per day of a rate curve over a season block, exact or over a fast table.

Shared by the profile's rate summation (:mod:`suitmap.layers.compute`) and the
life stages that carry their own rate curve (:mod:`suitmap.layers.stages`):
the same day shapes (sine or Parton-Logan) and the same tables for both.
"""

from __future__ import annotations

import math
from functools import lru_cache

import numpy as np

from suitmap.kernels.development import daily_development as _dev_kernel
from suitmap.kernels.diurnal import daylength as _daylength
from suitmap.layers.table_cache import cached_table


def _fast_table(rc, diurnal: str, lat: np.ndarray, doy: np.ndarray):
    """The lookup table of a rate curve's daily integral, or None to integrate exactly.

    Parton-Logan tables span the daylengths of the grid's latitudes over the
    period's days; below about 4 h (polar) they are not built.
    """
    params = tuple(sorted(rc.as_dict().items()))
    if diurnal == "sine":
        return _built_table(rc.model, params, "sine", None)
    ylen = _daylength(np.unique(lat[np.isfinite(lat)])[:, None], np.unique(doy)[None, :])
    lo, hi = float(np.nanmin(ylen)), float(np.nanmax(ylen))
    if not hi >= 4.0:
        return None
    # rounded outward to 0.01 h, so the periods of one grid share one table
    return _built_table(rc.model, params, "parton_logan",
                        (math.floor(lo * 100) / 100, math.ceil(hi * 100) / 100))


@lru_cache(maxsize=4)
def _built_table(model: str, params: tuple, diurnal: str, daylength_range):
    """Tables take seconds to build (the Parton-Logan ones up to ~10 s): once per
    process, and read back from the on-disk cache in later runs (``table_cache``)."""
    from suitmap.kernels.tables import development_table

    def build():
        if diurnal == "sine":
            return development_table(model, dict(params), diurnal="sine")
        return development_table(model, dict(params), diurnal="parton_logan",
                                 daylength_range=daylength_range)

    return cached_table(("development", model, params, diurnal, daylength_range), build)


def _daily_development(tn, tx, nxt, lat, doy, curve, table=None):
    """Development per day by rate summation over the day's temperature curve."""
    model, params, diurnal = curve
    if table is not None and diurnal == "sine":  # fast path: a (Tmin, Tmax) table
        return table.evaluate(tn, tx, parallel=False)
    daylength = None
    if diurnal == "parton_logan":
        daylength = _daylength(np.broadcast_to(lat[..., None], tn.shape),
                               np.broadcast_to(doy, tn.shape))
        if table is not None:     # fast path: tables over (temperatures, daylength)
            return table.evaluate(tn, tx, tmin_next=nxt, daylength=daylength, parallel=False)
    return _dev_kernel(tn, tx, model, params, diurnal=diurnal, daylength=daylength,
                       tmin_next=nxt, parallel=False)

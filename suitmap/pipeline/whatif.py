"""What-if temperature changes of a period (``tmin_offset`` / ``tmax_offset`` in the run file).

A constant number of °C, or twelve monthly values, is added to the period's
daily Tmin or Tmax before anything is computed, e.g. a canopy shaded by 2 °C at
midday (``tmax_offset = -2``).  A scenario that reads the baseline's own files
with an offset is then compared with the unmodified baseline in the same
output (``change_<layer>``).  The change is recorded in the period's
``temperature_offsets`` attribute and enters its cache key.
"""

from __future__ import annotations

import numpy as np
import xarray as xr


def _add(da: xr.DataArray, values: tuple[float, ...]) -> xr.DataArray:
    if len(values) == 1:
        out = da + np.float32(values[0])
    else:
        by_day = np.asarray(values, dtype=np.float32)[da["time"].dt.month.values - 1]
        out = da + xr.DataArray(by_day, dims="time", coords={"time": da["time"]})
    out.attrs = dict(da.attrs)
    return out.astype(np.float32, keep_attrs=True)


def describe(period) -> str:
    """The period's offsets in words ('' when there are none)."""
    parts = []
    for role in ("tmin", "tmax"):
        v = getattr(period, f"{role}_offset", None)
        if v is None:
            continue
        parts.append(f"{role} {v[0]:+g} °C" if len(v) == 1 else
                     f"{role} monthly {', '.join(f'{x:+g}' for x in v)} °C (January to December)")
    return "; ".join(parts)


def apply_offsets(pc) -> None:
    """Add the period's offsets to ``pc.tmin`` / ``pc.tmax`` (lazy), with a note."""
    text = describe(pc.period)
    if not text:
        return
    for role in ("tmin", "tmax"):
        v = getattr(pc.period, f"{role}_offset")
        if v is not None:
            setattr(pc, role, _add(getattr(pc, role), v))
    pc.swapped = (pc.tmin > pc.tmax).sum().data
    pc.notes.append(f"what-if temperature change: {text}")

"""Never versus missing for event-day layers (``first_<x>_day``).

An event-day layer holds the mean day of season on which an event (the first
generation, a life stage) happens, over the seasons in which it happens.  A
cell where it happens in no season has no day to give: its value is missing,
like a cell with no climate data, but the two mean different things.  The
companion class layer ``<layer>_status`` tells them apart:

=====  ===========  =====================================================
code   meaning      cell
=====  ===========  =====================================================
0      ``occurs``   the event happens in at least one season (day given)
1      ``never``    climate complete, the event happens in no season
255    (missing)    no climate data (same cells as ``degree_days``)
=====  ===========  =====================================================

It is written beside the layer in every format: a class GeoTIFF with
category names, a NetCDF flag variable named by the layer's CF
``ancillary_variables``, and a legend entry of its own in the figure.
"""

from __future__ import annotations

import numpy as np
import xarray as xr

from suitmap.layers.metadata import EVENT_STATUS_CLASSES, MISSING_CLASS, layer_attrs

__all__ = ["status_name", "event_status", "add_event_status", "is_event_day_layer"]


def is_event_day_layer(layer: str) -> bool:
    """Whether *layer* is the day of an event that may never happen (``first_<x>_day``)."""
    return layer.startswith("first_") and layer.endswith("_day")


def status_name(layer: str) -> str:
    """Name of the companion flag layer of an event-day layer."""
    return f"{layer}_status"


def event_status(event_day: xr.DataArray, reference: xr.DataArray) -> xr.DataArray:
    """Flag layer (uint8 codes, see the module docstring) of one event-day layer.

    Parameters
    ----------
    event_day
        The event-day layer: NaN where the event never happens or data are missing.
    reference
        A layer of the same period that is missing exactly where climate data
        are (``degree_days``).
    """
    occurs = EVENT_STATUS_CLASSES.index("occurs")
    never = EVENT_STATUS_CLASSES.index("never")
    code = xr.where(event_day.notnull(), occurs,
                    xr.where(reference.notnull(), never, MISSING_CLASS))
    out = code.astype(np.uint8)
    out.attrs = dict(layer_attrs("first_generation_day_status"))
    out.attrs["long_name"] = f"whether {event_day.name or 'the event'} happens in at least one season"
    out.encoding["_FillValue"] = MISSING_CLASS
    return out


def add_event_status(ds: xr.Dataset, reference: str = "degree_days") -> xr.Dataset:
    """*ds* with a ``<layer>_status`` flag beside every event-day layer.

    Layers are left as they are where *reference* is absent.
    """
    if reference not in ds:
        return ds
    out = ds.copy()
    for name in list(ds.data_vars):
        name = str(name)
        if is_event_day_layer(name) and status_name(name) not in ds:
            flag = event_status(ds[name].rename(name), ds[reference])
            if name == "first_generation_day":
                flag.attrs["long_name"] = layer_attrs(status_name(name))["long_name"]
            out[status_name(name)] = flag
            out[name].attrs["ancillary_variables"] = status_name(name)
            out[name].attrs["comment"] = (
                (out[name].attrs.get("comment", "") + "; ").lstrip("; ")
                + f"missing where no climate data or where it never happens: "
                  f"{status_name(name)} tells which (0 occurs, 1 never, 255 no data)")
    return out

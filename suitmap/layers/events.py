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

__all__ = ["status_name", "event_status", "add_event_status", "is_event_day_layer",
           "CHANGE_STATUS_CLASSES", "change_event_status", "add_change_event_status"]

#: Classes of ``change_<event-day layer>_status``: where the change is empty because the
#: event never happens in one period or both, which of the cases it is.
CHANGE_STATUS_CLASSES = ("occurs_in_both", "never_in_both", "starts", "stops")


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


def change_event_status(base_status: xr.DataArray, scen_status: xr.DataArray) -> xr.DataArray:
    """Flag of a change of an event-day layer from the two periods' flags.

    ``occurs_in_both`` (0, the change is given), ``never_in_both`` (1), ``starts``
    (2: never in the baseline, happens in the scenario), ``stops`` (3), 255 no data
    in either period.
    """
    occurs = EVENT_STATUS_CLASSES.index("occurs")
    never = EVENT_STATUS_CLASSES.index("never")
    b, s = base_status, scen_status
    code = xr.where((b == occurs) & (s == occurs), 0,
                    xr.where((b == never) & (s == never), 1,
                             xr.where((b == never) & (s == occurs), 2,
                                      xr.where((b == occurs) & (s == never), 3, MISSING_CLASS))))
    out = code.astype(np.uint8)
    out.attrs = {"units": "1",
                 "long_name": "whether the event happens in the baseline and in the scenario",
                 "flag_values": list(range(len(CHANGE_STATUS_CLASSES))),
                 "flag_meanings": " ".join(CHANGE_STATUS_CLASSES)}
    out.encoding["_FillValue"] = MISSING_CLASS
    return out


def add_change_event_status(change: xr.Dataset, baseline: xr.Dataset,
                            scenario: xr.Dataset) -> xr.Dataset:
    """*change* with ``change_<layer>_status`` beside every ``change_<event-day layer>``."""
    base, scen = add_event_status(baseline), add_event_status(scenario)
    out = change.copy()
    for name in list(change.data_vars):
        name = str(name)
        layer = name[len("change_"):]
        if not (name.startswith("change_") and is_event_day_layer(layer)):
            continue
        if status_name(layer) not in base or status_name(layer) not in scen:
            continue
        try:
            flag = change_event_status(base[status_name(layer)], scen[status_name(layer)])
            flag = flag.reindex_like(change[name], method="nearest", tolerance=1e-9)
        except (ValueError, KeyError):  # not on the change layer's grid: leave it out
            continue
        out[status_name(name)] = flag.fillna(MISSING_CLASS).astype(np.uint8).assign_attrs(
            flag.attrs)
        out[status_name(name)].encoding["_FillValue"] = MISSING_CLASS
        out[name].attrs["ancillary_variables"] = status_name(name)
    return out

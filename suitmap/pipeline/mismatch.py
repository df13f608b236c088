"""Two organisms out of step: ``mismatch_days`` = an event day of a second profile minus an
event day of the run's own profile, per cell and period (run file ``[mismatch]``).

Both events are layers of day of season (``first_generation_day`` or
``first_<stage>_day``), each the mean over the seasons in which it happens, so
the mismatch is the difference of the two means; missing where either event
never happens.  Positive: the second organism's event comes later.  Both
profiles must share the season window (days of season are then the same days).
"""

from __future__ import annotations

import numpy as np
import xarray as xr

from suitmap.config.profile import load_profile
from suitmap.errors import RunFileError
from suitmap.layers.compute import compute_layers, season_windows
from suitmap.layers.metadata import layer_attrs


def second_profile(run, profile):
    """The ``[mismatch]`` profile, checked to share the run profile's season window."""
    other = load_profile(run.mismatch.profile_path)
    if season_windows(other) != season_windows(profile):
        raise RunFileError(f"run file {run.path}: mismatch.profile {run.mismatch.profile_path} has "
                           "another season window than the run's profile; give both the same "
                           "[season] so their days of season are the same days")
    return other


def add_mismatch(ds: xr.Dataset, tmin, tmax, other, years, run, label: str = "") -> xr.Dataset:
    """``ds`` with ``mismatch_days`` from the second profile's layers on the same climate."""
    m = run.mismatch
    second = compute_layers(tmin, tmax, other, years, label=label, fast=run.fast_tables)
    for name, layers, whose in ((m.event, second, f"mismatch.profile {m.profile_path.name}"),
                                (m.reference_event, ds, f"profile {run.profile_path.name}")):
        if name not in layers:
            raise RunFileError(f"run file {run.path}: {whose} has no event layer {name!r} "
                               "(first_generation_day, or first_<stage>_day of its [[stage]] "
                               "tables); fix mismatch.event / mismatch.reference_event")
    ds = ds.copy()
    # the reference layer is re-issued: with dask 2026.8 an output of a dataset that also feeds
    # another of its outputs loses its key when the dataset is computed ("Missing dependency")
    ref = ds[m.reference_event].astype(np.float64)
    ds[m.reference_event] = ref.astype(np.float32, keep_attrs=True)
    diff = second[m.event].astype(np.float64) - ref
    ds["mismatch_days"] = diff.astype(np.float32)
    ds["mismatch_days"].attrs = dict(layer_attrs("mismatch_days"),
                                     comment=f"{m.event} of {other.organism.name} minus "
                                             f"{m.reference_event} of the run's profile")
    ds.attrs["mismatch"] = (f"{m.event} of {other.organism.name} ({m.profile_path.name}) minus "
                            f"{m.reference_event} of the run's organism")
    return ds

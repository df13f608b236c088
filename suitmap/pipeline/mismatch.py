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


def _transect_rows(period: str, kind: str, tr_ref, tr_second) -> list[str]:
    head = "elevation_m" if kind == "elevation" else "latitude_deg"
    rows = []
    for i, pos in enumerate(tr_ref.position):
        vals = [tr_ref.median[i], tr_ref.p25[i], tr_ref.p75[i],
                tr_second.median[i], tr_second.p25[i], tr_second.p75[i]]
        rows.append(",".join([period, kind, f"{pos:.6g}", str(int(tr_ref.n_cells[i]))]
                             + ["" if not np.isfinite(v) else f"{v:.6g}" for v in vals]))
    return [f"period,transect,{head},cells,reference_median_day,reference_p25_day,"
            "reference_p75_day,second_median_day,second_p25_day,second_p75_day"] + rows


def write_mismatch_transects(layers, root, manifest) -> list:
    """``<period>/mismatch_transect.csv`` (and ``.png`` with the png format): both organisms'
    event days along latitude, or along elevation with ``[terrain] elevation``.

    The cells are those where both events happen (where ``mismatch_days`` has a value); the
    second organism's day is the reference day plus ``mismatch_days`` there.  Per grid row
    (or elevation band, :mod:`suitmap.spatial.transects`) the median over those cells and
    the 25th-75th percentiles.
    """
    from textwrap import fill

    from suitmap.pipeline import provenance as pv
    from suitmap.pipeline.regions import elevation_on_grid
    from suitmap.spatial.ranges import cell_lonlat
    from suitmap.spatial.transects import elevation_transect, latitude_transect
    from suitmap.writers.atomic import atomic_write_text
    from suitmap.writers.labels import short_label
    from suitmap.writers.transect_figures import plot_event_transect

    run = layers.run
    m = run.mismatch
    if m is None:
        return []
    base = layers.periods[run.baseline.name]
    geo = run.geography
    elev = None
    if geo is not None and geo.elevation is not None:
        elev = np.asarray(elevation_on_grid(geo.elevation, base).transpose("y", "x").values, float)
    _, lat, _ = cell_lonlat(base)
    kind = "latitude" if elev is None else "elevation"
    first_name = layers.profile.organism.name
    second_name = load_profile(m.profile_path).organism.name
    written = []
    for period, ds in layers.periods.items():
        if "mismatch_days" not in ds or m.reference_event not in ds:
            continue
        ref = np.asarray(ds[m.reference_event].transpose("y", "x").values, dtype=float)
        gap = np.asarray(ds["mismatch_days"].transpose("y", "x").values, dtype=float)
        both = np.isfinite(ref) & np.isfinite(gap)
        ref_v = np.where(both, ref, np.nan)
        second_v = np.where(both, ref + gap, np.nan)
        if elev is None:
            tr = [latitude_transect(v, lat) for v in (ref_v, second_v)]
        else:
            tr = [elevation_transect(v, elev) for v in (ref_v, second_v)]
        folder = root / period
        folder.mkdir(parents=True, exist_ok=True)
        csv = atomic_write_text(folder / "mismatch_transect.csv",
                                "\n".join(_transect_rows(period, kind, *tr)) + "\n")
        manifest.add(csv, layer="mismatch_transect", period_or_comparison=period, format="csv")
        written.append(csv)
        if "png" not in run.output.formats:
            continue
        years = pv.group_info(layers, period, "period", ds)["years"]
        ref_label = f"{first_name}: {short_label(m.reference_event)}"
        sec_label = f"{second_name}: {short_label(m.event)}"
        title = "\n".join([fill(f"{short_label(m.reference_event).capitalize()} of {first_name} "
                                 f"and {short_label(m.event)} of {second_name}", 64),
                           f"along {kind}, {period} {years}"])
        where = ("each point: one grid row (its mean latitude)" if elev is None else
                 f"each point: one {tr[0].position[1] - tr[0].position[0]:g} m band of "
                 "elevation (its midpoint)" if tr[0].position.size > 1 else
                 "each point: one band of elevation")
        note = (f"{where}; line: median over the cells where both events happen, band: "
                "25th–75th percentile; days of season are means over the seasons")
        png = plot_event_transect(
            tr[0].position, [dict(label=ref_label, median=tr[0].median, p25=tr[0].p25,
                                  p75=tr[0].p75),
                             dict(label=sec_label, median=tr[1].median, p25=tr[1].p25,
                                  p75=tr[1].p75)],
            folder / "mismatch_transect.png", title=title,
            xlabel="latitude (°N)" if elev is None else "elevation (m)",
            ylabel="day of season (1 = first day of the season)", note=note)
        manifest.add(png, layer="mismatch_transect", period_or_comparison=period, format="png")
        written.append(png)
    return written

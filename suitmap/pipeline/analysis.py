"""The analysis of one run file, as plain functions the CLI and notebooks share.

    open_period   climate of one period, normalised, limited to its years
    check_run     QA of every input without computing layers
    compute_run   lazy layers of every period and every comparison
    run           compute and write everything (see :mod:`suitmap.pipeline.outputs`)
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass, field, replace
from pathlib import Path

import numpy as np
import xarray as xr

from suitmap import climate
from suitmap.climate.time_axis import check_same_calendar
from suitmap.errors import InputError, SuitmapWarning
from suitmap.layers.compute import compute_layers, season_windows
from suitmap.config.profile import Profile, load_profile
from suitmap.pipeline.folder import period_key
from suitmap.config.runfile import Period, RunFile, load_run
from suitmap.pipeline.preflight import (check_output_names, comparison_name, coverage_gap,  # noqa: F401
                                        ensemble_name, named_read_errors)
from suitmap.pipeline.derive import change_name, derive, ensemble_groups, snap_layers  # noqa: F401
from suitmap.pipeline.scheduling import threads
from suitmap.pipeline.whatif import apply_offsets, describe

#: Target size (bytes) of one spatial chunk of one daily variable in float32.
CHUNK_BYTES = 32 * 2**20


def chunk_side(n_days: int, chunk_cells: int | None = None) -> int:
    """Side (cells) of the square spatial chunks: ``n_days`` days of one chunk of
    one variable stay near :data:`CHUNK_BYTES` (layers are computed one season
    at a time, so ``n_days`` is a season's length)."""
    if chunk_cells:
        return max(1, int(math.isqrt(chunk_cells)))
    return max(8, int(math.isqrt(CHUNK_BYTES // (4 * max(n_days, 1)))))


@dataclass
class PeriodClimate:
    period: Period
    tmin: xr.DataArray
    tmax: xr.DataArray
    swapped: "xr.DataArray | int"   # cell-days with Tmin > Tmax (lazy until computed)
    qa: "climate.ClimateQA | None" = None
    files: dict[str, list[str]] = field(default_factory=dict)
    notes: list[str] = field(default_factory=list)
    pr: "xr.DataArray | None" = None   # precipitation, mm/day (daily or monthly)


def _as_run(run: RunFile | str | Path) -> RunFile:
    return run if isinstance(run, RunFile) else load_run(run)


def _open_role(src, role: str, label: str, years: tuple[int, int], extra: int,
               accept_implausible: bool = False):
    paths: list[Path] = []
    for pattern in src.patterns:
        paths.extend(climate.resolve_paths(pattern, what=f"{label} {role}"))
    side = chunk_side(366)
    da = climate.open_climate(paths, role, variable=src.variable, label=label,
                              chunks={"y": side, "x": side}, file_chunks=True,
                              check_values=True,
                                  accept_implausible=accept_implausible)
    first, last = years
    climate.select_years(da, first, last, label=f"{label} {role}")
    y = da["time"].dt.year
    return da.isel(time=np.flatnonzero(((y >= first) & (y <= last + extra)).values)), paths


def delta_downscaled(period: Period, baseline: "PeriodClimate", profile: Profile,
                     accept_implausible: bool = False) -> PeriodClimate:
    """Daily climate of a scenario by delta change: the baseline's observed days plus the
    model's smoothed change (future minus its own historical run), on the baseline grid."""
    from suitmap.climate.delta import apply_deltas, monthly_deltas

    d = period.delta
    out, files = {}, {}
    for role in ("tmin", "tmax"):
        fut, fpaths = _open_role(getattr(period, role), role, period.name, period.years, 0,
                                 accept_implausible)
        hist, hpaths = _open_role(getattr(d, f"historical_{role}"), role,
                                  f"{period.name} historical", d.historical_years, 0, accept_implausible)
        deltas = monthly_deltas(hist, fut, smoothing=d.smoothing, window_days=d.window_days)
        base = getattr(baseline, role)
        out[role] = apply_deltas(base, deltas, template=base, target_years=None)
        files[role] = [str(p) for p in fpaths + hpaths]
    tmin, tmax, swapped = _swap_lazily(out["tmin"], out["tmax"])
    pc = PeriodClimate(period, tmin, tmax, swapped, None, files)
    pc.notes.append(f"delta change ({d.smoothing}) onto baseline '{baseline.period.name}'")
    if period.pr is not None:
        from suitmap.pipeline.precipitation import delta_precipitation

        delta_precipitation(pc, baseline, chunk_side(366))
    return pc


def open_period(period: Period, profile: Profile, *, chunk_cells: int | None = None,
                qa: bool = False, monthly_route: str = "interpolate",
                accept_implausible: bool = False) -> PeriodClimate:
    """Open, check and normalise the daily Tmin/Tmax of one period.

    The data are limited to the period's years (plus the following year
    where a season wraps the new year), swapped where Tmin > Tmax (with a
    warning) and re-chunked: the whole time axis in one chunk, square spatial
    chunks (see :func:`chunk_side`).  Monthly inputs go through
    :mod:`suitmap.climate.monthly`: interpolated to days (``monthly_route =
    "interpolate"``) or kept monthly for the quick ``"normal"`` route.
    """
    from suitmap.climate import monthly as monthly_input

    arrays = {}
    files = {}
    for role in ("tmin", "tmax"):
        src = getattr(period, role)
        paths: list[Path] = []
        for pattern in src.patterns:
            paths.extend(climate.resolve_paths(pattern, what=f"{period.name} {role}"))
        files[role] = [str(p) for p in paths]
        # stream: chunks follow the files (about a year of days each) and the layers are
        # computed one season at a time, so memory stays bounded by the chunk size
        side = chunk_side(366, chunk_cells)
        da = climate.open_climate(paths, role, variable=src.variable, label=period.name,
                                  allow_monthly=True, chunks={"y": side, "x": side},
                                  file_chunks=True, check_values=True,
                                  accept_implausible=accept_implausible)
        first, last = period.years
        if da.attrs.get("frequency") == "monthly":
            if monthly_route == "normal":
                arrays[role] = da
                continue
            da = monthly_input.to_daily(da, period.years)
        else:
            climate.select_years(da, first, last, label=f"{period.name} {role}")
        north, south, _ = season_windows(profile)
        extra = 1 if (north.wraps or south.wraps) else 0
        years = da["time"].dt.year
        da = da.isel(time=np.flatnonzero(((years >= first) & (years <= last + extra)).values))
        arrays[role] = da
    tmin, tmax = arrays["tmin"], arrays["tmax"]
    if (tmin.attrs.get("frequency") == "monthly") != (tmax.attrs.get("frequency") == "monthly"):
        raise InputError(f"{period.name}: one of tmin/tmax is daily and the other monthly; "
                         "give both at the same time step")
    check_same_calendar(tmin, tmax, period.name)
    climate.check_same_grid(tmin, tmax, f"{period.name} tmin", f"{period.name} tmax")
    if tmin.sizes["time"] != tmax.sizes["time"] or not np.array_equal(
            tmin["time"].values, tmax["time"].values):
        raise InputError(
            f"{period.name}: tmin and tmax files hold different days "
            f"({tmin.sizes['time']} vs {tmax.sizes['time']}); give files covering the same dates"
        )
    tmax = tmax.chunk(dict(zip(tmax.dims, tmin.chunks)))  # the same blocks as tmin
    report = climate.qa_summary(tmin, tmax, period.name) if qa else None
    tmin, tmax, swapped = _swap_lazily(tmin, tmax)
    pc = PeriodClimate(period, tmin, tmax, swapped, report, files)
    if period.pr is not None:
        from suitmap.pipeline.precipitation import open_period_precipitation

        open_period_precipitation(pc, chunk_side(366, chunk_cells))
    return pc


def _swap_lazily(tmin: xr.DataArray, tmax: xr.DataArray):
    """Count cell-days with Tmin > Tmax lazily (computed with the layers).

    The swap itself happens inside the season blocks (``layers._season_block``
    takes the smaller of the two as the minimum), which costs no extra pass.
    """
    tmax = tmax.assign_coords(time=tmin["time"], y=tmin["y"], x=tmin["x"])
    return tmin, tmax, xr.DataArray((tmin > tmax).sum().data)


def effective_profile(run: RunFile) -> Profile:
    """The run's profile, with the run file's ``[compute] diurnal`` applied if given."""
    profile = load_profile(run.profile_path)
    if run.diurnal is not None and run.diurnal != profile.development.diurnal:
        profile = replace(profile, development=replace(profile.development, diurnal=run.diurnal))
    return profile


def check_run(run: RunFile | str | Path) -> tuple[RunFile, Profile, list[PeriodClimate]]:
    """Read every input a run file names and summarise it, computing no layers.

    Raises a :class:`~suitmap.errors.SuitmapError` on the first unusable input.
    """
    run = _as_run(run)
    check_output_names(run)
    profile = effective_profile(run)
    from suitmap.pipeline.regions import check_geography

    check_geography(run)  # [regions] and [terrain] files
    opened = []
    for period in run.periods:
        pc = open_period(period, profile, chunk_cells=run.chunk_cells, qa=True,
                         accept_implausible=run.accept_implausible)
        opened.append(pc)
    from suitmap.spatial.regrid import grids_match

    base = opened[0]
    for pc in opened[1:]:
        if not grids_match(base.tmin.isel(time=0), pc.tmin.isel(time=0)):
            pc.notes.append("grid differs from the baseline's: its layers will be snapped to the "
                            "baseline grid (bilinear; classes by mode/nearest)")
            gap = coverage_gap(base.tmin, pc.tmin)
            if gap:
                pc.notes.append(gap)
    return run, profile, opened


@dataclass
class RunLayers:
    """Lazy results of a run: layers per period and per comparison."""

    run: RunFile
    profile: Profile
    periods: dict[str, xr.Dataset]
    comparisons: dict[str, xr.Dataset]
    inputs: dict[str, dict[str, list[str]]]
    ensembles: dict[str, xr.Dataset] = field(default_factory=dict)
    keys: dict[str, str] = field(default_factory=dict)  # period -> hash of its inputs

    def compute(self, progress: bool = False, client=None) -> "RunLayers":
        """Compute every layer (one dask pass) and return the loaded results.

        ``client``: a ``distributed.Client`` to run on; default the threaded scheduler.
        """
        import dask

        names_p = list(self.periods)
        names_c = list(self.comparisons)
        names_e = list(self.ensembles)
        items = ([self.periods[n] for n in names_p] + [self.comparisons[n] for n in names_c]
                 + [self.ensembles[n] for n in names_e])
        if client is not None:
            futures = client.compute(items)
            if progress:
                from dask.distributed import progress as dprogress

                dprogress(futures)
            done = client.gather(futures)
        elif progress:
            from tqdm.dask import TqdmCallback

            with TqdmCallback(desc="computing layers", leave=False):
                done = dask.compute(*items, num_workers=threads(self.run.threads))
        else:
            done = dask.compute(*items, num_workers=threads(self.run.threads))
        n_p, n_c = len(names_p), len(names_c)
        periods = {n: finish_period(d) for n, d in zip(names_p, done[:n_p])}
        comps = dict(zip(names_c, done[n_p:n_p + n_c]))
        ens = dict(zip(names_e, done[n_p + n_c:]))
        return RunLayers(self.run, self.profile, periods, comps, self.inputs, ens, self.keys)


def compute_run(run: RunFile | str | Path) -> RunLayers:
    """Lazy layers of every period and comparison of a run file."""
    run = _as_run(run)
    profile = effective_profile(run)
    periods: dict[str, xr.Dataset] = {}
    inputs: dict[str, dict[str, list[str]]] = {}
    keys: dict[str, str] = {}
    template = None
    base_clim = None
    other = None
    extra_key = {}
    if run.mismatch is not None:
        from suitmap.pipeline.mismatch import second_profile

        other = second_profile(run, profile)
        extra_key = {"mismatch": [other.to_dict(), run.mismatch.event, run.mismatch.reference_event]}
    for period in run.periods:
        if period.delta is not None:
            pc = delta_downscaled(period, base_clim, profile, run.accept_implausible)
            years = run.baseline.years  # the baseline's days, shifted by the model's change
        else:
            pc = open_period(period, profile, chunk_cells=run.chunk_cells,
                             monthly_route=run.monthly_route,
                             accept_implausible=run.accept_implausible)
            years = period.years
        if base_clim is None:
            base_clim = pc
        if describe(period):   # what-if offsets; delta scenarios keep the unmodified baseline days
            pc = replace(pc, notes=list(pc.notes))
            apply_offsets(pc)
        if pc.tmin.attrs.get("frequency") == "monthly":  # the quick "normal" route
            from suitmap.layers.monthly_normal import normal_route_layers

            if pc.pr is not None or profile.biology.stages or run.mismatch is not None:
                raise InputError("precipitation (pr), [[stage]] tables and [mismatch] need daily "
                                 "temperatures or monthly_route = \"interpolate\"; the \"normal\" "
                                 "route has no moisture, stage or mismatch layers yet")
            if run.daily_sd is None:
                raise InputError("monthly_route = \"normal\" needs [compute] daily_sd (the standard "
                                 "deviation of daily mean temperature within a month, °C)")
            ds = normal_route_layers(pc.tmin, pc.tmax, profile, years, run.daily_sd)
            ds.attrs["period"] = period.name
        else:
            ds = compute_layers(pc.tmin, pc.tmax, profile, years, label=period.name,
                                fast=run.fast_tables, pr=pc.pr)
            if "monthly_route" in pc.tmin.attrs:
                ds.attrs["monthly_route"] = pc.tmin.attrs["monthly_route"]
            if run.parameter_draws and profile.biology.uncertainty is None:
                from suitmap.errors import RunFileError

                raise RunFileError(f"run file {run.path}: compute.parameter_draws needs an "
                                   "[uncertainty] table (parameters, covariance) in the profile")
            if run.parameter_draws:
                from suitmap.pipeline.uncertainty import add_probability_layers

                ds = add_probability_layers(ds, pc.tmin, pc.tmax, profile, years, run,
                                            label=period.name)
            if run.mismatch is not None:   # a second organism on the same climate
                from suitmap.pipeline.mismatch import add_mismatch

                ds = add_mismatch(ds, pc.tmin, pc.tmax, other, years, run, label=period.name)
        if period.delta is not None:
            ds.attrs["downscaling"] = (f"delta change, {period.delta.smoothing} deltas "
                                       f"(window {period.delta.window_days} d) of model years "
                                       f"{period.years[0]}-{period.years[1]} minus "
                                       f"{period.delta.historical_years[0]}-"
                                       f"{period.delta.historical_years[1]}, added to baseline "
                                       f"{run.baseline.years[0]}-{run.baseline.years[1]}"
                                       + ("; precipitation: observed times the model's monthly "
                                          "future/historical ratio" if period.pr is not None
                                          else ""))
            ds.attrs["years"] = f"{period.years[0]}-{period.years[1]}"
        if period.kind == "historical" or period.reference is not None:
            ds.attrs["model_climate"] = ("raw climate-model output, not bias-corrected: read its change "
                                         "against the model's own historical run, not its absolute values")
        if template is None:
            template = ds  # the baseline's grid is the template of every comparison
        else:
            ds = snap_layers(ds, template)
            gap = coverage_gap(base_clim.tmin, pc.tmin)
            if gap:
                warnings.warn(f"period '{period.name}' {gap}", SuitmapWarning, stacklevel=2)
        if describe(period):
            ds.attrs["temperature_offsets"] = describe(period)
        ds["tmin_tmax_swapped_cell_days"] = pc.swapped
        periods[period.name] = ds
        inputs[period.name] = pc.files
        keys[period.name] = period_key(profile.to_dict(), period, pc.files,
                                       None if period is run.baseline else inputs[run.baseline.name],
                                       {"monthly_route": run.monthly_route, "daily_sd": run.daily_sd,
                                        "fast_tables": run.fast_tables, **extra_key,
                                        **({"draws": [run.parameter_draws, run.parameter_seed]}
                                           if run.parameter_draws else {})})
    comps, ensembles = derive(run, periods)
    return RunLayers(run, profile, periods, comps, inputs, ensembles, keys)


def finish_period(ds: xr.Dataset) -> xr.Dataset:
    """Move the computed Tmin > Tmax count from a variable to an attribute (warning if > 0)."""
    if "tmin_tmax_swapped_cell_days" not in ds:
        return ds
    if "outside_tested_range" in ds and float(ds["outside_tested_range"].sum()) > 0:
        cells = int(ds["outside_tested_range"].sum())
        warnings.warn(f"period '{ds.attrs.get('period')}': in {cells} cells the daily mean "
                      f"temperature leaves the profile's tested range ({ds.attrs.get('tested_range')}); "
                      "development there is extrapolated (layer outside_tested_range)",
                      SuitmapWarning, stacklevel=2)
    n = int(ds["tmin_tmax_swapped_cell_days"].values)
    ds = ds.drop_vars("tmin_tmax_swapped_cell_days")
    ds.attrs["tmin_tmax_swapped_cell_days"] = n
    if n:
        warnings.warn(f"period '{ds.attrs.get('period')}': {n} cell-days had Tmin > Tmax; the two "
                      "values were swapped there", SuitmapWarning, stacklevel=2)
    return ds


def _compute_one(ds: xr.Dataset, client, progress: bool, label: str) -> xr.Dataset:
    import dask

    if client is not None:
        fut = client.compute(ds)
        if progress:
            from dask.distributed import progress as dprogress

            dprogress(fut)
        return fut.result()
    if progress:
        from tqdm.dask import TqdmCallback

        with TqdmCallback(desc=label, leave=False):
            return dask.compute(ds)[0]
    return dask.compute(ds)[0]


def run(run: RunFile | str | Path, *, overwrite: bool = False, progress: bool = False,
        workers: int | None = None, scheduler_address: str | None = None) -> Path:
    """Compute every layer of a run file and write all outputs; resumable.

    Every input is opened and checked before the output folder is touched.  A
    folder made by another run file is refused unless ``overwrite``.  Each
    period's layers are cached under ``<output.dir>/.suitmap/`` as soon as they
    are computed; a rerun (after a crash, a kill, or a change of inputs or
    profile) recomputes only the periods whose inputs changed; a rerun of a finished run
    that nothing has changed since writes nothing (:func:`suitmap.pipeline.finished.finished_manifest`).  ``workers``
    starts a local dask.distributed cluster; ``scheduler_address`` uses an
    existing one; by default dask's threaded scheduler runs the graph.

    Returns
    -------
    pathlib.Path
        The ``manifest.json`` of the written outputs.
    """
    import dask

    from suitmap.pipeline.outputs import write_outputs
    from suitmap.pipeline.folder import OutputFolder
    from suitmap.pipeline.scheduling import scheduler

    from suitmap.pipeline.finished import finished_manifest, mark_finished

    run = _as_run(run)
    if not overwrite and (done := finished_manifest(run)) is not None:
        return done
    check_output_names(run)
    folder = OutputFolder(run.output.dir, run.path, overwrite)
    folder.check()
    from suitmap.pipeline.regions import check_geography

    check_geography(run)  # [regions] and [terrain] files readable before any work
    lazy = compute_run(run)
    periods: dict[str, xr.Dataset] = {}
    with folder, dask.config.set(num_workers=threads(run.threads)):
        with scheduler(workers, scheduler_address) as client:
            n = len(lazy.periods)
            for i, (name, ds) in enumerate(lazy.periods.items(), 1):
                key = lazy.keys[name]
                got = folder.load(name, key)
                if got is None:
                    with named_read_errors(f"period '{name}'", [f for fs in lazy.inputs[name].values()
                                                                 for f in fs]):
                        computed = finish_period(_compute_one(ds, client, progress, f"{i}/{n} {name}"))
                    got = folder.store(name, key, computed)
                periods[name] = got
        comps, ens = derive(run, periods)
        layers = RunLayers(run, lazy.profile, periods, comps, lazy.inputs, ens, lazy.keys)
        from suitmap.pipeline.regions import add_range_layers

        layers = add_range_layers(layers)  # [ranges] dispersal_km_per_year: range_change layers
        manifest = write_outputs(layers, folder=folder)
        mark_finished(run)
        return manifest

"""Write a run's layers: GeoTIFF (COG), CF-NetCDF, PNG maps, a manifest.

The whole output folder is built under a temporary sibling name and renamed
into place only when every file is complete, so an interrupted or failed run
leaves no partial output.  An existing output folder is replaced only when
``overwrite=True``.

Layout under ``output.dir``::

    <period>/<layer>.tif, <layer>.png, layers.nc
    <scenario>_vs_<baseline>/change_<layer>.tif, change_class.tif, ..., changes.nc
    manifest.json
    README.txt        what the folder holds and the screening-level caution
    report.html       the self-contained report; methods.md the methods paragraph

Beside each ``<layer>.tif``: ``<layer>.qml`` (QGIS) and ``<layer>.sld`` (OGC) styles, and
for class layers ``<layer>.tif.aux.xml`` (GDAL category names).
"""

from __future__ import annotations

import os
import shutil
from pathlib import Path

import xarray as xr

from suitmap._version import __version__
from suitmap.errors import OutputError
from suitmap.layers.events import (add_change_event_status, add_event_status,
                                   is_event_day_layer, status_name)
from suitmap.pipeline import provenance as pv
from suitmap.pipeline.provenance import CAUTION
from suitmap.writers.cog import write_cog
from suitmap.writers.figures import DEFAULT_CAUTION, plot_layer
from suitmap.writers.atomic import atomic_write_text
from suitmap.writers.gis_styles import write_styles
from suitmap.writers.labels import short_label
from suitmap.writers.manifest import Manifest
from suitmap.pipeline.publish import failure, publish, staging
from suitmap.writers.netcdf import write_netcdf
from suitmap.writers.report import layer_readme_lines, write_report


_ROUTE_TAGS = ("change_reference", "change_reference_period", "small_ensemble_caution")


def check_output_dir(out_dir: Path, overwrite: bool) -> None:
    """Refuse an existing output folder unless ``overwrite``; check the parent exists."""
    out_dir = Path(out_dir)
    if out_dir.exists() and not overwrite:
        raise OutputError(
            f"output folder {out_dir} exists; pass --overwrite (overwrite=True) to replace it "
            "or set another output.dir"
        )
    if out_dir.exists() and not out_dir.is_dir():
        raise OutputError(f"output path {out_dir} is a file, not a folder; choose another output.dir")
    parent = out_dir.parent
    if not parent.is_dir():
        raise OutputError(f"output folder {out_dir}: its parent {parent} does not exist; create it first")
    if not os.access(parent, os.W_OK):
        raise OutputError(f"output folder {out_dir}: {parent} is not writable; choose another output.dir")


class staged_folder:
    """Context manager: build a folder under a temporary name, then move it into place."""

    def __init__(self, final: Path, overwrite: bool):
        self.final = Path(final)
        self.overwrite = overwrite
        self.tmp = self.final.with_name(f".{self.final.name}.partial-{os.getpid()}")

    def __enter__(self) -> Path:
        check_output_dir(self.final, self.overwrite)
        if self.tmp.exists():
            shutil.rmtree(self.tmp)
        self.tmp.mkdir()
        return self.tmp

    def __exit__(self, exc_type, exc, tb) -> bool:
        if exc_type is not None:
            shutil.rmtree(self.tmp, ignore_errors=True)
            return False
        old = None
        if self.final.exists():
            if not self.overwrite:  # appeared while we worked
                shutil.rmtree(self.tmp, ignore_errors=True)
                raise OutputError(f"output folder {self.final} appeared during the run; "
                                  "not replaced (pass --overwrite)")
            old = self.final.with_name(f".{self.final.name}.old-{os.getpid()}")
            os.replace(self.final, old)
        os.replace(self.tmp, self.final)
        if old is not None:
            shutil.rmtree(old, ignore_errors=True)
        return False


def _provenance(layers) -> dict:
    return pv.run_provenance(layers)


def _history(run_path: Path) -> str:
    # no wall-clock time: a resumed run must give byte-identical files to an uninterrupted one
    return f"suitmap {__version__} run {run_path.name}"


def _write_group(ds: xr.Dataset, folder: Path, group: str, kind: str, formats, manifest: Manifest,
                 history: str, prov: dict, inputs: str, organism: str, info: dict,
                 outlines=None) -> None:
    folder.mkdir(parents=True, exist_ok=True)
    agreement = ds.attrs.get("agreement_level")
    if kind == "period":
        ds = add_event_status(ds)  # "never" is not "no data" (suitmap.layers.events)
    tags = pv.geotiff_tags(prov, info)
    for name in ds.data_vars:
        da = ds[name]
        if "geotiff" in formats:
            layer_tags = dict(tags)
            layer_tags.update({k: str(da.attrs[k]) for k in _ROUTE_TAGS if k in da.attrs})  # route, caution
            p = write_cog(da, folder / f"{name}.tif", layer=name, tags=layer_tags)
            manifest.add(p, layer=name, period_or_comparison=group, format="geotiff")
            for style in write_styles(p, name, da.attrs, da.values):
                manifest.add(style, layer=name, period_or_comparison=group,
                             format=style.suffix.lstrip("."))
        if "png" in formats:
            title = pv.figure_title(organism, short_label(name), kind, info)
            hatch = None
            agree_name = name.replace("ensemble_median_", "model_agreement_", 1)
            if name.startswith("ensemble_median_change_") and agree_name in ds:
                hatch = ds[agree_name] < (agreement or 0.8)
            never = None
            if is_event_day_layer(name) and status_name(name) in ds:
                never = ds[status_name(name)] == 1
            elif name.startswith("change_") and status_name(name) in ds:  # never in a period
                never = (ds[status_name(name)] >= 1) & (ds[status_name(name)] <= 3)
            caution = DEFAULT_CAUTION
            if "small_ensemble_caution" in da.attrs:
                caution += f" Only {da.attrs.get('n_models')} climate models: indicative only."
            p = plot_layer(da.rename(name), folder / f"{name}.png", title=title,
                           caution=caution, hatch=hatch, never=never, outlines=outlines)
            manifest.add(p, layer=name, period_or_comparison=group, format="png")
    if "netcdf" in formats:
        fname = {"period": "layers.nc", "comparison": "changes.nc", "ensemble": "ensemble.nc"}[kind]
        title = {"period": f"suitmap layers for {organism}, period {group}",
                 "comparison": f"suitmap change layers for {organism}, {group}",
                 "ensemble": f"suitmap ensemble across climate models for {organism}, {group}"}[kind]
        extra = dict(prov)
        extra.update({"inputs": inputs, kind: group})
        extra.update({k: v for k, v in ds.attrs.items() if isinstance(v, (str, int, float))})
        p = write_netcdf(ds, folder / fname, title=title, history=history,
                         source=f"suitmap {__version__}", extra_attrs=extra,
                         climatology=pv.climatology_years(info),
                         calendar=str(ds.attrs.get("calendar") or "standard"))
        manifest.add(p, layer="all", period_or_comparison=group, format="netcdf")


def _write_panels(layers, ds, folder: Path, organism: str, info: dict) -> list[Path]:
    from suitmap.writers.panels import plot_panels

    base = layers.periods.get(info["baseline"])
    scen = layers.periods.get(info["scenario"])
    if base is None or scen is None:
        return []
    base, scen = add_event_status(base), add_event_status(scen)
    out = []
    for name in base.data_vars:
        name = str(name)
        if f"change_{name}" not in ds or name not in scen:
            continue
        never = None
        if is_event_day_layer(name) and status_name(name) in base:
            never = (base[status_name(name)] == 1, scen[status_name(name)] == 1)
            flag = status_name(f"change_{name}")
            if flag in ds:
                never = (*never, (ds[flag] >= 1) & (ds[flag] <= 3))
        title = pv.figure_title(organism, short_label(name), "comparison", info)
        out.append(plot_panels(
            base[name], scen[name], ds[f"change_{name}"], folder / f"panels_{name}.png",
            layer=name, title=title, caution=DEFAULT_CAUTION, never=never,
            panel_titles=(f"{info['baseline']} {info['baseline_years']}",
                          f"{info['scenario']} {info['scenario_years']}", "change")))
    return out


def write_outputs(layers, *, overwrite: bool = False, folder=None) -> Path:
    """Write computed :class:`~suitmap.pipeline.analysis.RunLayers` into ``output.dir``.

    Every file is written into a staging folder first and the whole set moved
    into place only when complete (:mod:`suitmap.pipeline.publish`): a failure
    leaves the folder as it was.  Files that an earlier run of the same run file
    listed and this one does not are removed; ``manifest.json`` comes last,
    then ``report.html`` and ``methods.md`` are made from it.
    ``folder`` is an open :class:`~suitmap.pipeline.folder.OutputFolder` (``suitmap.run`` passes its own);
    without it the folder is opened (and locked) here.

    Returns the path of ``manifest.json``.
    """
    from suitmap.pipeline.folder import OutputFolder

    if folder is None:
        with OutputFolder(layers.run.output.dir, layers.run.path, overwrite) as f:
            return write_outputs(layers, folder=f)
    run = layers.run
    root = folder.path
    formats = run.output.formats
    prov = _provenance(layers)
    history = _history(run.path)
    organism = layers.profile.organism.name
    before = folder.previous_outputs()
    stage = staging(root)  # every file is written here first (see suitmap.pipeline.publish)
    manifest = Manifest(stage, attrs={**prov, **pv.run_summary(layers)})
    try:
        _write_all(layers, stage, formats, manifest, history, prov, organism)
    except BaseException as exc:
        err = failure(exc, root, stage)
        if err is exc:
            raise
        raise err from exc
    publish(stage, root, manifest, before, getattr(folder, "clear_on_publish", False))
    return write_report(root)  # report.html and methods.md, listed in the manifest


def _write_all(layers, root: Path, formats, manifest: Manifest, history: str, prov: dict,
               organism: str) -> None:
    run = layers.run
    from suitmap.pipeline.regions import region_outlines, write_region_outputs

    outlines = region_outlines(layers) if "png" in formats else None  # drawn on every map
    for name, ds in layers.periods.items():
        files = layers.inputs.get(name, {})
        inputs = "; ".join(Path(f).name for role in ("tmin", "tmax") for f in files.get(role, []))
        _write_group(ds, root / name, name, "period", formats, manifest, history, prov,
                     inputs, organism, pv.group_info(layers, name, "period", ds), outlines)
    for name, ds in layers.comparisons.items():
        inputs = "; ".join(f"{k}: " + ", ".join(Path(f).name for f in v.get("tmin", []) + v.get("tmax", []))
                           for k, v in layers.inputs.items()
                           if k in (ds.attrs.get("baseline"), ds.attrs.get("scenario")))
        info = pv.group_info(layers, name, "comparison", ds)
        if info["baseline"] in layers.periods and info["scenario"] in layers.periods:
            ds = add_change_event_status(ds, layers.periods[info["baseline"]],
                                         layers.periods[info["scenario"]])
        _write_group(ds, root / name, name, "comparison", formats, manifest, history, prov,
                     inputs, organism, info, outlines)
        if "png" in formats:  # baseline | scenario | change, one figure per layer
            for p in _write_panels(layers, ds, root / name, organism, info):
                manifest.add(p, layer=p.stem.replace("panels_", "", 1),
                             period_or_comparison=name, format="png")
    for name, ds in layers.ensembles.items():
        ds = ds.assign_attrs(agreement_level=run.output.agreement_level)
        inputs = "models: " + str(ds.attrs.get("models", ""))
        _write_group(ds, root / name, name, "ensemble", formats, manifest, history, prov,
                     inputs, organism, pv.group_info(layers, name, "ensemble", ds), outlines)
    write_region_outputs(layers, root, manifest)  # regions.csv/.gpkg, ranges.csv ([regions], [ranges])
    if run.mismatch is not None:   # both organisms' event days along latitude or elevation
        from suitmap.pipeline.mismatch import write_mismatch_transects

        write_mismatch_transects(layers, root, manifest)
    readme = atomic_write_text(root / "README.txt", _readme_text(layers))
    manifest.add(readme, layer="readme", period_or_comparison="all", format="text")


def _readme_text(layers) -> str:
    run = layers.run
    lines = [
        f"suitmap {__version__} outputs for {layers.profile.organism.name}",
        f"run file: {Path(run.path).name}",
        "",
        "CAUTION: " + CAUTION,
        "",
        "periods:",
    ]
    for p in run.periods:
        ds = layers.periods[p.name]
        lines.append(f"  {p.name}: years {p.years[0]}-{p.years[1]}, {ds.attrs.get('seasons')} season-years, "
                     f"calendar {ds.attrs.get('calendar')}")
    if layers.comparisons:
        lines.append("comparisons (scenario minus its reference, see each file's change_reference; "
                     "model_bias_*: a model's historical run minus the observations):")
        lines.extend(f"  {c}" for c in layers.comparisons)
    if layers.ensembles:
        lines.append("ensembles across climate models (median, 10th/90th percentiles, agreement):")
        lines.extend(f"  {e}: {ds.attrs.get('models', '')}" for e, ds in layers.ensembles.items())
    lines += ["", "Each folder holds one GeoTIFF (COG) and one PNG per layer and one CF-NetCDF",
              "with all layers; manifest.json lists every file with its SHA-256.",
              "Beside each GeoTIFF: a QGIS style (.qml) and an OGC SLD (.sld); class layers",
              "also a .tif.aux.xml with their class names. report.html is the whole run on one",
              "page; methods.md a methods paragraph with citations.", ""]
    lines += layer_readme_lines()
    return "\n".join(lines)

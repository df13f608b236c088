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
"""

from __future__ import annotations

import json
import os
import shutil
from pathlib import Path

import xarray as xr

from suitmap._version import __version__
from suitmap.errors import OutputError
from suitmap.writers.cog import write_cog
from suitmap.writers.figures import DEFAULT_CAUTION, plot_layer
from suitmap.writers.atomic import atomic_write_text
from suitmap.writers.manifest import Manifest
from suitmap.pipeline.publish import failure, publish, staging
from suitmap.writers.netcdf import write_netcdf

CAUTION = (
    "These layers are screening-level estimates from a thermal model and gridded climate. "
    "They are not a basis for control decisions: consult your local plant-protection "
    "authority and licensed practice."
)


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
    run = layers.run
    return {
        "suitmap_version": __version__,
        "run_file": str(run.path),
        "profile_file": str(run.profile_path),
        "profile": json.dumps(layers.profile.to_dict(), ensure_ascii=False),
        "organism": layers.profile.organism.name,
        "caution": CAUTION,
    }


def _history(run_path: Path) -> str:
    # no wall-clock time: a resumed run must give byte-identical files to an uninterrupted one
    return f"suitmap {__version__} run {run_path.name}"


def _write_group(ds: xr.Dataset, folder: Path, group: str, kind: str, formats, manifest: Manifest,
                 history: str, prov: dict, inputs: str, organism: str) -> None:
    folder.mkdir(parents=True, exist_ok=True)
    agreement = ds.attrs.get("agreement_level")
    for name in ds.data_vars:
        da = ds[name]
        if "geotiff" in formats:
            p = write_cog(da, folder / f"{name}.tif", layer=name,
                          tags={"period_or_comparison": group, "suitmap_version": __version__})
            manifest.add(p, layer=name, period_or_comparison=group, format="geotiff")
        if "png" in formats:
            title = f"{organism}: {name.replace('_', ' ')}\n{kind} {group}"
            hatch = None
            agree_name = name.replace("ensemble_median_", "model_agreement_", 1)
            if name.startswith("ensemble_median_change_") and agree_name in ds:
                hatch = ds[agree_name] < (agreement or 2 / 3)
            p = plot_layer(da.rename(name), folder / f"{name}.png", title=title,
                           caution=DEFAULT_CAUTION, hatch=hatch)
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
                         source=f"suitmap {__version__}", extra_attrs=extra)
        manifest.add(p, layer="all", period_or_comparison=group, format="netcdf")


def write_outputs(layers, *, overwrite: bool = False, folder=None) -> Path:
    """Write computed :class:`~suitmap.pipeline.analysis.RunLayers` into ``output.dir``.

    Every file is written into a staging folder first and the whole set moved
    into place only when complete (:mod:`suitmap.pipeline.publish`): a failure
    leaves the folder as it was.  Files that an earlier run of the same run file
    listed and this one does not are removed; ``manifest.json`` comes last.
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
    manifest = Manifest(stage, attrs=prov)
    try:
        _write_all(layers, stage, formats, manifest, history, prov, organism)
    except BaseException as exc:
        err = failure(exc, root, stage)
        if err is exc:
            raise
        raise err from exc
    return publish(stage, root, manifest, before, getattr(folder, "clear_on_publish", False))


def _write_all(layers, root: Path, formats, manifest: Manifest, history: str, prov: dict,
               organism: str) -> None:
    run = layers.run
    for name, ds in layers.periods.items():
        files = layers.inputs.get(name, {})
        inputs = "; ".join(Path(f).name for role in ("tmin", "tmax") for f in files.get(role, []))
        _write_group(ds, root / name, name, "period", formats, manifest, history, prov,
                     inputs, organism)
    for name, ds in layers.comparisons.items():
        inputs = "; ".join(f"{k}: " + ", ".join(Path(f).name for f in v.get("tmin", []) + v.get("tmax", []))
                           for k, v in layers.inputs.items()
                           if k in (ds.attrs.get("baseline"), ds.attrs.get("scenario")))
        _write_group(ds, root / name, name, "comparison", formats, manifest, history, prov,
                     inputs, organism)
    for name, ds in layers.ensembles.items():
        ds = ds.assign_attrs(agreement_level=run.output.agreement_level)
        inputs = "models: " + str(ds.attrs.get("models", ""))
        _write_group(ds, root / name, name, "ensemble", formats, manifest, history, prov,
                     inputs, organism)
    readme = atomic_write_text(root / "README.txt", _readme_text(layers))
    manifest.add(readme, layer="readme", period_or_comparison="all", format="text")


def _readme_text(layers) -> str:
    run = layers.run
    lines = [
        f"suitmap {__version__} outputs for {layers.profile.organism.name}",
        f"run file: {run.path}",
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
        lines.append("comparisons (scenario minus baseline):")
        lines.extend(f"  {c}" for c in layers.comparisons)
    if layers.ensembles:
        lines.append("ensembles across climate models (median, 10th/90th percentiles, agreement):")
        lines.extend(f"  {e}: {ds.attrs.get('models', '')}" for e, ds in layers.ensembles.items())
    lines += ["", "Each folder holds one GeoTIFF (COG) and one PNG per layer and one CF-NetCDF",
              "with all layers; manifest.json lists every file with its SHA-256.", ""]
    return "\n".join(lines)

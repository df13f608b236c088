"""What every output says about where it comes from: periods, years, organism, thresholds.

Paths of the user's files are written relative to the run file's folder
(the folder the run file's own relative paths resolve against), never as
absolute paths: an output folder shared with a colleague reveals no local
directory layout and stays meaningful next to a copy of the run file.
"""

from __future__ import annotations

import json
import os
import textwrap
from pathlib import Path

from suitmap._version import __version__

__all__ = ["CAUTION", "relative_to_run", "run_provenance", "group_info", "geotiff_tags",
           "figure_title", "climatology_years"]

CAUTION = (
    "These layers are screening-level estimates from a thermal model and gridded climate. "
    "They are not a basis for control decisions: consult your local plant-protection "
    "authority and licensed practice."
)


def relative_to_run(path, run_path) -> str:
    """*path* relative to the run file's folder, with ``/`` separators."""
    base = Path(run_path).resolve().parent
    try:
        return Path(os.path.relpath(Path(path).resolve(), base)).as_posix()
    except ValueError:  # another drive (Windows): the file name is all we can share
        return Path(path).name


def run_provenance(layers) -> dict:
    """Provenance of a run (manifest attributes and NetCDF global attributes)."""
    run, profile = layers.run, layers.profile
    dev = profile.development
    prov = {
        "suitmap_version": __version__,
        "run_file": Path(run.path).name,
        "profile_file": relative_to_run(run.profile_path, run.path),
        "profile": json.dumps(profile.to_dict(), ensure_ascii=False),
        "organism": profile.organism.name,
        "lower_threshold_degC": dev.lower_threshold,
        "upper_threshold_degC": dev.upper_threshold,
        "suitable_level": run.output.suitable_level,
        "caution": CAUTION,
    }
    if dev.degree_days_per_generation is not None:
        prov["degree_days_per_generation"] = dev.degree_days_per_generation
    if dev.rate_curve is not None:
        prov["rate_curve"] = dev.rate_curve.model
    return prov


def _years(run, name: str) -> str:
    for p in run.periods:
        if p.name == name:
            return f"{p.years[0]}-{p.years[1]}"
    return ""


def group_info(layers, group: str, kind: str, ds) -> dict:
    """Period names and years of one output folder (a period, comparison or ensemble)."""
    run = layers.run
    if kind == "period":
        return {"period": group, "years": _years(run, group)}
    if kind == "comparison":
        base, scen = ds.attrs.get("baseline", ""), ds.attrs.get("scenario", "")
        return {"comparison": group, "baseline": base, "baseline_years": _years(run, base),
                "scenario": scen, "scenario_years": _years(run, scen), "years": _years(run, scen)}
    label = ds.attrs.get("period", "")
    years = next((f"{p.years[0]}-{p.years[1]}" for p in run.periods
                  if p.period == label and p.pathway == ds.attrs.get("pathway")), "")
    base = run.baseline.name
    return {"ensemble": group, "pathway": ds.attrs.get("pathway", ""), "period": label,
            "years": years, "baseline": base, "baseline_years": _years(run, base),
            "models": ds.attrs.get("models", "")}


def geotiff_tags(prov: dict, info: dict) -> dict:
    """GDAL dataset metadata of a GeoTIFF: the group, its years, and the run's provenance."""
    keep = ("organism", "lower_threshold_degC", "upper_threshold_degC",
            "degree_days_per_generation", "rate_curve", "suitable_level", "suitmap_version",
            "run_file", "profile_file", "caution")
    tags = {k: v for k, v in info.items() if v not in ("", None)}
    tags.update({k: prov[k] for k in keep if k in prov})
    return tags


def figure_title(organism: str, label: str, kind: str, info: dict) -> str:
    """Title of a figure: organism and layer, then the period(s) with years."""
    if kind == "period":
        when = f"{info['period']} {info['years']}"
    elif kind == "comparison":
        when = (f"{info['scenario']} {info['scenario_years']} minus "
                f"{info['baseline']} {info['baseline_years']}")
    else:
        n = len([m for m in str(info.get("models", "")).split(",") if m.strip()])
        when = f"{info['pathway']} {info['period']} {info['years']}, ensemble of {n} models"
    # long organism or period names wrap rather than run off an 8-inch figure
    return "\n".join(textwrap.fill(line, 72) for line in (f"{organism}: {label}", when))


def climatology_years(info: dict) -> tuple[int, int] | None:
    """First and last year of the period the group's layers describe (None if unknown)."""
    years = info.get("years", "")
    try:
        first, last = (int(y) for y in years.split("-"))
    except ValueError:
        return None
    return first, last


def run_summary(layers) -> dict:
    """Periods, comparisons, inputs and methods of a run, for the report (manifest attrs)."""
    run = layers.run
    periods = []
    for p in run.periods:
        ds = layers.periods.get(p.name)
        attrs = {} if ds is None else ds.attrs
        files = layers.inputs.get(p.name, {})
        periods.append({
            "name": p.name, "kind": p.kind, "years": f"{p.years[0]}-{p.years[1]}",
            "model": p.model or "", "pathway": p.pathway or "", "period": p.period or "",
            "seasons": attrs.get("seasons", ""), "calendar": attrs.get("calendar", ""),
            "inputs": [relative_to_run(f, run.path) for role in ("tmin", "tmax")
                       for f in files.get(role, [])],
            "qa": {k: attrs[k] for k in ("tmin_tmax_swapped_cell_days", "downscaling",
                                         "monthly_route", "regridded_from") if k in attrs},
        })
    any_ds = next(iter(layers.periods.values()), None)
    methods = {} if any_ds is None else {
        k: any_ds.attrs[k] for k in ("degree_days_from", "generations_from", "season_northern",
                                     "season_southern") if k in any_ds.attrs}
    def plain(o):
        return o.item() if hasattr(o, "item") else str(o)

    return {"periods": json.dumps(periods, ensure_ascii=False, default=plain),
            "comparisons": json.dumps(sorted(layers.comparisons), ensure_ascii=False),
            "ensembles": json.dumps(sorted(layers.ensembles), ensure_ascii=False),
            "methods": json.dumps(methods, ensure_ascii=False, default=plain)}

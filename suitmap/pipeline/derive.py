"""What a run derives from its period layers: comparisons, model bias, ensembles, snapping.

    change_name      a scenario's comparison name (against its reference, else the baseline)
    derive           comparisons, model bias layers and ensembles from period layers
    snap_layers      a period's layers on the baseline grid
    ensemble_groups  ensemble statistics per (pathway, period) over climate models
"""

from __future__ import annotations

import xarray as xr

from suitmap.comparison.change import compare
from suitmap.config.runfile import Period, RunFile
from suitmap.pipeline.preflight import comparison_name, ensemble_name


def change_name(scen: Period, run: RunFile) -> str:
    """Name of a scenario's comparison: against its reference period, else the baseline."""
    return comparison_name(scen.name, scen.reference or run.baseline.name)


def derive(run: RunFile, periods: dict[str, xr.Dataset]):
    """Comparisons, model bias layers and ensembles from period layers (lazy or computed).

    A model's historical run gives ``model_bias_<layer>`` against the baseline; a
    scenario with a ``reference`` (its model's historical run) is compared with
    it; the route is recorded on every output (:mod:`suitmap.comparison.reference`).
    """
    from suitmap.comparison.reference import label_route, model_bias, route_of

    comps = {}
    base = periods[run.baseline.name]
    for scen in run.scenarios:
        name = change_name(scen, run)
        if scen.kind == "historical":
            comps[name] = model_bias(base, periods[scen.name])
            continue
        ref = scen.reference or run.baseline.name
        comps[name] = label_route(compare(periods[ref], periods[scen.name],
                                          suitable_level=run.output.suitable_level),
                                  route_of(scen), ref)
    return comps, ensemble_groups(run, periods, comps)


def snap_layers(ds: xr.Dataset, template: xr.Dataset) -> xr.Dataset:
    """Put a period's layers on the template grid (bilinear; nearest/mode for classes)."""
    from suitmap.spatial.regrid import grid_description, grids_match, snap_to_grid
    from suitmap.writers.styles import is_class_layer

    if grids_match(ds, template):
        return ds
    out = {}
    for name, da in ds.data_vars.items():
        kind = "class" if is_class_layer(name, da.attrs) else "continuous"
        snapped = snap_to_grid(da, template, kind=kind)
        snapped.attrs = {**da.attrs, "suitmap_regrid": snapped.attrs.get(
            "suitmap_regrid", f"{'mode/nearest' if kind == 'class' else 'bilinear'} from "
            f"{grid_description(ds)}")}
        out[name] = snapped
    snapped_ds = xr.Dataset(out, attrs={**ds.attrs, "regridded_from": grid_description(ds)})
    for c in ("x", "y"):
        snapped_ds[c].attrs = dict(template[c].attrs)
    return snapped_ds.rio.write_crs(template.rio.crs)


def ensemble_groups(run: RunFile, periods: dict[str, xr.Dataset],
                    comps: dict[str, xr.Dataset]) -> dict[str, xr.Dataset]:
    """Ensemble statistics per (pathway, period) over the scenarios' climate models.

    Scenarios without ``model``/``pathway``/``period`` labels, and groups of a
    single model, have no ensemble.
    """
    from suitmap.comparison.ensemble import ensemble_stats
    from suitmap.comparison.reference import ROUTE_NOTES, route_of

    groups: dict[tuple[str, str], dict[str, Period]] = {}
    for scen in run.scenarios:
        if scen.model and scen.pathway and scen.period and scen.kind != "historical":
            groups.setdefault((scen.pathway, scen.period), {})[scen.model] = scen
    out = {}
    for (pathway, period), members in sorted(groups.items()):
        if len(members) < 2:
            continue
        layers = ensemble_stats({m: periods[s.name] for m, s in members.items()},
                                agreement_level=run.output.agreement_level)
        changes = ensemble_stats({m: comps[change_name(s, run)] for m, s in members.items()},
                                 agreement_level=run.output.agreement_level)
        routes = sorted({route_of(s) for s in members.values()})
        route = routes[0] if len(routes) == 1 else "mixed: " + ", ".join(routes)
        for v in changes.data_vars:
            changes[v].attrs["change_reference"] = route
        ds = xr.merge([layers, changes], combine_attrs="override", compat="override")
        ds.attrs.update({"pathway": pathway, "period": period, "models": ", ".join(sorted(members)),
                         "n_models": len(members), "baseline": run.baseline.name,
                         "change_reference": route,
                         "change_reference_note": ROUTE_NOTES.get(route, "models compared with "
                                                                  "different references")})
        out[ensemble_name(pathway, period)] = ds
    return out

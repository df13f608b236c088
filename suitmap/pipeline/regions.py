"""Regions and ranges of a run: regions.csv/.gpkg, ranges.csv, range_change layers.

Hooks:

* :func:`add_range_layers`  (``suitmap.run``, after the comparisons) adds
  ``range_change`` and ``relocation_candidates`` to every comparison when the
  run file gives ``[ranges] dispersal_km_per_year``;
* :func:`write_region_outputs` (``write_outputs``, before the manifest) writes
  ``regions.csv``, ``regions.gpkg`` and ``ranges.csv`` at the output root, and
  with the ``png`` format ``region_change.png`` and ``range_edges.png`` in each
  comparison's folder;
* :func:`check_geography` (``suitmap.run`` and ``check_run``) reads the regions
  file and the elevation raster before any output is touched;
* :func:`summarize` (``suitmap summarize``) does the regional summary from a
  finished output folder, reading its layers back instead of recomputing them.
"""

from __future__ import annotations

import json
import warnings
from dataclasses import replace
from pathlib import Path

import numpy as np
import xarray as xr

from suitmap.config.runfile import RunFile, load_run
from suitmap.errors import InputError, OutputError, SuitmapWarning
from suitmap.layers.metadata import MISSING_CLASS, layer_attrs
from suitmap.spatial.dispersal import RANGE_CHANGE_CLASSES, range_change
from suitmap.spatial.ranges import cell_lonlat, range_shift, range_summary
from suitmap.spatial.zonal import read_regions, region_weights, summarize_group
from suitmap.writers.atomic import atomic_path, atomic_write_text, sha256_file

#: Layer whose level defines the suitable area, per kind of layer group.
REFERENCE = {"period": "suitability", "ensemble": "ensemble_median_suitability"}
UNREACHABLE = RANGE_CHANGE_CLASSES.index("unreachable_gain")
#: Timestamp written into regions.gpkg (GeoPackage stores one; a fixed one keeps reruns identical).
GPKG_DATE = "2000-01-01T00:00:00Z"
#: Elevations outside this range (m) are not plausible on land.
ELEVATION_RANGE = (-500.0, 9000.0)


def _years_mid(years) -> float:
    return (years[0] + years[1]) / 2


def _suitable01(da: xr.DataArray, level: float) -> xr.DataArray:
    return xr.where(da.notnull(), (da >= level).astype("float64"), np.nan)


# --------------------------------------------------------------------------- layers
def check_geography(run: RunFile) -> None:
    """Read the regions file and the elevation raster before any work (bad input early)."""
    geo = run.geography
    if geo is None:
        return
    if geo.regions_path is not None:
        read_regions(geo.regions_path, geo.regions_field, geo.regions_layer)
    if geo.elevation is not None:
        _read_dem(geo.elevation)
        if not geo.ranges and geo.regions_path is None and run.mismatch is None:
            warnings.warn(f"{run.path.name}: terrain.elevation is used only with [ranges], "
                          "[regions] or [mismatch]; add one of them or remove [terrain]",
                          SuitmapWarning, stacklevel=2)


def add_range_layers(layers):
    """Add ``range_change`` and ``relocation_candidates`` to each computed comparison."""
    geo = layers.run.geography
    if geo is None or geo.dispersal_km_per_year is None:
        return layers
    run = layers.run
    level = run.output.suitable_level
    by_name = {p.name: p for p in run.periods}
    comps = {}
    for name, ds in layers.comparisons.items():
        base, scen = by_name.get(ds.attrs.get("baseline")), by_name.get(ds.attrs.get("scenario"))
        if base is None or scen is None:
            comps[name] = ds
            continue
        years = _years_mid(scen.years) - _years_mid(base.years)
        reach = geo.dispersal_km_per_year * max(years, 0.0)
        b = _suitable01(layers.periods[base.name]["suitability"], level)
        s = _suitable01(layers.periods[scen.name]["suitability"], level)
        codes = range_change(b, s, reach)
        cand = xr.where(codes == MISSING_CLASS, MISSING_CLASS,
                        (codes == UNREACHABLE).astype("uint8")).astype("uint8")
        ds = ds.copy()
        for lname, da in (("range_change", codes), ("relocation_candidates", cand)):
            da = da.assign_coords(x=ds["x"], y=ds["y"])
            da.attrs = {**layer_attrs(lname), "dispersal_km_per_year": geo.dispersal_km_per_year,
                        "dispersal_years": years, "dispersal_distance_km": reach}
            da.encoding["_FillValue"] = MISSING_CLASS
            ds[lname] = da
        comps[name] = ds
    return replace(layers, comparisons=comps)


def _read_dem(path: Path) -> xr.DataArray:
    import rioxarray

    if not Path(path).is_file():
        raise InputError(f"terrain.elevation: {path} does not exist; give an elevation GeoTIFF (m)")
    try:
        dem = rioxarray.open_rasterio(path, masked=True)
    except Exception as exc:  # noqa: BLE001 - GDAL's own message names the problem
        raise InputError(f"terrain.elevation: {path} cannot be read as a raster: "
                         f"{str(exc).splitlines()[0]}") from None
    if dem.sizes.get("band", 1) != 1:
        raise InputError(f"terrain.elevation: {path} has {dem.sizes['band']} bands; give one band "
                         "of elevation (m)")
    dem = dem.squeeze("band", drop=True) if "band" in dem.dims else dem
    if dem.rio.crs is None:
        raise InputError(f"terrain.elevation: {path} has no CRS; define one (gdal_edit.py -a_srs)")
    dem = dem.astype("float64").load()
    lo, hi = float(dem.min()), float(dem.max())
    if not (ELEVATION_RANGE[0] <= lo and hi <= ELEVATION_RANGE[1]):
        raise InputError(f"terrain.elevation: {path} holds {lo:g}…{hi:g}, outside "
                         f"{ELEVATION_RANGE[0]:g}…{ELEVATION_RANGE[1]:g} m; give elevation in metres")
    return dem


def elevation_on_grid(path: Path, template: xr.Dataset) -> xr.DataArray:
    """An elevation raster (m), resampled bilinearly onto the template grid."""
    from suitmap.spatial.regrid import snap_to_grid

    return snap_to_grid(_read_dem(path), template, kind="continuous")


# --------------------------------------------------------------------------- tables
def _groups(layers) -> list[tuple[str, str, xr.Dataset]]:
    return ([("period", n, d) for n, d in layers.periods.items()]
            + [("comparison", n, d) for n, d in layers.comparisons.items()]
            + [("ensemble", n, d) for n, d in layers.ensembles.items()])


def region_table(groups, regions, level: float, elevation: xr.DataArray | None = None):
    """regions.csv as a DataFrame: one row per region × group (see :mod:`suitmap.spatial.zonal`).

    With ``elevation`` (on the groups' grid), period and ensemble rows get the
    suitable part's elevation band, and comparison rows its shift
    (``suitable_elevation_shift_m``, scenario minus baseline band midpoint).
    """
    import pandas as pd

    rows, empty, weights = [], set(), None
    elev = None if elevation is None else np.asarray(elevation.transpose("y", "x").values,
                                                     dtype=np.float64).ravel()
    pairs = {}
    for kind, name, ds in groups:
        if weights is None:
            weights = region_weights(regions, ds)
        got, none = summarize_group(ds, weights, reference=REFERENCE.get(kind), level=level,
                                    elevation=elev if kind in REFERENCE else None)
        empty.update(none)
        if kind == "comparison":
            pairs[name] = (ds.attrs.get("baseline"), ds.attrs.get("scenario"))
        for r in got:
            rows.append({"region": r.pop("region"), "period": name, "kind": kind, **r})
    if elev is not None:
        mid = {(r["region"], r["period"]): (r["suitable_elevation_low_m"]
                                            + r["suitable_elevation_high_m"]) / 2
               for r in rows if "suitable_elevation_low_m" in r}
        for r in rows:
            if r["kind"] == "comparison" and r["period"] in pairs:
                b, s = pairs[r["period"]]
                r["suitable_elevation_shift_m"] = (mid.get((r["region"], s), np.nan)
                                                   - mid.get((r["region"], b), np.nan))
    if empty:
        warnings.warn(f"regions {', '.join(sorted(empty))} lie outside the grid or on missing cells "
                      "only; their values are left empty", SuitmapWarning, stacklevel=2)
    return pd.DataFrame(rows)


def range_table(run: RunFile, periods: dict[str, xr.Dataset], elevation=None):
    """ranges.csv as a DataFrame: per comparison and longitude band (and ``all``)."""
    import pandas as pd

    geo = run.geography
    level = run.output.suitable_level
    base_ds = periods[run.baseline.name]
    _, _, crs = cell_lonlat(base_ds)
    summary = {}
    for p in run.periods:
        suit = periods[p.name]["suitability"]
        summary[p.name] = range_summary((suit >= level) & suit.notnull(), band_deg=geo.band_deg,
                                        elevation=elevation)
    rows = []
    for scen in run.scenarios:
        for r in range_shift(summary[run.baseline.name], summary[scen.name], crs):
            rows.append({"comparison": f"{scen.name}_vs_{run.baseline.name}",
                         "baseline": run.baseline.name, "scenario": scen.name, **r})
    return pd.DataFrame(rows)


def _write_csv(df, path: Path) -> Path:
    return atomic_write_text(path, df.to_csv(index=False, float_format="%.6g"))


def _write_gpkg(df, regions, path: Path) -> Path:
    import pyogrio

    gdf = regions.merge(df, on="region", how="inner")
    # a fixed timestamp in gpkg_contents: a rerun gives a byte-identical file (resume promise)
    before = pyogrio.get_gdal_config_option("OGR_CURRENT_DATE")
    pyogrio.set_gdal_config_options({"OGR_CURRENT_DATE": GPKG_DATE})
    try:
        with atomic_path(path) as tmp:
            tmp.unlink()
            gdf.to_file(tmp, driver="GPKG", layer="regions", engine="pyogrio")
    finally:
        pyogrio.set_gdal_config_options({"OGR_CURRENT_DATE": before})
    return path


def _region_change_figures(table, root: Path) -> list[tuple[Path, str]]:
    """One bar chart per comparison: suitable area gained and lost by region."""
    from suitmap.writers.region_figures import plot_region_change

    gain, loss = "change_class_becomes_suitable_km2", "change_class_becomes_unsuitable_km2"
    out = []
    if gain not in table or loss not in table:
        return out
    for comp, rows in table[table["kind"] == "comparison"].groupby("period", sort=False):
        (root / comp).mkdir(exist_ok=True)
        p = plot_region_change(list(rows["region"]), rows[gain], rows[loss],
                               root / comp / "region_change.png",
                               title=f"suitable area gained and lost by region\n{comp}")
        out.append((p, comp))
    return out


def _range_figures(run: RunFile, periods, table, root: Path) -> list[tuple[Path, str]]:
    """One map per comparison: both periods' suitable cells, edges and centroids."""
    from suitmap.writers.region_figures import plot_range_edges

    level = run.output.suitable_level
    lon, lat, _ = cell_lonlat(periods[run.baseline.name])
    out = []
    for scen in run.scenarios:
        comp = f"{scen.name}_vs_{run.baseline.name}"
        suit = [periods[n]["suitability"] for n in (run.baseline.name, scen.name)]
        (root / comp).mkdir(exist_ok=True)
        p = plot_range_edges(lon, lat, *[(d >= level).values & d.notnull().values for d in suit],
                             table[table["comparison"] == comp].to_dict("records"),
                             root / comp / "range_edges.png", labels=(run.baseline.name, scen.name),
                             title=f"range edges (per {run.geography.band_deg:g}° of longitude) and "
                                   f"centroids\n{comp}")
        out.append((p, comp))
    return out


def region_outlines(layers) -> list[np.ndarray] | None:
    """Boundaries of the run's ``[regions]`` in the grid's CRS, as (n, 2) vertex arrays for
    the maps; None without regions."""
    geo = layers.run.geography
    if geo is None or geo.regions_path is None:
        return None
    regions = read_regions(geo.regions_path, geo.regions_field, geo.regions_layer)
    crs = layers.periods[layers.run.baseline.name].rio.crs
    if crs is not None:
        regions = regions.to_crs(crs.to_wkt())
    rings = []
    for geom in regions.geometry.boundary:
        for line in getattr(geom, "geoms", [geom]):
            rings.append(np.asarray(line.coords, dtype=float)[:, :2])
    return rings


def write_region_outputs(layers, root: Path, manifest) -> list[Path]:
    """Write the regional and range tables of computed layers into ``root`` and list them."""
    run = layers.run
    geo = run.geography
    written = []
    if geo is None:
        return written
    base = layers.periods[run.baseline.name]
    elev = elevation_on_grid(geo.elevation, base) if geo.elevation is not None else None
    if geo.regions_path is not None:
        regions = read_regions(geo.regions_path, geo.regions_field, geo.regions_layer)
        table = region_table(_groups(layers), regions, run.output.suitable_level, elev)
        p = _write_csv(table, root / "regions.csv")
        manifest.add(p, layer="regions", period_or_comparison="all", format="csv")
        g = _write_gpkg(table, regions, root / "regions.gpkg")
        manifest.add(g, layer="regions", period_or_comparison="all", format="gpkg")
        written += [p, g]
        if "png" in run.output.formats:
            for f, comp in _region_change_figures(table, root):
                manifest.add(f, layer="region_change", period_or_comparison=comp, format="png")
                written.append(f)
    if geo.ranges and run.scenarios:
        ranges = range_table(run, layers.periods, elev)
        p = _write_csv(ranges, root / "ranges.csv")
        manifest.add(p, layer="ranges", period_or_comparison="all", format="csv")
        written.append(p)
        if "png" in run.output.formats:
            for f, comp in _range_figures(run, layers.periods, ranges, root):
                manifest.add(f, layer="range_edges", period_or_comparison=comp, format="png")
                written.append(f)
    return written


# --------------------------------------------------------------------------- summarize
def _read_group(files: list[tuple[str, Path, str]]) -> xr.Dataset:
    nc = [p for _, p, f in files if f == "netcdf"]
    if nc:
        ds = xr.open_dataset(nc[0], decode_coords="all").load()
        return ds.rio.write_crs(ds.rio.crs) if ds.rio.crs is not None else ds
    import rioxarray

    out = {}
    for name, p, f in files:
        if f != "geotiff" or name.endswith("_status"):
            continue   # <layer>_status only re-encodes its event-day layer's never/missing cells
        da = rioxarray.open_rasterio(p, masked=True).squeeze("band", drop=True).load()
        try:
            attrs = layer_attrs(name)
        except KeyError:
            attrs = {}
        da.attrs = {k: v for k, v in attrs.items() if k in ("flag_values", "flag_meanings")}
        out[name] = da
    if not out:
        return xr.Dataset()
    crs = next(iter(out.values())).rio.crs
    return xr.Dataset(out).rio.write_crs(crs)


def summarize(runfile, regions: str | Path | None = None, field: str | None = None, *,
              layer: str | None = None, overwrite: bool = False) -> Path:
    """Regional summary of a finished output folder (no layer is recomputed).

    ``regions``/``field``/``layer`` default to the run file's ``[regions]``.
    Writes ``regions.csv`` and ``regions.gpkg`` at the output root (replacing
    earlier ones only with ``overwrite``) and lists them in ``manifest.json``.
    Returns the path of ``regions.csv``.
    """
    from suitmap.pipeline.folder import OutputFolder

    run = runfile if isinstance(runfile, RunFile) else load_run(runfile)
    geo = run.geography
    if regions is None:
        if geo is None or geo.regions_path is None:
            raise InputError("summarize: give --regions FILE and --field NAME (the run file has "
                             "no [regions] table)")
        regions, field = geo.regions_path, field or geo.regions_field
        layer = layer or geo.regions_layer
    if field is None:
        raise InputError(f"summarize: give --field NAME, the column of {regions} naming each region")
    root = run.output.dir
    mpath = root / "manifest.json"
    if not mpath.is_file():
        raise OutputError(f"{root} holds no finished run (no manifest.json); run "
                          f"'suitmap run {run.path.name}' first")
    for name in ("regions.csv", "regions.gpkg"):
        if (root / name).exists() and not overwrite:
            raise OutputError(f"{root / name} exists; pass --overwrite to replace it")
    doc = json.loads(mpath.read_text())
    by_group: dict[str, list] = {}
    for e in doc.get("entries", []):
        if e.get("format") in ("netcdf", "geotiff"):
            by_group.setdefault(e["period_or_comparison"], []).append(
                (e["layer"], root / e["path"], e["format"]))
    names = {p.name for p in run.periods}
    groups = []
    for g, files in by_group.items():
        kind = "period" if g in names else "ensemble" if g.startswith("ensemble_") else "comparison"
        ds = _read_group(files)
        if ds.data_vars:
            groups.append((kind, g, ds))
    if not groups:
        raise OutputError(f"{root}: the manifest lists no GeoTIFF or NetCDF layers to summarize")
    elev = (elevation_on_grid(geo.elevation, groups[0][2])
            if geo is not None and geo.elevation is not None else None)
    table = region_table(groups, read_regions(regions, field, layer), run.output.suitable_level, elev)
    with OutputFolder(root, run.path, overwrite=False):
        csv = _write_csv(table, root / "regions.csv")
        _write_gpkg(table, read_regions(regions, field, layer), root / "regions.gpkg")
        new = [(root / "regions.csv", "regions", "all", "csv"),
               (root / "regions.gpkg", "regions", "all", "gpkg")]
        if "png" in run.output.formats:
            new += [(f, "region_change", comp, "png") for f, comp in _region_change_figures(table, root)]
        entries = {e["path"]: e for e in doc.get("entries", [])}
        for p, lname, group, fmt in new:
            rel = p.relative_to(root).as_posix()
            entries[rel] = {"path": rel, "layer": lname, "period_or_comparison": group,
                            "format": fmt, "sha256": sha256_file(p), "bytes": p.stat().st_size}
        doc["entries"] = [entries[k] for k in sorted(entries)]
        atomic_write_text(mpath, json.dumps(doc, indent=2, ensure_ascii=False, default=str) + "\n")
    return csv

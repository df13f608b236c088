"""Run-file tables for regional summaries and range shifts: [regions], [terrain], [ranges].

    [regions]                       # summaries by district → regions.csv, regions.gpkg
    path = "districts.gpkg"         # any vector file GDAL reads
    field = "district"              # the column naming each region
    layer = "districts"             # optional: the layer of a multi-layer file

    [terrain]
    elevation = "dem.tif"           # optional: elevation (m), resampled to the grid

    [ranges]                        # range edges and shifts → ranges.csv
    band_deg = 1.0                  # width of the longitude bands (degrees)
    dispersal_km_per_year = 2.5     # optional: → range_change, relocation_candidates
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Any

from suitmap.errors import RunFileError


@dataclass(frozen=True)
class Geography:
    """What the run file asks of regions, terrain and ranges (all optional)."""

    regions_path: Path | None = None
    regions_field: str | None = None
    regions_layer: str | None = None
    elevation: Path | None = None
    ranges: bool = False
    band_deg: float = 1.0
    dispersal_km_per_year: float | None = None


def _table(raw: dict, key: str, allowed: tuple[str, ...], where: str) -> dict | None:
    t = raw.get(key)
    if t is None:
        return None
    if not isinstance(t, dict):
        raise RunFileError(f"{where}: [{key}] must be a table")
    for k in t:
        if k not in allowed:
            raise RunFileError(f"{where}: unknown key {key}.{k}; allowed keys are {', '.join(allowed)}")
    return t


def _path(value: Any, key: str, base: Path, where: str) -> Path:
    if not isinstance(value, str) or not value:
        raise RunFileError(f"{where}: {key} must be a file path")
    p = Path(value).expanduser()
    return p if p.is_absolute() else base / p


def _number(value: Any, key: str, where: str, low: float, high: float, zero: bool = False) -> float:
    ok = isinstance(value, (int, float)) and not isinstance(value, bool) and (
        low <= value <= high if zero else low < value <= high)
    if not ok:
        raise RunFileError(f"{where}: {key} must be a number in {'[' if zero else '('}{low:g}, "
                           f"{high:g}], got {value!r}")
    return float(value)


def geography_from_dict(raw: dict[str, Any], base: Path, where: str) -> Geography | None:
    """Validate the [regions], [terrain] and [ranges] tables; None when none is given."""
    regions = _table(raw, "regions", ("path", "field", "layer"), where)
    terrain = _table(raw, "terrain", ("elevation",), where)
    ranges = _table(raw, "ranges", ("band_deg", "dispersal_km_per_year"), where)
    if regions is None and terrain is None and ranges is None:
        return None
    g: dict[str, Any] = {}
    if regions is not None:
        for k in ("path", "field"):
            if k not in regions:
                raise RunFileError(f"{where}: [regions] needs {k} (path = the vector file, field = "
                                   "the column naming each region)")
        g["regions_path"] = _path(regions["path"], "regions.path", base, where)
        for k in ("field", "layer"):
            if k in regions and not (isinstance(regions[k], str) and regions[k]):
                raise RunFileError(f"{where}: regions.{k} must be a name")
        g["regions_field"] = regions["field"]
        g["regions_layer"] = regions.get("layer")
    if terrain is not None and "elevation" in terrain:
        g["elevation"] = _path(terrain["elevation"], "terrain.elevation", base, where)
    if ranges is not None:
        g["ranges"] = True
        if "band_deg" in ranges:
            g["band_deg"] = _number(ranges["band_deg"], "ranges.band_deg", where, 0, 360)
        if "dispersal_km_per_year" in ranges:
            # 0 < speed ≤ 1000 km/yr: faster than any insect spreads unaided is a typo
            g["dispersal_km_per_year"] = _number(ranges["dispersal_km_per_year"],
                                                 "ranges.dispersal_km_per_year", where, 0, 1000, True)
    return Geography(**g)

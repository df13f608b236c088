"""GeoTIFF climate input: one band per day, dates from band descriptions, tags or a sidecar.

See :mod:`suitmap.climate` for the conventions; :func:`_open_geotiff` returns the
same piece description as the NetCDF reader, for :func:`suitmap.climate.open_climate`.
"""

from __future__ import annotations

import datetime as _dt
from pathlib import Path

import numpy as np
import rasterio
import rioxarray

from suitmap.climate.conventions import _CFTIME_TYPES, _ISO_DATE, _canonical_calendar, _canonical_units
from suitmap.errors import InputError


def _geotiff_dates(path: Path, n: int, descriptions, band_tags) -> list[str]:
    if all(d and _ISO_DATE.match(d) for d in descriptions):
        return list(descriptions)
    tagged = [next((v for k, v in t.items() if k.lower() == "date"), None) for t in band_tags]
    if all(d and _ISO_DATE.match(d) for d in tagged):
        return tagged
    side = next((c for c in (path.with_suffix(".dates.txt"), path.with_name(path.name + ".dates.txt"))
                 if c.is_file()), None)
    if side is None:
        raise InputError(f"{path.name}: no band dates found (band descriptions, DATE band tags or "
                         f"{path.stem}.dates.txt); give each band its ISO date YYYY-MM-DD")
    lines = [ln.strip() for ln in side.read_text(encoding="utf-8").splitlines()
             if ln.strip() and not ln.strip().startswith("#")]
    if len(lines) != n:
        raise InputError(f"{side.name} lists {len(lines)} dates but {path.name} has {n} bands; "
                         "write one ISO date per band")
    return lines


def _parse_dates(texts, calendar: str, where: str) -> np.ndarray:
    out = []
    for t in texts:
        m = _ISO_DATE.match(t or "")
        try:
            if m is None:
                raise ValueError("not an ISO date")
            y, mo, d = (int(g) for g in m.groups())
            if calendar in ("standard", "proleptic_gregorian"):
                out.append(np.datetime64(_dt.date(y, mo, d), "ns"))
            else:
                out.append(_CFTIME_TYPES[calendar](y, mo, d))
        except ValueError as exc:
            raise InputError(f"{where}: date '{t}' is not a valid YYYY-MM-DD day in the "
                             f"{calendar} calendar ({exc}); fix the band dates") from exc
    return np.array(out, dtype="datetime64[ns]" if calendar in ("standard", "proleptic_gregorian") else object)


def _open_geotiff(path: Path, cy, cx, check_units=_canonical_units) -> dict:
    """One multi-band GeoTIFF as the reader's piece dict; ``check_units(units, where)``
    refuses units of the wrong kind (temperature by default; precipitation passes its own)."""
    try:
        with rasterio.open(path) as src:
            n, descriptions, band_units = src.count, src.descriptions, src.units
            ds_tags = {k.lower(): v for k, v in src.tags().items()}
            band_tags = [src.tags(i) for i in range(1, n + 1)]
            crs = src.crs
    except rasterio.errors.RasterioIOError as exc:
        raise InputError(f"cannot read {path} as GeoTIFF ({exc}); check the file") from exc
    where = f"{path.name} (GeoTIFF)"
    units = ds_tags.get("units")
    for shared in ({next((v for k, v in t.items() if k.lower() == "units"), None) for t in band_tags},
                   set(band_units)):
        units = units or (shared.pop() if len(shared) == 1 else None)
    check_units(units, where)
    calendar = _canonical_calendar(ds_tags.get("calendar"), where)
    times = _parse_dates(_geotiff_dates(path, n, descriptions, band_tags), calendar, where)
    da = rioxarray.open_rasterio(path, chunks={"band": -1, "y": cy, "x": cx}, mask_and_scale=True)
    da = da.rename(band="time").assign_coords(time=times)
    return dict(da=da, dims=("time", "y", "x"), crs=crs, geo_names=False, path=path,
                variable="bands", units=units, where=where, calendar=calendar)



"""Quality checks of a Tmin/Tmax pair: crossed days repaired, a QA summary for ``suitmap check``."""

from __future__ import annotations

import warnings
from dataclasses import dataclass, field

import dask
import numpy as np
import xarray as xr

from suitmap.climate.conventions import ROLES
from suitmap.climate.grid import _crs_text, _grid, check_same_grid
from suitmap.climate.time_axis import _iso, _ymd
from suitmap.errors import InputError, SuitmapWarning

__all__ = ["ClimateQA", "qa_summary", "repair_tmin_tmax"]



def _align_pair(tmin: xr.DataArray, tmax: xr.DataArray):
    check_same_grid(tmin, tmax, tmin.attrs.get("source_files") or "tmin", tmax.attrs.get("source_files") or "tmax")
    if tmin.sizes["time"] != tmax.sizes["time"] or not np.array_equal(_ymd(tmin), _ymd(tmax)):
        raise InputError(f"tmin ({_iso(tmin.time.values[0])} to {_iso(tmin.time.values[-1])}) and tmax "
                         f"({_iso(tmax.time.values[0])} to {_iso(tmax.time.values[-1])}) cover different days; "
                         "give both for the same days")
    return tmax.assign_coords(time=tmin["time"], y=tmin["y"], x=tmin["x"])


def repair_tmin_tmax(tmin: xr.DataArray, tmax: xr.DataArray) -> tuple[xr.DataArray, xr.DataArray, int]:
    """Swap Tmin and Tmax (lazily) on the cell-days where Tmin > Tmax.

    Returns the repaired pair and the number of swapped cell-days (computed);
    warns with :class:`SuitmapWarning` when it is not zero.  NaN cell-days are
    left as they are.
    """
    tmax = _align_pair(tmin, tmax)
    swap = tmin > tmax
    count = int(swap.sum().compute())
    if count:
        warnings.warn(f"{count} cell-days had Tmin > Tmax; the two values were swapped there",
                      SuitmapWarning, stacklevel=2)
    new_min, new_max = tmin.where(~swap, tmax), tmax.where(~swap, tmin)
    new_min.attrs, new_max.attrs = dict(tmin.attrs), dict(tmax.attrs)
    new_min.name, new_max.name = tmin.name, tmax.name
    return new_min, new_max, count


# --------------------------------------------------------------------------- QA
@dataclass
class ClimateQA:
    """Figures about one Tmin/Tmax pair, for ``suitmap check`` and the run log."""

    label: str
    shape: tuple[int, int, int]  # (days, y, x)
    crs: str
    extent: tuple[float, float, float, float]  # left, bottom, right, top (cell edges)
    resolution: tuple[float, float]  # x, y cell size (positive)
    calendar: str
    time_start: str
    time_end: str
    variables: dict[str, str] = field(default_factory=dict)  # role -> source variable
    units: dict[str, str] = field(default_factory=dict)  # role -> original units
    files: dict[str, str] = field(default_factory=dict)  # role -> '; '-joined file names
    swapped_cell_days: int = 0  # cell-days with Tmin > Tmax
    missing_share: dict[str, float] = field(default_factory=dict)  # role -> NaN cell-days / all cell-days
    value_range: dict[str, tuple[float, float]] = field(default_factory=dict)  # role -> (min, max) °C

    def lines(self) -> list[str]:
        """Human-readable summary, one item a line."""
        n, ny, nx = self.shape
        out = [f"{self.label}:",
               f"  grid: {ny} × {nx} cells (y × x), CRS {self.crs}, resolution "
               f"{self.resolution[0]:g} × {self.resolution[1]:g}",
               "  extent (left, bottom, right, top): " + ", ".join(f"{v:g}" for v in self.extent),
               f"  time: {self.time_start} to {self.time_end}, {n} days, calendar {self.calendar}"]
        for role in ROLES:
            lo, hi = self.value_range.get(role, (float("nan"), float("nan")))
            out.append(f"  {role}: variable '{self.variables.get(role, '?')}' in {self.files.get(role, '?')}, "
                       f"units {self.units.get(role, '?')} -> degC, range {lo:.1f} to {hi:.1f} °C, "
                       f"missing {100 * self.missing_share.get(role, float('nan')):.2f} %")
        out.append(f"  cell-days with Tmin > Tmax: {self.swapped_cell_days}")
        return out


def qa_summary(tmin: xr.DataArray, tmax: xr.DataArray, label: str) -> ClimateQA:
    """Compute the QA figures of a Tmin/Tmax pair in one dask pass."""
    tmax = _align_pair(tmin, tmax)
    total = int(np.prod(tmin.shape))
    swaps, nmin, nmax, lo_min, hi_min, lo_max, hi_max = dask.compute(
        (tmin > tmax).sum().data, tmin.isnull().sum().data, tmax.isnull().sum().data,
        tmin.min().data, tmin.max().data, tmax.min().data, tmax.max().data)
    _, _, res, bounds = _grid(tmin)
    return ClimateQA(
        label=label, shape=tuple(int(s) for s in tmin.shape), crs=_crs_text(tmin.rio.crs), extent=bounds,
        resolution=res, calendar=str(tmin.attrs.get("calendar", "?")),
        time_start=_iso(tmin.time.values[0]), time_end=_iso(tmin.time.values[-1]),
        **{key: {r: str(d.attrs.get(attr, "?")) for r, d in (("tmin", tmin), ("tmax", tmax))}
           for key, attr in (("variables", "source_variable"), ("units", "original_units"),
                             ("files", "source_files"))},
        swapped_cell_days=int(swaps),
        missing_share={"tmin": int(nmin) / total, "tmax": int(nmax) / total},
        value_range={"tmin": (float(lo_min), float(hi_min)), "tmax": (float(lo_max), float(hi_max))},
    )

"""Delta change of precipitation: the observed baseline times the model's monthly ratio.

Precipitation changes are applied as a ratio, not a difference (an additive
change could make rain negative): for each calendar month m and model cell,

    factor(m) = climatology(model future, m) / climatology(model historical, m)
    scenario(step, cell) = baseline(step, cell) × factor(month of step, cell)

(multiplicative change factors; Hay, Wilby & Leavesley 2000; Teutschbein &
Seibert 2012, "linear scaling" / delta change of precipitation).  The
climatology of a month is the mean precipitation rate (mm/day) over every step
of that calendar month, daily or monthly inputs alike.  Factors are always per
calendar month, whatever smoothing the temperatures use: a day-of-year ratio of
two sums of rare wet days is mostly sampling noise.

Guard against division by about zero (common practice, no single source):
where the model's historical month is drier than :data:`MIN_HIST_MM_PER_DAY`
(0.1 mm/day, about 3 mm in a month) the ratio is not defined and the factor is
1 (the observed month is kept); every factor is at most
:data:`MAX_FACTOR` (5), so a wet month following a nearly dry one in a model
cannot multiply the observed rain without bound.  The factors are computed on
the model grid and regridded bilinearly to the baseline grid.

References
----------
Hay, L.E., Wilby, R.L., Leavesley, G.H. (2000) A comparison of delta change and
downscaled GCM scenarios for three mountainous basins in the United States.
*Journal of the American Water Resources Association* 36(2): 387–397.

Teutschbein, C., Seibert, J. (2012) Bias correction of regional climate model
simulations for hydrological climate-change impact studies: review and
evaluation of different methods. *Journal of Hydrology* 456–457: 12–29.
"""

from __future__ import annotations

import numpy as np
import xarray as xr

from suitmap.climate.delta import _climatology, calendar_of
from suitmap.errors import GridMismatch, InputError
from suitmap.spatial.regrid import grid_description, grids_match, snap_to_grid

__all__ = ["MAX_FACTOR", "MIN_HIST_MM_PER_DAY", "apply_ratios", "monthly_ratios"]

#: A model month drier than this (mm/day) has no usable ratio: its factor is 1.
MIN_HIST_MM_PER_DAY = 0.1
#: The largest change factor applied.
MAX_FACTOR = 5.0


def _ratio(hist: np.ndarray, fut: np.ndarray) -> np.ndarray:
    with np.errstate(divide="ignore", invalid="ignore"):
        r = fut / hist
    r = np.where(hist < MIN_HIST_MM_PER_DAY, 1.0, np.minimum(r, MAX_FACTOR))
    return np.where(np.isnan(hist) | np.isnan(fut), np.nan, r)


def monthly_ratios(model_hist: xr.DataArray, model_future: xr.DataArray) -> xr.DataArray:
    """Monthly precipitation change factors (future / historical climatology) of one model.

    Parameters
    ----------
    model_hist, model_future : xarray.DataArray
        Precipitation in mm/day (daily or monthly steps, as
        :func:`suitmap.climate.precipitation.open_precipitation` gives), dims
        ``time, y, x``, on one grid and in one calendar.

    Returns
    -------
    xarray.DataArray
        Factors (1), float32, dims ``(month, y, x)`` with months 1–12, on the
        model grid, with the guard of the module docstring; lazy if the inputs are.

    Raises
    ------
    InputError
        Different calendars, or a calendar month without data.
    GridMismatch
        Historical and future grids differ.

    References
    ----------
    Hay, Wilby & Leavesley (2000); Teutschbein & Seibert (2012) (module docstring).
    """
    if calendar_of(model_hist) != calendar_of(model_future):
        raise InputError(f"model historical precipitation uses the {calendar_of(model_hist)} "
                         f"calendar but the future {calendar_of(model_future)}; give both "
                         "periods of one model")
    if not grids_match(model_hist, model_future):
        raise GridMismatch(f"model historical precipitation grid ({grid_description(model_hist)}) "
                           f"differs from the future grid ({grid_description(model_future)}); "
                           "give both periods on one grid")
    hist, _ = _climatology(model_hist.transpose("time", "y", "x"), "monthly",
                           "model historical precipitation")
    fut, _ = _climatology(model_future.transpose("time", "y", "x"), "monthly",
                          "model future precipitation")
    factor = xr.apply_ufunc(_ratio, hist.assign_coords(x=fut["x"], y=fut["y"]), fut,
                            dask="parallelized", output_dtypes=[np.float64])
    factor = factor.transpose("month", "y", "x").astype(np.float32)
    for c in ("x", "y"):
        factor[c].attrs = dict(model_future[c].attrs)
    if model_future.rio.crs is not None:
        factor = factor.rio.write_crs(model_future.rio.crs)
    factor.name = "delta_pr"
    files = [model_hist.attrs.get("source_files", ""), model_future.attrs.get("source_files", "")]
    factor.attrs = {"units": "1", "long_name": "monthly precipitation change factor (future / "
                    "historical climatology) of one climate model",
                    "guard": f"factor 1 where the historical month is below "
                             f"{MIN_HIST_MM_PER_DAY} mm/day; at most {MAX_FACTOR:g}",
                    "source_files": "; ".join(f for f in files if f)}
    return factor


def _scale_block(base: np.ndarray, factor: np.ndarray, idx: np.ndarray) -> np.ndarray:
    """base (time, y, x) × factor (…, y, x, 12) taken at each step's month index idx (time, 1, 1)."""
    full = np.broadcast_to(factor, base.shape + factor.shape[-1:])
    pick = np.broadcast_to(idx[..., None], base.shape + (1,))
    f = np.take_along_axis(full, pick, axis=-1)[..., 0]
    return (base.astype(np.float64) * f.astype(np.float64)).astype(np.float32)


def apply_ratios(baseline: xr.DataArray, factors: xr.DataArray) -> xr.DataArray:
    """Observed precipitation (mm/day, dims ``time, y, x``) times the monthly factors of
    :func:`monthly_ratios`, regridded bilinearly to the baseline grid; lazy, float32, in the
    baseline's own chunks (step by step: memory does not grow with the period)."""
    baseline = baseline.transpose("time", "y", "x")
    on_grid = snap_to_grid(factors.transpose("month", "y", "x"), baseline, kind="continuous")
    on_grid = on_grid.assign_coords(x=baseline["x"], y=baseline["y"])
    on_grid = on_grid.drop_vars([c for c in on_grid.coords if c not in ("month", "y", "x")])
    month = xr.DataArray(np.asarray(baseline["time"].dt.month.values, dtype=np.int64) - 1,
                         dims="time", coords={"time": baseline["time"]})
    if baseline.chunks is not None:
        ch = dict(zip(baseline.dims, baseline.chunks))
        on_grid = on_grid.chunk({"month": -1, "y": ch["y"], "x": ch["x"]})
        month = month.chunk({"time": ch["time"]})
    out = xr.apply_ufunc(_scale_block, baseline, on_grid, month,
                         input_core_dims=[[], ["month"], []], dask="parallelized",
                         output_dtypes=[np.float32], keep_attrs=False)
    out = out.transpose("time", "y", "x")
    out.name = baseline.name
    for c in ("x", "y", "time"):
        out[c].attrs = dict(baseline[c].attrs)
    if baseline.rio.crs is not None:
        out = out.rio.write_crs(baseline.rio.crs)
    out.attrs = dict(baseline.attrs)
    files = [baseline.attrs.get("source_files", ""), factors.attrs.get("source_files", "")]
    out.attrs.update({
        "suitmap_downscaling": "multiplicative delta change: observed precipitation times the "
                               "model's future / historical monthly climatology, factors "
                               "regridded bilinearly (" + factors.attrs.get("guard", "") + ")",
        "source_files": "; ".join(dict.fromkeys(f for f in "; ".join(files).split("; ") if f)),
    })
    return out

"""Daily degree-days on numpy arrays, scalars or (lazy) xarray objects.

A thin layer over :func:`suitmap.kernels.degree_days.degree_days`: xarray
inputs are mapped with ``xr.apply_ufunc(..., dask="parallelized")`` and get
CF attributes; for the double methods the next day's minimum is taken from
the ``time`` axis when not given.
"""

from __future__ import annotations

import numpy as np
import xarray as xr

from .kernels import degree_days as _k


def _next_day_min(tmin: xr.DataArray) -> xr.DataArray:
    """Tmin of the following day; the last day uses its own minimum."""
    nxt = xr.concat([tmin.isel(time=slice(1, None)), tmin.isel(time=[-1])], dim="time")
    return nxt.assign_coords(time=tmin["time"])


def degree_days(tmin, tmax, lower: float, upper: float, *, method: str = "single_sine",
                cutoff: str = "horizontal", tmin_next=None):
    """Daily degree-days (°C·day) between a lower and an upper threshold.

    Parameters
    ----------
    tmin, tmax : array_like or xarray.DataArray
        Daily minimum and maximum temperature (°C), ``tmin <= tmax``.
    lower, upper : float
        Lower and upper developmental thresholds (°C), ``lower < upper``.
    method : str
        ``average``, ``modified_average``, ``single_triangle``,
        ``double_triangle``, ``single_sine`` or ``double_sine``.
    cutoff : str
        ``horizontal``, ``vertical`` or ``intermediate``.
    tmin_next : array_like or xarray.DataArray, optional
        Next day's minimum, used by the double methods.  For a DataArray with
        a ``time`` dimension it defaults to the next day along ``time``;
        otherwise to ``tmin``.

    Returns
    -------
    numpy.ndarray, float or xarray.DataArray
        Degree-days per day, float64; NaN where any input is NaN.

    References
    ----------
    See :mod:`suitmap.kernels.degree_days` (Baskerville & Emin 1969; Allen
    1976; Zalom et al. 1983; McMaster & Wilhelm 1997).
    """
    if not isinstance(tmin, xr.DataArray) and not isinstance(tmax, xr.DataArray):
        out = _k.degree_days(tmin, tmax, lower, upper, method=method, cutoff=cutoff,
                             tmin_next=tmin_next)
        return float(out) if np.ndim(out) == 0 else out
    if method.startswith("double") and tmin_next is None and isinstance(tmin, xr.DataArray) \
            and "time" in tmin.dims:
        tmin_next = _next_day_min(tmin)
    if tmin_next is None:
        tmin_next = tmin

    def _apply(a, b, c):
        return _k.degree_days(a, b, lower, upper, method=method, cutoff=cutoff, tmin_next=c)

    out = xr.apply_ufunc(_apply, tmin, tmax, tmin_next, dask="parallelized",
                         output_dtypes=[np.float64])
    out.name = "degree_days"
    out.attrs = {
        "units": "K d",
        "long_name": f"daily degree-days between {lower} and {upper} degC "
                     f"({method}, {cutoff} cutoff)",
        "standard_name": "integral_wrt_time_of_air_temperature_excess",
        "cell_methods": "time: sum",
    }
    return out

"""Daily degree-days on numpy arrays, scalars or (lazy) xarray objects.

A thin layer over :func:`suitmap.kernels.degree_days.degree_days`: xarray
inputs are mapped with ``xr.apply_ufunc(..., dask="parallelized")`` and get
CF attributes; for the double methods the next day's minimum is taken from
the ``time`` axis when not given.  ``diurnal="parton_logan"`` integrates the
Parton & Logan (1981) day instead
(:mod:`suitmap.kernels.degree_days_diurnal`).
"""

from __future__ import annotations

import numpy as np
import xarray as xr

from suitmap.kernels import degree_days as _k


def _named(out: xr.DataArray, lower: float, upper: float, how: str) -> xr.DataArray:
    """Name and CF attributes of a daily degree-day DataArray."""
    out.name = "degree_days"
    out.attrs = {
        "units": "K d",
        "long_name": f"daily degree-days between {lower} and {upper} degC ({how})",
        "standard_name": "integral_wrt_time_of_air_temperature_excess",
        "cell_methods": "time: sum",
    }
    return out


def _next_day_min(tmin: xr.DataArray) -> xr.DataArray:
    """Tmin of the following day; the last day uses its own minimum."""
    nxt = xr.concat([tmin.isel(time=slice(1, None)), tmin.isel(time=[-1])], dim="time")
    return nxt.assign_coords(time=tmin["time"])


def degree_days(tmin, tmax, lower: float, upper: float, *, method: str = "single_sine",
                cutoff: str = "horizontal", tmin_next=None, diurnal: str | None = None,
                lat=None, doy=None):
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
        Next day's minimum, used by the double methods and by the
        Parton-Logan night.  For a DataArray with a ``time`` dimension it
        defaults to the next day along ``time`` (the last day: its own);
        otherwise to ``tmin``.
    diurnal : {None, "parton_logan"}
        None (default): the day is the curve of ``method``.
        ``"parton_logan"``: the day is the Parton & Logan (1981) curve (day
        sine from sunrise to sunset, exponential night toward ``tmin_next``)
        integrated in closed form, a cross-check of the sine methods; the
        curve replaces the method, so ``method`` must be left at its default
        (anything else raises ValueError).  See
        :mod:`suitmap.kernels.degree_days_diurnal`.
    lat, doy : array_like or xarray.DataArray, optional
        Latitude (degrees north) and day of year (1 = 1 January) for the
        Parton-Logan daylength (Forsythe et al. 1995); unused otherwise.
        numpy input: both required, broadcast against the temperatures.
        DataArray input: a scalar or a DataArray (aligned by dimension name);
        by default ``lat`` is the ``lat`` or ``latitude`` coordinate and
        ``doy`` is ``time.dt.dayofyear``.

    Returns
    -------
    numpy.ndarray, float or xarray.DataArray
        Degree-days per day, float64; NaN where any input is NaN.

    Raises
    ------
    ValueError
        Unknown method, cutoff or diurnal curve; a method other than the
        default with ``diurnal``; missing ``lat``/``doy`` for the daylength.

    References
    ----------
    See :mod:`suitmap.kernels.degree_days` (Baskerville & Emin 1969; Allen
    1976; Zalom et al. 1983; McMaster & Wilhelm 1997) and
    :mod:`suitmap.kernels.degree_days_diurnal` (Parton & Logan 1981).
    """
    if diurnal is not None:
        return _degree_days_diurnal(tmin, tmax, lower, upper, method, cutoff, tmin_next,
                                    diurnal, lat, doy)
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
    return _named(out, lower, upper, f"{method}, {cutoff} cutoff")


def _xr_daylength_input(value, ref: xr.DataArray, what: str):
    """``lat``/``doy`` for a DataArray run: a scalar or DataArray as given, else
    from ``ref``'s coordinates (lat/latitude, time.dt.dayofyear)."""
    if value is None:
        if what == "lat":
            for name in ("lat", "latitude"):
                if name in ref.coords:
                    return ref.coords[name]
            raise ValueError("diurnal='parton_logan' needs lat: the temperatures have no "
                             "'lat' or 'latitude' coordinate; pass lat= (degrees north)")
        if "time" in ref.coords:
            return ref["time"].dt.dayofyear
        raise ValueError("diurnal='parton_logan' needs doy: the temperatures have no "
                         "'time' coordinate; pass doy= (day of year, 1 = 1 January)")
    if isinstance(value, xr.DataArray) or np.ndim(value) == 0:
        return value
    raise ValueError(f"{what} for DataArray temperatures must be a scalar or a DataArray "
                     "with named dimensions, not a bare array")


def _degree_days_diurnal(tmin, tmax, lower, upper, method, cutoff, tmin_next, diurnal,
                         lat, doy):
    """``degree_days`` over a diurnal curve (Parton & Logan 1981)."""
    from suitmap.kernels.degree_days_diurnal import degree_days_parton_logan as _pl
    from suitmap.kernels.diurnal import daylength as _daylength

    if diurnal != "parton_logan":
        raise ValueError(f"unknown diurnal curve {diurnal!r}; use 'parton_logan' or None")
    if method != "single_sine":
        raise ValueError(f"diurnal='parton_logan' replaces the degree-day method; leave "
                         f"method at its default instead of {method!r}")
    _k._check_code(cutoff, _k.CUTOFFS, "cutoff")
    if not isinstance(tmin, xr.DataArray) and not isinstance(tmax, xr.DataArray):
        if lat is None or doy is None:
            raise ValueError("diurnal='parton_logan' needs lat (degrees north) and doy "
                             "(day of year) for the daylength")
        out = _pl(tmin, tmax, tmin_next, _daylength(lat, doy), lower, upper, cutoff=cutoff)
        return float(out) if np.ndim(out) == 0 else out
    ref = tmin if isinstance(tmin, xr.DataArray) else tmax
    if tmin_next is None:
        tmin_next = (_next_day_min(tmin) if isinstance(tmin, xr.DataArray)
                     and "time" in tmin.dims else tmin)
    lat = _xr_daylength_input(lat, ref, "lat")
    doy = _xr_daylength_input(doy, ref, "doy")
    dl = xr.apply_ufunc(_daylength, lat, doy, dask="parallelized",
                        output_dtypes=[np.float64])

    def _apply(a, b, c, d):
        return _pl(a, b, c, d, lower, upper, cutoff=cutoff)

    out = xr.apply_ufunc(_apply, tmin, tmax, tmin_next, dl, dask="parallelized",
                         output_dtypes=[np.float64])
    return _named(out, lower, upper, f"Parton-Logan day, {cutoff} cutoff")


def development_rate(temp, model: str, **params):
    """Development rate (1/day) of a published rate curve at temperature ``temp`` (°C).

    Elementwise on scalars, numpy arrays or xarray objects; 0 outside the
    curve's limits.  See :mod:`suitmap.kernels.rates` for the models and their
    references.
    """
    from suitmap.kernels.rates import development_rate as _rate

    if isinstance(temp, xr.DataArray):
        out = xr.apply_ufunc(lambda t: _rate(t, model, **params), temp, dask="parallelized",
                             output_dtypes=[np.float64])
        out.attrs = {"units": "d-1", "long_name": f"development rate ({model})"}
        return out
    out = _rate(temp, model, **params)
    return float(out) if np.ndim(out) == 0 else out


def daily_development(tmin, tmax, model: str, params: dict, *, diurnal: str = "sine",
                      lat=None, doy=None, tmin_next=None):
    """Development per day (fraction of a generation) by rate summation.

    The rate curve ``model`` with ``params`` is integrated over the day's
    temperature curve between ``tmin`` and ``tmax``: a symmetric sine
    (``diurnal="sine"``), or Parton & Logan (1981) (``"parton_logan"``), whose
    daylength comes from latitude ``lat`` (degrees north) and day of year
    ``doy`` (Forsythe et al. 1995) and whose night decays toward ``tmin_next``
    (default: ``tmin``).

    References
    ----------
    See :mod:`suitmap.kernels.development` and :mod:`suitmap.kernels.diurnal`.
    """
    from suitmap.kernels.development import daily_development as _dev
    from suitmap.kernels.diurnal import daylength as _daylength

    daylength = None
    if diurnal == "parton_logan":
        if lat is None or doy is None:
            raise ValueError("diurnal='parton_logan' needs lat and doy for the daylength")
        daylength = _daylength(lat, doy)
    if isinstance(tmin, xr.DataArray) or isinstance(tmax, xr.DataArray):
        nxt = tmin if tmin_next is None else tmin_next
        dl = xr.zeros_like(tmin) + (12.0 if daylength is None else daylength)

        def _apply(a, b, c, d):
            return _dev(a, b, model, params, diurnal=diurnal, daylength=d, tmin_next=c)

        out = xr.apply_ufunc(_apply, tmin, tmax, nxt, dl, dask="parallelized",
                             output_dtypes=[np.float64])
        out.attrs = {"units": "1", "long_name": f"daily development ({model}, {diurnal} day)"}
        return out
    out = _dev(tmin, tmax, model, params, diurnal=diurnal, daylength=daylength,
               tmin_next=tmin_next)
    return float(out) if np.ndim(out) == 0 else out

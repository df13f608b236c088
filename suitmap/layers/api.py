"""Daily degree-days on numpy arrays, scalars or (lazy) xarray objects.

A thin layer over :func:`suitmap.kernels.degree_days.degree_days`: xarray
inputs are mapped with ``xr.apply_ufunc(..., dask="parallelized")`` and get
CF attributes; for the double methods the next day's minimum is taken from
the ``time`` axis when not given.  ``diurnal="parton_logan"`` integrates the
Parton & Logan (1981) day instead
(:mod:`suitmap.kernels.degree_days_diurnal`).

``fast=True`` (default) runs the same fast kernels as the pipeline's
``[compute] fast_tables = true`` and states the same accuracy: the single
and double sine degree-days in float32 arithmetic (within about 1e-5
°C·day per day of the float64 formulas), rate summation over a
precomputed table (within 1e-3 of the exact daily integral; cells the
table does not cover are integrated exactly).  ``fast=False`` is the exact
float64 route.  Output precision follows the input: float32 temperatures
give float32 results unless ``dtype`` asks otherwise.
"""

from __future__ import annotations

import numpy as np
import xarray as xr

from suitmap.kernels import degree_days as _k

_FAST_DD = ("single_sine", "double_sine")


def _out_dtype(dtype, *arrays) -> np.dtype:
    """float32 when every temperature input is float32 (and no dtype is asked), else float64."""
    if dtype is not None:
        dt = np.dtype(dtype)
        if dt not in (np.float32, np.float64):
            raise ValueError(f"dtype must be float32 or float64, not {dt}")
        return dt
    kinds = [np.asarray(a).dtype if not isinstance(a, xr.DataArray) else a.dtype
             for a in arrays if a is not None]
    return np.dtype(np.float32) if kinds and all(k == np.float32 for k in kinds) \
        else np.dtype(np.float64)


def _fast_degree_days(a, b, c, lower: float, upper: float, method: str, cutoff: str):
    """Degree-days by the pipeline's fast route (float32 sines), float64 out."""
    table = _dd_table(lower, upper, method, cutoff)
    a, b = np.broadcast_arrays(np.asarray(a), np.asarray(b))
    c = None if c is None else np.broadcast_to(np.asarray(c), a.shape)
    shape = a.shape
    if not shape:
        a, b = a.reshape(1), b.reshape(1)
        c = None if c is None else c.reshape(1)
    a = np.ascontiguousarray(a, dtype=np.float32 if a.dtype == np.float32 else np.float64)
    b = np.ascontiguousarray(b, dtype=a.dtype)
    c = None if c is None else np.ascontiguousarray(c, dtype=a.dtype)
    return table.evaluate(a, b, tmin_next=c).reshape(shape)


def _dd_table(lower: float, upper: float, method: str, cutoff: str):
    from suitmap.kernels.tables import degree_day_table

    return degree_day_table(float(lower), float(upper), method, cutoff)


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
                lat=None, doy=None, fast: bool = True, dtype=None):
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
    fast : bool
        True (default): the single and double sine in float32 arithmetic, the
        pipeline's fast route (within about 1e-5 °C·day per day of the exact
        formulas; the other methods are exact either way).  False: the
        float64 closed forms.
    dtype : {None, numpy.float32, numpy.float64}
        Output type; None: float32 when the temperatures are float32, else
        float64.

    Returns
    -------
    numpy.ndarray, float or xarray.DataArray
        Degree-days per day; NaN where any input is NaN.

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
    out_dt = _out_dtype(dtype, tmin, tmax, tmin_next)
    use_fast = fast and method in _FAST_DD
    if use_fast:   # validates names and thresholds as the exact route does
        _k._check_code(method, _k.METHODS, "method")
        _k._check_code(cutoff, _k.CUTOFFS, "cutoff")

    def _apply(a, b, c):
        if use_fast:
            r = _fast_degree_days(a, b, c, lower, upper, method, cutoff)
        else:
            r = _k.degree_days(a, b, lower, upper, method=method, cutoff=cutoff, tmin_next=c)
        return np.asarray(r).astype(out_dt, copy=False)

    if not isinstance(tmin, xr.DataArray) and not isinstance(tmax, xr.DataArray):
        out = _apply(tmin, tmax, tmin_next)
        return float(out) if np.ndim(out) == 0 else out
    if method.startswith("double") and tmin_next is None and isinstance(tmin, xr.DataArray) \
            and "time" in tmin.dims:
        tmin_next = _next_day_min(tmin)
    if tmin_next is None:
        tmin_next = tmin
    out = xr.apply_ufunc(_apply, tmin, tmax, tmin_next, dask="parallelized",
                         output_dtypes=[out_dt])
    how = f"{method}, {cutoff} cutoff" + (", float32 arithmetic" if use_fast else "")
    return _named(out, lower, upper, how)


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
                      lat=None, doy=None, tmin_next=None, fast: bool = True, dtype=None):
    """Development per day (fraction of a generation) by rate summation.

    The rate curve ``model`` with ``params`` is integrated over the day's
    temperature curve between ``tmin`` and ``tmax``: a symmetric sine
    (``diurnal="sine"``), or Parton & Logan (1981) (``"parton_logan"``), whose
    daylength comes from latitude ``lat`` (degrees north) and day of year
    ``doy`` (Forsythe et al. 1995) and whose night decays toward ``tmin_next``
    (default: ``tmin``).

    ``fast=True`` (default) reads the pipeline's precomputed table of the
    daily integral (within 1e-3 of the exact integral; built once per
    process and kept on disk, see the README's ``fast_tables``; for the
    Parton-Logan day the table spans the day lengths of ``lat``/``doy``);
    ``fast=False`` integrates every day exactly.  ``dtype``: as for
    :func:`degree_days`.

    References
    ----------
    See :mod:`suitmap.kernels.development` and :mod:`suitmap.kernels.diurnal`.
    """
    from suitmap.kernels.development import daily_development as _dev
    from suitmap.kernels.diurnal import daylength as _daylength
    from suitmap.kernels.rates import validate_params

    validate_params(model, params)
    out_dt = _out_dtype(dtype, tmin, tmax, tmin_next)
    daylength = None
    if diurnal == "parton_logan":
        if lat is None or doy is None:
            raise ValueError("diurnal='parton_logan' needs lat and doy for the daylength")
        daylength = _daylength(lat, doy)
    table = _api_table(model, params, diurnal, daylength) if fast else None

    def _apply(a, b, c, d):
        if table is not None:
            a, b = np.broadcast_arrays(np.asarray(a), np.asarray(b))
            shape = a.shape
            flat = [np.ascontiguousarray(x, dtype=a.dtype if a.dtype == np.float32 else np.float64)
                    .reshape(-1) for x in (a, b)]
            c = flat[0] if c is None else np.ascontiguousarray(
                np.broadcast_to(c, shape), dtype=flat[0].dtype).reshape(-1)
            d = None if d is None else np.ascontiguousarray(
                np.broadcast_to(d, shape), dtype=np.float64).reshape(-1)
            r = table.evaluate(flat[0], flat[1], tmin_next=c, daylength=d).reshape(shape)
        else:
            r = _dev(a, b, model, params, diurnal=diurnal, daylength=d, tmin_next=c)
        return np.asarray(r).astype(out_dt, copy=False)

    if isinstance(tmin, xr.DataArray) or isinstance(tmax, xr.DataArray):
        nxt = tmin if tmin_next is None else tmin_next
        dl = xr.zeros_like(tmin) + (12.0 if daylength is None else daylength)
        out = xr.apply_ufunc(_apply, tmin, tmax, nxt, dl, dask="parallelized",
                             output_dtypes=[out_dt])
        route = "table" if table is not None else "exact"
        out.attrs = {"units": "1",
                     "long_name": f"daily development ({model}, {diurnal} day, {route})"}
        return out
    out = _apply(tmin, tmax, tmin_next, daylength)
    return float(out) if np.ndim(out) == 0 else out


def _api_table(model: str, params: dict, diurnal: str, daylength):
    """The pipeline's fast table for this curve (None: integrate exactly).

    Parton-Logan: tables over the day lengths given, rounded outward to
    0.01 h as in the pipeline; none when every day is shorter than about 4 h
    (polar), where the exact integral is used."""
    import math

    from suitmap.layers.daily_rates import _built_table

    key = tuple(sorted((k, float(v)) for k, v in params.items()))
    if diurnal == "sine":
        return _built_table(model, key, "sine", None)
    if diurnal != "parton_logan":
        raise ValueError(f"unknown diurnal curve {diurnal!r}; use 'sine' or 'parton_logan'")
    dl = np.asarray(daylength, dtype=float)
    lo, hi = float(np.nanmin(dl)), float(np.nanmax(dl))
    if not hi >= 4.0:    # as the pipeline: days the table does not span are integrated exactly
        return None
    return _built_table(model, key, "parton_logan",
                        (math.floor(lo * 100) / 100, math.ceil(hi * 100) / 100))

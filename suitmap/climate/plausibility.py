"""Plausibility of temperature inputs: impossible values refused, suspicious ones refused unless accepted.

Every file of every temperature input is checked as it is opened (``check`` and
``run`` alike), on the values as stored (after ``_FillValue``/packing decoding,
before the conversion to °C), with one fused dask pass of cheap reductions
(count of missing and infinite values, minimum, maximum, mean, counts beyond
the limits below).  **Cost:** one extra read of each input file, streamed chunk
by chunk (memory bounded by the chunk size); the same pass surfaces data that
cannot be decoded (a corrupt compressed chunk) as an :class:`InputError`
naming the file, before any output is written.

Limits on daily near-surface air temperature (°C), from the observed extremes:

* the WMO-recognised world records are −89.2 °C (Vostok, Antarctica,
  21 July 1983) and +56.7 °C (Furnace Creek, Death Valley, 10 July 1913)
  (WMO World Weather and Climate Extremes Archive, https://wmo.asu.edu/;
  El Fadli et al., 2013, Bull. Amer. Meteor. Soc. 94, 199-204, for the
  assessment that set the hot record);
* **impossible** (always refused): any value below :data:`IMPOSSIBLE_LOW`
  (−95 °C) or above :data:`IMPOSSIBLE_HIGH` (+65 °C), about 6–8 °C beyond
  the records to leave room for gridding and model error, or ±inf.  Such
  values are almost always a units, scale or missing-value mistake, and the
  message says which one it looks like (an undeclared fill such as −9999,
  integer tenths of a degree without ``scale_factor``, "K" on °C values or
  the reverse);
* **suspicious** (refused unless the run file says ``[compute]
  accept_implausible = true``): values beyond the records but inside the
  limits above (possible in bias-affected model output or far-future
  scenarios, so the user may accept them), and a variable with no valid
  value at all.

Units that contradict the values are judged from the mean: a mean below
:data:`KELVIN_FLOOR` (150) in a file that says kelvin cannot be kelvin (the
coldest mean is above 200 K), and a mean above it in a file that says °C or
°F cannot be either.
"""

from __future__ import annotations

import dask
import dask.array as dsa
import numpy as np
import xarray as xr

from suitmap.errors import InputError

__all__ = ["IMPOSSIBLE_HIGH", "IMPOSSIBLE_LOW", "RECORD_HIGH", "RECORD_LOW", "check_coordinates",
           "check_values"]

RECORD_LOW = -89.2     # °C, Vostok 1983 (WMO archive)
RECORD_HIGH = 56.7     # °C, Death Valley 1913 (WMO archive)
IMPOSSIBLE_LOW = -95.0   # °C, below the record with room for gridding error
IMPOSSIBLE_HIGH = 65.0   # °C, above the record with room for gridding error
KELVIN_FLOOR = 150.0   # a mean below this is not a near-surface temperature in kelvin
#: Common undeclared missing-value markers (compared with the stored values).
FILL_VALUES = (-9999.0, -999.0, -999.9, -99.9, -99.0, -32768.0, 32767.0, 9999.0, 999.0,
               -3.4028235e38, 3.4028235e38, 9.96921e36, 1e20, -1e20, 1e30, -1e30)
OVERRIDE = "[compute] accept_implausible = true"


def _to_raw(celsius: float, units: str) -> float:
    """A °C limit in the stored units (K, degC, degF); increasing, so order is kept."""
    if units == "K":
        return celsius + 273.15  # SI Brochure, 9th ed., 2019
    if units == "degF":
        return celsius * 1.8 + 32.0  # NIST SP 811, 2008
    return celsius


def _to_celsius(raw: float, units: str) -> float:
    if units == "K":
        return raw - 273.15
    if units == "degF":
        return (raw - 32.0) / 1.8
    return raw


def _fill_like(value: float) -> float | None:
    for f in FILL_VALUES:
        if np.isclose(value, f, rtol=1e-5, atol=0.0):
            return f
    return None


def _statistics(da: xr.DataArray, units: str, where: str) -> dict:
    x = da.data if isinstance(da.data, dsa.Array) else dsa.from_array(np.asarray(da.data))
    x = x.astype("float64")
    finite = dsa.isfinite(x)
    fx = dsa.where(finite, x, np.nan)
    lims = {k: _to_raw(v, units) for k, v in (("lo", IMPOSSIBLE_LOW), ("hi", IMPOSSIBLE_HIGH),
                                              ("rlo", RECORD_LOW), ("rhi", RECORD_HIGH))}
    parts = dict(
        n_nan=dsa.isnan(x).sum(), n_inf=dsa.isinf(x).sum(), n_finite=finite.sum(),
        lo=dsa.nanmin(fx), hi=dsa.nanmax(fx), total=dsa.nansum(fx),
        n_low=(fx < lims["lo"]).sum(), n_high=(fx > lims["hi"]).sum(),
        n_rlow=(fx < lims["rlo"]).sum(), n_rhigh=(fx > lims["rhi"]).sum())
    try:
        import warnings

        with warnings.catch_warnings():
            warnings.simplefilter("ignore", RuntimeWarning)  # all-NaN slices
            values = dask.compute(parts)[0]
    except Exception as exc:  # noqa: BLE001 - netCDF4/HDF5/GDAL raise many kinds on bad data
        first = (str(exc).splitlines() or [""])[0][:200]
        raise InputError(f"{where}: its values cannot be read ({type(exc).__name__}: {first}); "
                         "the file is corrupt or truncated, check or re-download it") from None
    out = {k: float(v) for k, v in values.items()}
    out["size"] = int(np.prod(da.shape))
    return out


def check_values(da: xr.DataArray, units: str, where: str, *, stored_integer: bool = False,
                 accept_suspicious: bool = False) -> dict:
    """Refuse physically impossible (and, unless accepted, suspicious) temperatures.

    Parameters
    ----------
    da : xarray.DataArray
        The values as stored in one file (decoded, not yet converted), lazy or not.
    units : {"K", "degC", "degF"}
        Canonical units of ``da``.
    where : str
        File and variable, for the message.
    stored_integer : bool
        The file stores integers without a ``scale_factor`` (adds a hint on tenths).
    accept_suspicious : bool
        Let values beyond the observed records (but inside the impossible limits)
        and all-missing variables pass.

    Returns
    -------
    dict
        The statistics computed (stored units).

    Raises
    ------
    InputError
        One line naming the file and variable, the count and an example, and what to do.
    """
    s = _statistics(da, units, where)
    n_finite = int(s["n_finite"])
    if s["n_inf"]:
        raise InputError(f"{where}: {int(s['n_inf'])} infinite value(s); mark missing values as "
                         "_FillValue/nodata or repair the file")
    n_bad = int(s["n_low"] + s["n_high"])
    example = s["lo"] if s["n_low"] else s["hi"]
    head = (f"{where}: {n_bad} value(s) outside the physically possible {IMPOSSIBLE_LOW:g} to "
            f"{IMPOSSIBLE_HIGH:g} °C (e.g. {example:g} {units}"
            + ("" if units == "degC" else f" = {_to_celsius(example, units):.4g} °C") + ")")
    fill = _fill_like(example) if n_bad else None
    if fill is not None:
        raise InputError(f"{head}; {fill:g} looks like an undeclared missing-value marker: "
                         "declare it as _FillValue (NetCDF) or nodata (GeoTIFF)")
    if n_bad and stored_integer and _to_celsius(s["lo"] / 10, units) >= RECORD_LOW \
            and _to_celsius(s["hi"] / 10, units) <= RECORD_HIGH:
        raise InputError(f"{head}; integers without scale_factor that look like tenths of a "
                         "degree: add scale_factor = 0.1 to the variable")
    if n_finite:
        mean = s["total"] / n_finite
        if units == "K" and mean < KELVIN_FLOOR:
            raise InputError(f"{where}: units say K but the values (mean {mean:.1f}) look like °C or °F; "
                             "fix the units attribute")
        if units in ("degC", "degF") and mean > KELVIN_FLOOR:
            raise InputError(f"{where}: units say {units} but the values (mean {mean:.1f}) look like "
                             "kelvin; fix the units attribute (units = 'K')")
    if n_bad:
        raise InputError(f"{head}; check the units and the missing-value marking of the file")
    if accept_suspicious:
        return s
    if not n_finite:
        raise InputError(f"{where}: no valid value at all (every value missing); check the file and "
                         f"its _FillValue, or set {OVERRIDE} in the run file to use it anyway")
    n_rec = int(s["n_rlow"] + s["n_rhigh"])
    if n_rec:
        example = s["lo"] if s["n_rlow"] else s["hi"]
        raise InputError(f"{where}: {n_rec} value(s) beyond the observed world records "
                         f"{RECORD_LOW:g} to {RECORD_HIGH:g} °C (e.g. {_to_celsius(example, units):.4g} °C); "
                         f"check the data, or set {OVERRIDE} in the run file to use them anyway")
    return s


def check_coordinates(x, y, geographic: bool, where: str) -> None:
    """Refuse latitudes beyond ±90° and longitudes beyond −180…360 on a geographic grid."""
    if not geographic:
        return
    y, x = np.asarray(y, float), np.asarray(x, float)
    if not (np.all(np.isfinite(y)) and np.all(np.isfinite(x))):
        raise InputError(f"{where}: coordinates hold missing or infinite values; repair the grid")
    if np.abs(y).max() > 90.0:
        raise InputError(f"{where}: latitude {y[np.argmax(np.abs(y))]:g} is beyond ±90°; "
                         "the coordinates are not latitude/longitude, give the file its CRS")
    if x.min() < -180.0 or x.max() > 360.0:
        bad = x.min() if x.min() < -180.0 else x.max()
        raise InputError(f"{where}: longitude {bad:g} is outside −180 to 360°; "
                         "the coordinates are not latitude/longitude, give the file its CRS")

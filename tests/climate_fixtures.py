"""Writers of small daily climate files for tests (NetCDF and GeoTIFF).

They use netCDF4, pyproj and rasterio directly, not suitmap nor xarray, so that
what suitmap reads is checked against an independent writer.

Grid convention of every helper: ``data`` has shape ``(time, y, x)`` with row 0
the northern-most row and column 0 the western-most column (north-up), values in
°C.  ``lon0``/``lat0`` are the west and north *edges* of the grid (in CRS units:
degrees for latitude/longitude, metres for most projected CRSs) and ``res`` the
cell size, so the centre of cell (j, i) is ``(lon0 + (i + 0.5) * res,
lat0 - (j + 0.5) * res)``.  The layout *inside the file* (south-up, 0–360
longitudes) is changed by options; the physical field stays the same, so two
files written from the same ``data`` are twins.
"""

from __future__ import annotations

import datetime as dt
from pathlib import Path

import cftime
import netCDF4
import numpy as np
import rasterio
from pyproj import CRS
from affine import Affine

__all__ = ["cell_centres", "daily_dates", "from_celsius", "make_tmin_tmax",
           "write_geotiff_daily", "write_netcdf_daily"]


def from_celsius(data_c, units: str | None) -> np.ndarray:
    """Express °C values in ``units`` (spellings of K, °C or °F); None or other units: unchanged."""
    key = (units or "").strip().lower().replace(" ", "_")
    data = np.asarray(data_c, dtype="float64")
    if key in ("k", "kelvin", "degk", "deg_k", "degree_k", "degrees_k", "°k", "degree_kelvin"):
        return data + 273.15  # T/K = t/°C + 273.15 (SI Brochure, 9th ed., 2019)
    if key in ("degf", "deg_f", "°f", "f", "fahrenheit", "degree_f", "degrees_f", "degree_fahrenheit",
               "degrees_fahrenheit"):
        return data * 1.8 + 32.0  # t/°F = 1.8 t/°C + 32 (NIST SP 811, 2008)
    return data


def daily_dates(start: str, n: int, calendar: str = "standard", step_hours: float = 24.0) -> list:
    """``n`` cftime dates from ISO ``start`` every ``step_hours`` in ``calendar``."""
    y, m, d = (int(v) for v in start.split("-"))
    t0 = cftime.datetime(y, m, d, calendar=calendar)
    return [t0 + dt.timedelta(hours=step_hours * k) for k in range(n)]


def cell_centres(n: int, edge: float, res: float, descending: bool = False) -> np.ndarray:
    """Centres of ``n`` cells of size ``res`` from ``edge`` (towards lower values if ``descending``)."""
    k = np.arange(n) + 0.5
    return edge - k * res if descending else edge + k * res


def make_tmin_tmax(n_days: int, ny: int = 4, nx: int = 5, *, mean: float = 12.0,
                   annual_amplitude: float = 10.0, daily_range: float = 8.0, seed: int = 0):
    """Plausible daily (Tmin, Tmax) arrays in °C, shape (n_days, ny, nx), Tmin < Tmax everywhere."""
    rng = np.random.default_rng(seed)
    day = np.arange(n_days)[:, None, None]
    season = mean - annual_amplitude * np.cos(2 * np.pi * (day - 15) / 365.0)
    field = np.linspace(-2.0, 2.0, ny * nx).reshape(1, ny, nx)
    noise = rng.normal(0.0, 1.0, (n_days, ny, nx))
    centre = season + field + noise
    half = daily_range / 2 + np.abs(rng.normal(0.0, 0.5, (n_days, ny, nx)))
    return (centre - half).astype("float32"), (centre + half).astype("float32")


def write_netcdf_daily(path, data, *, var: str = "tmin", role: str | None = None,
                       units: str | None = "degC", calendar: str = "standard", start: str = "2001-01-01",
                       lon0: float = -2.0, lat0: float = 50.0, res: float = 1.0,
                       lon_0_360: bool = False, south_up: bool = False, standard_name: bool = True,
                       crs: str | None = None, xy_names: tuple[str, str] | None = None,
                       step_hours: float = 24.0, packed: bool = False,
                       extra_vars: dict | None = None, dtype: str = "f4",
                       write_grid_mapping: bool = True) -> Path:
    """Write ``data`` (time, y, x; °C, north-up) as one CF-style NetCDF variable.

    Parameters
    ----------
    var : variable name; ``role`` ("tmin"/"tmax") chooses the cell_methods and
        defaults to "tmax" when ``var`` contains "max" or "tx", else "tmin".
    units : units attribute; the values are converted from °C into it
        (K, °C or °F spellings); None writes no units attribute.
    calendar, start, step_hours : time axis, "days since <start>" in ``calendar``.
    lon0, lat0, res : west/north edges and cell size, in CRS units.
    lon_0_360 : store longitudes as 0–360 (columns re-sorted ascending).
    south_up : store rows south to north (latitude ascending).
    standard_name : write standard_name = air_temperature and cell_methods.
    crs : None: a latitude/longitude grid without grid mapping; otherwise a CRS
        (e.g. "EPSG:4326", "EPSG:3035") written as a CF grid-mapping variable
        (pyproj ``to_cf``) unless ``write_grid_mapping`` is False.
    xy_names : coordinate/dimension names (x, y); default ("lon", "lat") for
        geographic grids and ("x", "y") for projected ones.
    packed : store int16 with scale_factor/add_offset and a _FillValue (NaN in
        ``data`` become the fill value); otherwise NaN is written as _FillValue.
    extra_vars : other (time, y, x) variables, name -> array in °C, written in the
        same ``units`` but without standard_name/cell_methods.
    """
    path = Path(path)
    data = np.asarray(data, dtype="float64")
    nt, ny, nx = data.shape
    role = role or ("tmax" if ("max" in var.lower() or "tx" in var.lower()) else "tmin")
    geographic = crs is None or CRS.from_user_input(crs).is_geographic
    xname, yname = xy_names or (("lon", "lat") if geographic else ("x", "y"))
    x = cell_centres(nx, lon0, res)
    y = cell_centres(ny, lat0, res, descending=True)
    values = from_celsius(data, units)
    extras = {k: from_celsius(v, units) for k, v in (extra_vars or {}).items()}
    if lon_0_360:
        order = np.argsort(x % 360.0, kind="stable")
        x = (x % 360.0)[order]
        values = values[:, :, order]
        extras = {k: v[:, :, order] for k, v in extras.items()}
    if south_up:
        y = y[::-1]
        values = values[:, ::-1, :]
        extras = {k: v[:, ::-1, :] for k, v in extras.items()}
    with netCDF4.Dataset(path, "w", format="NETCDF4") as ds:
        ds.createDimension("time", None)
        ds.createDimension(yname, ny)
        ds.createDimension(xname, nx)
        t = ds.createVariable("time", "f8", ("time",))
        t.units = f"days since {start}"
        t.calendar = calendar
        t.standard_name = "time"
        t[:] = np.arange(nt) * step_hours / 24.0
        xv = ds.createVariable(xname, "f8", (xname,))
        yv = ds.createVariable(yname, "f8", (yname,))
        xv[:], yv[:] = x, y
        if geographic:
            xv.standard_name, xv.units = "longitude", "degrees_east"
            yv.standard_name, yv.units = "latitude", "degrees_north"
        else:
            xv.standard_name, xv.units = "projection_x_coordinate", "m"
            yv.standard_name, yv.units = "projection_y_coordinate", "m"
        mapped = crs is not None and write_grid_mapping
        if mapped:
            gm = ds.createVariable("crs", "i4", ())
            gm.setncatts(CRS.from_user_input(crs).to_cf())
        if packed:
            lo, hi = np.nanmin(values), np.nanmax(values)
            scale = (hi - lo) / 60000.0 if hi > lo else 1.0
            offset = (hi + lo) / 2.0
            v = ds.createVariable(var, "i2", ("time", yname, xname), fill_value=np.int16(-32768))
            v.scale_factor, v.add_offset = scale, offset
            v.set_auto_maskandscale(True)
            v[:] = np.ma.masked_array(np.where(np.isnan(values), offset, values), mask=np.isnan(values))
        else:
            v = ds.createVariable(var, dtype, ("time", yname, xname), fill_value=np.float32(1e20))
            v[:] = np.ma.masked_invalid(values)
        if units is not None:
            v.units = units
        if standard_name:
            v.standard_name = "air_temperature"
            v.cell_methods = f"time: {'minimum' if role == 'tmin' else 'maximum'}"
        if mapped:
            v.grid_mapping = "crs"
        for name, arr in extras.items():
            ev = ds.createVariable(name, "f4", ("time", yname, xname))
            ev[:] = arr
            if units is not None:
                ev.units = units
            if mapped:
                ev.grid_mapping = "crs"
    return path


def write_geotiff_daily(path, data, dates, *, units: str | None = "degC", date_style: str | None = "descriptions",
                        crs: str | None = "EPSG:4326", lon0: float = -2.0, lat0: float = 50.0, res: float = 1.0,
                        calendar: str | None = None, nodata: float | None = None, dtype: str = "float32",
                        units_in: str = "dataset") -> Path:
    """Write ``data`` (time, y, x; °C, north-up) as a multi-band GeoTIFF, one band per day.

    Parameters
    ----------
    dates : one ISO "YYYY-MM-DD" string (or date object) per band.
    units : converted from °C into these units and written as a tag; None: no units.
    date_style : where the dates go: "descriptions" (band descriptions),
        "tags" (band tag DATE=...), "sidecar" (``<stem>.dates.txt``), or None (nowhere).
    crs : CRS of the raster (None: no CRS).
    lon0, lat0, res : west/north edges and cell size in CRS units.
    calendar : written as the dataset tag ``calendar`` when given.
    nodata : nodata value; NaN in ``data`` are written as it.
    units_in : "dataset" (dataset tag ``units``) or "band" (band tag ``units``).
    """
    path = Path(path)
    values = from_celsius(data, units)
    nt, ny, nx = values.shape
    texts = [d if isinstance(d, str) else d.strftime("%Y-%m-%d") for d in dates]
    if len(texts) != nt:
        raise ValueError("one date per band is needed")
    if nodata is not None:
        values = np.where(np.isnan(values), nodata, values)
    profile = dict(driver="GTiff", height=ny, width=nx, count=nt, dtype=dtype,
                   transform=Affine(res, 0.0, lon0, 0.0, -res, lat0), nodata=nodata)
    if crs is not None:
        profile["crs"] = crs
    with rasterio.open(path, "w", **profile) as dst:
        dst.write(values.astype(dtype))
        for band, text in enumerate(texts, start=1):
            if date_style == "descriptions":
                dst.set_band_description(band, text)
            elif date_style == "tags":
                dst.update_tags(band, DATE=text)
            if units is not None and units_in == "band":
                dst.update_tags(band, units=units)
        tags = {}
        if units is not None and units_in == "dataset":
            tags["units"] = units
        if calendar is not None:
            tags["calendar"] = calendar
        if tags:
            dst.update_tags(**tags)
    if date_style == "sidecar":
        path.with_suffix(".dates.txt").write_text("\n".join(texts) + "\n", encoding="utf-8")
    return path

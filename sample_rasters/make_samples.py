"""Write the bundled sample climate of the invented Karsvale Uplands.

Everything here is invented for demonstration: the region, its relief, its
weather and the warming of the scenario.  The numbers are plausible for a
mid-latitude mountain region but describe no real place or climate model.

    python sample_rasters/make_samples.py        # rewrites sample_rasters/climate/

Baseline: observation-style files in °C, standard calendar, variables
``tmin``/``tmax``, one file per decade.  Scenario "model-a": model-style files
in kelvin, ``noleap`` calendar, variables ``tasmin``/``tasmax`` with CF
``standard_name``/``cell_methods``, one file per decade.
"""

from __future__ import annotations

from pathlib import Path

import cftime
import numpy as np
import rioxarray  # noqa: F401  (registers .rio)
import xarray as xr

HERE = Path(__file__).resolve().parent
OUT = HERE / "climate"

# grid: 0.05 degree cells, north-up
LON = np.round(np.arange(22, dtype=float) * 0.05 + 14.025, 4)
LAT = np.round(46.975 - np.arange(18, dtype=float) * 0.05, 4)


def elevation() -> np.ndarray:
    """Invented relief (m): a valley floor in the south-west rising to a ridge."""
    x, y = np.meshgrid(np.linspace(0, 1, LON.size), np.linspace(1, 0, LAT.size))
    ridge = 2300 * np.exp(-((x - 0.75) ** 2 / 0.05 + (y - 0.7) ** 2 / 0.12))
    slope = 600 * (x + y) / 2
    bumps = 150 * np.sin(7 * x) * np.cos(5 * y)
    return 250 + slope + ridge + bumps


def lake_mask() -> np.ndarray:
    """Cells of the invented Lake Ostra (no land data: missing)."""
    x, y = np.meshgrid(np.arange(LON.size), np.arange(LAT.size))
    return ((x - 4) ** 2 / 6.0 + (y - 15) ** 2 / 3.0) <= 1.0


def daily_series(calendar: str, first: int, last: int, warming: float, seed: int):
    """Tmin/Tmax (°C) of every day and cell."""
    rng = np.random.default_rng(seed)
    units = f"days since {first}-01-01"
    start = cftime.date2num(cftime.datetime(first, 1, 1, calendar=calendar), units, calendar)
    stop = cftime.date2num(cftime.datetime(last + 1, 1, 1, calendar=calendar), units, calendar)
    t = np.arange(start, stop, dtype=float)
    times = cftime.num2date(t, units, calendar)
    doy = np.array([d.timetuple().tm_yday for d in times], dtype=float)
    ylen = 360.0 if calendar == "360_day" else 365.25
    phase = 2 * np.pi * (doy - 200) / ylen
    seasonal = 10.5 + 10.0 * np.cos(phase)  # valley daily mean, °C
    # weather: a spatially uniform AR(1) anomaly
    anom = np.empty(t.size)
    anom[0] = 0.0
    eps = rng.normal(0, 1.6, t.size)
    for i in range(1, t.size):
        anom[i] = 0.75 * anom[i - 1] + eps[i]
    dtr = 10.0 + 2.5 * np.cos(phase) + rng.normal(0, 1.5, t.size)
    dtr = np.clip(dtr, 2.0, None)
    summer_extra = 0.6 * np.cos(phase)  # the scenario warms summers a little more
    lapse = -0.0065 * (elevation() - 250.0)
    mean = (seasonal + anom + warming + (summer_extra if warming else 0.0))[:, None, None] + lapse
    tmin = mean - dtr[:, None, None] / 2
    tmax = mean + dtr[:, None, None] / 2
    lake = lake_mask()
    tmin[:, lake] = np.nan
    tmax[:, lake] = np.nan
    return times, tmin, tmax


def _write(path: Path, name: str, data: np.ndarray, times, calendar: str, units: str,
           cf_model_style: bool, which: str) -> None:
    scale = 0.1
    offset = 273.15 if units == "K" else 0.0
    da = xr.DataArray(data.astype(np.float32), dims=("time", "lat", "lon"),
                      coords={"time": times, "lat": LAT, "lon": LON}, name=name)
    da["lat"].attrs = {"units": "degrees_north", "standard_name": "latitude"}
    da["lon"].attrs = {"units": "degrees_east", "standard_name": "longitude"}
    da.attrs = {"units": units,
                "long_name": f"daily {'minimum' if which == 'tmin' else 'maximum'} near-surface air temperature"}
    if cf_model_style:
        da.attrs["standard_name"] = "air_temperature"
        da.attrs["cell_methods"] = f"time: {'minimum' if which == 'tmin' else 'maximum'}"
    ds = da.to_dataset().rio.write_crs("EPSG:4326")  # CF grid_mapping variable
    ds[name].encoding.pop("grid_mapping", None)
    ds[name].attrs["grid_mapping"] = "spatial_ref"
    ds.attrs = {"title": "Invented sample climate of the Karsvale Uplands (suitmap demo)",
                "comment": "Invented data for demonstration only; describes no real place or model.",
                "Conventions": "CF-1.8"}
    enc = {name: {"dtype": "int16", "scale_factor": scale, "add_offset": offset,
                  "_FillValue": np.int16(-32768), "zlib": True, "complevel": 9, "shuffle": True,
                  "chunksizes": (data.shape[0], 1, data.shape[2])},
           "time": {"units": f"days since 1950-01-01", "calendar": calendar, "dtype": "float64"}}
    ds.to_netcdf(path, encoding=enc, format="NETCDF4")


def write_terrain(path: Path = HERE / "terrain" / "elevation.tif") -> None:
    """The invented relief as a small GeoTIFF (m), on the climate grid."""
    path.parent.mkdir(parents=True, exist_ok=True)
    dem = xr.DataArray(elevation().astype(np.float32), dims=("y", "x"),
                       coords={"y": LAT, "x": LON}, name="elevation",
                       attrs={"units": "m", "long_name": "invented elevation of the Karsvale Uplands"})
    dem.rio.write_crs("EPSG:4326").rio.to_raster(path, compress="deflate")


def write_districts(path: Path = HERE / "regions" / "karsvale_districts.geojson") -> None:
    """Invented districts of the Karsvale Uplands (GeoJSON, lon/lat).

    One district contains the lake (missing cells), one reaches east beyond the
    climate grid, and the town of Tollmere is an enclave smaller than one cell.
    """
    import json

    from shapely.geometry import Polygon, box, mapping

    town = box(14.305, 46.715, 14.325, 46.73)
    districts = {
        "Ostra Lakeside": Polygon([(14.0, 46.1), (14.52, 46.1), (14.47, 46.32), (14.55, 46.5),
                                   (14.0, 46.5)]),
        "Lower Karsvale": Polygon([(14.52, 46.1), (15.1, 46.1), (15.1, 46.3), (15.0, 46.3),
                                   (15.0, 46.56), (14.62, 46.55),
                                   (14.55, 46.5), (14.47, 46.32)]),
        "Brannock Heights": Polygon([(14.0, 46.5), (14.55, 46.5), (14.62, 46.55), (14.58, 47.0),
                                     (14.0, 47.0)]).difference(town),
        "Karsvale Ridge": Polygon([(14.62, 46.55), (15.0, 46.56), (15.0, 47.0), (14.58, 47.0)]),
        "Far Marches": Polygon([(15.0, 46.3), (15.4, 46.3), (15.4, 46.9), (15.0, 46.9)]),
        "Tollmere": town,
    }
    features = [{"type": "Feature", "properties": {"district": name},
                 "geometry": json.loads(json.dumps(mapping(g)))} for name, g in districts.items()]
    doc = {"type": "FeatureCollection", "name": "karsvale_districts",
           "comment": "Invented districts for the suitmap demo; no real place.",
           "features": features}
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text(json.dumps(doc, indent=1) + "\n")


def main() -> None:
    write_terrain()
    write_districts()
    OUT.mkdir(parents=True, exist_ok=True)
    for old in OUT.glob("*.nc"):
        old.unlink()
    for label, cal, first, last, warming, seed, units, model in (
        ("baseline", "standard", 1991, 2020, 0.0, 11, "degC", False),
        ("model-a", "noleap", 2041, 2070, 2.1, 23, "K", True),
    ):
        times, tmin, tmax = daily_series(cal, first, last, warming, seed)
        years = np.array([d.year for d in times])
        for dec0 in range(first, last + 1, 10):
            sel = (years >= dec0) & (years <= min(dec0 + 9, last))
            tag = f"{dec0}-{min(dec0 + 9, last)}"
            for which, arr in (("tmin", tmin), ("tmax", tmax)):
                vname = ("tas" + which[1:]) if model else which
                vals = arr[sel] + (273.15 if units == "K" else 0.0)
                _write(OUT / f"{label}_{which}_{tag}.nc", vname, vals, times[sel], cal,
                       units, model, which)
    total = sum(p.stat().st_size for p in OUT.glob("*.nc"))
    print(f"wrote {len(list(OUT.glob('*.nc')))} files, {total / 1e6:.1f} MB, in {OUT}")


if __name__ == "__main__":
    main()

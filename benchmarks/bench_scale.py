"""Memory and time of a whole run at scale, against a plain read of the same inputs.

Run:  python benchmarks/bench_scale.py [--cells 400] [--years 30] [--workdir DIR] [--keep]
                                       [--profile degree_days,sine_rate,parton_logan]

1. Writes, one (365-day x 100-row) slab in memory at a time, an invented daily
   Tmin/Tmax grid (cells x cells x years from 1991, standard calendar) as NetCDF-4,
   one file per variable per decade: int16 with scale_factor 0.1, zlib level 1 +
   shuffle, HDF5 chunks (time=365, y=100, x=100), 7.3 MB unpacked, neither
   map-oriented (time=1) nor series-oriented.  Files in ``--workdir`` (default: new
   folder under /tmp) are reused when their recorded spec and shape match.
2. Writes a run file and an invented organism profile (one baseline period of all
   the years; formats geotiff + netcdf).
3. Measures each in a fresh child process: wall time and peak RSS (ru_maxrss of that
   child alone, from ``os.wait4``; VmRSS is also sampled every 0.2 s):
   ``raw`` (floor: xarray.open_mfdataset in the files' chunks, sum), ``read``
   (``suitmap.open_period``, then one pass summing tmin and tmax) and ``run``
   (``suitmap.run(runfile, overwrite=True)`` into a fresh folder; phases timed by
   wrapping open_period, pipeline._compute_one, the layer cache and write_outputs).
4. Prints the table and the targets: end-to-end / read <= 1.25 for a degree-day
   profile and <= 1.5 for rate-curve profiles (sine day, Parton-Logan day); peak RSS
   <= 1.2 GB = 1.2e9 bytes for every kind.  ``--profile`` runs several kinds on the
   same files (``degree_days``: an invented single-sine profile; ``sine_rate``: the
   bundled ``ridge_leaf_miner``, Briere-1 over the sine day; ``parton_logan``: the
   bundled ``ostra_mason_bee``, Logan-6 over the Parton-Logan day) and prints them
   side by side with the read.  ``peer``: when xclim is installed, its growing
   degree-days from the daily mean on the same files (one layer, no upper
   threshold), for comparison; skipped with a note otherwise.
   Exit code 0 always (a benchmark); a miss prints MISSED.

``--variants a+b,c`` also measures read/run with changes patched in inside the
children only (PATCHES) and compares their layers with the unpatched run's.
"""

from __future__ import annotations

import argparse
import json
import os
import shutil
import subprocess
import sys
import tempfile
import threading
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

GENERATOR = "bench_scale v1"          # change when the invented field changes
FIRST_YEAR = 1991
RES = 0.02                            # degrees per cell
CHUNK_T, CHUNK_S = 365, 100           # HDF5 chunk (time, y, x) of the inputs
SCALE, FILL = 0.1, -32768             # packing: degC = int16 * SCALE
TARGET_RSS = 1.2e9
KINDS = {   # profile kind -> ([profile] table of the run file, end-to-end / read target)
    "degree_days": ('path = "profiles/bench_organism.toml"', 1.25),
    "sine_rate": ('library = "ridge_leaf_miner"', 1.5),
    "parton_logan": ('library = "ostra_mason_bee"', 1.5),
}


# ============================================================== invented climate
def relief(n: int) -> tuple[np.ndarray, np.ndarray]:
    """Invented elevation (m) and sea mask of an n x n grid (row 0 = north)."""
    x, y = np.meshgrid(np.linspace(0, 1, n), np.linspace(0, 1, n))
    elev = (150 + 300 * x + 1900 * np.exp(-((x - 0.7) ** 2 / 0.03 + (y - 0.35) ** 2 / 0.08))
            + 900 * np.exp(-((x - 0.3) ** 2 / 0.02 + (y - 0.8) ** 2 / 0.02))
            + 120 * np.sin(9 * x) * np.cos(7 * y))
    return np.clip(elev, 0, None), x < 0.10 + 0.06 * np.sin(6 * y)


def _upsample_weights(n: int, k: int) -> np.ndarray:
    """(n, k) linear-interpolation weights from k coarse nodes to n cells."""
    pos = np.linspace(0, k - 1, n)
    i0 = np.minimum(np.floor(pos).astype(int), k - 2)
    w = np.zeros((n, k))
    w[np.arange(n), i0], w[np.arange(n), i0 + 1] = 1 - (pos - i0), pos - i0
    return w


def _ar1(rng: np.random.Generator, nt: int, shape: tuple, phi: float, sd: float) -> np.ndarray:
    """AR(1) series with stationary standard deviation ``sd``, started in its stationary state."""
    out = np.empty((nt,) + shape)
    out[0] = rng.normal(0, sd, shape)
    eps = rng.normal(0, sd * np.sqrt(1 - phi ** 2), (nt,) + shape)
    for i in range(1, nt):
        out[i] = phi * out[i - 1] + eps[i]
    return out


def decades(years: int) -> list[tuple[int, int]]:
    last = FIRST_YEAR + years - 1
    return [(y0, min(y0 + 9, last)) for y0 in range(FIRST_YEAR, last + 1, 10)]


def _days(y0: int, y1: int) -> tuple[np.ndarray, np.ndarray]:
    d = np.arange(np.datetime64(f"{y0}-01-01"), np.datetime64(f"{y1 + 1}-01-01"))
    since = (d - np.datetime64("1950-01-01")).astype(np.int64).astype(np.float64)
    return since, (d - d.astype("datetime64[Y]")).astype(np.int64) + 1


def _valid(path: Path, spec: str, shape: tuple) -> bool:
    import netCDF4
    try:
        with netCDF4.Dataset(path) as ds:
            return getattr(ds, "bench_spec", "") == spec and ds[path.name.split("_")[1]].shape == shape
    except (OSError, KeyError, IndexError):
        return False


def _create(path: Path, role: str, spec: str, since, lat, lon):
    import netCDF4
    stat = "minimum" if role == "tmin" else "maximum"
    ds = netCDF4.Dataset(path, "w", format="NETCDF4")
    ds.setncatts({"title": "Invented synthetic daily climate for the suitmap scale benchmark",
                  "comment": "Invented data (relief with a lapse rate, seasonal cycle, AR(1) weather); "
                             "no real place.", "Conventions": "CF-1.8", "bench_spec": spec})
    for name, vals, attrs in (("time", since, {"units": "days since 1950-01-01", "calendar": "standard"}),
                              ("lat", lat, {"units": "degrees_north", "standard_name": "latitude"}),
                              ("lon", lon, {"units": "degrees_east", "standard_name": "longitude"})):
        ds.createDimension(name, vals.size)
        c = ds.createVariable(name, "f8", (name,))
        c.setncatts(attrs)
        c[:] = vals
    ds.createVariable("crs", "i4").setncatts({"grid_mapping_name": "latitude_longitude",
                                              "semi_major_axis": 6378137.0,
                                              "inverse_flattening": 298.257223563})
    v = ds.createVariable(role, "i2", ("time", "lat", "lon"), zlib=True, complevel=1, shuffle=True,
                          chunksizes=(min(CHUNK_T, since.size), min(CHUNK_S, lat.size), min(CHUNK_S, lon.size)),
                          fill_value=np.int16(FILL))
    v.set_auto_maskandscale(False)
    v.setncatts({"scale_factor": np.float32(SCALE), "units": "degC", "standard_name": "air_temperature",
                 "cell_methods": f"time: {stat}", "long_name": f"daily {stat} near-surface air temperature",
                 "grid_mapping": "crs"})
    return ds, v


def write_decade(folder: Path, n: int, y0: int, y1: int, seed: int = 7) -> tuple[list[Path], bool]:
    """tmin/tmax files of one decade (reused when valid), written one slab at a time."""
    since, doy = _days(y0, y1)
    nt = since.size
    spec = json.dumps({"generator": GENERATOR, "cells": n, "years": [y0, y1], "scale": SCALE,
                       "chunks": [CHUNK_T, CHUNK_S, CHUNK_S]}, sort_keys=True)
    paths = [folder / f"bench_{v}_{y0}-{y1}.nc" for v in ("tmin", "tmax")]
    if all(_valid(p, spec, (nt, n, n)) for p in paths):
        return paths, False
    rng = np.random.default_rng([seed, y0])
    lon = np.round(8.0 + RES * (np.arange(n) + 0.5), 6)
    lat = np.round(54.0 - RES * (np.arange(n) + 0.5), 6)
    elev, sea = relief(n)
    inland = np.linspace(0, 1, n)[None, :]
    w = _upsample_weights(n, 6)                          # 6 x 6 coarse weather nodes
    anom = _ar1(rng, nt, (6, 6), 0.8, 3.0)               # synoptic anomaly, degC
    dtr_anom = _ar1(rng, nt, (6, 6), 0.5, 1.5)           # diurnal-range anomaly, degC
    phase = 2 * np.pi * (doy - 200) / 365.25
    clim = (9.0 + 0.6 * (54.0 - lat)[:, None] - 0.0065 * elev).astype(np.float32)  # lapse rate
    amp, dtr0 = (8.0 + 4.0 * inland).astype(np.float32), (9.0 + 2.0 * inland).astype(np.float32)
    tmp = [p.with_suffix(".nc.part") for p in paths]
    files = [_create(t, role, spec, since, lat, lon) for t, role in zip(tmp, ("tmin", "tmax"))]
    for t0 in range(0, nt, CHUNK_T):
        t1 = min(nt, t0 + CHUNK_T)
        season = np.cos(phase[t0:t1]).astype(np.float32)[:, None, None]
        for r0 in range(0, n, CHUNK_S):
            r1 = min(n, r0 + CHUNK_S)
            mean = clim[r0:r1] + amp * season + (w[r0:r1] @ anom[t0:t1] @ w.T).astype(np.float32)
            half = 0.5 * np.maximum(dtr0 + 2.5 * season + (w[r0:r1] @ dtr_anom[t0:t1] @ w.T).astype(np.float32), 1.0)
            tmin = mean - half + 0.4 * rng.standard_normal(mean.shape, dtype=np.float32)
            tmax = np.maximum(mean + half + 0.4 * rng.standard_normal(mean.shape, dtype=np.float32), tmin)
            for (_, v), a in zip(files, (tmin, tmax)):
                q = np.round(a / SCALE).astype(np.int16)
                q[:, sea[r0:r1]] = FILL
                v[t0:t1, r0:r1, :] = q
    for (ds, _), t, p in zip(files, tmp, paths):
        ds.close()
        os.replace(t, p)
    return paths, True


RUNFILE = """# Run file of the suitmap scale benchmark (invented data).
profile = {{ {profile} }}
output = {{ dir = "results", formats = ["geotiff", "netcdf"], suitable_level = 0.5 }}
{compute}
[baseline]
name = "baseline"
years = [{first}, {last}]
tmin = "climate/bench_tmin_*.nc"
tmax = "climate/bench_tmax_*.nc"
"""

PROFILE = """# Organism profile of an INVENTED insect, for the scale benchmark only.
organism = { name = "Benchmark grid moth (invented)", role = "pest", source = "Invented; not a real organism." }
survival = { lethal_cold = -22.0, lethal_heat = 39.0 }
suitability = { saturating_generations = 2 }
[development]
lower_threshold = 10.0
upper_threshold = 31.0
degree_days_per_generation = 400
method = "single_sine"
cutoff = "horizontal"
"""


def write_runfile(work: Path, years: int, chunk_cells: int | None, kind: str = "degree_days") -> Path:
    (work / "profiles").mkdir(exist_ok=True)
    (work / "profiles" / "bench_organism.toml").write_text(PROFILE)
    compute = f"compute = {{ chunk_cells = {chunk_cells} }}\n" if chunk_cells else ""
    path = work / "bench_run.toml"
    path.write_text(RUNFILE.format(first=FIRST_YEAR, last=FIRST_YEAR + years - 1, compute=compute,
                                   profile=KINDS[kind][0]))
    return path


# ============================================================== experiments (children only)
# Each patch is one change that could be made in the package; --variants applies a
# "+"-joined set of them inside the child processes.
def _patch_f32() -> None:
    """climate._to_celsius in float32: no float64 copy of every input block."""
    from suitmap import climate

    def to_celsius(da, canon):
        x = da.astype("float32")
        return x - np.float32(273.15) if canon == "K" else (
            (x - np.float32(32)) / np.float32(1.8) if canon == "degF" else x)
    climate._to_celsius = to_celsius


def _patch_nochunkcache() -> None:
    """No HDF5 chunk cache (netCDF4 default: 64 MiB per open variable); aligned reads
    touch each chunk once, so the cache only holds memory."""
    import netCDF4
    netCDF4.set_chunk_cache(0, 0, 0.75)


def _scoped_chunk(fn, rule):
    """``fn`` wrapped so that while it runs ``DataArray.chunk(self, chunks)`` is ``rule(orig, ...)``."""
    import xarray as xr
    orig = xr.DataArray.chunk

    def wrapped(*a, **kw):
        xr.DataArray.chunk = lambda self, chunks=None, *ca, **ckw: rule(orig, self, chunks, *ca, **ckw)
        try:
            return fn(*a, **kw)
        finally:
            xr.DataArray.chunk = orig
    return wrapped, orig


def _patch_filechunks() -> None:
    """Dask chunks = the files' own HDF5 chunks, time included; nothing rechunked while
    opening.  (In the package: _open_netcdf chunks by ``encoding['chunksizes']``;
    open_climate and open_period drop their ``.chunk({'time': -1, ...})``.)"""
    from suitmap.pipeline import analysis as pipeline

    def rule(orig, self, chunks, *a, **kw):
        if self.chunks is not None:                       # already dask: keep its chunks
            return self
        return orig(self, dict(zip(self.dims, self.encoding.get("chunksizes") or (-1,) * self.ndim)), *a, **kw)
    pipeline.open_period, _ = _scoped_chunk(pipeline.open_period, rule)


def _patch_seasonal() -> None:
    """layers.season_statistics: one apply_ufunc of _season_block per season-year on that
    season's days (+1 for the next-day minimum), each rechunked to one time chunk, instead
    of one apply_ufunc over the whole time axis in one chunk; results concatenated."""
    import xarray as xr

    from suitmap.layers import compute as layers
    orig_apply = xr.apply_ufunc

    def rule(orig, self, chunks, *a, **kw):               # skip only the time -1 rechunk
        return self if chunks == {"time": -1} else orig(self, chunks, *a, **kw)

    def per_season(func, *args, **kw):
        if func is not layers._season_block:
            return orig_apply(func, *args, **kw)
        tmin, tmax, where = args                          # where: south mask or cell latitudes
        opts = kw["kwargs"]
        sn, ss, doy = opts.pop("slices_north"), opts.pop("slices_south"), opts.get("doy")
        kw["dask_gufunc_kwargs"]["output_sizes"]["season_year"] = 1
        vals = where.values
        is_s = vals if vals.dtype == bool else (vals < 0) & bool(opts.get("per_hemisphere", True))
        south = xr.DataArray(is_s, dims=("y", "x"), coords={"y": tmin["y"], "x": tmin["x"]})
        nt, parts = tmin.sizes["time"], []
        for k in range(len(sn)):
            got = {}
            for hemi, sl, cells in (("n", sn[k], ~is_s), ("s", ss[k], is_s)):
                if sl is not None and cells.any():
                    i0, i1 = sl
                    days = slice(i0, min(i1 + 1, nt))
                    a, b = (orig_chunk(v.isel(time=days), {"time": -1}) for v in (tmin, tmax))
                    one = dict(opts, slices_north=[(0, i1 - i0)], slices_south=[(0, i1 - i0)])
                    if doy is not None:
                        one["doy"] = doy[days]
                    got[hemi] = orig_apply(func, a, b, where, **dict(kw, kwargs=one)).isel(season_year=0)
            if len(got) == 2:
                parts.append(xr.where(south, got["s"], got["n"]))
            else:
                (hemi, part), = got.items()
                parts.append(part.where(south if hemi == "s" else ~south))
        return xr.concat(parts, dim="season_year").transpose("y", "x", "stat", "season_year")

    stats, orig_chunk = _scoped_chunk(layers.season_statistics, rule)

    def season_statistics(*a, **kw):
        xr.apply_ufunc = per_season
        try:
            return stats(*a, **kw)
        finally:
            xr.apply_ufunc = orig_apply
    layers.season_statistics = season_statistics


def _patch_exact() -> None:
    """[compute] fast_tables = false: no tables, no float32 sines; every day exact in float64."""
    from dataclasses import replace

    from suitmap.pipeline import analysis

    orig = analysis.load_run

    def load_run(path):
        return replace(orig(path), fast_tables=False)

    analysis.load_run = load_run


def _patch_scalar() -> None:
    """Table lookups without the 16-lane gather code (``kernels/tables/_lanes.py`` and
    ``_lanes_pl.py``): the scalar loops that already take each block's remainder take
    every value.  LANES is a compile-time constant of the numba loops, so this variant
    runs with its own numba cache folder, warmed by a first run that is not counted."""
    from suitmap.kernels.tables import _pl_arcs, core
    core.LANES = _pl_arcs.LANES = 1 << 40


def _patch_workers(n: int):
    def patch() -> None:
        """suitmap.run on a local dask.distributed cluster of n single-threaded worker
        processes (``--workers n``): reads in n processes, none behind another's HDF5
        lock.  Peak RSS is then the sum over the process tree (sampled)."""
        import functools

        import suitmap
        suitmap.run = functools.partial(suitmap.run, workers=n)
    return patch


COMPILED = {"scalar"}   # patches that change compiled code (own NUMBA_CACHE_DIR, warmed)


PATCHES = {"exact": _patch_exact, "scalar": _patch_scalar, "workers2": _patch_workers(2),
           "workers3": _patch_workers(3), "f32": _patch_f32, "nochunkcache": _patch_nochunkcache, "filechunks": _patch_filechunks,
           "seasonal": _patch_seasonal}


# ============================================================== children
def child(mode: str, work: Path, variant: str | None) -> dict:
    t_start = time.perf_counter()
    import dask
    import xarray as xr

    import suitmap
    from suitmap.pipeline import outputs
    from suitmap.pipeline import analysis as pipeline
    from suitmap.config.profile import load_profile
    resume = sys.modules.get("suitmap.pipeline.folder")          # the layer cache, where the package has one

    for name in filter(None, (variant or "").split("+")):
        PATCHES[name]()
    out: dict = {"import_s": time.perf_counter() - t_start}
    runfile = work / "bench_run.toml"

    def timed(key, fn):
        def inner(*a, **kw):
            t0 = time.perf_counter()
            try:
                return fn(*a, **kw)
            finally:
                out[key] = out.get(key, 0.0) + time.perf_counter() - t0
        return inner

    with dask.config.set(scheduler="threads"):
        t0 = time.perf_counter()
        if mode == "raw":
            dask.compute(*(xr.open_mfdataset(sorted((work / "climate").glob(f"bench_{r}_*.nc")),
                                             engine="netcdf4", chunks={"time": CHUNK_T, "lat": CHUNK_S,
                                                                       "lon": CHUNK_S})[r].sum()
                           for r in ("tmin", "tmax")))
            out["reduce_s"] = time.perf_counter() - t0
        elif mode == "peer":
            # a general climate-index library: growing degree-days (daily mean, base 10 degC, no
            # upper threshold) per year, on the same files, in the files' chunks
            from xclim.indices import growing_degree_days
            ds = {r: xr.open_mfdataset(sorted((work / "climate").glob(f"bench_{r}_*.nc")), engine="netcdf4",
                                       chunks={"time": CHUNK_T, "lat": CHUNK_S, "lon": CHUNK_S})[r]
                  for r in ("tmin", "tmax")}
            tas = ((ds["tmin"] + ds["tmax"]) / 2).assign_attrs(units="degC")
            growing_degree_days(tas, thresh="10 degC", freq="YS").mean("time").compute()
            out["reduce_s"] = time.perf_counter() - t0
        elif mode == "read":
            run = suitmap.load_run(runfile)
            pc = pipeline.open_period(run.baseline, load_profile(run.profile_path), chunk_cells=run.chunk_cells)
            t1 = time.perf_counter()
            # a plain read of the same arrays: both variables, chunk by chunk, together
            dask.compute((pc.tmin.astype("f8") + pc.tmax).sum())
            out.update(open_s=t1 - t0, reduce_s=time.perf_counter() - t1, chunks=[c[0] for c in pc.tmin.chunks],
                       nchunks=int(np.prod(pc.tmin.data.numblocks)), dtype=str(pc.tmin.dtype),
                       tasks=len(pc.tmin.data.__dask_graph__()))
        else:
            pipeline.open_period = timed("open_s", pipeline.open_period)
            for owner, attr, key in ((pipeline, "_compute_one", "compute_s"),
                                     (pipeline.RunLayers, "compute", "compute_s"),
                                     (getattr(resume, "OutputFolder", None), "store", "cache_s"),
                                     (outputs, "write_outputs", "write_s")):
                if hasattr(owner, attr):
                    setattr(owner, attr, timed(key, getattr(owner, attr)))
            manifest = suitmap.run(runfile, overwrite=True)
            out["run_s"] = time.perf_counter() - t0
            out["outputs"] = len(json.loads(Path(manifest).read_text()).get("entries", []))
    return out


def _rss_bytes(pid: int) -> int:
    """VmRSS of ``pid`` and all its descendants (dask worker processes included)."""
    try:
        with open(f"/proc/{pid}/status") as fh:
            own = next(int(ln.split()[1]) * 1024 for ln in fh if ln.startswith("VmRSS:"))
        kids = []
        for task in os.listdir(f"/proc/{pid}/task"):
            with open(f"/proc/{pid}/task/{task}/children") as fh:
                kids += [int(k) for k in fh.read().split()]
    except (OSError, StopIteration, ValueError):
        return 0
    return own + sum(_rss_bytes(k) for k in kids)


def measure(mode: str, work: Path, variant: str | None, rss_limit: float,
            warm: bool = False) -> dict:
    """Run one child: wall time, its own peak RSS (rusage from os.wait4), sampled RSS."""
    cmd = [sys.executable, str(Path(__file__).resolve()), "--child", mode, "--workdir", str(work)]
    cmd += ["--variant", variant] if variant else []
    log_out, log_err = work / f"child_{mode}.out", work / f"child_{mode}.err"
    env = dict(os.environ)
    if COMPILED & set((variant or "").split("+")):
        env["NUMBA_CACHE_DIR"] = str(work / f"numba-cache-{variant}")
        if mode == "run" and not warm:          # compile once, uncounted
            measure(mode, work, variant, rss_limit, warm=True)
    if mode == "run":
        shutil.rmtree(work / "results", ignore_errors=True)   # no layer cache from an earlier run
    sampled = {"peak": 0, "killed": False}
    done = threading.Event()
    with open(log_out, "w") as fo, open(log_err, "w") as fe:
        t0 = time.perf_counter()
        proc = subprocess.Popen(cmd, stdout=fo, stderr=fe, env=env)

        def watch():
            while not done.is_set():
                rss = _rss_bytes(proc.pid)
                sampled["peak"] = max(sampled["peak"], rss)
                if rss > rss_limit and not sampled["killed"]:
                    sampled["killed"] = True
                    os.kill(proc.pid, 9)    # our own child; not reaped yet, so the pid is still its
                done.wait(0.2)

        watcher = threading.Thread(target=watch, daemon=True)
        watcher.start()
        _, status, usage = os.wait4(proc.pid, 0)       # reaped here: rusage of this child alone
        wall = time.perf_counter() - t0
        done.set()
        watcher.join()
        proc.returncode = os.waitstatus_to_exitcode(status)
    result = {"mode": mode, "variant": variant, "wall_s": wall, "rc": proc.returncode,
              "cpu_s": usage.ru_utime + usage.ru_stime,  # less sensitive to other load than wall
              # Linux ru_maxrss is in kilobytes; the sample sums the process tree (workers)
              "peak_rss": max(usage.ru_maxrss * 1024, sampled["peak"]),
              "sampled_rss": sampled["peak"], "killed": sampled["killed"]}
    for line in log_out.read_text().splitlines():
        if line.startswith("RESULT "):
            result.update(json.loads(line[7:]))
    if proc.returncode != 0:
        result["error"] = (log_err.read_text().strip().splitlines() or ["?"])[-1]
    return result


# ============================================================== report
def _layers(path: Path) -> dict:
    import xarray as xr
    with xr.open_dataset(path) as ds:
        return {k: ds[k].values.astype(float) for k in ds.data_vars if ds[k].dims == ("y", "x")}


def _max_diff(a: dict, b: dict) -> float:
    if set(a) != set(b) or any(not np.array_equal(np.isnan(a[k]), np.isnan(b[k])) for k in a):
        return float("inf")
    return max(float(np.nanmax(np.abs(a[k] - b[k]), initial=0.0)) for k in a)


def _row(r: dict) -> str:
    g = r.get
    ph = {"raw": f"sum in the files' chunks {g('reduce_s', np.nan):.1f}",
          "peer": f"xclim GDD per year {g('reduce_s', np.nan):.1f}",
          "read": f"open_period {g('open_s', np.nan):.1f} + pass {g('reduce_s', np.nan):.1f}",
          "run": f"open {g('open_s', np.nan):.1f}, compute {g('compute_s', np.nan):.1f}, "
                 f"cache {g('cache_s', 0):.1f}, write {g('write_s', np.nan):.1f}"}[r["mode"]]
    flag = " KILLED (RSS limit)" if r["killed"] else (f" FAILED: {r['error']}" if r.get("error") else "")
    label = (r['variant'] or 'as is') + (f" [{r['kind']}]" if r.get('kind') else "")
    return (f"{r['mode']:<5} {label:<30} {r['wall_s']:6.1f} {r['cpu_s']:6.1f}  {ph:<45} "
            f"{r['peak_rss'] / 1e9:5.2f} / {r['sampled_rss'] / 1e9:5.2f}{flag}")


def summary(name: str, read: dict, run: dict, cell_days: int, diff: float | None,
            target_ratio: float) -> None:
    one_pass, e2e = read.get("reduce_s", np.nan), run.get("run_s", np.nan)
    ok_ratio = e2e / one_pass <= target_ratio
    ok_rss = run["peak_rss"] <= TARGET_RSS and run["rc"] == 0 and not run["killed"]
    print(f"\n[{name}]")
    if "chunks" in read:
        print(f"  dask chunks of each input (time, y, x): {tuple(read['chunks'])}, {read['nchunks']} chunks of "
              f"{read['dtype']}, {read['tasks']} tasks per variable")
    print(f"  read only (one pass over open_period's arrays) {one_pass:7.1f} s   "
          f"(open_period {read.get('open_s', np.nan):.1f} s)")
    print(f"  end to end (suitmap.run)                       {e2e:7.1f} s   {cell_days / e2e / 1e6:.1f} Mcell-days/s")
    print(f"  ratio end-to-end / read                        {e2e / one_pass:7.2f}     target <= {target_ratio}: "
          f"{'met' if ok_ratio else 'MISSED'}")
    print(f"  cpu seconds end-to-end / read                  {run.get('cpu_s', np.nan) / read.get('cpu_s', np.nan):7.2f}"
          f"     ({run.get('cpu_s', np.nan):.1f} / {read.get('cpu_s', np.nan):.1f} s; the wall ratio needs both cores busy)")
    print(f"  peak RSS read only / end to end                {read['peak_rss'] / 1e9:5.2f} / "
          f"{run['peak_rss'] / 1e9:.2f} GB"
          f"   target <= {TARGET_RSS / 1e9:.1f} GB end to end: {'met' if ok_rss else 'MISSED'}")
    if diff is not None:
        print(f"  layers vs the unpatched run: max |difference| {diff:.3g}" + (" (identical)" if diff == 0 else ""))


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--cells", type=int, default=400, help="grid side (cells x cells), default 400")
    ap.add_argument("--years", type=int, default=30, help="years from 1991, default 30")
    ap.add_argument("--workdir", type=Path, help="folder for data and outputs (reused as a cache)")
    ap.add_argument("--keep", action="store_true", help="keep the generated data and outputs")
    ap.add_argument("--chunk-cells", type=int, help="write [compute] chunk_cells into the run file")
    ap.add_argument("--variants", default="", help=f"comma list of '+'-joined patches: {', '.join(PATCHES)}")
    ap.add_argument("--no-baseline", action="store_true", help="measure only --variants")
    ap.add_argument("--skip-raw", action="store_true", help="skip the raw xarray read floor")
    ap.add_argument("--rss-limit", type=float, help="kill a child above this RSS, GB (default 80 %% of free)")
    ap.add_argument("--profile", default="degree_days",
                    help=f"comma list of profile kinds to run end to end: {', '.join(KINDS)}, or all")
    ap.add_argument("--child", choices=("raw", "read", "run", "peer"), help=argparse.SUPPRESS)
    ap.add_argument("--variant", help=argparse.SUPPRESS)
    args = ap.parse_args(argv)
    if args.child:
        print("RESULT " + json.dumps(child(args.child, args.workdir, args.variant)), flush=True)
        return 0
    kinds = list(KINDS) if args.profile == "all" else [k for k in args.profile.split(",") if k]
    if any(k not in KINDS for k in kinds):
        ap.error(f"unknown --profile kind; known: {', '.join(KINDS)}")
    variants = [v for v in args.variants.split(",") if v]
    if any(p not in PATCHES for v in variants for p in v.split("+")):
        ap.error(f"unknown patch in --variants; known: {', '.join(PATCHES)}")
    work = args.workdir or Path(tempfile.mkdtemp(prefix="suitmap-bench-", dir="/tmp"))
    work.mkdir(parents=True, exist_ok=True)
    free = os.sysconf("SC_AVPHYS_PAGES") * os.sysconf("SC_PAGE_SIZE")
    limit = args.rss_limit * 1e9 if args.rss_limit else 0.8 * free

    def load() -> str:
        return ", ".join(f"{x:.1f}" for x in os.getloadavg())
    def git(*a: str) -> str:
        return subprocess.run(["git", "-C", str(Path(__file__).resolve().parent), *a], capture_output=True,
                              text=True).stdout.strip()
    print(f"suitmap scale benchmark: {args.cells} x {args.cells} cells x {args.years} years in {work}; "
          f"{os.cpu_count()} CPUs, load average {load()} (other processes slow it down: see it after)\n"
          f"suitmap at commit {git('rev-parse', '--short', 'HEAD') or '?'}"
          f"{' + uncommitted changes in suitmap/' if git('status', '--porcelain', '--', '../suitmap') else ''}")
    try:
        (work / "climate").mkdir(parents=True, exist_ok=True)
        files, t0, made = [], time.perf_counter(), False
        for y0, y1 in decades(args.years):
            got, fresh = write_decade(work / "climate", args.cells, y0, y1)
            made |= fresh
            files += got
            mb = sum(p.stat().st_size for p in got) / 1e6
            print(f"  {y0}-{y1}: {'written' if fresh else 'reused'} ({mb:.0f} MB)", flush=True)
        size, cell_days = sum(f.stat().st_size for f in files), args.cells ** 2 * sum(
            _days(y0, y1)[0].size for y0, y1 in decades(args.years))
        print(f"inputs: {len(files)} files, {size / 1e9:.2f} GB on disk ({100 * size / (4 * cell_days):.0f} % of "
              f"{4 * cell_days / 1e9:.1f} GB int16), "
              f"{f'generated in {time.perf_counter() - t0:.0f} s' if made else 'reused'}")
        write_runfile(work, args.years, args.chunk_cells, kinds[0])
        configs, res = ([] if args.no_baseline else [None]) + variants, {}
        if not args.skip_raw:
            print("measuring raw ...", flush=True)
            res["raw"] = measure("raw", work, None, limit)
        try:
            import xclim  # noqa: F401
        except ImportError:
            print("peer (xclim growing degree-days): xclim is not installed; skipped")
        else:
            print("measuring peer (xclim growing degree-days) ...", flush=True)
            res["peer"] = measure("peer", work, None, limit)
        for cfg in configs:
            print(f"measuring read {cfg or '(as is)'} ...", flush=True)
            res[(cfg, "read")] = measure("read", work, cfg, limit)
            for kind in kinds:
                write_runfile(work, args.years, args.chunk_cells, kind)
                print(f"measuring run {cfg or '(as is)'} [{kind}] ...", flush=True)
                res[(cfg, "run", kind)] = r = measure("run", work, cfg, limit)
                r["kind"] = kind
                out, ref = work / "results" / "baseline" / "layers.nc", work / f"layers_as_is_{kind}.nc"
                if r["rc"] == 0 and cfg is None:
                    shutil.copy(out, ref)                   # kept for --no-baseline runs in this workdir
                elif r["rc"] == 0 and ref.is_file():
                    r["diff"] = _max_diff(_layers(ref), _layers(out))
        print(f"load average after: {load()}")
        print(f"\nchild config                         wall s  cpu s  phases in the child (s){' ' * 22}"
              "peak RSS GB (wait4 / sampled)")
        for r in res.values():
            print(_row(r))
        for cfg in configs:
            for kind in kinds:
                r = res[(cfg, "run", kind)]
                summary(f"{cfg or 'as is'} / {kind}", res[(cfg, "read")], r, cell_days, r.get("diff"),
                        KINDS[kind][1])
        print("\nside by side (same files, same process layout; ratios to the read measured in this run)")
        print(f"  {'config':<22} {'profile kind':<14} {'end to end s':>12} {'x read':>7} {'target':>7} "
              f"{'peak RSS GB':>11}")
        for cfg in configs:
            read_s = res[(cfg, "read")].get("reduce_s", np.nan)
            print(f"  {cfg or 'as is':<22} {'(read)':<14} {read_s:12.1f} {1.0:7.2f} {'':>7} "
                  f"{res[(cfg, 'read')]['peak_rss'] / 1e9:11.2f}")
            for kind in kinds:
                r = res[(cfg, "run", kind)]
                ratio = r.get("run_s", np.nan) / read_s
                ok = ratio <= KINDS[kind][1] and r["peak_rss"] <= TARGET_RSS and r["rc"] == 0
                print(f"  {cfg or 'as is':<22} {kind:<14} {r.get('run_s', np.nan):12.1f} {ratio:7.2f} "
                      f"{KINDS[kind][1]:7.2f} {r['peak_rss'] / 1e9:11.2f}  {'met' if ok else 'MISSED'}")
        if "peer" in res:
            pr = res["peer"]
            print(f"  {'peer (xclim GDD)':<22} {'':<14} {pr.get('reduce_s', np.nan):12.1f} "
                  f"{pr.get('reduce_s', np.nan) / res[(configs[0], 'read')].get('reduce_s', np.nan):7.2f}"
                  f" {'':>7} {pr['peak_rss'] / 1e9:11.2f}")
        if "raw" in res:
            print(f"\nfloor: xarray.open_mfdataset in the files' chunks + sum "
                  f"{res['raw'].get('reduce_s', np.nan):.1f} s, "
                  f"{res['raw']['peak_rss'] / 1e9:.2f} GB")
        print("peak RSS: the larger of ru_maxrss from os.wait4 (the child process) and the sampled sum of "
              "/proc VmRSS over its process tree (every 0.2 s; dask workers included).\nExit code 0 whatever the result: a benchmark, not a test.")
    finally:
        if not args.keep:
            shutil.rmtree(work, ignore_errors=True)
            print(f"removed {work}")
    return 0


if __name__ == "__main__":
    sys.exit(main())

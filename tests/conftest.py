"""Shared fixtures: small climate cases, profiles and run files written to tmp_path."""

from __future__ import annotations

import atexit
import os
import shutil
import sys
import tempfile
import textwrap
from pathlib import Path

import numpy as np
import pytest

os.environ.setdefault("MPLBACKEND", "Agg")
# tables cached on disk (suitmap.layers.table_cache) go to a folder of this test run, not
# the user's cache (subprocesses inherit it), removed at exit
os.environ["SUITMAP_CACHE_DIR"] = tempfile.mkdtemp(prefix="suitmap-test-cache-")
atexit.register(shutil.rmtree, os.environ["SUITMAP_CACHE_DIR"], ignore_errors=True)
sys.path.insert(0, str(Path(__file__).parent))

from climate_fixtures import make_tmin_tmax, write_netcdf_daily  # noqa: E402

REPO = Path(__file__).resolve().parents[1]

PROFILE = """
[organism]
name = "test moth (invented)"
role = "pest"
source = "invented for tests"

[development]
lower_threshold = {lower}
upper_threshold = {upper}
degree_days_per_generation = {ddg}
method = "{method}"
cutoff = "{cutoff}"

[survival]
lethal_cold = {cold}
lethal_heat = {heat}
{season}
"""


def write_profile(folder: Path, *, lower=10.0, upper=30.0, ddg=300.0, method="single_sine",
                  cutoff="horizontal", cold=-15.0, heat=40.0, season: str = "") -> Path:
    p = folder / "profile.toml"
    p.write_text(PROFILE.format(lower=lower, upper=upper, ddg=ddg, method=method, cutoff=cutoff,
                                cold=cold, heat=heat, season=season))
    return p


def write_period(folder: Path, name: str, tmin: np.ndarray, tmax: np.ndarray, **kw) -> tuple[str, str]:
    """Write one period's tmin/tmax NetCDF files; return their file names."""
    folder.mkdir(parents=True, exist_ok=True)
    kw.setdefault("crs", "EPSG:4326")
    a = write_netcdf_daily(folder / f"{name}_tmin.nc", tmin, var="tmin", role="tmin", **kw)
    b = write_netcdf_daily(folder / f"{name}_tmax.nc", tmax, var="tmax", role="tmax", **kw)
    return a.name, b.name


def write_runfile(folder: Path, profile: Path, periods: list[dict], *, out="results",
                  formats=("geotiff", "netcdf", "png"), extra: str = "") -> Path:
    """``periods``: dicts with name, years, tmin, tmax (paths relative to ``folder``); first = baseline."""
    parts = [f'[profile]\npath = "{profile.name}"\n']
    for i, p in enumerate(periods):
        head = "[baseline]" if i == 0 else "[[scenario]]"
        parts.append(textwrap.dedent(f"""
            {head}
            name = "{p['name']}"
            years = [{p['years'][0]}, {p['years'][1]}]
            tmin = "{p['tmin']}"
            tmax = "{p['tmax']}"
            """))
    fl = ", ".join(f'"{f}"' for f in formats)
    parts.append(f'\n[output]\ndir = "{out}"\nformats = [{fl}]\n{extra}\n')
    r = folder / "run.toml"
    r.write_text("".join(parts))
    return r


@pytest.fixture
def small_case(tmp_path):
    """A 2-year baseline and a +2 °C scenario on a 4 x 5 grid with one missing cell."""
    tmin, tmax = make_tmin_tmax(730, 4, 5, mean=12.0, seed=3)
    tmin[:, 0, 0] = np.nan
    tmax[:, 0, 0] = np.nan
    prof = write_profile(tmp_path)
    b = write_period(tmp_path / "climate", "base", tmin, tmax, start="2001-01-01")
    s = write_period(tmp_path / "climate", "scen", tmin + 2.0, tmax + 2.0, start="2053-01-01")
    run = write_runfile(tmp_path, prof, [
        {"name": "baseline", "years": (2001, 2002), "tmin": f"climate/{b[0]}", "tmax": f"climate/{b[1]}"},
        {"name": "warm", "years": (2053, 2054), "tmin": f"climate/{s[0]}", "tmax": f"climate/{s[1]}"},
    ])
    return {"dir": tmp_path, "run": run, "tmin": tmin, "tmax": tmax, "profile": prof}

"""A finished run is not redone: an unchanged rerun touches no file; any change redoes it."""

from __future__ import annotations

import os
import subprocess
import sys
import time

import suitmap


def mtimes(root):
    """Every file under the output folder (state folder included) with its modification time."""
    return {p.relative_to(root).as_posix(): p.stat().st_mtime_ns for p in root.rglob("*") if p.is_file()}


def test_unchanged_rerun_writes_nothing_and_says_so(small_case):
    run = small_case["run"]
    run.write_text(run.read_text().replace('formats = ["geotiff", "netcdf", "png"]',
                                           'formats = ["geotiff", "netcdf"]'))
    manifest = suitmap.run(run)
    root = manifest.parent
    first = mtimes(root)
    assert any(k.endswith(".tif") for k in first) and ".suitmap/finished.json" in first
    assert suitmap.run(run) == manifest
    assert mtimes(root) == first
    proc = subprocess.run([sys.executable, "-m", "suitmap", "run", str(run)], capture_output=True,
                          text=True, timeout=300, check=False)
    assert proc.returncode == 0, proc.stderr
    assert "nothing to do" in proc.stdout
    assert mtimes(root) == first

    # an output removed: the run is redone and the file is back
    tif = next(root.glob("warm/*.tif"))
    tif.unlink()
    suitmap.run(run)
    assert tif.is_file()
    again = mtimes(root)
    assert again["manifest.json"] != first["manifest.json"]

    # an input touched: redone (the changed period is recomputed from its new inputs)
    scen = small_case["dir"] / "climate" / "scen_tmin.nc"
    os.utime(scen, ns=(time.time_ns(), time.time_ns()))
    suitmap.run(run)
    assert mtimes(root)["manifest.json"] != again["manifest.json"]

    # a setting edited: redone
    third = mtimes(root)
    run.write_text(run.read_text().replace('formats = ["geotiff", "netcdf"]', 'formats = ["netcdf"]'))
    suitmap.run(run)
    now = mtimes(root)
    assert now["manifest.json"] != third["manifest.json"] and not any(k.endswith(".tif") for k in now)

"""Resumable runs: kill -9 at any moment, rerun, byte-identical outputs; cache invalidation; lock."""

from __future__ import annotations

import hashlib
import json
import os
import shutil
import signal
import subprocess
import sys
import time

import pytest

import suitmap
from suitmap.errors import OutputError


def digest(root):
    return {p.relative_to(root).as_posix(): hashlib.sha256(p.read_bytes()).hexdigest()
            for p in root.rglob("*") if p.is_file() and ".suitmap" not in p.parts}


def netcdf_only(run):
    """Write only NetCDF outputs (these tests are about caching, not formats)."""
    run.write_text(run.read_text().replace('formats = ["geotiff", "netcdf", "png"]',
                                           'formats = ["netcdf"]'))


def cli(run, *extra, **kw):
    return subprocess.Popen([sys.executable, "-m", "suitmap", "run", str(run), "--quiet", *extra],
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, **kw)


@pytest.fixture
def reference(small_case):
    """An uninterrupted run's files, moved aside to results_ref."""
    proc = cli(small_case["run"])
    _, err = proc.communicate(timeout=300)
    assert proc.returncode == 0, err
    ref = small_case["dir"] / "results_ref"
    shutil.move(small_case["dir"] / "results", ref)
    return digest(ref)


@pytest.mark.parametrize("delays", [(2.0,), (1.0, 2.5)])
def test_killed_run_resumes_to_identical_outputs(small_case, reference, delays):
    for delay in delays:  # one or more kill -9 at different moments
        proc = cli(small_case["run"])
        time.sleep(delay)
        if proc.poll() is None:
            os.kill(proc.pid, signal.SIGKILL)
        proc.communicate()
    proc = cli(small_case["run"])
    _, err = proc.communicate(timeout=300)
    assert proc.returncode == 0, err
    assert digest(small_case["dir"] / "results") == reference


def test_cache_invalidation(small_case):
    run = small_case["run"]
    netcdf_only(run)
    suitmap.run(run)
    cache = small_case["dir"] / "results" / ".suitmap" / "cache"
    first = {p.name: p.stat().st_mtime_ns for p in cache.iterdir()}
    assert len(first) == 2
    # unchanged inputs: nothing recomputed
    suitmap.run(run)
    assert {p.name: p.stat().st_mtime_ns for p in cache.iterdir()} == first
    before = suitmap.load_run(run)
    # a profile parameter changes: every period is recomputed, and the layers change
    prof = small_case["profile"]
    prof.write_text(prof.read_text().replace("lower_threshold = 10.0", "lower_threshold = 11.0"))
    suitmap.run(run)
    second = {p.name for p in cache.iterdir()}
    assert len(second) == 2 and not (second & set(first))
    assert before.profile_path.exists()
    # only the scenario's file changes: only the scenario is recomputed
    keep = {p.name: p.stat().st_mtime_ns for p in cache.iterdir() if p.name.startswith("baseline")}
    scen = small_case["dir"] / "climate" / "scen_tmin.nc"
    os.utime(scen, ns=(time.time_ns(), time.time_ns()))
    suitmap.run(run)
    now = {p.name: p.stat().st_mtime_ns for p in cache.iterdir()}
    assert {k: v for k, v in now.items() if k.startswith("baseline")} == keep
    assert not ({k for k in now if k.startswith("warm")} & second)


def test_concurrent_run_is_refused_and_stale_lock_taken_over(small_case):
    run = small_case["run"]
    netcdf_only(run)
    suitmap.run(run)
    lock = small_case["dir"] / "results" / ".suitmap" / "lock"
    # a live process holds the lock (this test process itself)
    lock.write_text(json.dumps({"pid": os.getpid(), "host": os.uname().nodename}))
    with pytest.raises(OutputError, match="in use by another suitmap run"):
        suitmap.run(run)
    # a dead process's lock is taken over
    dead = subprocess.Popen([sys.executable, "-c", "pass"])
    dead.wait()
    lock.write_text(json.dumps({"pid": dead.pid, "host": os.uname().nodename}))
    suitmap.run(run)
    assert not lock.exists()


def test_temporary_files_of_a_killed_run_are_cleaned(small_case):
    run = small_case["run"]
    netcdf_only(run)
    suitmap.run(run)
    out = small_case["dir"] / "results"
    # what a SIGKILL between creating and renaming a temporary file leaves behind
    stale = [out / "baseline" / ".layers.nc.k1ll3d.part.nc",
             out / ".suitmap" / "cache" / ".baseline.x.nc.abcd.part.nc"]
    for p in stale:
        p.write_bytes(b"")
    suitmap.run(run)
    assert not any(p.exists() for p in stale)

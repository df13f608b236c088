"""Run file validation and path resolution."""

import textwrap

import pytest

from suitmap.errors import RunFileError
from suitmap.config.runfile import load_run

GOOD = """
[profile]
path = "profiles/p.toml"

[baseline]
years = [1991, 2020]
tmin = "climate/b_tmin_*.nc"
tmax = ["climate/b_tmax_1.nc", "climate/b_tmax_2.nc"]

[[scenario]]
name = "m-a_mid"
years = [2041, 2070]
tmin = { files = "climate/a_tmin_*.nc", variable = "tasmin" }
tmax = "climate/a_tmax_*.nc"

[output]
dir = "out"
formats = ["geotiff"]
"""


def write(tmp_path, text):
    p = tmp_path / "run.toml"
    p.write_text(textwrap.dedent(text))
    return p


def test_good_run_file_resolves_relative_paths(tmp_path):
    run = load_run(write(tmp_path, GOOD))
    assert run.profile_path == tmp_path / "profiles" / "p.toml"
    assert run.baseline.name == "baseline"
    assert run.baseline.tmin.patterns == (str(tmp_path / "climate" / "b_tmin_*.nc"),)
    assert len(run.baseline.tmax.patterns) == 2
    assert run.scenarios[0].tmin.variable == "tasmin"
    assert run.output.dir == tmp_path / "out"
    assert run.output.formats == ("geotiff",)
    assert [p.name for p in run.periods] == ["baseline", "m-a_mid"]
    assert run.threads is None and run.diurnal is None
    assert load_run(write(tmp_path, GOOD + '[compute]\ndiurnal = "parton_logan"\n')).diurnal \
        == "parton_logan"
    assert load_run(write(tmp_path, GOOD + "[compute]\nthreads = 3\n")).threads == 3


def test_threaded_scheduler_threads():
    import os

    from suitmap.pipeline.scheduling import EXTRA_THREADS, threads
    assert threads(5) == 5
    assert threads() == (os.cpu_count() or 1) + EXTRA_THREADS


@pytest.mark.parametrize("old, new, key", [
    ("years = [1991, 2020]", "years = [2020, 1991]", "baseline.years"),
    ("years = [1991, 2020]", "years = 1991", "baseline.years"),
    ('formats = ["geotiff"]', 'formats = ["shapefile"]', "output.formats"),
    ('dir = "out"', 'dir = "out"\nextra = 1', "output.extra"),
    ('name = "m-a_mid"', 'name = "bad name/slash"', "name"),
    ('name = "m-a_mid"', 'name = "baseline"', "unique"),
    ('tmax = "climate/a_tmax_*.nc"', "", "tmax"),
    ('path = "profiles/p.toml"', "", "[profile]"),
    ('formats = ["geotiff"]', 'formats = ["geotiff"]\n[compute]\nthreads = 0', "compute.threads"),
    ('formats = ["geotiff"]', 'formats = ["geotiff"]\n[compute]\nthreads = 2.5', "compute.threads"),
    ('formats = ["geotiff"]', 'formats = ["geotiff"]\n[compute]\ndiurnal = "cosine"', "compute.diurnal"),
])
def test_bad_run_files_name_the_key(tmp_path, old, new, key):
    assert old in GOOD
    with pytest.raises(RunFileError) as err:
        load_run(write(tmp_path, GOOD.replace(old, new, 1)))
    assert key in str(err.value)
    assert "run.toml" in str(err.value)


def test_missing_and_invalid_files(tmp_path):
    with pytest.raises(RunFileError, match="not found"):
        load_run(tmp_path / "nope.toml")
    with pytest.raises(RunFileError, match="not valid TOML"):
        load_run(write(tmp_path, "[baseline\n"))

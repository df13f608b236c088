"""What-if temperature offsets of a period, checked against files written with the change."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

import suitmap
from climate_fixtures import make_tmin_tmax
from conftest import write_period, write_profile, write_runfile
from suitmap.config.runfile import runfile_from_dict
from suitmap.errors import RunFileError


def _run(tmp_path, tmin, tmax, offsets=""):
    tmp_path.mkdir(parents=True, exist_ok=True)
    prof = write_profile(tmp_path)
    b = write_period(tmp_path / "c", "b", tmin, tmax)
    run = write_runfile(tmp_path, prof, [
        {"name": "baseline", "years": (2001, 2002), "tmin": f"c/{b[0]}", "tmax": f"c/{b[1]}"},
        {"name": "shaded", "years": (2001, 2002), "tmin": f"c/{b[0]}", "tmax": f"c/{b[1]}"}])
    text = run.read_text()
    head = 'name = "shaded"'
    run.write_text(text.replace(head, head + "\n" + offsets))
    return run


def test_constant_and_monthly_offsets_equal_modified_files(tmp_path):
    tmin, tmax = make_tmin_tmax(730, 3, 4, mean=16.0, seed=4)
    months = pd.date_range("2001-01-01", periods=730).month.values
    july = (months == 7)[:, None, None]
    run = _run(tmp_path / "a", tmin, tmax,
               "tmax_offset = -2.0\ntmin_offset = [0, 0, 0, 0, 0, 0, 1.5, 0, 0, 0, 0, 0]")
    out = suitmap.compute_run(run).compute()
    shaded = out.periods["shaded"]
    # the same change written into the files themselves (float32 files, as the offsets are)
    ref_run = _run(tmp_path / "b", (tmin + 1.5 * july).astype("f4"), (tmax - 2.0).astype("f4"))
    ref = suitmap.compute_run(ref_run).compute().periods["baseline"]
    for name in ("degree_days", "generations", "suitability"):
        np.testing.assert_allclose(shaded[name].values, ref[name].values, rtol=1e-5, atol=1e-5)
    diff = out.comparisons["shaded_vs_baseline"]["change_degree_days"].values
    np.testing.assert_allclose(diff, ref["degree_days"].values - out.periods["baseline"]["degree_days"].values,
                               rtol=1e-4, atol=1e-3)
    assert (diff < 0).all()                 # 2 °C off every maximum outweighs a warmer July night
    assert "tmax -2 °C" in shaded.attrs["temperature_offsets"]
    assert "temperature_offsets" not in out.periods["baseline"].attrs
    assert out.keys["shaded"] != out.keys["baseline"]      # the offsets enter the cache key


@pytest.mark.parametrize("value", ["[1, 2]", "30", '"warm"'])
def test_bad_offsets_are_refused(tmp_path, value):
    import tomllib

    raw = tomllib.loads(f'profile = {{path = "p.toml"}}\n[baseline]\nyears = [2001, 2002]\n'
                        f'tmin = "a.nc"\ntmax = "b.nc"\ntmax_offset = {value}\n')
    with pytest.raises(RunFileError, match="baseline.tmax_offset"):
        runfile_from_dict(raw, tmp_path / "run.toml")

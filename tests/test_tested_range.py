"""outside_tested_range: cells whose days leave the lab data's temperatures, by hand."""

from __future__ import annotations

import numpy as np
import pytest

import suitmap
from conftest import write_period, write_profile, write_runfile
from suitmap.errors import SuitmapWarning


def test_flag_by_hand_and_warning(tmp_path):
    # tested 15-25 °C, lower threshold 10.  Daily means (Tmin = Tmax - 4):
    # cell (0,0) 20 every day -> inside;  (0,1) one day at 27 -> above: 1;
    # (1,0) one day at 12, between threshold and range -> extrapolated: 1;
    # (1,1) one day at 8, below the threshold -> no development, not flagged: 0
    mean = np.full((730, 2, 2), 20.0)
    mean[100, 0, 1] = 27.0
    mean[200, 1, 0] = 12.0
    mean[300, 1, 1] = 8.0
    prof = write_profile(tmp_path, lower=10.0, upper=30.0, ddg=300.0)
    prof.write_text(prof.read_text() + "\n[tested_range]\nmin_temperature = 15.0\n"
                                       "max_temperature = 25.0\n")
    b = write_period(tmp_path / "c", "b", mean - 2.0, mean + 2.0)
    run = write_runfile(tmp_path, prof, [{"name": "baseline", "years": (2001, 2002),
                                          "tmin": f"c/{b[0]}", "tmax": f"c/{b[1]}"}])
    with pytest.warns(SuitmapWarning, match="2 cells .* tested range"):
        ds = suitmap.compute_run(run).compute().periods["baseline"]
    np.testing.assert_array_equal(ds["outside_tested_range"].values, [[0, 1], [1, 0]])


def test_fit_records_the_tested_range(tmp_path, capsys, monkeypatch):
    from test_fit_cli import lab_csv

    from suitmap.cli import main
    from suitmap.config.profile import load_profile

    monkeypatch.chdir(tmp_path)
    csv = lab_csv(tmp_path / "rearing.csv")            # rearing at 14, 16, ..., 32 °C
    assert main(["fit", str(csv), "--model", "linear,briere1"]) == 0
    prof = load_profile(tmp_path / "rearing_profile.toml")
    assert prof.biology.tested_range == (14.0, 32.0)

"""Degree-days over the Parton-Logan day in the season kernel and in period layers.

The reference is ``degree_days_parton_logan`` (checked against scipy quadrature of
Parton & Logan 1981's day in tests/test_degree_days_diurnal.py) with Forsythe et al.
(1995) daylength (checked against astral in tests/test_diurnal.py), applied day by day
to the swapped Tmin/Tmax here, independently of the one-pass season kernel.
"""

from __future__ import annotations

import numpy as np
import pytest

import suitmap
from climate_fixtures import make_tmin_tmax
from conftest import write_period, write_runfile
from suitmap.kernels.degree_days_diurnal import degree_days_parton_logan
from suitmap.kernels.diurnal import daylength
from suitmap.kernels.season import season_degree_days

PROFILE = """
[organism]
name = "test weevil (invented)"
[development]
lower_threshold = 9.0
upper_threshold = 27.0
degree_days_per_generation = 350.0
method = "single_sine"
cutoff = "{cutoff}"
{diurnal}
"""


def _reference(tmin, tmax, lat, doy, i0, i1, cutoff, ddg):
    lo, hi = np.minimum(tmin, tmax).astype(float), np.maximum(tmin, tmax).astype(float)
    nxt = np.concatenate([lo[1:], lo[-1:]])                      # last day: its own minimum
    dl = daylength(np.broadcast_to(lat, lo.shape), np.broadcast_to(doy[:, None, None], lo.shape))
    dd = degree_days_parton_logan(lo, hi, nxt, dl, 9.0, 27.0, cutoff=cutoff)[i0:i1]
    run = np.cumsum(dd, axis=0)
    first = np.where((run >= ddg).any(axis=0), (run >= ddg).argmax(axis=0) + 1.0, np.nan)
    return dd.sum(axis=0), first


@pytest.mark.parametrize("cutoff", ["horizontal", "vertical", "intermediate"])
def test_season_kernel_parton_logan_day(cutoff):
    tmin, tmax = make_tmin_tmax(200, 3, 4, mean=14.0, seed=3)
    tmin[40, 1, 1], tmax[40, 1, 1] = tmax[40, 1, 1], tmin[40, 1, 1]   # one swapped day
    lat = np.array([38.0, 51.5, 63.0])[:, None] + np.zeros((3, 4))    # daylength per row
    doy = np.arange(60, 260, dtype=float)
    for i0, i1 in ((0, 200), (20, 150)):
        total, first, *_ = season_degree_days(tmin, tmax, i0, i1, 9.0, 27.0, "single_sine",
                                              cutoff, 350.0, None, None, latitude=lat, doy=doy)
        want_total, want_first = _reference(tmin, tmax, lat, doy, i0, i1, cutoff, 350.0)
        np.testing.assert_allclose(total, want_total, rtol=1e-12)
        np.testing.assert_array_equal(first, want_first)
    # the Parton-Logan day is not the sine day: a cross-check must be able to differ
    sine = season_degree_days(tmin, tmax, 0, 200, 9.0, 27.0, "single_sine", cutoff, 350.0,
                              None, None)[0]
    assert not np.allclose(sine, total, rtol=1e-3)


def _run(tmp_path, profile_diurnal="", run_diurnal=None, cutoff="horizontal"):
    tmin, tmax = make_tmin_tmax(365, 2, 3, mean=13.0, seed=8)
    tmp_path.mkdir(parents=True, exist_ok=True)
    prof = tmp_path / "profile.toml"
    prof.write_text(PROFILE.format(cutoff=cutoff, diurnal=profile_diurnal))
    b = write_period(tmp_path / "c", "b", tmin, tmax)
    extra = "" if run_diurnal is None else f'[compute]\ndiurnal = "{run_diurnal}"'
    run = write_runfile(tmp_path, prof, [{"name": "baseline", "years": (2001, 2001),
                                          "tmin": f"c/{b[0]}", "tmax": f"c/{b[1]}"}], extra=extra)
    return suitmap.compute_run(run).compute().periods["baseline"], tmin, tmax


def test_layers_with_parton_logan_day_and_run_file_override(tmp_path):
    ds, tmin, tmax = _run(tmp_path / "p", profile_diurnal='diurnal = "parton_logan"')
    lat = ds["y"].values[:, None] + np.zeros((1, tmin.shape[2]))      # EPSG:4326: y is latitude
    doy = np.arange(1, 366, dtype=float)
    want, _ = _reference(tmin, tmax, lat, doy, 0, 365, "horizontal", 350.0)
    np.testing.assert_allclose(ds["degree_days"].values, want, rtol=1e-6)   # float32 layer
    np.testing.assert_allclose(ds["generations"].values, want / 350.0, rtol=1e-6)
    assert "Parton-Logan" in ds.attrs["degree_days_from"]
    # the run file's [compute] diurnal gives the same layers from a sine profile
    over, _, _ = _run(tmp_path / "o", run_diurnal="parton_logan")
    np.testing.assert_array_equal(over["degree_days"].values, ds["degree_days"].values)
    sine, _, _ = _run(tmp_path / "s")
    assert "single_sine method" in sine.attrs["degree_days_from"]
    assert not np.allclose(sine["degree_days"].values, ds["degree_days"].values, rtol=1e-3)

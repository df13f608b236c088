"""Period layers over a grid: aggregation, units, calendars, hemispheres, missing cells.

Degree-day formulas themselves are checked against published tables in
test_degree_days.py; here the layers are checked against a plain per-cell loop
that calls the kernel day by day, and against physical expectations.
"""

from __future__ import annotations

import numpy as np
import pytest
import xarray as xr

import suitmap
from climate_fixtures import make_tmin_tmax
from conftest import write_period, write_profile, write_runfile
from suitmap.kernels.degree_days import degree_days as dd_kernel


def layers_of(run):
    return suitmap.compute_run(run).compute()


def reference_cell(tmin, tmax, lower, upper, ddg, season_slices, method="single_sine"):
    """Plain loop: (mean DD, mean generations, mean first day) of one cell."""
    totals, firsts = [], []
    for i0, i1 in season_slices:
        cum = 0.0
        first = None
        for k in range(i0, i1):
            nxt = tmin[k + 1] if k + 1 < len(tmin) else tmin[k]
            cum += float(dd_kernel(tmin[k], tmax[k], lower, upper, method=method,
                                   cutoff="horizontal", tmin_next=nxt))
            if first is None and cum >= ddg:
                first = k - i0 + 1
        totals.append(cum)
        if first is not None:
            firsts.append(first)
    return np.mean(totals), np.mean(totals) / ddg, (np.mean(firsts) if firsts else np.nan)


def test_layers_match_plain_loop(small_case):
    out = layers_of(small_case["run"])
    base = out.periods["baseline"]
    tmin, tmax = small_case["tmin"], small_case["tmax"]
    # 2001 and 2002 are not leap years: seasons are days 0-364 and 365-729
    for j, i in [(1, 1), (3, 4), (2, 0)]:
        dd, gen, first = reference_cell(tmin[:, j, i], tmax[:, j, i], 10.0, 30.0, 300.0,
                                        [(0, 365), (365, 730)])
        assert base["degree_days"].values[j, i] == pytest.approx(dd, rel=1e-6)
        assert base["generations"].values[j, i] == pytest.approx(gen, rel=1e-6)
        assert base["first_generation_day"].values[j, i] == pytest.approx(first)
    assert base.attrs["seasons"] == 2


def test_missing_cells_stay_missing(small_case):
    out = layers_of(small_case["run"])
    for ds in list(out.periods.values()) + list(out.comparisons.values()):
        for name, da in ds.data_vars.items():
            v = da.values[0, 0]
            if da.dtype == np.uint8:
                assert v == 255, name
            else:
                assert np.isnan(v), name
            # and nowhere else is missing for the always-defined layers
        if "suitability" in ds:
            assert np.isfinite(ds["suitability"].values).sum() == 19


def test_warming_never_lowers_generations(small_case):
    out = layers_of(small_case["run"])
    b, w = out.periods["baseline"], out.periods["warm"]
    ok = np.isfinite(b["generations"].values)
    assert (w["generations"].values[ok] >= b["generations"].values[ok]).all()
    assert (w["degree_days"].values[ok] > b["degree_days"].values[ok]).all()
    assert (out.comparisons["warm_vs_baseline"]["change_generations"].values[ok] >= 0).all()


def test_no_generation_means_zero_suitability(tmp_path):
    tmin, tmax = make_tmin_tmax(730, 2, 3, mean=4.0, annual_amplitude=5.0, seed=1)
    prof = write_profile(tmp_path, lower=10.0, upper=30.0, ddg=5000.0)
    b = write_period(tmp_path / "c", "b", tmin, tmax)
    run = write_runfile(tmp_path, prof, [{"name": "baseline", "years": (2001, 2002),
                                          "tmin": f"c/{b[0]}", "tmax": f"c/{b[1]}"}])
    ds = layers_of(run).periods["baseline"]
    assert (ds["complete_generations"].values == 0).all()
    assert (ds["suitability"].values == 0).all()
    assert (ds["years_with_generation"].values == 0).all()
    assert np.isnan(ds["first_generation_day"].values).all()
    assert (ds["limiting_factor"].values == 1).all()  # too_cool


@pytest.mark.parametrize("units", ["K", "degF"])
def test_units_give_same_layers(tmp_path, units):
    tmin, tmax = make_tmin_tmax(365, 3, 3, seed=5)
    prof = write_profile(tmp_path)
    ref = write_period(tmp_path / "c", "c", tmin, tmax, units="degC")
    alt = write_period(tmp_path / "u", "u", tmin, tmax, units=units)
    r1 = write_runfile(tmp_path, prof, [{"name": "baseline", "years": (2001, 2001),
                                         "tmin": f"c/{ref[0]}", "tmax": f"c/{ref[1]}"}])
    a = layers_of(r1).periods["baseline"]
    r2 = write_runfile(tmp_path, prof, [{"name": "baseline", "years": (2001, 2001),
                                         "tmin": f"u/{alt[0]}", "tmax": f"u/{alt[1]}"}])
    b = layers_of(r2).periods["baseline"]
    # float32 storage of K/°F values carries ~1e-5 °C error per day
    np.testing.assert_allclose(a["degree_days"].values, b["degree_days"].values, rtol=1e-4)
    np.testing.assert_array_equal(a["limiting_factor"].values, b["limiting_factor"].values)


@pytest.mark.parametrize("calendar, n_days", [("noleap", 730), ("360_day", 720), ("all_leap", 732)])
def test_model_calendars(tmp_path, calendar, n_days):
    tmin, tmax = make_tmin_tmax(n_days, 2, 2, seed=7)
    prof = write_profile(tmp_path)
    b = write_period(tmp_path / "c", "b", tmin, tmax, calendar=calendar, start="2041-01-01")
    run = write_runfile(tmp_path, prof, [{"name": "baseline", "years": (2041, 2042),
                                          "tmin": f"c/{b[0]}", "tmax": f"c/{b[1]}"}])
    ds = layers_of(run).periods["baseline"]
    assert ds.attrs["seasons"] == 2 and ds.attrs["calendar"] == calendar
    half = n_days // 2
    dd, _, _ = reference_cell(tmin[:, 1, 0], tmax[:, 1, 0], 10.0, 30.0, 300.0,
                              [(0, half), (half, n_days)])
    assert ds["degree_days"].values[1, 0] == pytest.approx(dd, rel=1e-6)


def test_0_360_longitudes_give_same_map(tmp_path):
    tmin, tmax = make_tmin_tmax(365, 3, 4, seed=9)
    prof = write_profile(tmp_path)
    a = write_period(tmp_path / "a", "a", tmin, tmax, lon0=-2.0)
    b = write_period(tmp_path / "b", "b", tmin, tmax, lon0=-2.0, lon_0_360=True)
    runs = [write_runfile(tmp_path, prof, [{"name": "baseline", "years": (2001, 2001),
                                            "tmin": f"{d}/{f[0]}", "tmax": f"{d}/{f[1]}"}],
                          out=f"out_{d}") for d, f in (("a", a), ("b", b))]
    x = layers_of(runs[0]).periods["baseline"]
    y = layers_of(runs[1]).periods["baseline"]
    np.testing.assert_array_equal(x["x"].values, y["x"].values)
    np.testing.assert_allclose(x["degree_days"].values, y["degree_days"].values)


def test_southern_season_wraps_new_year(tmp_path):
    # two rows: one at 0.5 N, one at 0.5 S; same weather in both
    n = 3 * 365
    tmin, tmax = make_tmin_tmax(n, 1, 2, seed=11)
    tmin = np.repeat(tmin, 2, axis=1)
    tmax = np.repeat(tmax, 2, axis=1)
    prof = write_profile(tmp_path, ddg=250.0)
    b = write_period(tmp_path / "c", "b", tmin, tmax, lat0=1.0, res=1.0, start="2001-01-01")
    run = write_runfile(tmp_path, prof, [{"name": "baseline", "years": (2001, 2003),
                                          "tmin": f"c/{b[0]}", "tmax": f"c/{b[1]}"}])
    ds = layers_of(run).periods["baseline"]
    assert ds["y"].values[0] > 0 > ds["y"].values[1]
    north = reference_cell(tmin[:, 0, 0], tmax[:, 0, 0], 10.0, 30.0, 250.0,
                           [(0, 365), (365, 730), (730, 1095)])
    # 1 Jul is day index 181 in a non-leap year; 2003/04 is incomplete in the data
    south = reference_cell(tmin[:, 1, 0], tmax[:, 1, 0], 10.0, 30.0, 250.0,
                           [(181, 546), (546, 911)])
    assert ds["degree_days"].values[0, 0] == pytest.approx(north[0], rel=1e-6)
    assert ds["degree_days"].values[1, 0] == pytest.approx(south[0], rel=1e-6)
    assert ds["first_generation_day"].values[1, 0] == pytest.approx(south[2])
    assert ds.attrs["seasons_southern"] == "2001,2002"


def test_result_does_not_depend_on_chunking(small_case):
    text = small_case["run"].read_text() + "\n[compute]\nchunk_cells = 1\n"
    other = small_case["dir"] / "run_chunked.toml"
    other.write_text(text)
    a = layers_of(small_case["run"]).periods["baseline"]
    b = layers_of(other).periods["baseline"]
    xr.testing.assert_identical(a[["degree_days", "suitability"]], b[["degree_days", "suitability"]])


def test_layers_are_lazy_and_carry_cf_attrs(small_case):
    lazy = suitmap.compute_run(small_case["run"])
    ds = lazy.periods["baseline"]
    assert ds["degree_days"].chunks is not None
    assert ds["degree_days"].attrs["standard_name"] == "integral_wrt_time_of_air_temperature_excess"
    assert ds["limiting_factor"].attrs["flag_meanings"].split()[0] == "none"
    assert ds.rio.crs is not None


def test_crossed_days_are_swapped_and_counted(tmp_path):
    """Days with Tmin > Tmax give the same layers as the repaired days, with a warning."""
    from suitmap.errors import SuitmapWarning

    tmin, tmax = make_tmin_tmax(365, 2, 2, seed=13)
    prof = write_profile(tmp_path)
    good = write_period(tmp_path / "g", "g", tmin, tmax)
    bad_min, bad_max = tmin.copy(), tmax.copy()
    bad_min[100:103, 0, 1], bad_max[100:103, 0, 1] = tmax[100:103, 0, 1], tmin[100:103, 0, 1]
    bad = write_period(tmp_path / "b", "b", bad_min, bad_max)
    runs = [write_runfile(tmp_path, prof, [{"name": "baseline", "years": (2001, 2001),
                                            "tmin": f"{d}/{f[0]}", "tmax": f"{d}/{f[1]}"}],
                          out=f"out_{d}") for d, f in (("g", good), ("b", bad))]
    a = layers_of(runs[0]).periods["baseline"]
    with pytest.warns(SuitmapWarning, match="3 cell-days had Tmin > Tmax"):
        b = layers_of(runs[1]).periods["baseline"]
    np.testing.assert_array_equal(a["degree_days"].values, b["degree_days"].values)
    assert b.attrs["tmin_tmax_swapped_cell_days"] == 3

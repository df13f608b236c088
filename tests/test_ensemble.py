"""suitmap.comparison.ensemble: statistics across climate models."""

from __future__ import annotations

import math

import dask
import dask.array as dsa
import numpy as np
import pytest
import rioxarray  # noqa: F401
import xarray as xr

from suitmap.comparison.ensemble import ensemble_stats, hatch_mask
from suitmap.errors import GridMismatch, InputError
from suitmap.layers.metadata import layer_attrs

Y = np.array([50.5, 49.5])
X = np.array([1.5, 2.5, 3.5])


def member(change_dd, suit=None, *, x=X, chunks=None):
    """A change dataset like suitmap.comparison.change's: two numeric layers and one class layer."""
    change_dd = np.asarray(change_dd, dtype="float32")
    suit = np.zeros_like(change_dd) if suit is None else np.asarray(suit, dtype="float32")
    ds = xr.Dataset(
        {"change_degree_days": (("y", "x"), change_dd, layer_attrs("change_degree_days")),
         "change_suitability": (("y", "x"), suit, layer_attrs("change_suitability")),
         "change_class": (("y", "x"), np.zeros(change_dd.shape, np.uint8), layer_attrs("change_class"))},
        coords={"y": Y[: change_dd.shape[0]], "x": x[: change_dd.shape[1]]})
    ds = ds.rio.write_crs("EPSG:4326")
    return ds.chunk(chunks) if chunks else ds


def type7(values, p):
    """Sample quantile definition 7 of Hyndman & Fan (1996, Am. Stat. 50:361-365):
    h = (n-1)p + 1, Q = x_(floor h) + (h - floor h)(x_(floor h + 1) - x_(floor h))."""
    x = sorted(values)
    h = (len(x) - 1) * p + 1
    lo = math.floor(h)
    return x[lo - 1] + (h - lo) * ((x[lo] if lo < len(x) else x[lo - 1]) - x[lo - 1])


@pytest.mark.parametrize("n", [4, 5, 7])
def test_median_and_percentiles_follow_hyndman_fan_type7(n):
    rng = np.random.default_rng(n)
    vals = rng.normal(0, 50, (n, 2, 3)).round(3)
    ens = ensemble_stats({f"model{i}": member(v) for i, v in enumerate(vals)}).compute()
    for j in range(2):
        for i in range(3):
            cell = [float(np.float32(v)) for v in vals[:, j, i]]
            for name, p in (("ensemble_p10", 0.1), ("ensemble_median", 0.5), ("ensemble_p90", 0.9)):
                got = float(ens[f"{name}_change_degree_days"][j, i])
                assert got == pytest.approx(type7(cell, p), abs=1e-4), (name, cell)
    # the median is the usual median (middle value, or mean of the two middle ones; common practice, no source)
    assert float(ens["ensemble_median_change_degree_days"][0, 0]) == pytest.approx(
        float(np.median(vals[:, 0, 0].astype("float32"))), abs=1e-4)


NONE, ROBUST, CONFLICT = 0, 1, 2  # codes of ROBUST_CHANGE_CLASSES, written out here


def test_model_agreement_and_robust_change_by_counting():
    # per cell: changes of 5 models; agreement (share with the median's sign) and class counted by hand.
    # Rule: IPCC AR6 WGI Atlas simple approach (Gutierrez et al. 2021, Cross-Chapter Box Atlas.1):
    # robust where >= 80 % of the models share the sign; "conflicting" (suitmap's definition): the
    # minority sign alone holds more than 20 % of the models.
    cells = {
        (0, 0): ([1, 2, -1, 3, 0], 3 / 5, NONE),     # 3 of 5 positive: not robust; 1 negative <= 20 %
        (0, 1): ([1, 1, 1, -1, 2], 4 / 5, ROBUST),   # 4 of 5 positive: robust at 80 %
        (0, 2): ([0, 0, 0, 1, -1], 3 / 5, NONE),     # mostly no change: no robust signal
        (1, 0): ([-2, -3, -1, -5, -4], 1.0, ROBUST),  # all negative
        (1, 1): ([0, 0, 0, 0, 0], 1.0, NONE),        # no change anywhere: zero supports no sign
        (1, 2): ([2, 2, -2, -2, 1], 3 / 5, CONFLICT),  # 3 up, 2 down: 40 % on the minority side
    }
    vals = np.zeros((5, 2, 3))
    for (j, i), (v, _, _) in cells.items():
        vals[:, j, i] = v
    ens = ensemble_stats({f"m{k}": member(vals[k]) for k in range(5)}).compute()
    agree = ens["model_agreement_change_degree_days"].values
    robust = ens["robust_change_degree_days"].values
    for (j, i), (_, a, r) in cells.items():
        assert agree[j, i] == pytest.approx(a), (j, i)
        assert robust[j, i] == r, (j, i)
    assert robust.dtype == np.uint8
    assert ens["robust_change_degree_days"].encoding["_FillValue"] == 255
    assert not any("change_change" in v for v in ens.data_vars)
    assert ens["robust_change_degree_days"].attrs["flag_meanings"] == \
        "no_robust_signal robust conflicting_signals"
    assert ens["robust_change_degree_days"].attrs["agreement_level"] == 0.8
    # five models: no small-ensemble caution
    assert "small_ensemble_caution" not in ens.attrs
    # hatch where models disagree: agreement below the level
    mask = hatch_mask(ens["model_agreement_change_degree_days"], 0.8).values
    np.testing.assert_array_equal(mask, agree < 0.8)


@pytest.mark.parametrize("signs, level, expected", [
    ([1, 1, 1, -1, -1], 0.8, CONFLICT),     # 3 of 5 agree: not robust at 80 %
    ([1, 1, 1, 0, 0], 0.8, NONE),           # 3 of 5, the rest no change
    ([1, 1, 1, 1, -1], 0.8, ROBUST),        # 4 of 5
    ([1, 1, 1, -1, -1], 0.6, ROBUST),       # the level is configurable: 3 of 5 reach 0.6
    ([1, 1, -1], 0.8, CONFLICT),            # three models: 2 of 3 is not robust at 80 %
    ([1, 1, 1], 0.8, ROBUST),
    ([1, 1, 1, 1, 1, 1, 1, -1, -1, 0], 0.8, NONE),    # 7 up, 2 down (not > 20 %), 1 none
    ([1, 1, 1, 1, 1, 1, 1, -1, -1, -1], 0.8, CONFLICT),  # 7 up, 3 down (> 20 %)
    ([0, 0, 0, 0, 0], 0.8, NONE),           # zero change everywhere: no robust signal
])
def test_robustness_classes_on_constructed_cases(signs, level, expected):
    vals = np.array(signs, dtype=float)[:, None, None] * np.ones((len(signs), 1, 1))
    ens = ensemble_stats({f"m{k}": member(vals[k]) for k in range(len(signs))},
                         agreement_level=level).compute()
    assert ens["robust_change_degree_days"].values[0, 0] == expected


def test_four_of_six_reach_two_thirds_whatever_the_rounding():
    vals = np.array([1, 1, 1, 1, -1, -1], dtype=float)[:, None, None] * np.ones((6, 1, 1))
    ens = ensemble_stats({f"m{k}": member(vals[k]) for k in range(6)}, agreement_level=2 / 3).compute()
    assert ens["model_agreement_change_degree_days"].values[0, 0] == pytest.approx(4 / 6)
    assert ens["robust_change_degree_days"].values[0, 0] == ROBUST
    # at the default 0.8 the same cell is contested: 2 of 6 (> 20 %) on the other side
    dflt = ensemble_stats({f"m{k}": member(vals[k]) for k in range(6)}).compute()
    assert dflt["robust_change_degree_days"].values[0, 0] == CONFLICT


def test_small_ensemble_caution_and_bad_level():
    ens = ensemble_stats({"a": member([[1.0]]), "b": member([[2.0]]), "c": member([[4.0]])})
    assert "3 climate models" in ens.attrs["small_ensemble_caution"]
    assert all("small_ensemble_caution" in ens[v].attrs for v in ens.data_vars)
    with pytest.raises(InputError, match="above 0.5"):
        ensemble_stats({"a": member([[1.0]]), "b": member([[2.0]])}, agreement_level=0.5)


def test_zero_tolerance_counts_small_changes_as_zero():
    vals = np.array([0.02, -0.03, 0.01, 2.0, 3.0])[:, None, None] * np.ones((5, 1, 1))
    strict = ensemble_stats({f"m{k}": member(vals[k]) for k in range(5)}).compute()
    loose = ensemble_stats({f"m{k}": member(vals[k]) for k in range(5)}, zero_tol=0.05).compute()
    # median 0.02 > 0: with tol 0 the positive models agree (0.02, 0.01, 2, 3) -> 4/5
    assert strict["model_agreement_change_degree_days"].values[0, 0] == pytest.approx(0.8)
    assert strict["robust_change_degree_days"].values[0, 0] == ROBUST
    # with tol 0.05 the median counts as no change: 3 models are "zero" -> 3/5, not robust
    assert loose["model_agreement_change_degree_days"].values[0, 0] == pytest.approx(0.6)
    assert loose["robust_change_degree_days"].values[0, 0] == NONE


def test_cell_missing_in_any_model_is_missing():
    vals = np.arange(15, dtype=float).reshape(5, 1, 3) + 1
    vals[2, 0, 1] = np.nan
    ens = ensemble_stats({f"m{k}": member(vals[k]) for k in range(5)}).compute()
    for name in ("ensemble_median", "ensemble_p10", "ensemble_p90", "model_agreement"):
        v = ens[f"{name}_change_degree_days"].values[0]
        assert np.isnan(v[1]) and np.isfinite(v[[0, 2]]).all(), name
    assert ens["robust_change_degree_days"].values[0, 1] == 255


def test_layers_attrs_and_class_layers_skipped():
    ens = ensemble_stats({"a": member([[1.0]]), "b": member([[2.0]]), "c": member([[4.0]])})
    assert "ensemble_median_change_degree_days" in ens and "ensemble_median_change_suitability" in ens
    assert not any("change_class" in v for v in ens.data_vars)
    med = ens["ensemble_median_change_degree_days"]
    base = layer_attrs("change_degree_days")
    assert med.attrs["units"] == base["units"] == "K d"
    assert med.attrs["cell_methods"].endswith("realization: median")   # CF: 'realization' = ensemble axis
    assert med.attrs["cell_methods"].startswith(base["cell_methods"])
    assert med.attrs["n_models"] == 3 and med.attrs["models"] == "a; b; c"
    assert ens["ensemble_p90_change_degree_days"].attrs["percentile"] == 90
    assert ens["model_agreement_change_degree_days"].attrs["units"] == "1"
    assert ens["robust_change_degree_days"].attrs["flag_values"] == [0, 1, 2]
    assert ens.attrs["n_models"] == 3 and ens.rio.crs.to_epsg() == 4326
    with pytest.raises(InputError, match="class layer"):
        ensemble_stats({"a": member([[1.0]]), "b": member([[2.0]])}, layers=["change_class"])
    with pytest.raises(InputError, match="missing from model"):
        ensemble_stats({"a": member([[1.0]]), "b": member([[2.0]])}, layers=["change_generations"])


def test_period_layers_get_no_agreement():
    def period(v):
        return xr.Dataset({"degree_days": (("y", "x"), np.full((2, 3), v, "float32"), layer_attrs("degree_days"))},
                          coords={"y": Y, "x": X}).rio.write_crs("EPSG:4326")
    ens = ensemble_stats({"a": period(100.0), "b": period(300.0)})
    assert sorted(ens.data_vars) == ["ensemble_median_degree_days", "ensemble_p10_degree_days",
                                     "ensemble_p90_degree_days"]
    # two models: type 7 gives the midpoint for the median and 100 + 0.1*200 for p10 (Hyndman & Fan 1996)
    assert float(ens["ensemble_median_degree_days"][0, 0]) == pytest.approx(200.0)
    assert float(ens["ensemble_p10_degree_days"][0, 0]) == pytest.approx(120.0)


def test_grid_mismatch_and_too_few_models():
    with pytest.raises(GridMismatch, match="model 'b'"):
        ensemble_stats({"a": member([[1.0, 2.0]]), "b": member([[1.0, 2.0]], x=X + 0.5)})
    with pytest.raises(InputError, match="at least two"):
        ensemble_stats({"a": member([[1.0]])})


def test_lazy_in_lazy_out():
    rng = np.random.default_rng(1)
    vals = rng.normal(0, 1, (5, 2, 3))
    lazy = {f"m{k}": member(vals[k], chunks={"y": 1}) for k in range(5)}

    def no_compute(*args, **kwargs):
        raise AssertionError("computed while building the graph")

    with dask.config.set(scheduler=no_compute):
        ens = ensemble_stats(lazy)
    assert all(isinstance(ens[v].data, dsa.Array) for v in ens.data_vars)
    eager = ensemble_stats({f"m{k}": member(vals[k]) for k in range(5)})
    xr.testing.assert_equal(ens.compute(), eager.compute())

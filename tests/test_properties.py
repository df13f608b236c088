"""Properties (hypothesis) the published definitions imply, on random inputs.

* Degree-days of one day lie in [0, U − L]: each method integrates (or
  averages) the part of the day's temperature curve between the thresholds,
  which is at most U − L for a whole day (Baskerville & Emin 1969, Ecology 50:
  514-517; Allen 1976, Environ. Entomol. 5: 388-396; Zalom et al. 1983, UC
  DANR Leaflet 21373, Tables 2-6).
* With the horizontal cutoff, a warmer day never gives fewer degree-days: the
  integrand min(max(T − L, 0), U − L) is non-decreasing in T, and the sine and
  triangle curves rise pointwise with Tmin and with Tmax (same sources).
  (The vertical and intermediate cutoffs remove heat above U on purpose, so
  they are not monotone in Tmax.)
* Suitability, its development and survival scores lie in [0, 1] (the
  definition in README, "Layers": a share of years times a capped ratio,
  times a share of seasons).
* The layers do not depend on the spatial chunks or on the dask scheduler
  (each cell is computed from its own days only).
"""

from __future__ import annotations

import dask
import numpy as np
import pandas as pd
import pytest
import xarray as xr
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from climate_fixtures import make_tmin_tmax
from suitmap.config.profile import profile_from_dict
from suitmap.kernels.degree_days import CUTOFFS, METHODS, degree_days
from suitmap.layers.compute import compute_layers

temps = st.floats(-40.0, 55.0, allow_nan=False, allow_infinity=False)
steps = st.floats(0.0, 20.0, allow_nan=False, allow_infinity=False)
thresholds = st.tuples(st.floats(-5.0, 20.0), st.floats(1.0, 30.0)).map(lambda t: (t[0], t[0] + t[1]))
EPS = 1e-9


def _dd(tmin, tmax, lu, method, cutoff, tnext=None):
    return float(degree_days(tmin, tmax, lu[0], lu[1], method=method, cutoff=cutoff,
                             tmin_next=tnext))


@settings(max_examples=300, deadline=None)
@given(a=temps, b=temps, c=temps, lu=thresholds, method=st.sampled_from(METHODS),
       cutoff=st.sampled_from(CUTOFFS))
def test_degree_days_bounded_by_threshold_span(a, b, c, lu, method, cutoff):
    tmin, tmax = min(a, b), max(a, b)
    value = _dd(tmin, tmax, lu, method, cutoff, tnext=min(c, tmax))
    assert -EPS <= value <= lu[1] - lu[0] + 1e-7


@settings(max_examples=300, deadline=None)
@given(a=temps, b=temps, d=steps, lu=thresholds, method=st.sampled_from(METHODS))
def test_degree_days_monotone_in_tmax(a, b, d, lu, method):
    tmin, tmax = min(a, b), max(a, b)
    assert _dd(tmin, tmax + d, lu, method, "horizontal") >= _dd(tmin, tmax, lu, method, "horizontal") - 1e-7


@settings(max_examples=300, deadline=None)
@given(a=temps, b=temps, share=st.floats(0.0, 1.0), lu=thresholds, method=st.sampled_from(METHODS))
def test_degree_days_monotone_in_tmin(a, b, share, lu, method):
    tmin, tmax = min(a, b), max(a, b)
    warmer = tmin + share * (tmax - tmin)  # still at most tmax
    assert _dd(warmer, tmax, lu, method, "horizontal") >= _dd(tmin, tmax, lu, method, "horizontal") - 1e-7


# ------------------------------------------------------------------ layers
PROFILE = profile_from_dict({
    "organism": {"name": "Karsvale property moth (invented)"},
    "development": {"lower_threshold": 10.0, "upper_threshold": 30.0, "degree_days_per_generation": 300.0},
    "survival": {"lethal_cold": -15.0, "lethal_heat": 40.0},
    "suitability": {"saturating_generations": 2.0}})


def _field(values, role, chunks):
    nt, ny, nx = values.shape
    da = xr.DataArray(values, dims=("time", "y", "x"), name=role,
                      coords={"time": pd.date_range("2001-01-01", periods=nt),
                              "y": 51.5 - np.arange(ny), "x": 0.5 + np.arange(nx)},
                      attrs={"calendar": "standard", "units": "degC"})
    return da.rio.write_crs("EPSG:4326").chunk({"time": -1, **chunks})


def _layers(tmin, tmax, chunks):
    return compute_layers(_field(tmin, "tmin", chunks), _field(tmax, "tmax", chunks), PROFILE,
                          (2001, 2002), fast=True)


@settings(max_examples=12, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(mean=st.floats(-25.0, 35.0), amplitude=st.floats(0.0, 25.0), daily=st.floats(0.5, 25.0),
       seed=st.integers(0, 2**16))
def test_suitability_and_scores_stay_in_unit_interval(mean, amplitude, daily, seed):
    tmin, tmax = make_tmin_tmax(730, 2, 3, mean=mean, annual_amplitude=amplitude, daily_range=daily,
                                seed=seed)
    ds = _layers(tmin, tmax, {"y": -1, "x": -1}).compute()
    for name in ("suitability", "development_score", "survival_score"):
        v = ds[name].values
        assert np.all(np.isfinite(v)), name
        assert np.all((v >= 0.0) & (v <= 1.0)), (name, v)


@settings(max_examples=5, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(cy=st.integers(1, 3), cx=st.integers(1, 4), seed=st.integers(0, 2**16))
def test_layers_independent_of_chunks_and_scheduler(cy, cx, seed):
    tmin, tmax = make_tmin_tmax(730, 3, 4, mean=14.0, seed=seed)
    whole = _layers(tmin, tmax, {"y": -1, "x": -1}).compute(scheduler="threads")
    with dask.config.set(scheduler="synchronous"):
        parts = _layers(tmin, tmax, {"y": cy, "x": cx}).compute()
    for name in whole.data_vars:
        np.testing.assert_array_equal(whole[name].values, parts[name].values, err_msg=name)


@pytest.mark.parametrize("method", METHODS)
def test_a_day_above_both_thresholds_gives_the_span(method):
    """Anchors the bound: a whole day above U gives exactly U − L with the horizontal cutoff
    (Zalom et al. 1983, Table 2, case Tmin ≥ U)."""
    assert _dd(35.0, 40.0, (10.0, 30.0), method, "horizontal") == pytest.approx(20.0)

"""The Python API's fast paths (``fast=True``, the default) against the exact route.

The fast routes are the pipeline's: float32 sine degree-days and rate tables.
Their stated accuracy (README, ``fast_tables``) is what is checked here; the
exact kernels themselves are checked against published tables elsewhere
(test_degree_days.py, test_development.py).
"""

from __future__ import annotations

import numpy as np
import pytest
import xarray as xr

import suitmap

RNG = np.random.default_rng(20261205)


def _days(n=20000, dtype=np.float64):
    tmin = RNG.uniform(-10, 30, n)
    tmax = tmin + RNG.uniform(0, 22, n)
    return tmin.astype(dtype), tmax.astype(dtype)


@pytest.mark.parametrize("method", ["single_sine", "double_sine"])
@pytest.mark.parametrize("cutoff", ["horizontal", "vertical", "intermediate"])
def test_fast_degree_days_within_stated_accuracy(method, cutoff):
    tmin, tmax = _days(dtype=np.float32)
    nxt = np.roll(tmin, -1)
    fast = suitmap.degree_days(tmin, tmax, 10.0, 30.0, method=method, cutoff=cutoff,
                               tmin_next=nxt)
    exact = suitmap.degree_days(tmin, tmax, 10.0, 30.0, method=method, cutoff=cutoff,
                                tmin_next=nxt, fast=False, dtype=np.float64)
    assert fast.dtype == np.float32
    # README: "within about 1e-5 °C·day per day of the float64 formulas"
    # (plus float32 rounding of the output itself, ~2e-6 at 20 °C·day)
    assert np.max(np.abs(fast.astype(np.float64) - exact)) < 3e-5
    # the fast route really is another computation (float32 arithmetic)
    assert np.any(fast.astype(np.float64) != exact)


# Zalom et al. (1983) DANR Leaflet 21373, Table 7, single sine, horizontal cutoff,
# L = 55 °F, U = 90 °F: (Tmin, Tmax) -> degree-days (°F·day)
ZALOM_SINGLE_SINE = [((50, 82), 11.85), ((45, 70), 5.31), ((75, 95), 28.91),
                     ((50, 101), 18.95), ((48, 95), 16.96), ((60, 80), 15.0)]


def test_fast_single_sine_reproduces_published_table():
    tmin = np.array([r[0][0] for r in ZALOM_SINGLE_SINE], np.float32)
    tmax = np.array([r[0][1] for r in ZALOM_SINGLE_SINE], np.float32)
    got = suitmap.degree_days(tmin, tmax, 55.0, 90.0)
    np.testing.assert_allclose(got, [r[1] for r in ZALOM_SINGLE_SINE], atol=0.006)


def test_output_type_follows_input_unless_asked():
    tmin, tmax = _days(100, np.float32)
    assert suitmap.degree_days(tmin, tmax, 10, 30).dtype == np.float32
    assert suitmap.degree_days(tmin, tmax, 10, 30, dtype="float64").dtype == np.float64
    assert suitmap.degree_days(tmin.astype(float), tmax.astype(float), 10, 30).dtype == np.float64
    assert suitmap.degree_days(tmin, tmax, 10, 30, method="average").dtype == np.float32
    with pytest.raises(ValueError, match="dtype"):
        suitmap.degree_days(tmin, tmax, 10, 30, dtype="int16")
    assert isinstance(suitmap.degree_days(12.0, 24.0, 12.0, 30.0), float)


def test_fast_degree_days_on_lazy_xarray_match_numpy():
    tmin, tmax = _days(6 * 5 * 4, np.float32)
    da = lambda v: xr.DataArray(v.reshape(6, 5, 4), dims=("time", "y", "x")).chunk({"y": 2})
    out = suitmap.degree_days(da(tmin), da(tmax), 10.0, 30.0, method="double_sine")
    assert out.dtype == np.float32 and out.chunks is not None
    nxt = np.concatenate([tmin.reshape(6, 20)[1:], tmin.reshape(6, 20)[-1:]]).reshape(-1)
    ref = suitmap.degree_days(tmin, tmax, 10.0, 30.0, method="double_sine", tmin_next=nxt)
    np.testing.assert_array_equal(out.values.reshape(-1), ref)


def test_bad_names_are_refused_on_the_fast_route():
    with pytest.raises(ValueError):
        suitmap.degree_days(10.0, 20.0, 5.0, 30.0, cutoff="diagonal")


BRIERE1 = dict(a=1.453e-4, t_low=9.645, t_high=37.6185)   # Aghdam et al. 2009, Briere-1


@pytest.mark.parametrize("diurnal", ["sine", "parton_logan"])
def test_fast_development_within_stated_accuracy(diurnal):
    tmin, tmax = _days(4000, np.float32)
    lat = np.full(tmin.shape, 47.0)
    doy = RNG.integers(60, 300, tmin.shape)
    kw = dict(diurnal=diurnal, lat=lat, doy=doy) if diurnal == "parton_logan" else {}
    fast = suitmap.daily_development(tmin, tmax, "briere1", BRIERE1, **kw)
    exact = suitmap.daily_development(tmin, tmax, "briere1", BRIERE1, fast=False,
                                      dtype=np.float64, **kw)
    assert fast.dtype == np.float32
    # README: rate tables "within 1e-3 of the exact integral" (relative to the peak rate)
    peak = float(np.max(exact))
    assert np.max(np.abs(fast - exact)) <= 1e-3 * max(peak, 1e-9) + 1e-6
    assert np.any(fast.astype(np.float64) != exact)


def test_fast_development_on_xarray_and_invalid_parameters():
    tmin, tmax = _days(3 * 4, np.float32)
    da = lambda v: xr.DataArray(v.reshape(3, 4), dims=("time", "x"))
    out = suitmap.daily_development(da(tmin), da(tmax), "briere1", BRIERE1)
    ref = suitmap.daily_development(tmin, tmax, "briere1", BRIERE1)
    np.testing.assert_array_equal(out.values.reshape(-1), ref)
    assert "table" in out.attrs["long_name"]
    with pytest.raises(ValueError):
        suitmap.daily_development(tmin, tmax, "briere1", dict(BRIERE1, t_high=5.0))

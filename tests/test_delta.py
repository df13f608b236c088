"""suitmap.climate.delta: delta-change downscaling of daily temperatures."""

from __future__ import annotations

import datetime as dt

import dask
import dask.array as dsa
import numpy as np
import pandas as pd
import pytest
import rioxarray  # noqa: F401
import xarray as xr

from suitmap.climate.delta import apply_deltas, monthly_deltas
from suitmap.errors import InputError

YEAR_LEN = {"noleap": 365, "360_day": 360, "all_leap": 366}


def model(calendar, first_year, n_years, values, *, west=-10.0, north=60.0, res=2.0, ny=4, nx=5,
          role="tmin", files="model.nc"):
    """Coarse model daily °C; ``values(key, year_index)`` gives (n,) day values or (n, ny, nx)."""
    n = n_years * YEAR_LEN[calendar]
    t = xr.date_range(f"{first_year:04d}-01-01", periods=n, freq="D", calendar=calendar, use_cftime=True)
    key = np.tile(np.arange(YEAR_LEN[calendar]), n_years)
    year = np.repeat(np.arange(n_years), YEAR_LEN[calendar])
    v = np.asarray(values(key, year), dtype="float64")
    if v.ndim == 1:
        v = np.broadcast_to(v[:, None, None], (n, ny, nx))
    da = xr.DataArray(v.astype("float32"), dims=("time", "y", "x"),
                      coords={"time": t, "y": north - (np.arange(ny) + 0.5) * res,
                              "x": west + (np.arange(nx) + 0.5) * res},
                      attrs={"calendar": calendar, "suitmap_role": role, "source_files": files}, name=role)
    return da.chunk({"time": -1, "y": 2, "x": 3}).rio.write_crs("EPSG:4326")


def baseline(first="2003-01-01", last="2005-12-31", *, seed=0, ny=12, nx=16, role="tmin"):
    """Fine observed daily °C on the standard calendar (datetime64), multiples of 1/16."""
    t = pd.date_range(first, last, freq="D")
    rng = np.random.default_rng(seed)
    v = np.round(rng.normal(10, 6, (t.size, ny, nx)) * 16) / 16
    da = xr.DataArray(v.astype("float32"), dims=("time", "y", "x"),
                      coords={"time": t, "y": 57.9 - np.arange(ny) * 0.25, "x": -6.9 + np.arange(nx) * 0.25},
                      attrs={"calendar": "standard", "suitmap_role": role, "units": "degC",
                             "source_files": "obs.nc"}, name=role)
    return da.chunk({"time": -1, "y": 6, "x": 8}).rio.write_crs("EPSG:4326")


def seasonal(key, n_days):
    return 8.0 - 10.0 * np.cos(2 * np.pi * key / n_days)


# --------------------------------------------------------------------------- exact cases
@pytest.mark.parametrize("smoothing", ["monthly", "doy"])
def test_zero_deltas_reproduce_baseline_exactly(smoothing):
    hist = model("noleap", 1991, 2, lambda k, y: seasonal(k, 365) + 0.5 * y)
    d = monthly_deltas(hist, hist.copy(), smoothing=smoothing)
    assert float(np.abs(d).max()) == 0.0
    base = baseline()
    out = apply_deltas(base, d)
    np.testing.assert_array_equal(out.values, base.values)     # x + 0 == x (IEEE 754)
    np.testing.assert_array_equal(out.time.values, base.time.values)


@pytest.mark.parametrize("calendar", ["noleap", "360_day", "all_leap"])
@pytest.mark.parametrize("smoothing", ["monthly", "doy"])
def test_uniform_model_change_shifts_every_day_by_it(calendar, smoothing):
    n = YEAR_LEN[calendar]
    # model values are multiples of 1/8, so hist + 2 is exact in float32 (IEEE 754)
    f = lambda k, y: np.round(seasonal(k, n) * 8) / 8 + y
    hist = model(calendar, 1991, 3, f)
    fut = model(calendar, 2051, 3, lambda k, y: f(k, y) + 2.0)
    d = monthly_deltas(hist, fut, smoothing=smoothing)
    assert d.sizes["month" if smoothing == "monthly" else "dayofyear"] == (12 if smoothing == "monthly" else n)
    np.testing.assert_allclose(d.values, 2.0, rtol=0, atol=1e-12)
    base = baseline()                          # 2004 is a leap year: 29 February included
    out = apply_deltas(base, d)
    # the baseline is on multiples of 1/16, so baseline + 2 is exact in float32 as well
    np.testing.assert_array_equal(out.values, base.values + np.float32(2.0))
    assert out.attrs["calendar"] == "standard" and np.array_equal(out.time.values, base.time.values)


def test_spatially_linear_delta_is_interpolated_exactly():
    # the change varies linearly in longitude/latitude on the coarse grid; bilinear
    # regridding reproduces a linear field exactly (Press et al. 2007, Numerical Recipes 3rd ed., 3.6)
    hist = model("noleap", 1991, 1, lambda k, y: 0 * k)
    ch = lambda lon, lat: 1.0 + 0.25 * lon - 0.125 * (lat - 50)
    lon, lat = np.meshgrid(hist.x, hist.y)
    fut = hist + ch(lon, lat).astype("float32")
    fut.attrs = dict(hist.attrs)
    d = monthly_deltas(hist, fut)
    base = baseline(first="2003-01-01", last="2003-03-31")
    out = apply_deltas(base, d)
    blon, blat = np.meshgrid(base.x, base.y)
    np.testing.assert_allclose((out - base).values, np.broadcast_to(ch(blon, blat), base.shape),
                               rtol=0, atol=2e-5)  # float32 rounding of values near 10 °C


# --------------------------------------------------------------------------- seasonal change
def dirichlet(w, n):
    """Factor by which a centred w-day running mean scales a sinusoid of period n days:
    (1/w) sum_{j=-h}^{h} cos(2 pi j/n) = sin(pi w/n) / (w sin(pi/n)) (Lagrange's
    trigonometric identity / Dirichlet kernel)."""
    return np.sin(np.pi * w / n) / (w * np.sin(np.pi / n))


def test_doy_smoothing_recovers_seasonal_change():
    A, w, n = 3.0, 31, 365
    change = lambda k: A * np.sin(2 * np.pi * k / n)
    hist = model("noleap", 1991, 4, lambda k, y: seasonal(k, n))
    fut = model("noleap", 2051, 4, lambda k, y: seasonal(k, n) + change(k))
    d = monthly_deltas(hist, fut, smoothing="doy", window_days=w)
    k = np.arange(n)
    # noise-free: exactly the sinusoid scaled by the running-mean factor
    np.testing.assert_allclose(d.values[:, 0, 0], dirichlet(w, n) * change(k), rtol=0, atol=1e-5)
    # and within A (1 - factor) (≈ 1.2 % of A for 31 days) of the true change
    assert np.abs(d.values[:, 0, 0] - change(k)).max() <= A * (1 - dirichlet(w, n)) + 1e-5

    # with daily noise (sigma 1.5 °C, independent days): the smoothed delta's noise has
    # sd sigma sqrt(2 / (years * w)); allow 6 of those plus the running-mean bias
    rng = np.random.default_rng(7)
    sigma, years = 1.5, 4
    noisy_h = model("noleap", 1991, years,
                    lambda kk, y: seasonal(kk, n)[:, None, None] + rng.normal(0, sigma, (kk.size, 4, 5)))
    noisy_f = model("noleap", 2051, years,
                    lambda kk, y: (seasonal(kk, n) + change(kk))[:, None, None]
                    + rng.normal(0, sigma, (kk.size, 4, 5)))
    dn = monthly_deltas(noisy_h, noisy_f, smoothing="doy", window_days=w).values
    tol = A * (1 - dirichlet(w, n)) + 6 * sigma * np.sqrt(2 / (years * w))
    assert np.abs(dn - change(k)[:, None, None]).max() <= tol

    # applied to a standard-calendar baseline: each day reads the same (month, day) of
    # the 365-day model year, 29 February reading 28 February
    base = baseline(first="2004-01-01", last="2004-12-31", ny=4, nx=4)
    out = apply_deltas(base, d)
    days = pd.DatetimeIndex(base.time.values)
    keys = np.array([(dt.date(2001, m, min(dd, 28) if m == 2 else dd) - dt.date(2001, 1, 1)).days
                     for m, dd in zip(days.month, days.day)])
    np.testing.assert_allclose((out - base).values[:, 1, 1], dirichlet(w, n) * change(keys), rtol=0, atol=2e-5)


def test_360_day_model_on_standard_baseline_by_fraction_of_year():
    A, w, n = 3.0, 31, 360
    change = lambda k: A * np.sin(2 * np.pi * k / n)
    hist = model("360_day", 1991, 2, lambda k, y: seasonal(k, n))
    fut = model("360_day", 2051, 2, lambda k, y: seasonal(k, n) + change(k))
    d = monthly_deltas(hist, fut, smoothing="doy", window_days=w)
    assert d.attrs["calendar"] == "360_day" and d.sizes["dayofyear"] == 360
    base = baseline(first="2003-01-01", last="2004-12-31", ny=4, nx=4)
    shift = (apply_deltas(base, d) - base).values[:, 2, 2]
    days = pd.DatetimeIndex(base.time.values)
    frac = (days.day_of_year.values - 0.5) / np.where(days.is_leap_year, 366, 365)
    # the model's smoothed change at the same fraction of the year, to within one model
    # day of phase: |d/dk| <= A 2 pi / n per day (common practice, no source)
    expected = dirichlet(w, n) * A * np.sin(2 * np.pi * frac)
    assert np.abs(shift - expected).max() <= A * 2 * np.pi / n


def test_monthly_deltas_per_calendar_month():
    # a change of +m °C in month m: each baseline day is shifted by its month number
    def f(k, y, cal):
        months = xr.date_range("2001-01-01", periods=YEAR_LEN[cal], freq="D", calendar=cal,
                               use_cftime=True).month
        return np.asarray(months)[k].astype(float)
    for cal in ("noleap", "360_day"):
        hist = model(cal, 1991, 2, lambda k, y: 0 * k)
        fut = model(cal, 2051, 2, lambda k, y, c=cal: f(k, y, c))
        d = monthly_deltas(hist, fut)
        np.testing.assert_allclose(d.values[:, 0, 0], np.arange(1, 13), atol=1e-12)
        base = baseline(first="2004-01-01", last="2004-12-31", ny=4, nx=4)
        shift = (apply_deltas(base, d) - base).values[:, 0, 0]
        np.testing.assert_allclose(shift, pd.DatetimeIndex(base.time.values).month, atol=1e-5)


# --------------------------------------------------------------------------- time axis, laziness, attrs
def test_target_years_relabel_and_leap_days():
    hist = model("noleap", 1991, 1, lambda k, y: 0 * k)
    fut = model("noleap", 2051, 1, lambda k, y: 0 * k + 1.0)
    d = monthly_deltas(hist, fut)
    base = baseline(first="2004-01-01", last="2005-12-31", ny=4, nx=4)  # 2004 leap, 2005 not
    out = apply_deltas(base, d, target_years=(2043, 2044))              # 2043 not, 2044 leap
    expected_days = pd.date_range("2043-01-01", "2044-12-31", freq="D")
    np.testing.assert_array_equal(pd.DatetimeIndex(out.time.values), expected_days)  # complete, no gaps
    sel = lambda da, day: da.sel(time=day).values
    np.testing.assert_array_equal(sel(out, "2043-03-01"), sel(base, "2004-03-01") + np.float32(1))
    np.testing.assert_array_equal(sel(out, "2044-02-29"), sel(base, "2005-02-28") + np.float32(1))
    np.testing.assert_array_equal(sel(out, "2044-12-31"), sel(base, "2005-12-31") + np.float32(1))
    assert out.attrs["years"] == "2043-2044" and out.attrs["baseline_years"] == "2004-2005"
    with pytest.raises(InputError, match="span"):
        apply_deltas(base, d, target_years=(2041, 2043))


def test_target_years_on_cftime_baseline_keep_its_calendar():
    base = model("noleap", 2001, 2, lambda k, y: seasonal(k, 365), res=0.5, ny=4, nx=4, files="obs.nc")
    hist = model("360_day", 1991, 1, lambda k, y: 0 * k)
    fut = model("360_day", 2051, 1, lambda k, y: 0 * k + 0.5)
    out = apply_deltas(base, monthly_deltas(hist, fut), target_years=(2061, 2062))
    assert out.time.dt.calendar == "noleap" and out.attrs["calendar"] == "noleap"
    assert out.sizes["time"] == 730 and int(out.time.dt.year[0]) == 2061
    np.testing.assert_allclose((out.values - base.values), 0.5, atol=1e-6)


def test_laziness_kept_and_attrs_recorded():
    hist = model("noleap", 1991, 2, lambda k, y: seasonal(k, 365), files="m_hist.nc")
    fut = model("noleap", 2051, 2, lambda k, y: seasonal(k, 365) + 1.5, files="m_fut.nc")
    base = baseline()

    def no_compute(*args, **kwargs):
        raise AssertionError("computed while building the graph")

    with dask.config.set(scheduler=no_compute):
        d = monthly_deltas(hist, fut, smoothing="doy", window_days=15)
        out = apply_deltas(base, d, target_years=(2053, 2055))
    assert isinstance(d.data, dsa.Array) and isinstance(out.data, dsa.Array)
    ch = dict(zip(out.dims, out.chunks))
    assert len(ch["time"]) == 1 and ch["y"] == base.chunks[1] and ch["x"] == base.chunks[2]
    assert out.dtype == np.float32 and out.dims == ("time", "y", "x")
    assert out.rio.crs.to_epsg() == 4326
    assert out.attrs["delta_smoothing"] == "doy, 15-day circular running mean"
    assert out.attrs["source_files"] == "obs.nc; m_hist.nc; m_fut.nc"
    assert out.attrs["delta_source_files"] == "m_hist.nc; m_fut.nc"
    assert out.attrs["delta_regrid"].startswith("bilinear from EPSG:4326")
    assert "additive delta change" in out.attrs["suitmap_downscaling"]
    assert d.attrs["units_metadata"] == "temperature: difference"   # CF 1.11, section 3.1.2


def test_bad_inputs_are_refused():
    hist = model("noleap", 1991, 1, lambda k, y: 0 * k)
    with pytest.raises(InputError, match="odd"):
        monthly_deltas(hist, hist, smoothing="doy", window_days=30)
    with pytest.raises(InputError, match="smoothing"):
        monthly_deltas(hist, hist, smoothing="weekly")
    with pytest.raises(InputError, match="calendar"):
        monthly_deltas(hist, model("360_day", 2051, 1, lambda k, y: 0 * k))
    with pytest.raises(InputError, match="same variable"):
        monthly_deltas(hist, model("noleap", 2051, 1, lambda k, y: 0 * k, role="tmax"))
    d = monthly_deltas(hist, hist)
    with pytest.raises(InputError, match="tmax baseline"):
        apply_deltas(baseline(role="tmax"), d)


def test_standard_calendar_model_pools_29_february():
    # a model on the standard calendar (datetime64 time): 365 day-of-year values,
    # 29 February pooled with 28 February; keys counted here with the datetime module
    t = pd.date_range("1992-01-01", "1995-12-31", freq="D")       # 1992 is a leap year
    keys = np.array([(dt.date(2001, d.month, min(d.day, 28) if d.month == 2 else d.day)
                      - dt.date(2001, 1, 1)).days for d in t])
    change = np.sin(2 * np.pi * keys / 365) + np.where((t.month == 2) & (t.day == 29), 4.0, 0.0)

    def da(values):
        return xr.DataArray(np.broadcast_to(values[:, None, None], (t.size, 2, 2)).astype("float32"),
                            dims=("time", "y", "x"),
                            coords={"time": t, "y": [51.0, 50.0], "x": [0.0, 1.0]},
                            attrs={"calendar": "standard"}).rio.write_crs("EPSG:4326")
    hist = da(np.zeros(t.size))
    fut = da(change)
    d = monthly_deltas(hist, fut, smoothing="doy", window_days=1)
    assert d.sizes["dayofyear"] == 365
    expected = np.sin(2 * np.pi * np.arange(365) / 365)
    expected[58] += 4.0 / 5                      # 28 Feb: 4 years of 28 Feb + one 29 Feb (+4) pooled
    np.testing.assert_allclose(d.values[:, 0, 0], expected, rtol=0, atol=1e-6)

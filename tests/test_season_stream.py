"""The one-pass day-major season kernel against the two-step path it replaces.

Reference: ``degree_days_block`` (checked against Zalom et al. 1983 Table 7 and
McMaster & Wilhelm 1997 in tests/test_degree_days.py) on the swapped days,
then ``season_reduce`` (tests/test_season_kernel.py).  Same arithmetic in the
same order, so the figures must agree exactly.
"""

import numpy as np
import pytest

from suitmap.kernels.degree_days import CUTOFFS, METHODS, degree_days_block
from suitmap.kernels.season import season_degree_days, season_reduce


def _two_step(tmin, tmax, i0, i1, lower, upper, method, cutoff, ddg, lc, lh):
    """(day, y, x) -> the old route on (y, x, day) copies."""
    tn_all = np.moveaxis(np.minimum(tmin, tmax), 0, -1)
    tx_all = np.moveaxis(np.maximum(tmin, tmax), 0, -1)
    nt = tn_all.shape[-1]
    tn = np.ascontiguousarray(tn_all[..., i0:i1])
    tx = np.ascontiguousarray(tx_all[..., i0:i1])
    nxt = np.empty_like(tn)
    nxt[..., :-1] = tn[..., 1:]
    nxt[..., -1] = tn_all[..., i1] if i1 < nt else tn[..., -1]
    dd = degree_days_block(tn, tx, nxt, lower, upper, method, cutoff, parallel=False)
    return season_reduce(dd, tn, tx, ddg, lc, lh)


def _climate(rng, nt=80, ny=7, nx=9, dtype=np.float32):
    base = rng.normal(12.0, 8.0, (nt, ny, nx))
    rngd = rng.uniform(0.0, 16.0, (nt, ny, nx))
    tmin, tmax = base - rngd / 2, base + rngd / 2
    swap = rng.random(tmin.shape) < 0.05           # some days with Tmin > Tmax
    tmin[swap], tmax[swap] = tmax[swap], tmin[swap]
    tmin[:, 0, 0] = np.nan                          # a missing cell
    tmax[17, 3, 4] = np.nan                         # one missing day in a cell
    tmin[60, 5, 5] = np.nan                         # missing on the day after a season
    return tmin.astype(dtype), tmax.astype(dtype)


@pytest.mark.parametrize("method", METHODS)
@pytest.mark.parametrize("cutoff", CUTOFFS)
@pytest.mark.parametrize("ny, nx", [(7, 9), (41, 53)])   # one tile of cells; three tiles
def test_stream_equals_two_step(method, cutoff, ny, nx):
    rng = np.random.default_rng(11)
    tmin, tmax = _climate(rng, ny=ny, nx=nx)
    tmin[:, -1, -1] = np.nan                        # a missing cell in the last tile
    for i0, i1 in ((0, 80), (5, 60), (30, 79)):
        got = season_degree_days(tmin, tmax, i0, i1, 10.0, 30.0, method, cutoff, 150.0, -2.0, 28.0)
        want = _two_step(tmin, tmax, i0, i1, 10.0, 30.0, method, cutoff, 150.0, -2.0, 28.0)
        for g, w in zip(got, want):
            np.testing.assert_array_equal(g, w)


def test_stream_nan_rules_and_limits():
    rng = np.random.default_rng(5)
    tmin, tmax = _climate(rng, dtype=np.float64)
    total, first, cold, heat, mtx = season_degree_days(tmin, tmax, 5, 60, 10.0, np.inf,
                                                       "double_sine", "horizontal", 150.0,
                                                       None, None)
    assert np.isnan(total[0, 0]) and np.isnan(mtx[0, 0])       # missing cell
    assert np.isnan(first[3, 4]) and np.isnan(cold[3, 4])      # one missing day
    assert np.isnan(total[5, 5])        # day 60 is the last day's next minimum (double method)
    ok = ~np.isnan(total)
    assert (cold[ok] == 0).all() and (heat[ok] == 0).all()     # no lethal limits given
    single = season_degree_days(tmin, tmax, 5, 60, 10.0, np.inf, "single_sine", "horizontal",
                                150.0, None, None)[0]
    assert not np.isnan(single[5, 5])   # single methods never read the next minimum
    with pytest.raises(ValueError):
        season_degree_days(tmin, tmax, 5, 90, 10.0, 30.0, "single_sine", "horizontal", 1.0,
                           None, None)


@pytest.mark.parametrize("method", ["single_sine", "double_sine"])
@pytest.mark.parametrize("cutoff", CUTOFFS)
def test_stream_fast_equals_float32_kernel(method, cutoff):
    # fast=True: the float32 sine loop of degree_days32 in the stream.  The two
    # steps with that kernel give the same figures exactly, and the season
    # totals stay within 1e-5 relative of the float64 stream (the kernel is
    # within 3e-5 degC.day a day of the float64 closed form,
    # tests/test_degree_days32.py)
    from suitmap.kernels.degree_days32 import sine_degree_days32

    rng = np.random.default_rng(12)
    tmin, tmax = _climate(rng, ny=41, nx=53)
    i0, i1 = 5, 79
    got = season_degree_days(tmin, tmax, i0, i1, 10.0, 30.0, method, cutoff, 150.0, -2.0,
                             28.0, fast=True)
    tn_all = np.moveaxis(np.minimum(tmin, tmax), 0, -1)        # (y, x, day), as _two_step
    tx_all = np.moveaxis(np.maximum(tmin, tmax), 0, -1)
    tn = np.ascontiguousarray(tn_all[..., i0:i1])
    tx = np.ascontiguousarray(tx_all[..., i0:i1])
    nxt = np.ascontiguousarray(tn_all[..., i0 + 1:i1 + 1])
    dd = np.empty(tn.size)
    sine_degree_days32(tn.ravel(), tx.ravel(), nxt.ravel(), 10.0, 30.0, METHODS.index(method),
                       CUTOFFS.index(cutoff), dd, parallel=False)
    want = season_reduce(dd.reshape(tn.shape), tn, tx, 150.0, -2.0, 28.0)
    for g, w in zip(got, want):
        np.testing.assert_array_equal(g, w)
    exact = season_degree_days(tmin, tmax, i0, i1, 10.0, 30.0, method, cutoff, 150.0, -2.0,
                               28.0)
    ok = np.isfinite(exact[0]) & (exact[0] > 1.0)
    assert np.max(np.abs(got[0][ok] / exact[0][ok] - 1.0)) <= 1e-5
    np.testing.assert_array_equal(np.isnan(got[0]), np.isnan(exact[0]))

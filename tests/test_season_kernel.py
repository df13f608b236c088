"""The one-pass season reduction equals the plain numpy formulation."""

import numpy as np

from suitmap.kernels.season import season_reduce


def test_matches_numpy_passes():
    rng = np.random.default_rng(0)
    tn = rng.normal(5, 8, (3, 4, 200)).astype("f4")
    tx = tn + rng.uniform(2, 12, tn.shape).astype("f4")
    daily = np.clip((tn + tx) / 2 - 5, 0, None).astype("f8")
    daily[0, 0, 50] = np.nan
    total, first, cold, heat, mtx = season_reduce(daily, tn, tx, 300.0, -5.0, 20.0)
    cum = np.cumsum(daily, axis=-1)
    reached = cum >= 300.0
    want_first = np.where(reached.any(-1), reached.argmax(-1) + 1.0, np.nan)
    ok = np.ones((3, 4), bool)
    ok[0, 0] = False
    np.testing.assert_allclose(total[ok], cum[..., -1][ok], rtol=1e-12)
    np.testing.assert_array_equal(first[ok], want_first[ok])
    np.testing.assert_array_equal(cold[ok], (tn <= -5.0).sum(-1)[ok])
    np.testing.assert_array_equal(heat[ok], (tx >= 20.0).sum(-1)[ok])
    np.testing.assert_allclose(mtx[ok], tx.astype("f8").mean(-1)[ok], rtol=1e-9)
    assert all(np.isnan(a[0, 0]) for a in (total, first, cold, heat, mtx))
    _, _, c0, h0, _ = season_reduce(daily, tn, tx, 300.0, None, None)
    assert (c0[ok] == 0).all() and (h0[ok] == 0).all()

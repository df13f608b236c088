"""Tests of the vector table lookups (suitmap.kernels.tables._lanes, _lanes_pl) and
the lattice tables they read (suitmap.kernels.tables.grid._lattice_grid).

The lookup must be the bilinear interpolant of the tabulated node values,
Press, W.H. et al. (2007) Numerical Recipes, 3rd ed., eq. 3.6.5, computed
here independently in float64 numpy; and the vector paths (16 values at a
time, for the (Tmin, Tmax) tables and the Parton-Logan day-length tables)
must give the same bits as the scalar loops that take the remainder.  Their
accuracy against the exact kernels is tested in tests/test_tables.py.
"""

from __future__ import annotations

import numpy as np
import pytest
from test_development import CURVES  # published parameter sets (sources there)

from suitmap.kernels.tables import core as tables
from suitmap.kernels.tables._lanes import LANES, LATTICE_BITS
from suitmap.kernels.tables import degree_day_table, development_table
from suitmap.kernels.tables.grid import _graded_axis, _lattice_grid


def inputs(n: int, seed: int = 5):
    """Random days across the table, NaN, and values beyond the table range."""
    rng = np.random.default_rng(seed)
    tmin = rng.uniform(-20.0, 40.0, n)
    tmax = tmin + rng.gamma(2.0, 5.0, n)
    tnext = tmin + rng.normal(0.0, 3.0, n)
    tmin[::97], tmax[5::89], tnext[7::83] = np.nan, np.nan, np.nan
    tmin[11::101], tmax[13::103] = -70.0, 75.0
    return tmin.astype(np.float32), tmax.astype(np.float32), tnext.astype(np.float32)


@pytest.fixture(scope="module")
def tabs():
    return {"one": degree_day_table(10.0, 30.0, "single_sine", "vertical", strategy="table"),
            "halves": degree_day_table(10.0, 30.0, "double_sine", "horizontal",
                                       strategy="table"),
            "dev": development_table("lactin2", CURVES["lactin2"])}


@pytest.mark.parametrize("key", ["one", "halves", "dev"])
@pytest.mark.parametrize("dtype", [np.float32, np.float64])
def test_vector_and_scalar_paths_give_the_same_bits(tabs, key, dtype):
    t = tabs[key]
    a, b, c = (x.astype(dtype) for x in inputs(4000))
    run = tables._one_range if t.mode == tables._ONE else tables._halves_range
    args = (a, b) if t.mode == tables._ONE else (a, b, c)
    vec = np.empty(a.size)
    n_vec = run(*args, vec, 0, a.size, t.grid)           # LANES at a time, then the rest
    sca = np.empty(a.size)
    n_sca = 0
    for s in range(0, a.size, LANES - 1):                 # shorter than LANES: all scalar
        n_sca += run(*args, sca, s, min(a.size, s + LANES - 1), t.grid)
    np.testing.assert_array_equal(vec, sca)
    assert n_vec == n_sca == int(np.isinf(vec).sum()) > 0     # out-of-range values: +inf
    assert np.isnan(vec).sum() == (np.isnan(a) | np.isnan(b) | (
        np.isnan(c) if t.mode != tables._ONE else False)).sum()


def test_lookup_is_the_bilinear_interpolant_of_the_nodes():
    # Press et al. (2007) eq. 3.6.5: with t, u the fractions in the cell,
    # y = (1-t)(1-u) y00 + t(1-u) y10 + t u y11 + (1-t) u y01
    nodes, dj = _graded_axis((-5.0, 40.0), [10.0, 30.0], 1 / 32, 0.5, 0.05)
    rng = np.random.default_rng(3)
    gx, gy = np.meshgrid(nodes, nodes, indexing="ij")
    f = 10.0 * np.sin(gx / 7.0) * np.cos(gy / 5.0) + gx * gy / 50.0 + rng.normal(0, 0.01, gx.shape)
    side = nodes.size + 1
    tab = np.zeros((side, side, 4), dtype=np.float32)
    tab[..., 0] = np.inf
    tab[1:-1, 1:-1] = np.stack([f[:-1, :-1], f[1:, :-1] - f[:-1, :-1], f[:-1, 1:] - f[:-1, :-1],
                                f[1:, 1:] - f[1:, :-1] - f[:-1, 1:] + f[:-1, :-1]], axis=-1)
    grid = _lattice_grid(nodes, dj, tab.reshape(-1), LATTICE_BITS)
    x = rng.uniform(-5.0, 39.99, 5000).astype(np.float32)
    y = rng.uniform(-5.0, 39.99, 5000).astype(np.float32)
    x[:50] = nodes[rng.integers(0, nodes.size - 1, 50)]          # on grid lines
    out = np.empty(x.size)
    tables._one_range(x, y, out, 0, x.size, grid)
    i = np.searchsorted(nodes, x.astype(np.float64), side="right") - 1
    k = np.searchsorted(nodes, y.astype(np.float64), side="right") - 1
    t = (x - nodes[i]) / (nodes[i + 1] - nodes[i])
    u = (y - nodes[k]) / (nodes[k + 1] - nodes[k])
    ref = ((1 - t) * (1 - u) * f[i, k] + t * (1 - u) * f[i + 1, k] + t * u * f[i + 1, k + 1]
           + (1 - t) * u * f[i, k + 1])
    # float32 arithmetic: a few roundings of the values, and of the position
    # (float32 temperatures near 40 degC) times the steepest slope between nodes
    slope = max(np.abs(np.diff(f, axis=a) / np.diff(nodes).reshape((-1, 1) if a == 0 else (1, -1))
                       ).max() for a in (0, 1))
    eps = float(np.finfo(np.float32).eps)
    tol = 8 * eps * np.abs(f).max() + 2 * slope * float(np.spacing(np.float32(64.0)))
    assert np.max(np.abs(out - ref)) <= tol


def test_lattice_grid_limits():
    nodes, dj = _graded_axis((-5.0, 40.0), [10.0], 1 / 64, 8.0, 1.0)     # cells of 512 steps
    tab = np.zeros((nodes.size + 1) ** 2 * 4, dtype=np.float32)
    with pytest.raises(ValueError, match="h_max"):
        _lattice_grid(nodes, dj, tab, LATTICE_BITS)
    with pytest.raises(ValueError, match="h_max"):
        degree_day_table(10.0, 30.0, "single_sine", strategy="table", h_min=1 / 64, h_max=8.0,
                         grade=1.0)
    nodes = np.arange(3000, dtype=np.float64)
    with pytest.raises(ValueError, match="too many"):
        _lattice_grid(nodes, 1.0, np.zeros(1, dtype=np.float32), LATTICE_BITS)   # before use


@pytest.fixture(scope="module")
def pl_table():
    # the day lengths of 30-44 deg N (Forsythe et al. 1995); a narrow range keeps it short
    return development_table("lactin2", CURVES["lactin2"], diurnal="parton_logan",
                             daylength_range=(8.8, 15.6), t_range=(-5.0, 45.0))


@pytest.mark.parametrize("dtype", [np.float32, np.float64])
def test_daylength_tables_vector_and_scalar_paths_give_the_same_bits(pl_table, dtype):
    from suitmap.kernels.tables import _pl_arcs
    a, b, c = (x.astype(dtype) for x in inputs(3000, seed=9))
    d = np.random.default_rng(2).uniform(8.0, 16.5, a.size).astype(dtype)   # some outside
    day, arcs = pl_table.arcs[0], pl_table.arcs[1:]
    vec = np.empty(a.size)
    n_vec = _pl_arcs.arcs_range(-1, a, b, c, d, vec, 0, a.size, day, arcs, pl_table.kern)
    sca = np.empty(a.size)
    n_sca = 0
    for s in range(0, a.size, LANES - 1):                 # shorter than LANES: all scalar
        n_sca += _pl_arcs.arcs_range(-1, a, b, c, d, sca, s, min(a.size, s + LANES - 1), day,
                                     arcs, pl_table.kern)
    np.testing.assert_array_equal(vec, sca)
    assert n_vec == n_sca == int(np.isinf(vec).sum()) > 0     # outside the tables: +inf
    assert np.isnan(vec).sum() == (np.isnan(a) | np.isnan(b) | np.isnan(c)).sum()
    assert np.isfinite(vec).mean() > 0.4         # and most of the rest from the tables

"""Degree-day ``DailyTable``s: the closed forms, float32 closed forms and tables.

``build_degree_days`` (called by ``tables.degree_day_table``) makes one of:

* ``"closed_form"``: ``degree_days.degree_days_block``, exact (float64);
* ``"float32"`` (single and double sine; their default): the same formulas
  in float32 arithmetic (``degree_days32``), measured twice as fast as the
  float64 closed form (benchmarks/README.md), within about 1e-5 °C·day; the
  build measures its error against the float64 closed form on seeded
  random days;
* ``"table"`` (sine and triangle methods, on request): bilinear lookup over
  a graded (Tmin, Tmax) grid (``tables`` module notes).

No I/O.

References
----------
Baskerville & Emin (1969) Ecology 50:514-517; Allen (1976) Environmental
Entomology 5:388-396; Zalom et al. (1983) University of California DANR
Leaflet 21373; Press, W.H. et al. (2007) Numerical Recipes, 3rd ed.,
section 3.6.
"""

from __future__ import annotations

import math

import numpy as np

from suitmap.kernels.degree_days import CUTOFFS, METHODS, degree_days_block
from suitmap.kernels.tables.core import (_EX_DD, _FLOOR, _HALVES, _NO_KERN, _ONE, _TOL, T_RANGE,
                                         DailyTable, _checked_table, _grid_options)
from suitmap.kernels.tables.grid import _graded_axis

__all__ = ["STRATEGIES", "build_degree_days"]

STRATEGIES = ("closed_form", "float32", "table")
_AVERAGES = ("average", "modified_average")
_CHECK_DAYS = 200_000          # seeded random days of the float32 build check


def _float32_check(table: DailyTable, lower: float, upper: float, method: str, cutoff: str,
                   t_range: tuple[float, float]) -> dict:
    """Error of the float32 closed form against the float64 one on seeded random
    float32 days (Tmin, Tmax, next Tmin uniform over the thresholds ± 20 °C within
    ``t_range``)."""
    rng = np.random.default_rng(0)
    top = upper if math.isfinite(upper) else lower + 40.0
    lo, hi = max(t_range[0], lower - 20.0), min(t_range[1], top + 20.0)
    # float32 days: the kernel rounds float64 input to float32 first, which on
    # days of tiny range across U (vertical cutoff: d DD / d T ~ (U - L)/amplitude)
    # moves the exact value itself by up to ~1e-3; measured here is the arithmetic
    x, y, w = (rng.uniform(lo, hi, _CHECK_DAYS).astype(np.float32) for _ in range(3))
    x, y = np.minimum(x, y), np.maximum(x, y)
    nxt = w if method.startswith("double") else None
    exact = degree_days_block(x, y, nxt, lower, upper, method, cutoff)
    fast = table.evaluate(x, y, tmin_next=nxt)
    err = np.abs(fast - exact)
    peak = float(exact.max())
    big = exact > _FLOOR * peak
    return dict(peak=peak, max_abs_error=float(err.max()),
                max_rel_error=float((err[big] / exact[big]).max()) if big.any() else 0.0)


def build_degree_days(lower: float, upper: float, method: str, cutoff: str,
                       t_range: tuple[float, float] = T_RANGE, strategy: str = "auto",
                       **grid) -> DailyTable:
    """A degree-day ``DailyTable`` (``tables.degree_day_table`` documents the
    arguments); ValueError for unknown names, bad thresholds or a strategy
    the method does not have."""
    if method not in METHODS or cutoff not in CUTOFFS:
        raise ValueError(f"unknown degree-day method {method!r} or cutoff {cutoff!r}; use "
                         f"{', '.join(METHODS)} / {', '.join(CUTOFFS)}")
    lower, upper = float(lower), float(upper)
    if not (math.isfinite(lower) and upper > lower):
        raise ValueError(f"thresholds need a finite lower < upper, got {lower}, {upper}")
    sine = method in ("single_sine", "double_sine")
    if strategy == "auto":     # measured: the vectorised closed forms beat a lookup
        strategy = "float32" if sine else "closed_form"
    if strategy not in STRATEGIES or (strategy == "table" and method in _AVERAGES) or (
            strategy == "float32" and not sine):
        raise ValueError(f"strategy {strategy!r} is not available for {method!r}: use "
                         f"{'closed_form' if method in _AVERAGES else 'closed_form or table'}"
                         " (float32: sine methods; averages have a kink across a table)")
    opts = _grid_options("degree_days", grid)
    spec = dict(lower=lower, upper=upper, method=method, cutoff=cutoff,
                t_range=tuple(t_range), **opts)
    table = DailyTable("degree_days", spec, strategy)
    if strategy == "closed_form":
        return table
    if strategy == "float32":
        table.__dict__.update(_float32_check(table, lower, upper, method, cutoff, t_range))
        return table
    nodes, dj = _graded_axis(t_range, [lower, upper], opts["h_min"], opts["h_max"],
                             opts["grade"])
    single = method.replace("double", "single")

    def exact(cut: str):
        return lambda x, y: degree_days_block(x, y, None, lower, upper, single, cut)

    cut = cutoff if math.isfinite(upper) else "horizontal"     # all equal without U
    mode = _ONE if method == single else _HALVES
    if method == single or cut != "intermediate":
        _, grid, st = _checked_table(exact(cut), nodes, dj, opts["sub"])
    else:   # whole day max(V, H - A) = H - A if so in both half-days: a table of
        # H - A (A = DD above U); cells where it is below V are computed exactly
        def h_minus_a(x, y):
            return exact("horizontal")(x, y) - degree_days_block(x, y, None, upper, np.inf,
                                                                 single, "horizontal")

        def guard(x, y, w):    # where H - A < V a half-day may need the clamp
            return w - exact("vertical")(x, y) >= -_TOL * _FLOOR * (upper - lower)

        _, grid, st = _checked_table(h_minus_a, nodes, dj, opts["sub"], guard)
    table.mode, table.exact_kind, table.nodes = mode, _EX_DD, nodes.size
    table.grid = grid
    ipar = np.array([METHODS.index(method), CUTOFFS.index(cutoff), 0, 0])
    table.kern = (np.array([lower, upper, 0, 0, 0, 0, 0.0]), ipar, *_NO_KERN[2:])
    table.__dict__.update(st)
    return table



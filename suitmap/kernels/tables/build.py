"""Building the fast daily kernels: ``build_table``, ``degree_day_table``, ``development_table``.

The machinery they fill in lives in :mod:`suitmap.kernels.tables.core`;
the degree-day tables in ``degree_days``, the Parton-Logan day's in
``daylength``.
"""

from __future__ import annotations

import time

import numpy as np

from suitmap.kernels import development as dev
from suitmap.kernels.rates import model_code, pack_params, rate_limits
from suitmap.kernels.tables.core import (_EX_SINE, _NO2D, _ONE, T_RANGE, DailyTable, _checked_table,
                                         _grid_options)
from suitmap.kernels.tables.daylength import build_parton_logan
from suitmap.kernels.tables.degree_days import build_degree_days
from suitmap.kernels.tables.grid import _graded_axis


def build_table(kind: str, **spec) -> DailyTable:
    """Build a table: ``kind="degree_days"`` with the keywords of
    ``degree_day_table``, or ``"development"`` with those of
    ``development_table``.  Raises ValueError for another kind."""
    start = time.perf_counter()
    if kind == "degree_days":
        table = build_degree_days(**spec)
    elif kind == "development":
        table = _build_development(**spec)
    else:
        raise ValueError(f"unknown table kind {kind!r}; use 'degree_days' or 'development'")
    table.build_seconds = time.perf_counter() - start
    return table


def _build_development(model: str, params: dict, diurnal: str = "sine",
                       t_range: tuple[float, float] = T_RANGE, coefficients: dict | None = None,
                       n_nodes: int = dev.DEFAULT_NODES,
                       daylength_range: tuple[float, float] | None = None,
                       **grid) -> DailyTable:
    code = model_code(model)
    packed = pack_params(code, params)
    lo, hi = rate_limits(code, params)
    d = dev._diurnal_code(diurnal)
    coef = dev._pl_coefficients(coefficients)
    if d != dev._SINE:
        return build_parton_logan(model, params, t_range, coef, n_nodes, daylength_range,
                                  grid)
    if daylength_range is not None:
        raise ValueError("daylength_range is for diurnal='parton_logan' only")
    opts = _grid_options("development", grid)
    spec = dict(model=model, params=dict(params), diurnal=diurnal, t_range=tuple(t_range),
                coefficients=dict(zip("abc", coef.tolist())), n_nodes=n_nodes, **opts)
    table = DailyTable("development", spec, "table")
    par = (np.array([0.0, 0.0, lo, hi, *coef]), np.array([0, 0, code, code in dev._POWER_HI]),
           packed, *dev.quadrature_nodes(n_nodes))

    def exact(x, y):
        return dev.development_block(x, y, code, packed, (lo, hi), diurnal=d, n_nodes=n_nodes)

    nodes, dj = _graded_axis(t_range, [lo, hi], opts["h_min"], opts["h_max"], opts["grade"])
    _, grid, st = _checked_table(exact, nodes, dj, opts["sub"])
    table.mode, table.exact_kind, table.nodes = _ONE, _EX_SINE, nodes.size
    table.grid, table.kern = grid, (*par, _NO2D, _NO2D)
    table.__dict__.update(st)
    return table


def degree_day_table(lower: float, upper: float, method: str = "single_sine",
                     cutoff: str = "horizontal", **options) -> DailyTable:
    """Fast daily degree-days for one set of thresholds, method and cutoff.

    Default (``strategy="auto"``): for the single and double sine the same
    formulas in float32 arithmetic (``strategy="float32"``, within about
    1e-5 °C·day, measured twice as fast), for the other methods the closed
    form of ``degree_days_block`` (``"closed_form"``, exact, measured faster
    than a lookup; also available for the sine methods).  ``strategy="table"`` (sine and triangle methods): single
    methods one lookup of the day's value; double methods two half-day
    lookups, ½F(Tmin, Tmax) + ½F(Tmin_next, Tmax) [2]_.  The intermediate
    cutoff acts on the whole day, max(V, H − A): the table holds H − A (A =
    degree-days above U) and cells where a half-day has H − A < V are
    computed exactly, so ½((H−A)1 + (H−A)2) is used only where it is the
    maximum.  ``options``: ``t_range`` (°C, default ``T_RANGE``),
    ``strategy``, ``h_min``, ``h_max``, ``grade``, ``sub`` (module notes).
    Raises ValueError for unknown names, options or bad thresholds.

    References
    ----------
    .. [1] Baskerville & Emin (1969) Ecology 50:514-517.
    .. [2] Allen (1976) Environmental Entomology 5:388-396; Zalom et al.
       (1983) University of California DANR Leaflet 21373.
    """
    return build_table("degree_days", lower=lower, upper=upper, method=method,
                            cutoff=cutoff, **options)


def development_table(model: str, params: dict, *, diurnal: str = "sine",
                      **options) -> DailyTable:
    """Fast daily development for one rate curve and diurnal curve.

    ``diurnal="sine"``: a graded (Tmin, Tmax) table with the rate limits
    (``rates.rate_limits``) on grid lines.  ``"parton_logan"`` (evaluate
    with ``daylength`` and ``tmin_next``): with ``daylength_range=(ymin,
    ymax)`` (hours) tables over day length, without it per-day quadrature
    over a rate table (``suitmap.kernels.tables_daylength``).  ``options``:
    ``t_range``, ``coefficients`` (Parton-Logan a, b, c), ``n_nodes`` (exact
    kernel), ``daylength_range``, the grid options.  Raises ValueError as
    ``rates.validate_params``, for unknown options and a bad range.

    References
    ----------
    .. [1] Baskerville & Emin (1969) Ecology 50:514-517.
    .. [2] Parton & Logan (1981) Agricultural Meteorology 23:205-216.
    """
    return build_table("development", model=model, params=params, diurnal=diurnal,
                            **options)

"""Fast Parton-Logan daily development: the strategies and their builds.

``PartonLoganTable`` (built by ``tables.development_table(model, params,
diurnal="parton_logan", ...)``) evaluates the Parton & Logan (1981) day of
``development._pl_day`` in one of two strategies:

* ``"table"`` (with ``daylength_range=(ymin, ymax)``): the day's sine arcs
  as planes over (temperature, arc end), the night over (sunset, next
  sunrise temperature) and the primitive of the rate, the arcs between
  planes as chords (``suitmap.kernels._pl_arcs``, the maths there).  For
  coefficient sets whose sunrise arc is longer than ``_pl_arcs.MAX_SUNRISE``
  or whose sunset comes after ψ = π, the quadrature strategy instead.
* ``"quadrature"`` (no day-length range): each day by Gauss-Legendre over
  a 1-D table of the rate (``development._pl_tabulated_range``).

Days the tables do not cover are computed with the exact kernel.  No I/O.

References
----------
Parton, W.J. & Logan, J.A. (1981) Agricultural Meteorology 23:205-216.
"""

from __future__ import annotations

import math

import numba
import numpy as np

from suitmap.kernels.tables import _pl_arcs as arcs
from suitmap.kernels import development as dev
from suitmap.kernels.rates import MODELS, model_code, pack_params, rate_array, rate_limits
from suitmap.kernels.tables.core import (_CHUNK, _EX_PL, _FLOOR, _JIT, _PARALLEL_MIN, _PLQ,
                                         DailyTable, _checked_table, _exact_block, _grid_options)
from suitmap.kernels.tables.grid import _graded_axis, _locator

__all__ = ["PartonLoganTable", "build_parton_logan"]

_HP = 0.5 * math.pi
_MARGIN = 0.1                  # rad: the table's day lengths have p1 >= π/2 + this
# grid options: measured with benchmarks/bench_tables.py (see benchmarks/README.md)
_QUADRATURE = dict(h_rate=None, n_gauss=None)
_TABLES = dict(h_min=1 / 128, h_max=0.25, grade=0.035, sub=3, plane_step=0.15, max_range=40.0)


@numba.njit(**_JIT)
def _quadrature_range(a: np.ndarray, b: np.ndarray, c: np.ndarray, d: np.ndarray,
                      out: np.ndarray, start: int, stop: int, rate: tuple, kern: tuple) -> int:
    """Without day-length tables: Gauss-Legendre per day over the rate table
    rate = (rax, rt); exact ``_pl_day`` out of its range."""
    cnt = dev._pl_tabulated_range(a, b, c, d, out, start, stop, rate[1], rate[0], kern[0],
                                  kern[5], kern[6], kern[1][3] != 0)
    if cnt > 0:
        _exact_block(_EX_PL, a, b, c, d, out, start, stop, kern)
    return cnt


@numba.njit(parallel=True, **_JIT)
def _quadrature_parallel(a: np.ndarray, b: np.ndarray, c: np.ndarray, d: np.ndarray,
                         out: np.ndarray, rate: tuple, kern: tuple) -> int:
    n = out.size
    nch = (n + _CHUNK - 1) // _CHUNK
    counts = np.zeros(nch, dtype=np.int64)
    for k in numba.prange(nch):
        s = k * _CHUNK
        counts[k] = _quadrature_range(a, b, c, d, out, s, min(n, s + _CHUNK), rate, kern)
    return counts.sum()


# ----------------------------------------------------------- exact pieces
@numba.njit(parallel=True, **_JIT)
def _night_exact(ts: np.ndarray, te: np.ndarray, kern: tuple) -> np.ndarray:
    """N(Ts, Te) = _pl_night(Ts, Tn'), Tn' = (Te - e^-b Ts)/(1 - e^-b), same-shape
    C-contiguous float64 arrays."""
    fpar, ipar, p, qx, qw = kern[0], kern[1], kern[2], kern[3], kern[4]
    eb = math.exp(-fpar[5])
    a, b, out = ts.ravel(), te.ravel(), np.empty(ts.size)
    for i in numba.prange(out.size):
        tnext = (b[i] - eb * a[i]) / (1.0 - eb)
        out[i] = dev._pl_night(a[i], tnext, fpar[5], fpar[2], fpar[3], ipar[2], p, qx, qw,
                               ipar[3] != 0)
    return out.reshape(ts.shape)


# --------------------------------------------------------------------- public
class PartonLoganTable(DailyTable):
    """The Parton-Logan day; strategy ``"table"`` (planes of the day's arcs,
    the night and the rate's primitive, ``_pl_arcs``) or ``"quadrature"``
    (per day over a rate table).  Build with ``tables.development_table(model,
    params, diurnal="parton_logan", daylength_range=(ymin, ymax))`` (no
    range: quadrature); ``evaluate`` as ``DailyTable.evaluate``, with
    ``daylength``.

    Attributes (besides ``DailyTable``'s; tables only): ``y_range`` (h, the
    day lengths the tables cover; others exact), ``planes`` (arc planes,
    the maximum's included), ``stored_cells`` (per plane),
    ``marked_fraction`` (share of plane cells computed exactly),
    ``night_marked_fraction`` (of night cells).

    References
    ----------
    .. [1] Parton, W.J. & Logan, J.A. (1981) A model for diurnal variation in
       soil and air temperature. Agricultural Meteorology 23:205-216.
    """

    def __init__(self, spec: dict, strategy: str) -> None:
        super().__init__("development", spec, strategy)
        self.needs_daylength, self.exact_kind = True, _EX_PL
        self.arcs = ()                   # (day, rows, planes, primitive, night, geometry)
        self.y_range = (math.nan, math.nan)
        self.planes = self.stored_cells = 0
        self.night_marked_fraction = 0.0

    @property
    def nbytes(self) -> int:
        """Bytes of the arrays the evaluation reads (tables and locators)."""
        if self.mode == _PLQ:
            return int(sum(a.nbytes for a in self.grid))
        return int(sum(a.nbytes for a in (*self.arcs[0], *self.arcs[1:])))

    def _run(self, a, b, c, d, o, parallel: bool) -> int:
        big = parallel and o.size >= _PARALLEL_MIN
        if self.mode == _PLQ:
            rate = self.grid[:2]
            if big:
                return _quadrature_parallel(a, b, c, d, o, rate, self.kern)
            return _quadrature_range(a, b, c, d, o, 0, o.size, rate, self.kern)
        if big:
            return arcs.arcs_parallel(a, b, c, d, o, self.arcs[0], self.arcs[1:], self.kern)
        return arcs.arcs_range(_EX_PL, a, b, c, d, o, 0, o.size, self.arcs[0], self.arcs[1:],
                               self.kern)

    def __repr__(self) -> str:
        return (f"PartonLoganTable({self.strategy}, nodes={self.nodes}, planes="
                f"{self.planes}, nbytes={self.nbytes}, "
                f"max_rel_error={self.max_rel_error:.2e}, marked={self.marked_fraction:.4f})")


# ------------------------------------------------------------------ building
def _check_days(table: DailyTable, exact, t_range: tuple, y_range: tuple) -> None:
    """max_abs_error, max_rel_error (above 1 % of the peak) and peak on 20000
    seeded realistic days against ``exact(tmin, tmax, tmin_next, daylength)``."""
    rng = np.random.default_rng(20240101)
    lo_t, hi_t = max(t_range[0], -15.0), min(t_range[1], 45.0)
    tmin = rng.uniform(lo_t, hi_t - 5.0, 20000)
    days = (tmin, np.minimum(tmin + rng.gamma(2.0, 5.0, tmin.size), hi_t),
            np.clip(tmin + rng.normal(0.0, 3.0, tmin.size), lo_t, hi_t),
            rng.uniform(y_range[0], y_range[1], tmin.size))
    ex = exact(*days)
    err = np.abs(table.evaluate(days[0], days[1], tmin_next=days[2], daylength=days[3]) - ex)
    table.peak = float(ex.max())
    big = ex > _FLOOR * table.peak
    table.max_abs_error = float(err.max())
    table.max_rel_error = float((err[big] / ex[big]).max(initial=0.0))


def _quadrature_table(spec: dict, code: int, packed: np.ndarray, lo: float, hi: float,
                      kern: tuple, opts: dict, exact) -> DailyTable:
    t_range = spec["t_range"]
    table = PartonLoganTable(spec, "quadrature")
    h = opts["h_rate"] or (1 / 1024 if code in dev._POWER_HI else 1 / 64)   # measured
    nodes, dj = _graded_axis(t_range, [lo, hi], h, h, 1.0)
    r = rate_array(nodes, code, packed, parallel=False)
    rt = np.stack([r, np.append(np.diff(r), 0.0)], axis=1).reshape(-1).astype(np.float32)
    rax = np.array([nodes[0], 1.0 / dj, nodes.size - 2, t_range[0], t_range[1]], np.float32)
    table.grid = (rax, rt)
    n_gauss = opts["n_gauss"] or (10 if MODELS[code] == "sharpe_schoolfield" else 8)
    table.kern = (*kern[:5], *dev.quadrature_nodes(int(n_gauss)))
    table.mode, table.nodes = _PLQ, nodes.size
    _check_days(table, exact, t_range, (0.0, 24.0))
    return table


def _y_range(daylength_range, coef: np.ndarray) -> tuple[float, float]:
    """The requested day lengths within those where the sunrise phase is in
    [-π/2, π/2) and the sunset phase in [π/2 + _MARGIN, 3π/2]; ValueError if
    none."""
    try:
        y0, y1 = (float(v) for v in daylength_range)
    except (TypeError, ValueError):
        y0 = y1 = math.nan
    if not 0.0 <= y0 <= y1 <= 24.0:
        raise ValueError(f"daylength_range must be (ymin, ymax) hours, 0 <= ymin <= ymax <= "
                         f"24; got {daylength_range!r}")
    a, c = coef[0], coef[2]
    yy = np.linspace(0.0, 24.0, 24001)
    p0, p1 = -math.pi * c / (yy + 2 * a), math.pi * (yy - c) / (yy + 2 * a)
    ok = yy[(p0 >= -_HP) & (p0 < _HP) & (p1 >= _HP + _MARGIN) & (p1 <= 3 * _HP)]
    if ok.size == 0 or y1 < ok[0] or y0 > ok[-1]:
        raise ValueError(f"daylength_range {daylength_range!r}: the table needs day lengths "
                         "whose sunset comes after the day's maximum; use the exact kernel")
    return max(y0, float(ok[0])), min(y1, float(ok[-1]))


def _daylength_table(spec: dict, code: int, packed: np.ndarray, lo: float, hi: float,
                     kern: tuple, opts: dict, exact) -> PartonLoganTable:
    a, b, c = kern[0][4:]
    y0, y1 = _y_range(spec["daylength_range"], kern[0][4:])
    # the arcs: sunrise phase p0 (a chord), sunset arc φ1 = π − p1 (planes)
    p0_max = math.pi * abs(c) / (y0 + 2 * a)
    phi = (math.pi * (2 * a + c) / (y1 + 2 * a), math.pi * (2 * a + c) / (y0 + 2 * a))
    if p0_max > arcs.MAX_SUNRISE or not phi[0] > 0.0:
        # (documented) such coefficients: per-day quadrature instead
        return _quadrature_table(spec, code, packed, lo, hi, kern,
                                 dict(_QUADRATURE), exact)
    max_range = float(opts["max_range"])
    if not max_range > 0.0:
        raise ValueError(f"max_range must be > 0 degC, got {max_range}")
    table = PartonLoganTable(spec, "table")
    nodes, dj = _graded_axis(spec["t_range"], [lo, hi], opts["h_min"], opts["h_max"],
                             opts["grade"])
    loc = _locator(nodes, dj)
    day = arcs.compact_locator(loc)

    def night(ts, te):
        return _night_exact(np.ascontiguousarray(ts), np.ascontiguousarray(te), kern)

    ntab, _, nst = _checked_table(night, nodes, dj, opts["sub"], symmetric=False)
    peak = float(rate_array(nodes, code, packed, parallel=False).max())
    phases = arcs.plane_phases(phi, float(opts["plane_step"]))
    phis = np.concatenate([[_HP], phases])                     # plane 0: the maximum, Q
    floor = _FLOOR * peak * 24.0 * math.pi / (y1 + 2 * a)    # an arc adding 1 % of the peak
    rows, tab, stride, stored, marked = arcs.checked_planes(
        nodes, day, phis, lo, hi, max_range, int(opts["sub"]), floor, kern)
    step = float(phases[1] - phases[0]) if phases.size > 1 else 0.0
    geo = np.array([2 * a, c, math.exp(-b), phases[0], 1.0 / step if step else 0.0,
                    phases.size - 1, stride, step, y0, y1, nodes.size + 1])
    table.arcs = (day, rows, tab, arcs.primitive_table(nodes, code, packed), ntab, geo)
    table.kern = kern
    table.nodes, table.y_range, table.planes, table.stored_cells = nodes.size, (y0, y1), \
        phis.size, stored
    table.marked_fraction, table.night_marked_fraction = marked, nst["marked_fraction"]
    _check_days(table, exact, spec["t_range"], (y0, y1))
    return table


def build_parton_logan(model: str, params: dict, t_range: tuple[float, float],
                       coef: np.ndarray, n_nodes: int, daylength_range, grid: dict
                       ) -> DailyTable:
    """The Parton-Logan table of ``tables.development_table``: with a
    day-length range the arc, night and primitive tables (``_pl_arcs``),
    else the quadrature strategy.

    References
    ----------
    .. [1] Parton & Logan (1981) Agricultural Meteorology 23:205-216.
    """
    code = model_code(model)
    packed = pack_params(code, params)
    lo, hi = rate_limits(code, params)
    opts = _grid_options(_QUADRATURE if daylength_range is None else _TABLES, grid)
    spec = dict(model=model, params=dict(params), diurnal="parton_logan",
                t_range=tuple(t_range), coefficients=dict(zip("abc", coef.tolist())),
                n_nodes=n_nodes, daylength_range=daylength_range, **opts)

    # fpar = (-, -, lo, hi, a, b, c), ipar = (-, -, code, power_hi), exact and fast nodes
    kern = (np.array([0.0, 0.0, lo, hi, *coef]), np.array([0, 0, code, code in dev._POWER_HI]),
            packed, *dev.quadrature_nodes(n_nodes), *dev.quadrature_nodes(1))

    def exact(x, y, w, dl):
        return dev.development_block(x, y, code, packed, (lo, hi), diurnal=dev._PL,
                                     tmin_next=w, daylength=dl, coefficients=coef,
                                     n_nodes=n_nodes)

    build = _quadrature_table if daylength_range is None else _daylength_table
    return build(spec, code, packed, lo, hi, kern, opts, exact)

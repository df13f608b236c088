"""Fast Parton-Logan daily development: tables over day length.

The Parton & Logan (1981) day runs from sunrise to the next sunrise: the
sine T = Tn + A sin ψ, A = Tx - Tn, ψ from p0 = -πc/(Y + 2a) to
p1 = π(Y - c)/(Y + 2a) over the Y hours of daylight (t = ψ (Y + 2a)/π), then
a decay from the sunset temperature Ts = Tn + A sin p1 toward the next
minimum Tn' over the Z = 24 - Y hours of night.  Its daily development
(``development._pl_day``) is, exactly, (R + F + Z N)/24 with

* R = ∫ r dt from sunrise to the maximum (ψ ∈ [p0, π/2]), the temperature
  rising from T0 = Tn + A sin p0 to Tx: a function of (T0, Tx, Y);
* F = ∫ r dt from the maximum to sunset (ψ ∈ [π/2, p1]), falling from Tx
  to Ts: a function of (Ts, Tx, Y);
* N = ∫_0^1 r(Tn' + (Ts - Tn') e^(-b s)) ds, the night in normalised time
  (``development._pl_night``), from Ts to Te = Tn' + (Ts - Tn') e^(-b): a
  function of (Ts, Te), not of Y.

In these variables every kink of the day's value (where the day's curve
starts, ends or peaks at a rate limit, ``rates.rate_limits``) lies on a grid
line of a graded node axis (``tables._graded_axis``: limits on nodes, finer
next to them), and R and F are smooth in Y.  Tables, float32:

* N: the bilinear (Ts, Te) table of ``tables._checked_table``.
* R, F: bilinear coefficients over (T0 or Ts, Tx) cells, Tx index >= the
  other (crossed days: exact), Tx - Tn <= ``max_range`` (else exact), not
  stored where the part stays below the lower or above the upper limit (0);
  per cell the planes at uniform day lengths side by side; linear (R,
  ``r_step`` h) and 4-point Lagrange (F, ``f_step`` h) across planes.
* Build check: N as ``_checked_table``; R and F per stored cell and
  day-length interval at sub × sub points mid-interval against
  ``development._branch``: |error| <= 5e-4 max(|part|, 1 % of the peak rate
  × the part's hours).  Failing planes, and days outside the temperature or
  day-length range (from sunset phase π/2 + 0.1 on), use the exact
  ``_pl_day``.  So the daily error is <= 5e-4 (value + 1 % of the peak).

Without a day-length range: each day by Gauss-Legendre over a 1-D table of
the rate (``development._pl_tabulated_range``).  No I/O.

References
----------
Parton, W.J. & Logan, J.A. (1981) Agricultural Meteorology 23:205-216;
Press, W.H. et al. (2007) Numerical Recipes, 3rd ed., sections 3.2
(Lagrange interpolation) and 3.6 (bilinear interpolation).
"""

from __future__ import annotations

import math

import numba
import numpy as np

from . import development as dev
from .rates import MODELS, model_code, pack_params, rate_array, rate_limits
from .tables import (_BLOCK, _CHUNK, _EX_PL, _FLOOR, _JIT, _NOINT, _NONE32, _PARALLEL_MIN,
                     _PLQ, _TOL, DailyTable, _bilinear, _bin, _checked_table, _exact_block,
                     _graded_axis, _grid_options, _locator)

__all__ = ["PartonLoganTable", "build_parton_logan"]

_INLINE = dict(_JIT, inline="always")
_BIG = 1 << 40                 # "first stored column" of a row that is 0 throughout
_HP = 0.5 * math.pi
_MARGIN = 0.1                  # rad: the table's day lengths have p1 >= π/2 + this
# grid options: measured with benchmarks/bench_tables.py (see benchmarks/README.md)
_QUADRATURE = dict(h_rate=None, n_gauss=None)
_TABLES = dict(h_min=1 / 256, h_max=0.25, grade=0.035, sub=3, n_h_min=1 / 128, n_h_max=0.25,
               n_grade=0.035, r_step=6.5, f_step=3.0, r_order=1, f_order=3, max_range=40.0)


# ------------------------------------------------------------------ lookups
@numba.njit(**_INLINE)
def _locate(t: np.float32, ax: np.ndarray, kmap: np.ndarray, ctw: np.ndarray) -> tuple:
    """Cell kk (locator numbering, 0 = border) of t and its fraction in the
    cell: the lattice bin of ``tables._bin`` -> kmap (uint16) -> per cell
    (t_k, 1/width) in ctw.  Small arrays (L1/L2) even with a fine lattice."""
    tc, j = _bin(t, ax)
    k = np.uint64(kmap[j])
    return k, (tc - ctw[2 * k]) * ctw[2 * k + 1]


@numba.njit(**_INLINE)
def _part(t: np.float32, tx: np.float32, yl: np.float32, yax: np.ndarray, rows: np.ndarray,
          tab: np.ndarray, day: tuple) -> np.float32:
    """R or F at (t, tx, yl): yax = (y0, y1, 1/step, last first plane,
    order, 4 planes), rows[4 kk] = (base, first, last, -) per row cell, day
    = (ax, kmap, ctw).  +inf (exact): crossed day, beyond max_range, yl
    outside [y0, y1] or NaN; 0 before the first stored column; +-inf or NaN
    from a marked plane.  No early return, so numba drops the refcounts."""
    kr, fx = _locate(t, day[0], day[1], day[2])
    kc, fy = _locate(tx, day[0], day[1], day[2])
    r = 4 * kr
    col = np.int64(kc)
    yv = yl if yl > yax[0] else yax[0]
    yv = yv if yv < yax[1] else yax[1]
    exact = (col < np.int64(kr)) | (col > rows[r + 2]) | (yv != yl)
    zero = col < rows[r + 1]
    u = (yv - yax[0]) * yax[2]
    cubic = yax[4] == 3
    s = max(np.int64(u) - (1 if cubic else 0), 0)
    s = min(s, np.int64(yax[3]))
    u = u - np.float32(s)
    q = rows[r] + col * np.int64(yax[5]) + 4 * s
    q = np.uint64(0 if exact | zero else q)                # tab[0:16]: a zero cell
    one = np.float32(1.0)
    b0 = _bilinear(tab, q, fx, fy)
    b1 = _bilinear(tab, q + np.uint64(4), fx, fy)
    if cubic:                                              # 4-point Lagrange across planes
        a, b, c = u - one, u - np.float32(2.0), u - np.float32(3.0)
        b2 = _bilinear(tab, q + np.uint64(8), fx, fy)
        b3 = _bilinear(tab, q + np.uint64(12), fx, fy)
        v = (b * c * (u * np.float32(0.5) * b1 - a * np.float32(1 / 6) * b0)
             + u * a * (b * np.float32(1 / 6) * b3 - c * np.float32(0.5) * b2))
    else:
        v = (one - u) * b0 + u * b1
    v = np.float32(0.0) if zero else v
    return np.float32(math.inf) if exact else v


_S = tuple(np.float32((-1.0) ** k / math.factorial(2 * k + 1)) for k in range(7))
_S0, _S1, _S2, _S3, _S4, _S5, _S6 = _S


@numba.njit(**_INLINE)
def _sin32(x: np.float32) -> np.float32:
    """sin x for |x| <= π/2 in float32: Taylor series to x^13 (truncation
    < 1e-9, below float32 rounding), Horner; vectorises."""
    z = x * x
    return x * (_S0 + z * (_S1 + z * (_S2 + z * (_S3 + z * (_S4 + z * (_S5 + z * _S6))))))


@numba.njit(**_JIT)
def _table_range(kind: int, a: np.ndarray, b: np.ndarray, c: np.ndarray, d: np.ndarray,
                 out: np.ndarray, start: int, stop: int, night: tuple, day: tuple, rise: tuple,
                 fall: tuple, kern: tuple) -> int:
    """out[start:stop] = (R + F + Z N)/24; the exact ``_pl_day`` (none if
    kind < 0) in blocks of _BLOCK that left +inf; returns how many.  Short
    passes per block (phases, vectorised; R; F; N) keep lookups in flight."""
    nax, nkmap, nctw, ntab = night[0], night[1], night[2], night[3]
    side = np.uint64(night[4][0])
    pa, pc = np.float32(2.0 * kern[0][4]), np.float32(kern[0][6])
    eb = np.float32(math.exp(-kern[0][5]))
    pi = np.float32(math.pi)
    inf, zero = np.float32(math.inf), np.float32(0.0)
    full, inv24 = np.float32(24.0), np.float32(1.0 / 24.0)
    t0 = np.empty(_BLOCK, dtype=np.float32)
    ts = np.empty(_BLOCK, dtype=np.float32)
    te = np.empty(_BLOCK, dtype=np.float32)
    rise_v = np.empty(_BLOCK, dtype=np.float32)
    fall_v = np.empty(_BLOCK, dtype=np.float32)
    total = 0
    for b0 in range(start, stop, _BLOCK):
        b1 = min(b0 + _BLOCK, stop)
        aa, bb, cc, dd, oo = a[b0:b1], b[b0:b1], c[b0:b1], d[b0:b1], out[b0:b1]
        n = oo.size
        for i in range(n):              # sunrise, sunset and night-end temperatures
            x, y, w = np.float32(aa[i]), np.float32(bb[i]), np.float32(cc[i])
            yl = np.float32(dd[i])
            g = pi / (yl + pa)
            amp = y - x
            t0[i] = x + amp * _sin32(-pc * g)
            s = x + amp * _sin32(pi - (yl - pc) * g)
            ts[i] = s
            te[i] = w + (s - w) * eb
        for i in range(n):
            rise_v[i] = _part(t0[i], np.float32(bb[i]), np.float32(dd[i]), rise[0], rise[1],
                              rise[2], day)
        for i in range(n):
            fall_v[i] = _part(ts[i], np.float32(bb[i]), np.float32(dd[i]), fall[0], fall[1],
                              fall[2], day)
        cnt = 0
        for i in range(n):
            x, y, w = np.float32(aa[i]), np.float32(bb[i]), np.float32(cc[i])
            yl = np.float32(dd[i])
            ks, fs = _locate(ts[i], nax, nkmap, nctw)
            ke, fe = _locate(te[i], nax, nkmap, nctw)
            nv = _bilinear(ntab, np.uint64(4) * (ks * side + ke), fs, fe)
            zf = (full - yl) * inv24
            v = (rise_v[i] + fall_v[i]) * inv24 + (zf * nv if zf > zero else zero)
            v = (v if abs(v) < inf else inf) + zero * (x + y + w + yl)
            oo[i] = v
            cnt += v == inf
        if cnt > 0 and kind >= 0:
            _exact_block(kind, a, b, c, d, out, b0, b1, kern)
        total += cnt
    return total


@numba.njit(parallel=True, **_JIT)
def _run_parallel(a: np.ndarray, b: np.ndarray, c: np.ndarray, d: np.ndarray,
                  out: np.ndarray, night: tuple, day: tuple, rise: tuple, fall: tuple,
                  kern: tuple) -> int:
    n = out.size
    nch = (n + _CHUNK - 1) // _CHUNK
    counts = np.zeros(nch, dtype=np.int64)
    for k in numba.prange(nch):
        s = k * _CHUNK
        counts[k] = _table_range(_EX_PL, a, b, c, d, out, s, min(n, s + _CHUNK), night, day,
                                 rise, fall, kern)
    return counts.sum()


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
@numba.njit(**_INLINE)
def _part_exact(which: int, t: float, tx: float, yl: float, kern: tuple) -> tuple:
    """R (which = 0; t = T0) or F (1; t = Ts) with the exact nodes, and its
    hours; the day sine through (t, tx) for day length yl."""
    fpar, ipar, p, qx, qw = kern[0], kern[1], kern[2], kern[3], kern[4]
    g = yl + 2.0 * fpar[4]
    p0 = -math.pi * fpar[6] / g
    p1 = math.pi * (yl - fpar[6]) / g
    pa = p0 if which == 0 else math.pi - p1             # the falling part mirrored
    amp = (tx - t) / (1.0 - math.sin(pa))
    v = dev._branch(tx - amp, amp, pa, _HP, fpar[2], fpar[3], ipar[2], p, qx, qw,
                    ipar[3] != 0)
    return g / math.pi * v, g / math.pi * (_HP - pa)


@numba.njit(parallel=True, **_JIT)
def _part_nodes(which: int, t: np.ndarray, tx: np.ndarray, y: np.ndarray, out: np.ndarray,
                kern: tuple) -> None:
    for i in numba.prange(t.size):
        for k in range(y.size):
            out[i, k] = _part_exact(which, t[i], tx[i], y[k], kern)[0]


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


@numba.njit(parallel=True, **_JIT)
def _check_part(which: int, ci: np.ndarray, cj: np.ndarray, nodes: np.ndarray,
                y_mid: np.ndarray, sub: int, floor: float, day: tuple, part: tuple,
                kern: tuple) -> np.ndarray:
    """Per stored cell m and day-length interval k: the largest |table -
    exact| / max(|exact|, floor × hours) at sub × sub points of the cell at
    y_mid[k] (inf if the table gives no number)."""
    rel = np.zeros((ci.size, y_mid.size))
    for m in numba.prange(ci.size):
        i, j = ci[m], cj[m]
        for k in range(y_mid.size):
            yl = y_mid[k]
            for u in range(sub):
                t = nodes[i] + (nodes[i + 1] - nodes[i]) * (u + 0.5) / sub
                for v in range(sub):
                    tx = nodes[j] + (nodes[j + 1] - nodes[j]) * (v + 0.5) / sub
                    ex, hours = _part_exact(which, t, tx, yl, kern)
                    fast = _part(np.float32(t), np.float32(tx), np.float32(yl), part[0],
                                 part[1], part[2], day)
                    e = abs(np.float64(fast) - ex)
                    e = math.inf if math.isnan(e) else e
                    rel[m, k] = max(rel[m, k], e / max(abs(ex), floor * hours))
    return rel


# --------------------------------------------------------------------- public
class PartonLoganTable(DailyTable):
    """The Parton-Logan day; strategy ``"table"`` (rise, fall and night
    tables, module notes) or ``"quadrature"`` (per day over a rate table).
    Build with ``tables.development_table(model, params,
    diurnal="parton_logan", daylength_range=(ymin, ymax))`` (no range:
    quadrature); ``evaluate`` as ``DailyTable.evaluate``, with ``daylength``.

    Attributes (besides ``DailyTable``'s; tables only): ``y_range`` (h, the
    day lengths the tables cover; others exact), ``rise_planes``,
    ``fall_planes``, ``stored_cells`` (R and F), ``marked_fraction`` (share
    of R and F planes computed exactly), ``night_marked_fraction`` (of N
    cells).

    References
    ----------
    .. [1] Parton, W.J. & Logan, J.A. (1981) A model for diurnal variation in
       soil and air temperature. Agricultural Meteorology 23:205-216.
    """

    def __init__(self, spec: dict, strategy: str) -> None:
        super().__init__("development", spec, strategy)
        self.needs_daylength, self.exact_kind = True, _EX_PL
        self.day = self.rise = self.fall = (_NONE32,)      # (ax, kmap, ctw); R and F tables
        self.y_range = (math.nan, math.nan)
        self.rise_planes = self.fall_planes = self.stored_cells = 0
        self.night_marked_fraction = 0.0

    @property
    def nbytes(self) -> int:
        """Bytes of the arrays the evaluation reads (tables and locators)."""
        return int(sum(a.nbytes for a in (*self.grid, *self.day, *self.rise, *self.fall)))

    def _run(self, a, b, c, d, o, parallel: bool) -> int:
        big = parallel and o.size >= _PARALLEL_MIN
        if self.mode == _PLQ:
            rate = self.grid[:2]
            if big:
                return _quadrature_parallel(a, b, c, d, o, rate, self.kern)
            return _quadrature_range(a, b, c, d, o, 0, o.size, rate, self.kern)
        tabs = (self.grid, self.day, self.rise, self.fall, self.kern)
        if big:
            return _run_parallel(a, b, c, d, o, *tabs)
        return _table_range(_EX_PL, a, b, c, d, o, 0, o.size, *tabs)

    def __repr__(self) -> str:
        return (f"PartonLoganTable({self.strategy}, nodes={self.nodes}, planes="
                f"{self.rise_planes}+{self.fall_planes}, nbytes={self.nbytes}, "
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
    table.grid = (rax, rt, _NOINT, _NOINT, _NONE32)
    n_gauss = opts["n_gauss"] or (10 if MODELS[code] == "sharpe_schoolfield" else 8)
    table.kern = (*kern[:5], *dev.quadrature_nodes(int(n_gauss)))
    table.mode, table.nodes = _PLQ, nodes.size
    _check_days(table, exact, t_range, (0.0, 24.0))
    return table


def _y_range(daylength_range, coef: np.ndarray) -> tuple[float, float]:
    """The requested day lengths within those where the sunrise phase is in
    [-π/2, π/2) and the sunset phase in [π/2 + _MARGIN, 3π/2]."""
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


def _y_axis(y_range: tuple[float, float], step: float, order: int) -> np.ndarray:
    """Uniform day-length nodes (h) over y_range, spacing <= step, at least
    order + 1 of them (a narrow range gets order steps of step, within [0, 24])."""
    if not (math.isfinite(step) and 0.0 < step <= 12.0):
        raise ValueError(f"day-length steps must be in (0, 12] hours, got {step}")
    y0, y1 = y_range
    if y1 - y0 < order * step:
        y0 = min(max(0.5 * (y0 + y1) - 0.5 * order * step, 0.0), 24.0 - order * step)
        return np.linspace(y0, y0 + order * step, order + 1)
    return np.linspace(y0, y1, math.ceil((y1 - y0) / step - 1e-9) + 1)


def _compact(loc: tuple) -> tuple:
    """(ax, kmap, ctw) from ``tables._locator``'s (ax, tw, offr, offc): the
    cell kk of each lattice bin (uint16) and (t_k, 1/width) per cell."""
    kk = (loc[3] // 4).astype(np.int64)
    ctw = np.zeros((int(kk.max()) + 1, 2), dtype=np.float32)
    ctw[kk] = loc[1].reshape(-1, 2)
    return loc[0], kk.astype(np.uint16), ctw.reshape(-1)


def _part_table(which: int, nodes: np.ndarray, y: np.ndarray, order: int,
                lo: float, hi: float, band: float, kern: tuple) -> tuple:
    """((yax, rows, tab), ci, cj): the R (which = 0) or F (1) table over
    (T, Tx) cells i <= j, unchecked."""
    nc = nodes.size - 1
    first = np.full(nc, _BIG, dtype=np.int64)
    last = np.full(nc, _BIG, dtype=np.int64)
    for i in range(nc):
        if nodes[i] >= hi:                     # the part stays above hi: 0
            continue
        first[i] = max(i, int(np.searchsorted(nodes, lo, "right")) - 1)   # below: Tx <= lo
        last[i] = min(nc - 1, int(np.searchsorted(nodes, nodes[i] + band, "right")) - 1)
    count = np.where(first < _BIG, np.maximum(last - first + 1, 0), 0)
    ci = np.repeat(np.arange(nc), count)
    cj = np.concatenate([np.arange(f, f + n) for f, n in zip(first, count) if n]
                        + [np.zeros(0, np.int64)])
    need = np.zeros((nc + 1, nc + 1), dtype=bool)           # corners of the stored cells
    for di in (0, 1):
        for dj in (0, 1):
            need[ci + di, cj + dj] = True
    ni, nj = np.nonzero(need)
    index = np.full(need.shape, -1, dtype=np.int64)
    index[ni, nj] = np.arange(ni.size)
    v = np.empty((ni.size, y.size))
    _part_nodes(which, nodes[ni], nodes[nj], y, v, kern)
    v00, v10 = v[index[ci, cj]], v[index[ci + 1, cj]]
    v01, v11 = v[index[ci, cj + 1]], v[index[ci + 1, cj + 1]]
    tab = np.stack([v00, v10 - v00, v01 - v00, v11 - v10 - v01 + v00], axis=-1)
    stride = 4 * y.size
    start = np.concatenate([[0], np.cumsum(count)[:-1]]) + 1  # first stored cell of a row
    rows = np.zeros((nc + 1, 4), dtype=np.int64)            # per locator cell kk = cell + 1
    rows[:, 2] = -1                                          # borders: all exact
    live = count > 0
    rows[1:nc + 1, 0] = np.where(live, (start - (first + 1)) * stride, 0)
    rows[1:nc + 1, 1] = np.where(first < _BIG, first + 1, _BIG)
    rows[1:nc + 1, 2] = np.where(first < _BIG, np.where(live, last, first - 1) + 1, _BIG)
    # (a row with nothing stored: last = first - 1 in kk, so every column from first is exact)
    step = (y[-1] - y[0]) / (y.size - 1)
    yax = np.array([y[0], y[-1], 1.0 / step, y.size - order - 1, order, stride],
                   dtype=np.float32)
    # (cell, plane, 4), after one zero cell that lookups without a stored cell read
    tab = np.concatenate([np.zeros(stride), tab.reshape(-1)]).astype(np.float32)
    return (yax, rows.reshape(-1), tab), ci, cj


def _checked_part(which: int, nodes: np.ndarray, day: tuple, y: np.ndarray, order: int,
                  lo: float, hi: float, band: float, sub: int, floor: float,
                  kern: tuple) -> tuple[tuple, int, int]:
    """The R or F table with failing planes marked; stored cells, marked planes."""
    part, ci, cj = _part_table(which, nodes, y, order, lo, hi, band, kern)
    rel = _check_part(which, ci, cj, nodes, 0.5 * (y[:-1] + y[1:]), sub, floor, day, part,
                      kern)
    bad_m, bad_k = np.nonzero(rel > _TOL)
    tab = part[2][4 * y.size:].reshape(ci.size, y.size, 4)
    tab[bad_m, bad_k + 1] = (np.inf, 0.0, 0.0, 0.0)          # a plane the interval reads
    return part, ci.size, int(np.count_nonzero(~np.isfinite(tab[..., 0])))


def _daylength_table(spec: dict, code: int, packed: np.ndarray, lo: float, hi: float,
                     kern: tuple, opts: dict, exact) -> PartonLoganTable:
    coef = kern[0][4:]
    y_range = _y_range(spec["daylength_range"], coef)
    max_range = float(opts["max_range"])
    if not max_range > 0.0:
        raise ValueError(f"max_range must be > 0 degC, got {max_range}")
    table = PartonLoganTable(spec, "table")
    nodes, dj = _graded_axis(spec["t_range"], [lo, hi], opts["h_min"], opts["h_max"],
                             opts["grade"])
    day = _compact(_locator(nodes, dj))
    nnodes, ndj = _graded_axis(spec["t_range"], [lo, hi], opts["n_h_min"], opts["n_h_max"],
                               opts["n_grade"])
    nloc = _locator(nnodes, ndj)

    def night(ts, te):
        return _night_exact(np.ascontiguousarray(ts), np.ascontiguousarray(te), kern)

    ntab, nst = _checked_table(night, nnodes, nloc, opts["sub"], symmetric=False)
    floor = _FLOOR * float(rate_array(nodes, code, packed, parallel=False).max())
    yy = np.linspace(*y_range, 65)
    s0 = np.sin(-math.pi * coef[2] / (yy + 2 * coef[0]))
    s1 = np.sin(math.pi * (yy - coef[2]) / (yy + 2 * coef[0]))
    parts, stored, planes, marked = [], 0, 0, 0
    # bands: Tx - T0 = A (1 - sin p0), Tx - Ts = A (1 - sin p1) for A <= max_range
    for which, key, share in ((0, "r_", 1.0 - min(s0.min(), 0.0)), (1, "f_", 1.0 - s1.min())):
        order = opts[key + "order"]
        if order not in (1, 3):
            raise ValueError(f"{key}order must be 1 (linear) or 3 (cubic), got {order!r}")
        y = _y_axis(y_range, float(opts[key + "step"]), order)
        part, n, m = _checked_part(which, nodes, day, y, order, lo, hi, max_range * share,
                                   int(opts["sub"]), floor, kern)
        parts.append(part)
        stored, planes, marked = stored + n, planes + n * y.size, marked + m
    table.grid = (*_compact(nloc), ntab, np.array([nnodes.size + 1], dtype=np.int64))
    table.day, (table.rise, table.fall), table.kern = day, parts, kern
    table.nodes, table.y_range, table.stored_cells = nodes.size, y_range, stored
    table.rise_planes, table.fall_planes = (int(p[0][3] + p[0][4] + 1) for p in parts)
    table.marked_fraction = marked / max(planes, 1)
    table.night_marked_fraction = nst["marked_fraction"]
    _check_days(table, exact, spec["t_range"], y_range)
    return table


def build_parton_logan(model: str, params: dict, t_range: tuple[float, float],
                       coef: np.ndarray, n_nodes: int, daylength_range, grid: dict
                       ) -> DailyTable:
    """The Parton-Logan table of ``tables.development_table``: with a
    day-length range the rise, fall and night tables, else the quadrature
    strategy.

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

"""The machinery of the fast daily kernels (``DailyTable``), built once per profile.

``DailyTable`` evaluates a daily kernel over (Tmin, Tmax) arrays in a
compiled, parallel loop (float32 or float64 in, float64 out, NaN in, NaN
out), with one of these strategies, chosen by measurement
(benchmarks/README.md):

* ``"table"`` (development with the sine day; degree-days on request): the
  exact value at the nodes of a graded (Tmin, Tmax) grid, bilinear
  interpolation.  Nodes lie on every threshold, so the kinks of the daily
  value fall on grid lines and never inside a cell, and are denser next to
  them (spacing ``grade`` × distance, from ``h_min`` to ``h_max``).  A value
  reads one 32-bit locator entry per axis and its cell's four float32
  coefficients (``grid._lattice_grid``), sixteen values at a time
  with gathers (``_lanes``).  At build each cell is checked at ``sub``²
  interior points against the exact kernel; cells that miss |error| <= 5e-4
  max(|exact|, 1 % of the peak), and values outside ``t_range``, are
  computed with the exact kernel.
* ``"closed_form"`` (degree-day methods other than the sines by default):
  the vectorised closed forms of ``degree_days`` are exact and, measured,
  as fast as a lookup or faster (benchmarks/README.md).
* ``"float32"`` (the single and double sine by default): their closed forms
  in float32 arithmetic (``degree_days32``; ``tables.degree_days`` builds
  the degree-day kinds).
* development with the Parton-Logan day: ``suitmap.kernels.tables.daylength``
  (tables over day length, or per-day quadrature over a rate table).

No I/O.

References
----------
Press, W.H. et al. (2007) Numerical Recipes, 3rd ed., section 3.6
(bilinear interpolation); Abramowitz & Stegun (1964) 25.4.29.
"""

from __future__ import annotations

import math

import numba
import numpy as np

from suitmap.kernels import development as dev
from suitmap.kernels.degree_days import CUTOFFS, METHODS, degree_days_block
from suitmap.kernels.degree_days32 import sine_degree_days32
from suitmap.kernels.degree_days import _fill_range as _dd_fill_range
from suitmap.kernels.degree_days import _output_array
from suitmap.kernels.tables._lanes import LANES, LATTICE_BITS, halves_lanes, one_lanes
from suitmap.kernels.tables.grid import _lattice_grid

__all__ = ["DailyTable", "T_RANGE"]

T_RANGE = (-50.0, 60.0)       # °C covered by a table; outside: exact kernel
_TOL, _FLOOR = 5e-4, 0.01     # build check: |err| <= _TOL * max(|f|, _FLOOR * peak)
_DEFAULTS = {"degree_days": dict(h_min=1 / 32, h_max=0.5, grade=0.05, sub=4),
             "development": dict(h_min=1 / 32, h_max=0.25, grade=0.05, sub=4)}
_ONE, _HALVES, _PLQ = range(3)        # modes: one lookup, two half-days, quadrature
_EX_DD, _EX_SINE, _EX_PL = range(3)   # exact kernels for the fallback
_CHUNK = 16384
_BLOCK = 128                  # values per fast pass; the exact pass scans one block
_SUB = 256                    # values per (Tmin, Tmax) table pass before its exact pass
_PARALLEL_MIN = 65536
_JIT = dict(cache=True, nogil=True, error_model="numpy")  # nogil: dask threads run kernels at once
_INLINE = dict(_JIT, inline="always")
_RSHIFT, _RMASK = LATTICE_BITS, (1 << LATTICE_BITS) - 1


# ------------------------------------------------------------------ lookups
# The loops run LANES values at a time as LLVM vector code with gathers
# (``_lanes``; measured 2 x the scalar loop), the rest scalar, with the same
# float32 arithmetic (6e-8 relative): clamp, lattice bin, one locator read
# per axis, the cell's four coefficients.  A border of +inf cells catches
# values below t0 or from t1 up; +inf marks failed cells too and means
# "compute exactly"; NaN input gives NaN through 0 * (x + y).


@numba.njit(**_INLINE)
def _bin(t: np.float32, ax: np.ndarray) -> tuple[np.float32, np.uint64]:
    """Clamped temperature and its lattice bin; ax = (t0 - dj, t1 + dj, 1/dj),
    float32 (the Parton-Logan arc tables' locator)."""
    tc = t if t > ax[0] else ax[0]              # NaN -> border; masked by the caller
    tc = tc if tc < ax[1] else ax[1]
    return tc, np.uint64((tc - ax[0]) * ax[2])


@numba.njit(**_INLINE)
def _cell(t: np.float32, ax: np.ndarray, loc: np.ndarray) -> tuple[np.float32, np.int64]:
    """Fraction in its cell (lattice units) and cell part of the offset of t
    on a lattice locator (``grid._lattice_grid``); ``_lanes._Axis.cell``
    is the same in vector code."""
    tc = t if t > ax[0] else ax[0]              # NaN -> border; masked by the caller
    tc = tc if tc < ax[1] else ax[1]
    u = (tc - ax[0]) * ax[2]
    j = np.int32(u)
    p = np.int64(loc[j])
    return u - np.float32(np.int64(j) - (p & _RMASK)), p >> _RSHIFT


@numba.njit(**_INLINE)
def _bilinear(tab: np.ndarray, q: np.uint64, fx: np.float32, fy: np.float32) -> np.float32:
    return tab[q] + fx * tab[q + 1] + fy * (tab[q + 2] + fx * tab[q + 3])


@numba.njit(**_JIT)
def _exact_block(kind: int, a: np.ndarray, b: np.ndarray, c: np.ndarray, d: np.ndarray,
                 out: np.ndarray, start: int, stop: int, kern: tuple) -> None:
    """The exact kernel where the fast pass left +inf in out[start:stop];
    kern = (fpar, ipar, packed, qx, qw, gx, gw), see ``DailyTable``."""
    fpar, ipar, p, qx, qw = kern[0], kern[1], kern[2], kern[3], kern[4]
    for i in range(start, stop):
        if out[i] != math.inf:
            continue
        x, y, w, dl = np.float64(a[i]), np.float64(b[i]), np.float64(c[i]), np.float64(d[i])
        if kind == _EX_DD:
            _dd_fill_range(a, b, c, out, i, i + 1, fpar[0], fpar[1], ipar[0], ipar[1])
        elif kind == _EX_SINE:
            out[i] = dev._sine_day(x, y, fpar[2], fpar[3], ipar[2], p, qx, qw, ipar[3] != 0)
        else:
            out[i] = dev._pl_day(x, y, w, dl, fpar[4], fpar[5], fpar[6], fpar[2], fpar[3],
                                 ipar[2], p, qx, qw, ipar[3] != 0)


@numba.njit(**_JIT)
def _one_range(a: np.ndarray, b: np.ndarray, out: np.ndarray, start: int, stop: int,
               grid: tuple) -> int:
    """out[start:stop] = the table at (a, b); returns how many +inf."""
    ax, locr, locc, tab = grid
    cnt, i = 0, start
    while i + LANES <= stop:
        cnt += one_lanes(a, b, out, i, ax, locr, locc, tab)
        i += LANES
    zero, inf = np.float32(0.0), np.float32(math.inf)
    for k in range(i, stop):
        x, y = np.float32(a[k]), np.float32(b[k])
        fx, kx = _cell(x, ax, locr)
        fy, ky = _cell(y, ax, locc)
        v = _bilinear(tab, 4 * (kx + ky), fx, fy) + zero * (x + y)
        out[k] = v
        cnt += v == inf
    return cnt


@numba.njit(**_JIT)
def _halves_range(a: np.ndarray, b: np.ndarray, c: np.ndarray, out: np.ndarray, start: int,
                  stop: int, grid: tuple) -> int:
    """out[start:stop] = the mean of the table at (a, b) and at (c, b): two
    half-days (Tmin, Tmax) and (next Tmin, Tmax); returns how many +inf."""
    ax, locr, locc, tab = grid
    cnt, i = 0, start
    while i + LANES <= stop:
        cnt += halves_lanes(a, b, c, out, i, ax, locr, locc, tab)
        i += LANES
    zero, half, inf = np.float32(0.0), np.float32(0.5), np.float32(math.inf)
    for k in range(i, stop):
        x, y, w = np.float32(a[k]), np.float32(b[k]), np.float32(c[k])
        fx, kx = _cell(x, ax, locr)
        fy, ky = _cell(y, ax, locc)
        fw, kw = _cell(w, ax, locr)
        v = half * (_bilinear(tab, 4 * (kx + ky), fx, fy)
                    + _bilinear(tab, 4 * (kw + ky), fw, fy)) + zero * (x + y + w)
        out[k] = v
        cnt += v == inf
    return cnt


@numba.njit(**_JIT)
def _table_range(mode: int, kind: int, a: np.ndarray, b: np.ndarray, c: np.ndarray,
                 d: np.ndarray, out: np.ndarray, start: int, stop: int, grid: tuple,
                 kern: tuple) -> int:
    """out[start:stop] from the table, first argument on the rows, second on
    the columns (one loop per mode: measured 10 % faster than a branch in
    the loop); where that left +inf, the exact kernel ``kind`` (none if < 0).
    In sub-blocks of ``_SUB`` values, so that the exact pass rescans only a
    sub-block with a +inf, while it is in L1 (measured: rescanning whole
    chunks cost up to a third of the time where 0.1 % of the values are
    exact).  Returns how many +inf."""
    cnt = 0
    for s in range(start, stop, _SUB):
        e = min(stop, s + _SUB)
        if mode == _ONE:
            k = _one_range(a, b, out, s, e, grid)
        else:
            k = _halves_range(a, b, c, out, s, e, grid)
        if k > 0 and kind >= 0:
            _exact_block(kind, a, b, c, d, out, s, e, kern)
        cnt += k
    return cnt


@numba.njit(parallel=True, **_JIT)
def _run_parallel(mode: int, kind: int, a: np.ndarray, b: np.ndarray, c: np.ndarray,
                  d: np.ndarray, out: np.ndarray, grid: tuple, kern: tuple) -> int:
    n = out.size
    nch = (n + _CHUNK - 1) // _CHUNK
    counts = np.zeros(nch, dtype=np.int64)
    for k in numba.prange(nch):
        s = k * _CHUNK
        counts[k] = _table_range(mode, kind, a, b, c, d, out, s, min(n, s + _CHUNK), grid,
                                 kern)
    return counts.sum()


# ------------------------------------------------------------------ building
_NONE32 = np.zeros(1, dtype=np.float32)
_NOI32 = np.zeros(1, dtype=np.int32)
_NO2D = dev.quadrature_nodes(1)[0]              # read-only, as the real nodes: one type
_NO_KERN = (np.zeros(7), np.zeros(4, np.int64), np.zeros(6), _NO2D, _NO2D, _NO2D, _NO2D)


def _checked_table(exact, nodes: np.ndarray, dj: float, sub: int, guard=None,
                   symmetric: bool = True) -> tuple[np.ndarray, tuple, dict]:
    """Coefficient table of f(x, y) on nodes × nodes (lattice step dj),
    failing cells marked: (coefficients per unit cell fraction, for
    ``_locator``; the lattice grid of ``_cell``, which the check runs
    through; stats).

    Symmetric f (f(Tmin, Tmax) = f(Tmax, Tmin)): every cell with y index >=
    x index is checked at sub × sub interior points; a cell where |table -
    exact| > _TOL max(|exact|, _FLOOR peak) anywhere is marked (+inf, so
    computed exactly), and so is its mirror image; also where ``guard(x, y,
    f)`` is False at a check point.  ``symmetric=False``: every cell is
    checked and marked alone.
    """
    v = exact(*np.meshgrid(nodes, nodes, indexing="ij"))
    if symmetric:
        peak = float(np.max(np.abs(v[np.triu_indices(nodes.size)])))
    else:
        peak = float(np.max(np.abs(v)))
    tab = np.zeros((nodes.size + 1,) * 2 + (4,), dtype=np.float32)   # bilinear coefficients,
    tab[..., 0] = np.inf                                             # border of +inf cells
    tab[1:-1, 1:-1] = np.stack([v[:-1, :-1], v[1:, :-1] - v[:-1, :-1], v[:-1, 1:] - v[:-1, :-1],
                                v[1:, 1:] - v[1:, :-1] - v[:-1, 1:] + v[:-1, :-1]], axis=-1)
    if symmetric:
        ci, cj = np.triu_indices(nodes.size - 1)
    else:
        ci, cj = (g.reshape(-1) for g in np.indices((nodes.size - 1,) * 2))
    off = (np.arange(sub) + 0.5) / sub
    ox, oy = (o.reshape(-1) for o in np.meshgrid(off, off, indexing="ij"))
    width = np.diff(nodes)
    x = (nodes[ci, None] + width[ci, None] * ox).reshape(-1)
    y = (nodes[cj, None] + width[cj, None] * oy).reshape(-1)
    ex = exact(x, y)
    fast = np.empty(x.size)                       # the table alone, no exact fallback
    _run_parallel(_ONE, -1, x, y, x, x, fast, _lattice_grid(nodes, dj, tab, LATTICE_BITS),
                  _NO_KERN)
    err = np.abs(fast - ex)
    fail = err > _TOL * np.maximum(np.abs(ex), _FLOOR * peak)
    if guard is not None:
        fail |= ~guard(x, y, ex)
    bad = fail.reshape(ci.size, -1).any(axis=1)
    for i, j in ((ci[bad], cj[bad]), (cj[bad], ci[bad]))[:2 if symmetric else 1]:
        tab[i + 1, j + 1] = (np.inf, 0.0, 0.0, 0.0)
    good = np.repeat(~bad, ox.size)
    big = good & (np.abs(ex) > _FLOOR * peak)
    stats = dict(peak=peak, max_abs_error=float(err[good].max(initial=0.0)),
                 max_rel_error=float((err[big] / np.abs(ex[big])).max(initial=0.0)),
                 marked_fraction=float(bad.mean()))
    return tab.reshape(-1), _lattice_grid(nodes, dj, tab, LATTICE_BITS), stats


def _flat(x, shape: tuple[int, ...], what: str) -> np.ndarray:
    x = np.asarray(x)
    if x.shape != shape:
        if what != "daylength":
            raise ValueError(f"{what} {x.shape} must have the shape of tmin {shape}")
        x = np.broadcast_to(x, shape)       # a broadcast daylength is copied once
    dt = x.dtype if x.dtype in (np.float32, np.float64) else np.float64
    return np.ascontiguousarray(x, dtype=dt).reshape(-1)


# --------------------------------------------------------------------- public
class DailyTable:
    """A fast daily kernel built once from an exact one (see the module notes);
    build with ``degree_day_table``, ``development_table`` or ``build_table``
    (:mod:`suitmap.kernels.tables.build`).

    Attributes
    ----------
    kind, strategy : str
        ``"degree_days"`` or ``"development"``; ``"table"``,
        ``"closed_form"``, ``"float32"`` or ``"quadrature"``.
    spec : dict
        What it was built from, with the grid options.
    max_abs_error, max_rel_error, peak : float
        Measured at build against the exact kernel (table: on the check
        points of the unmarked cells; quadrature: on 20000 seeded days):
        largest |error|, and |error|/|exact| where exact > 1 % of ``peak``,
        the largest value seen.  0 for the exact closed forms; float32:
        on 200000 seeded random days against the float64 closed form.
    marked_fraction, nodes, build_seconds, last_exact_count, needs_daylength
        Share of cells computed exactly; nodes per axis; build time; how
        many values the last ``evaluate`` computed exactly; Parton-Logan.

    References
    ----------
    .. [1] Press, W.H., Teukolsky, S.A., Vetterling, W.T. & Flannery, B.P.
       (2007) Numerical Recipes, 3rd ed., section 3.6.
    """

    def __init__(self, kind: str, spec: dict, strategy: str) -> None:
        self.kind, self.spec, self.strategy = kind, spec, strategy
        self.mode, self.exact_kind, self.nodes = _ONE, -1, 0
        # (axis, row and column lattice locators, coefficients): _lattice_grid
        self.grid = (_NONE32, _NOI32, _NOI32, _NONE32)
        # fpar = (lower, upper, lo, hi, a, b, c), ipar = (method, cutoff, code,
        # power_hi), packed rate parameters, exact nodes qx, qw, fast nodes gx, gw
        self.kern = _NO_KERN
        self.peak = math.nan
        self.max_abs_error = self.max_rel_error = self.marked_fraction = 0.0
        self.build_seconds, self.last_exact_count = 0.0, 0
        self.needs_daylength = False

    @property
    def nbytes(self) -> int:
        """Bytes of the arrays the evaluation reads (tables and locator)."""
        return int(sum(a.nbytes for a in self.grid))

    def evaluate(self, tmin, tmax, out: np.ndarray | None = None, *, tmin_next=None,
                 daylength=None, parallel: bool = True) -> np.ndarray:
        """Daily values of same-shape Tmin/Tmax arrays (°C), float64.

        ``tmin_next`` (next day's minimum): double degree-day methods and the
        Parton-Logan night; None: today's minimum.  ``daylength`` (hours,
        broadcast to the shape): Parton-Logan only.  ``out``: C-contiguous
        float64 array of the shape.  C-contiguous float32/float64 input is
        read without a copy.  NaN where an input used is NaN.
        """
        s = self.spec
        if self.strategy == "closed_form":
            return degree_days_block(tmin, tmax, tmin_next, s["lower"], s["upper"],
                                     s["method"], s["cutoff"], out, parallel=parallel)
        shape = np.shape(tmin)
        if self.strategy == "float32":
            return self._float32(tmin, tmax, tmin_next, out, shape, parallel)
        a, b = _flat(tmin, shape, "tmin"), _flat(tmax, shape, "tmax")
        c = a if tmin_next is None else _flat(tmin_next, shape, "tmin_next")
        if self.needs_daylength:
            if daylength is None:
                raise ValueError("a Parton-Logan table needs daylength (hours) to evaluate")
            d = _flat(daylength, shape, "daylength")
        else:
            d = a
        out = _output_array(out, shape)
        self.last_exact_count = int(self._run(a, b, c, d, out.reshape(-1), parallel))
        return out

    def _float32(self, tmin, tmax, tmin_next, out, shape, parallel: bool) -> np.ndarray:
        """The float32 closed form of the sine methods (``degree_days32``)."""
        s = self.spec
        a, b = _flat(tmin, shape, "tmin"), _flat(tmax, shape, "tmax")
        c = None if tmin_next is None else _flat(tmin_next, shape, "tmin_next")
        out = _output_array(out, shape)
        sine_degree_days32(a, b, c, s["lower"], s["upper"], METHODS.index(s["method"]),
                           CUTOFFS.index(s["cutoff"]), out.reshape(-1), parallel=parallel)
        self.last_exact_count = 0
        return out

    def _run(self, a: np.ndarray, b: np.ndarray, c: np.ndarray, d: np.ndarray,
             o: np.ndarray, parallel: bool) -> int:
        """The compiled pass over flat inputs into o; returns the exact count."""
        if parallel and o.size >= _PARALLEL_MIN:
            return _run_parallel(self.mode, self.exact_kind, a, b, c, d, o, self.grid,
                                 self.kern)
        return _table_range(self.mode, self.exact_kind, a, b, c, d, o, 0, o.size, self.grid,
                            self.kern)

    def __repr__(self) -> str:
        return (f"DailyTable({self.kind}, {self.strategy}, nodes={self.nodes}, "
                f"nbytes={self.nbytes}, max_rel_error={self.max_rel_error:.2e}, "
                f"marked={self.marked_fraction:.4f})")


def _grid_options(group: str | dict, grid: dict) -> dict:
    """``grid`` over the defaults of ``group`` (a name or the defaults)."""
    base = _DEFAULTS[group] if isinstance(group, str) else group
    bad = set(grid) - set(base)
    if bad:
        raise ValueError(f"unknown table option(s) {sorted(bad)}; use {sorted(base)}")
    return dict(base, **grid)

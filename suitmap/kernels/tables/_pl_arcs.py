"""Fast Parton-Logan daily development: the day's sine arcs as planes.

The Parton & Logan (1981) day (``development._pl_day``) runs from sunrise:
the sine T = Tn + A sin ψ, A = Tx − Tn, ψ from p0 = −πc/g to p1 = π(Y − c)/g,
g = Y + 2a (ψ g/π hours), then over the Z = 24 − Y hours of night a decay
from the sunset temperature Ts = Tn + A sin p1 toward the next minimum Tn',
reaching Te = Tn' + (Ts − Tn') e^(−b) at the next sunrise.  With the arc
integral

    K(Tn, A, φ) = ∫_0^φ r(Tn + A sin ψ) dψ,    Q(Tn, Tx) = K(Tn, A, π/2),

the sine folded at its maximum (sin(π − ψ) = sin ψ) gives, exactly,

    ∫_day r dt = g/π [2 Q − K(Tn, A, p0) − K(Tn, A, φ1)],   φ1 = π − p1,

and the night adds Z N(Ts, Te), N = ∫_0^1 r(Tn' + (Ts − Tn') e^(−b s)) ds
(``development._pl_night``); the daily value is their sum over 24 h.

Tables, over one graded node axis (``tables._graded_axis``: the rate
limits on nodes, finer next to them), float32 bilinear coefficients:

* planes of arcs: Q over (Tn, Tx), and K_k over (Tn, Ts_k = Tn + A sin φ_k)
  at phases φ_k spaced at most ``plane_step`` rad over the φ1 of the
  day-length range.  In these variables every kink (an arc ending at a
  rate limit) lies on a grid line.  Cells with end − Tn <= ``max_range``
  are stored, none where the arc stays below the lower or above the upper
  limit (0).
* N over (Ts, Te) (``tables._checked_table``).
* P, the primitive of the rate, per cell a cubic Hermite (float64).

Between planes, K(φ1) = K_k(Tn, Ts_k) + ∫_{φ_k}^{φ1} r dψ from the nearest
plane, the short arc as its chord in ψ: (φ1 − φ_k) times the mean rate
between its end temperatures, (P(Ts) − P(Ts_k))/(Ts − Ts_k), which is exact
across a kink of the rate; the sunrise arc K(p0) (|p0| <= ``MAX_SUNRISE``)
likewise from Tn.  The chord's error falls with the cube of the arc
(measured on the test curves: <= 1.6e-4 of the day with planes 0.15 rad
apart).  At build every stored cell of every plane is checked at sub × sub
points against ``development._branch`` (N as in ``_checked_table``):
|error| <= 5e-4 max(|exact|, the arc that adds 1 % of the peak rate to the
day, 24π/g × 1 % of the peak).  Failing
cells, crossed days (Tx < Tn), Tx − Tn > max_range, temperatures outside
the table and day lengths outside the range are computed exactly.  The
lookups run sixteen values at a time with gathers (``_lanes_pl``).
No I/O.

References
----------
Parton, W.J. & Logan, J.A. (1981) Agricultural Meteorology 23:205-216;
Press, W.H. et al. (2007) Numerical Recipes, 3rd ed., sections 3.3 (cubic
Hermite) and 3.6 (bilinear interpolation).
"""

from __future__ import annotations

import math

import numba
import numpy as np

from suitmap.kernels import development as dev
from suitmap.kernels.rates import rate_array
from suitmap.kernels.tables._lanes import LANES
from suitmap.kernels.tables._lanes_pl import EPS, FIELDS, arcs_lanes
from suitmap.kernels.tables.core import _BLOCK, _CHUNK, _EX_PL, _JIT, _TOL, _bilinear, _bin, _exact_block

_INLINE = dict(_JIT, inline="always")
MAX_SUNRISE = 0.15   # rad: the longest sunrise arc taken as a chord (else quadrature)
_EPS = EPS           # °C: closer arc ends use the rate at one end, not the chord
_BIG = 1 << 40       # "first stored column" of a row that is 0 throughout
_NFIELDS = len(FIELDS)


_S32 = tuple(np.float32((-1.0) ** k / math.factorial(2 * k + 1)) for k in range(7))


@numba.njit(**_INLINE)
def _sin32(x: np.float32) -> np.float32:
    """sin x for |x| <= π/2 in float32: Taylor series to x^13 (truncation
    < 1e-9, below float32 rounding), Horner; vectorises."""
    z = x * x
    return x * (_S32[0] + z * (_S32[1] + z * (_S32[2] + z * (_S32[3] + z * (
        _S32[4] + z * (_S32[5] + z * _S32[6]))))))


# ------------------------------------------------------------------ lookups
@numba.njit(**_INLINE)
def _locate(t: np.float32, day: tuple) -> tuple:
    """Cell kk (0 = outside the table) of t and its fraction in the cell;
    day = (ax, kmap, ctw): the lattice bin of ``tables._bin`` -> kmap
    (int32) -> per cell (t_k, 1/width) in ctw."""
    tc, j = _bin(t, day[0])
    k = np.uint64(day[1][j])
    return k, (tc - day[2][2 * k]) * day[2][2 * k + 1]


@numba.njit(**_INLINE)
def _plane(kr: np.uint64, fr: np.float32, kc: np.uint64, fc: np.float32, rows: np.ndarray,
           tab: np.ndarray, off: np.int64) -> np.float32:
    """A plane's value at row cell kr, column cell kc: +inf (exact) left of
    the diagonal or beyond the stored band, 0 before the first stored
    column; rows[4 kk] = (base, first, last, -)."""
    r = 4 * kr
    col = np.int64(kc)
    exact = (col < np.int64(kr)) | (col > rows[r + 2])
    zero = col < rows[r + 1]
    q = np.uint64(0 if exact | zero else rows[r] + 4 * col + off)   # tab[0:4]: a zero cell
    v = _bilinear(tab, q, fr, fc)
    v = np.float32(0.0) if zero else v
    return np.float32(math.inf) if exact else v


@numba.njit(**_INLINE)
def _mean_rate(ku: np.uint64, fu: np.float32, u: np.float32, kv: np.uint64, fv: np.float32,
               v: np.float32, ptab: np.ndarray, ctw: np.ndarray) -> float:
    """Mean rate over [u, v] (either order), (P(v) − P(u))/(v − u), from the
    cubic Hermite primitive; the rate at u where |v − u| < _EPS."""
    qu, qv = 4 * ku, 4 * kv
    f, g = np.float64(fu), np.float64(fv)
    pu = ptab[qu] + f * (ptab[qu + 1] + f * (ptab[qu + 2] + f * ptab[qu + 3]))
    pv = ptab[qv] + g * (ptab[qv + 1] + g * (ptab[qv + 2] + g * ptab[qv + 3]))
    slope = (ptab[qu + 1] + f * (2.0 * ptab[qu + 2] + 3.0 * f * ptab[qu + 3])) \
        * np.float64(ctw[2 * ku + 1])
    d = np.float64(v) - np.float64(u)
    near = abs(d) < _EPS
    return slope if near else (pv - pu) / (1.0 if near else d)


@numba.njit(**_JIT)
def arcs_range(kind: int, a: np.ndarray, b: np.ndarray, c: np.ndarray, d: np.ndarray,
               out: np.ndarray, start: int, stop: int, day: tuple, arcs: tuple,
               kern: tuple) -> int:
    """out[start:stop] (module notes) from (tmin, tmax, next tmin, day length)
    a, b, c, d; the exact ``_pl_day`` (none if kind < 0) in blocks of _BLOCK
    that left +inf; returns how many.  day = the locator, arcs = (rows,
    planes, primitive, night, geometry).  Per block one vectorised pass of
    phases and arc ends into the block arrays, then the lookups, LANES at a
    time (``_lanes_pl``), the rest with the same arithmetic in scalar code."""
    rows, tab, ptab, ntab, geo = arcs
    ctw = day[2]
    f32 = np.float32
    two_a, sun0, sun1 = f32(geo[0]), f32(-math.pi * geo[1]), f32(math.pi * (geo[0] + geo[1]))
    eb, f_first, inv_step, top = f32(geo[2]), f32(geo[3]), f32(geo[4]), f32(geo[5] + 0.5)
    stride, step, y0, y1 = np.int32(geo[6]), f32(geo[7]), f32(geo[8]), f32(geo[9])
    side = np.uint64(geo[10])
    inv_pi, inv24, inf, zero = f32(1.0 / math.pi), 1.0 / 24.0, math.inf, f32(0.0)
    blk = np.full((_NFIELDS, _BLOCK), np.nan, dtype=np.float32)   # NaN: valid indices
    xs, ys, tsr, tsk, tss, tse = blk[0], blk[1], blk[2], blk[3], blk[4], blk[5]
    p0v, dph, scale, bad, nanm, yls = blk[6], blk[7], blk[8], blk[9], blk[10], blk[11]
    off = np.zeros(_BLOCK, dtype=np.int32)
    vout = np.empty(_BLOCK, dtype=np.float64)
    total = 0
    for b0 in range(start, stop, _BLOCK):
        b1 = min(b0 + _BLOCK, stop)
        aa, bb, cw, dd, oo = a[b0:b1], b[b0:b1], c[b0:b1], d[b0:b1], out[b0:b1]
        n = oo.size
        for i in range(n):              # float32, no bool stores: LLVM vectorises it
            x, y, w, yl = f32(aa[i]), f32(bb[i]), f32(cw[i]), f32(dd[i])
            g = yl + two_a
            ig = f32(1.0) / g
            p0 = sun0 * ig
            f1 = sun1 * ig
            amp = y - x
            k = np.int32(min(max((f1 - f_first) * inv_step + f32(0.5), zero), top))
            fk = f_first + step * f32(k)
            ts = x + amp * _sin32(f1)
            xs[i] = x
            ys[i] = y
            tsr[i] = x + amp * _sin32(p0)
            tsk[i] = x + amp * _sin32(fk)
            tss[i] = ts
            tse[i] = w + (ts - w) * eb
            p0v[i] = p0
            dph[i] = f1 - fk
            scale[i] = g * inv_pi
            off[i] = stride * (k + np.int32(1))              # plane 0 is Q
            ok = (amp >= zero) & (yl >= y0) & (yl <= y1)
            bad[i] = zero if ok else f32(1.0)
            nanm[i] = zero * (x + y + w + yl)                # NaN in, NaN out
            yls[i] = yl
        m = n - n % LANES
        for i in range(0, m, LANES):
            arcs_lanes(blk, off, vout, i, day[0], day[1], ctw, rows, tab, ptab, ntab,
                       np.int64(side))
        for i in range(m, n):
            kx, fx = _locate(xs[i], day)
            ky, fy = _locate(ys[i], day)
            t1, t2, t3, t4 = tsr[i], tsk[i], tss[i], tse[i]
            k1, f1 = _locate(t1, day)
            k2, f2 = _locate(t2, day)
            k3, f3 = _locate(t3, day)
            k4, f4 = _locate(t4, day)
            q = _plane(kx, fx, ky, fy, rows, tab, np.int64(0))
            kv = _plane(kx, fx, k2, f2, rows, tab, np.int64(off[i]))
            nv = _bilinear(ntab, np.uint64(4) * (k3 * side + k4), f3, f4)
            m0 = _mean_rate(kx, fx, xs[i], k1, f1, t1, ptab, ctw)
            m1 = _mean_rate(k2, f2, t2, k3, f3, t3, ptab, ctw)
            arc = 2.0 * np.float64(q) - np.float64(p0v[i]) * m0 \
                - (np.float64(kv) + np.float64(dph[i]) * m1)
            v = (np.float64(scale[i]) * arc + (24.0 - np.float64(yls[i])) * np.float64(nv)) \
                * inv24
            vout[i] = (v if (abs(v) < inf) & (bad[i] == zero) else inf) + np.float64(nanm[i])
        cnt = 0
        for i in range(n):       # +inf: computed exactly below
            v = vout[i]
            oo[i] = v
            cnt += v == inf
        if cnt > 0 and kind >= 0:
            _exact_block(kind, a, b, c, d, out, b0, b1, kern)
        total += cnt
    return total


@numba.njit(parallel=True, **_JIT)
def arcs_parallel(a: np.ndarray, b: np.ndarray, c: np.ndarray, d: np.ndarray,
                  out: np.ndarray, day: tuple, arcs: tuple, kern: tuple) -> int:
    n = out.size
    nch = (n + _CHUNK - 1) // _CHUNK
    counts = np.zeros(nch, dtype=np.int64)
    for k in numba.prange(nch):
        s = k * _CHUNK
        counts[k] = arcs_range(_EX_PL, a, b, c, d, out, s, min(n, s + _CHUNK), day, arcs,
                               kern)
    return counts.sum()


# ----------------------------------------------------------- exact pieces
@numba.njit(**_INLINE)
def _arc_exact(t: float, te: float, phi: float, kern: tuple) -> float:
    """K(t, A, φ) with A = (te − t)/sin φ: the arc from t to te."""
    fpar, ipar, p, qx, qw = kern[0], kern[1], kern[2], kern[3], kern[4]
    amp = (te - t) / math.sin(phi)
    return dev._branch(t, amp, 0.0, phi, fpar[2], fpar[3], ipar[2], p, qx, qw, ipar[3] != 0)


@numba.njit(parallel=True, **_JIT)
def _arc_nodes(t: np.ndarray, te: np.ndarray, phis: np.ndarray, out: np.ndarray,
               kern: tuple) -> None:
    for i in numba.prange(t.size):
        for k in range(phis.size):
            out[i, k] = _arc_exact(t[i], te[i], phis[k], kern)


@numba.njit(parallel=True, **_JIT)
def _check_planes(ci: np.ndarray, cj: np.ndarray, nodes: np.ndarray, phis: np.ndarray,
                  stride: int, sub: int, floor: float, day: tuple, rows: np.ndarray,
                  tab: np.ndarray, kern: tuple) -> np.ndarray:
    """Per stored cell m and plane k: the largest |table − exact| /
    max(|exact|, floor) at sub × sub points of the cell (inf if the table
    gives no number)."""
    rel = np.zeros((ci.size, phis.size))
    for m in numba.prange(ci.size):
        i, j = ci[m], cj[m]
        for u in range(sub):
            t = nodes[i] + (nodes[i + 1] - nodes[i]) * (u + 0.5) / sub
            kr, fr = _locate(np.float32(t), day)
            for v in range(sub):
                te = nodes[j] + (nodes[j + 1] - nodes[j]) * (v + 0.5) / sub
                kc, fc = _locate(np.float32(te), day)
                for k in range(phis.size):
                    ex = _arc_exact(np.float64(np.float32(t)), np.float64(np.float32(te)),
                                    phis[k], kern)
                    fast = _plane(kr, fr, kc, fc, rows, tab, np.int64(stride * k))
                    e = abs(np.float64(fast) - ex)
                    e = math.inf if math.isnan(e) else e
                    rel[m, k] = max(rel[m, k], e / max(abs(ex), floor))
    return rel


# ------------------------------------------------------------------ building
def compact_locator(loc: tuple) -> tuple:
    """(ax, kmap, ctw) from ``tables._locator``'s (ax, tw, offr, offc): the
    cell kk of each lattice bin (int32, for the gathers of ``_lanes_pl``) and
    (t_k, 1/width) per cell."""
    kk = (loc[3] // 4).astype(np.int64)
    ctw = np.zeros((int(kk.max()) + 1, 2), dtype=np.float32)
    ctw[kk] = loc[1].reshape(-1, 2)
    return loc[0], kk.astype(np.int32), ctw.reshape(-1)


def plane_phases(phi_range: tuple[float, float], plane_step: float) -> np.ndarray:
    """Uniform phases over phi_range, spacing <= plane_step (one if the range is a point)."""
    if not (math.isfinite(plane_step) and 0.0 < plane_step <= 0.5):
        raise ValueError(f"plane_step must be in (0, 0.5] rad, got {plane_step}")
    lo, hi = phi_range
    return np.linspace(lo, hi, max(1, math.ceil((hi - lo) / plane_step - 1e-9) + 1))


def primitive_table(nodes: np.ndarray, code: int, packed: np.ndarray) -> np.ndarray:
    """Per locator cell kk = cell + 1 the cubic Hermite coefficients (c0..c3,
    float64) of P(t) = ∫_{t0}^t r in the cell's fraction; kk = 0 (outside) inf.
    Cell integrals by 20-point Gauss-Legendre (the rate is smooth inside a
    cell: its limits are nodes)."""
    x, w = np.polynomial.legendre.leggauss(20)
    lo, width = nodes[:-1], np.diff(nodes)
    pts = lo[:, None] + width[:, None] * (0.5 * (x + 1.0))[None, :]
    cell = 0.5 * width * (rate_array(pts.reshape(-1), code, packed, parallel=False)
                          .reshape(pts.shape) @ w)
    p0 = np.concatenate([[0.0], np.cumsum(cell)[:-1]])
    r = rate_array(nodes, code, packed, parallel=False)
    s0, s1 = width * r[:-1], width * r[1:]
    coef = np.stack([p0, s0, 3 * cell - 2 * s0 - s1, -2 * cell + s0 + s1], axis=1)
    return np.concatenate([np.full((1, 4), np.inf), coef]).reshape(-1)


def plane_tables(nodes: np.ndarray, phis: np.ndarray, lo: float, hi: float, band: float,
                 kern: tuple) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray, int]:
    """(rows, tab, ci, cj, stride): planes at phis over (T, arc end) cells
    i <= j with end − T <= band, unchecked; plane k at offset stride × k."""
    nc = nodes.size - 1
    first = np.full(nc, _BIG, dtype=np.int64)
    last = np.full(nc, _BIG, dtype=np.int64)
    for i in range(nc):
        if nodes[i] >= hi:                     # the arc stays above hi: 0
            continue
        first[i] = max(i, int(np.searchsorted(nodes, lo, "right")) - 1)   # end <= lo: 0
        last[i] = min(nc - 1, int(np.searchsorted(nodes, nodes[i] + band, "right")) - 1)
    count = np.where(first < _BIG, np.maximum(last - first + 1, 0), 0)
    ci = np.repeat(np.arange(nc), count)
    cj = np.concatenate([np.arange(f, f + n) for f, n in zip(first, count) if n]
                        + [np.zeros(0, np.int64)])
    need = np.zeros((nc + 1, nc + 1), dtype=bool)            # corners of the stored cells
    for di in (0, 1):
        for dj in (0, 1):
            need[ci + di, cj + dj] = True
    ni, nj = np.nonzero(need)
    index = np.full(need.shape, -1, dtype=np.int64)
    index[ni, nj] = np.arange(ni.size)
    v = np.empty((ni.size, phis.size))
    _arc_nodes(nodes[ni], nodes[nj], phis, v, kern)
    v00, v10 = v[index[ci, cj]], v[index[ci + 1, cj]]
    v01, v11 = v[index[ci, cj + 1]], v[index[ci + 1, cj + 1]]
    coef = np.stack([v00, v10 - v00, v01 - v00, v11 - v10 - v01 + v00], axis=-1)
    start = np.concatenate([[0], np.cumsum(count)[:-1]])      # first stored cell of a row
    rows = np.zeros((nc + 1, 4), dtype=np.int64)             # per locator cell kk = cell + 1
    rows[:, 2] = -1                                           # outside the table: exact
    live = count > 0
    rows[1:, 0] = np.where(live, 4 * (1 + start - (first + 1)), 0)
    rows[1:, 1] = np.where(first < _BIG, first + 1, _BIG)
    rows[1:, 2] = np.where(first < _BIG, np.where(live, last, first - 1) + 1, _BIG)
    # (a row with nothing stored: last = first - 1 in kk, so every column from first is exact)
    tab = np.concatenate([np.zeros(4), coef.transpose(1, 0, 2).reshape(-1)])
    return rows.reshape(-1), tab.astype(np.float32), ci, cj, 4 * ci.size


def checked_planes(nodes: np.ndarray, day: tuple, phis: np.ndarray, lo: float, hi: float,
                   band: float, sub: int, floor: float, kern: tuple) -> tuple:
    """(rows, tab, stride, stored cells, marked fraction): the planes with
    every cell that misses the tolerance at a check point marked (+inf)."""
    rows, tab, ci, cj, stride = plane_tables(nodes, phis, lo, hi, band, kern)
    rel = _check_planes(ci, cj, nodes, phis, stride, sub, floor, day, rows, tab, kern)
    bad_m, bad_k = np.nonzero(rel > _TOL)
    q = 1 + bad_k * ci.size + bad_m                           # cell index in tab / 4
    cells = tab.reshape(-1, 4)
    cells[q] = (np.inf, 0.0, 0.0, 0.0)
    return rows, tab, stride, ci.size, bad_m.size / max(rel.size, 1)

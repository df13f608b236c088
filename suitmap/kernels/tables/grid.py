"""The node axes of the lookup tables and their locators.

A table's nodes (``_graded_axis``) lie on a fine lattice that contains the
kinks of the tabulated function (thresholds, rate limits), and are denser
next to them; the locator (``_locator``) maps a temperature's lattice bin to
its cell in one multiplication and a few reads.  Pure numpy, no I/O.

References
----------
Press, W.H. et al. (2007) Numerical Recipes, 3rd ed., section 3.6 (locating
a value in a table, bilinear interpolation).
"""

from __future__ import annotations

import math

import numpy as np


def _graded_axis(t_range: tuple[float, float], kinks: list[float], h_min: float,
                 h_max: float, grade: float) -> tuple[np.ndarray, float]:
    """Node temperatures covering ``t_range`` and the lattice step dj.

    Nodes lie on a lattice of step dj <= h_min that contains the (at most
    two) kinks; the spacing is min(h_max, max(h_min, grade × distance to
    the nearest kink)), never larger than at the far end of an interval.
    """
    t0, t1 = float(t_range[0]), float(t_range[1])
    if not t1 > t0:
        raise ValueError(f"table range must be (low, high) with low < high, got {t_range}")
    ks = sorted({float(k) for k in kinks if math.isfinite(k) and t0 < k < t1})[:2]
    if len(ks) == 2 and ks[1] - ks[0] < 0.25 * h_min:
        ks = ks[:1]      # too close for a lattice through both: the check marks the cells
    dj = h_min if len(ks) < 2 else (ks[1] - ks[0]) / math.ceil((ks[1] - ks[0]) / h_min - 1e-9)
    origin = ks[0] if ks else t0
    m, m_end = math.floor((t0 - origin) / dj + 1e-9), math.ceil((t1 - origin) / dj - 1e-9)
    km = [round((k - origin) / dj) for k in ks]
    karr = np.array(ks)

    def spacing(t: float) -> float:
        if not ks:
            return h_max
        return min(h_max, max(h_min, grade * float(np.min(np.abs(karr - t)))))

    steps = [m]
    while m < m_end:
        t = origin + m * dj
        h = spacing(t)
        h = min(h, spacing(t + h))
        s = max(1, int(h / dj + 1e-9))
        for k in km:
            if k > m:
                s = min(s, k - m)
        m += min(s, m_end - m)
        steps.append(m)
    return origin + dj * np.array(steps, dtype=np.float64), dj


def _locator(nodes: np.ndarray, dj: float) -> tuple[np.ndarray, ...]:
    """(ax, tw, offr, offc) for ``_bin``: lattice bins from t0 - dj to t1 + dj;
    per bin (t_k, 1/width) of its cell k and the offsets of the cell in the
    bordered table (rows: 4 k' (cells + 2), columns: 4 k', k' = k + 1; the
    border bins, below t0 and from t1 up, point to the border k' = 0)."""
    lat = np.rint((nodes - nodes[0]) / dj).astype(np.int64)
    nb = int(lat[-1])
    cell = np.searchsorted(lat, np.arange(nb), side="right") - 1
    kk = np.concatenate([[-1], cell, [-1, -1]]) + 1          # border bins -> 0
    tk = np.concatenate([[nodes[0]], nodes[cell], [nodes[-1]] * 2])
    iw = np.concatenate([[0.0], 1.0 / np.diff(nodes)[cell], [0.0, 0.0]])
    ax = np.array([nodes[0] - dj, nodes[-1] + dj, 1.0 / dj], dtype=np.float32)
    side = nodes.size + 1                                     # cells + 2
    tw = np.stack([tk, iw], axis=1).reshape(-1).astype(np.float32)
    return (ax, tw,
            (4 * side * kk).astype(np.uint64), (4 * kk).astype(np.uint64))


def _lattice_grid(nodes: np.ndarray, dj: float, tab: np.ndarray, bits: int
                  ) -> tuple[np.ndarray, ...]:
    """(ax, locr, locc, tab') for ``tables._cell`` and ``_lanes``: the
    locator and the coefficient table ``tab`` of ``_locator`` recast in
    lattice units.

    Per lattice bin j one int32, (cell << bits) | r: its cell k' in the
    bordered table (rows: k' (cells + 2), columns: k'; coefficients at 4 ×
    the sum) and r = j − the cell's first bin, so the fraction in the cell,
    in lattice units, is u − (j − r), u = (t − ax[0]) / dj: one read per
    axis instead of three.  The coefficients (v00, dv/dx, dv/dy, d²v/dxdy
    per unit fraction) are divided by the cell widths in bins to match.
    Raises ValueError for cells wider than 2^bits − 1 bins or a table too
    large for 32-bit entries.
    """
    ax, _, _, offc = _locator(nodes, dj)
    lat = np.rint((nodes - nodes[0]) / dj).astype(np.int64)
    width = np.diff(lat)
    side = nodes.size + 1
    if width.max(initial=1) >= 1 << bits:
        raise ValueError(f"table cells up to {int(width.max())} lattice steps wide; "
                         f"keep h_max <= {(1 << bits) - 1} x h_min")
    if side * side >= 1 << (31 - bits):
        raise ValueError(f"{nodes.size} nodes per axis is too many for a lookup table "
                         f"(at most {int(math.isqrt((1 << (31 - bits)) - 1)) - 1}); "
                         "raise h_min or grade")
    nb = int(lat[-1])
    first = np.concatenate([[0], lat[np.searchsorted(lat, np.arange(nb), side="right") - 1] + 1,
                            [nb + 1, nb + 2]])          # border bins: their own cells
    r = np.arange(nb + 3) - first
    kk = (offc // 4).astype(np.int64)                   # k' per bin, 0 on the border
    locr = ((kk * side) << bits | r).astype(np.int32)
    locc = (kk << bits | r).astype(np.int32)
    w = np.ones(side, dtype=np.float64)
    w[1:-1] = width                                     # border cells: +inf, width unused
    t = tab.reshape(side, side, 4).astype(np.float64)
    t[..., 1] /= w[:, None]
    t[..., 2] /= w[None, :]
    t[..., 3] /= w[:, None] * w[None, :]
    t[..., 1:][~np.isfinite(t[..., 0])] = 0.0
    return ax, locr, locc, t.astype(np.float32).reshape(-1)

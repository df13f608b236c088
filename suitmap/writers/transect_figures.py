"""Event days of two organisms along a transect (latitude or elevation), one figure per
period: each organism's median day of season as a line, its interquartile range as a band
(matplotlib object API, Agg)."""

from __future__ import annotations

import os
from pathlib import Path
from textwrap import fill

import numpy as np
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure
from matplotlib.legend_handler import HandlerTuple

from suitmap.writers.atomic import atomic_path
from suitmap.writers.figures import DEFAULT_CAUTION

__all__ = ["plot_event_transect"]

_DPI = 120
# Okabe & Ito (2008) colour-blind-safe palette: blue and orange, apart in lightness too
_COLOURS = ("#0072B2", "#E69F00")
_STYLES = ("-", "--")
_MARKERS = ("o", "s")


def plot_event_transect(position, series: list[dict], path: str | os.PathLike, *, title: str,
                        xlabel: str, ylabel: str = "day of season", note: str = "",
                        caution: str = DEFAULT_CAUTION) -> Path:
    """Lines of medians with interquartile bands along ``position``.

    ``series``: up to two dicts with ``label``, ``median``, ``p25``, ``p75``
    (arrays along ``position``; NaN leaves a gap).  ``note`` is printed under
    the axes (what a point is), ``caution`` at the foot of the figure.
    """
    x = np.asarray(position, dtype=float)
    fig = Figure(figsize=(8.0, 5.6), dpi=_DPI, layout="constrained")
    FigureCanvasAgg(fig)
    ax = fig.add_subplot()
    drawn = False
    handles = []
    for k, s in enumerate(series):
        med = np.asarray(s["median"], dtype=float)
        lo, hi = np.asarray(s["p25"], dtype=float), np.asarray(s["p75"], dtype=float)
        colour = _COLOURS[k % len(_COLOURS)]
        band = ax.fill_between(x, lo, hi, color=colour, alpha=0.22, linewidth=0)
        (line,) = ax.plot(x, med, _STYLES[k % 2], marker=_MARKERS[k % 2], ms=4, color=colour,
                          lw=2.0, gid=f"median-{k}")
        handles.append(((band, line), s["label"]))
        drawn = drawn or bool(np.isfinite(med).any())
    if not drawn:
        ax.text(0.5, 0.5, "no cell where both events happen", transform=ax.transAxes,
                ha="center", va="center", color="0.4")
    ax.set_xlabel(xlabel)
    ax.set_ylabel(ylabel)
    ax.set_title(title)
    ax.grid(True, color="0.88", lw=0.6)
    if x.size:
        pad = 0.5 * (np.nanmax(x) - np.nanmin(x)) / max(x.size - 1, 1) if x.size > 1 else 0.5
        ax.set_xlim(np.nanmin(x) - pad, np.nanmax(x) + pad)
    if handles:   # one entry per organism: its median line over its band
        ax.legend([h for h, _ in handles], [lab for _, lab in handles], loc="best", fontsize=8,
                  handler_map={tuple: HandlerTuple(ndivide=None, pad=0.0)}, framealpha=0.9)
    if note:
        fig.text(0.5, 0.05, fill(note, 120), ha="center", va="bottom", fontsize=8, color="0.25")
    fig.text(0.5, 0.012, fill(caution, 120), ha="center", va="bottom", fontsize=8,
             style="italic")
    fig.get_layout_engine().set(rect=(0, 0.1, 1, 0.9))
    final = Path(path)
    with atomic_path(final) as tmp:
        fig.savefig(tmp, format="png", dpi=_DPI, metadata={"Title": title, "Description": caution})
    return final

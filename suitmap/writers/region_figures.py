"""Figures of the regional and range tables: suitable area gained and lost by region,
and range edges of two periods on one map (matplotlib object API, Agg)."""

from __future__ import annotations

import os
from pathlib import Path

import numpy as np
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from matplotlib.patches import Patch

from suitmap.writers.atomic import atomic_path
from suitmap.writers.figures import DEFAULT_CAUTION

__all__ = ["plot_range_edges", "plot_region_change"]

_DPI = 120
# Okabe & Ito (2008) colour-blind-safe palette
_GAIN, _LOSS, _BASE, _SCEN = "#009E73", "#D55E00", "#0072B2", "#E69F00"


def _save(fig: Figure, path: str | os.PathLike, title: str, caution: str) -> Path:
    fig.text(0.5, 0.015, caution, ha="center", va="bottom", fontsize=8, style="italic", wrap=True)
    final = Path(path)
    with atomic_path(final) as tmp:
        fig.savefig(tmp, format="png", dpi=_DPI, metadata={"Title": title, "Description": caution})
    return final


def plot_region_change(regions: list[str], gained_km2, lost_km2, path: str | os.PathLike, *,
                       title: str, caution: str = DEFAULT_CAUTION) -> Path:
    """Horizontal bars: suitable area gained (right) and lost (left) per region, net as a dot.

    Regions whose values are missing (NaN) are listed with "no data".
    """
    gained = np.asarray(gained_km2, dtype=float)
    lost = np.asarray(lost_km2, dtype=float)
    n = len(regions)
    fig = Figure(figsize=(8.0, 1.6 + 0.45 * max(n, 1)), dpi=_DPI, layout="constrained")
    FigureCanvasAgg(fig)
    ax = fig.add_subplot()
    pos = np.arange(n)[::-1]
    ok = np.isfinite(gained) & np.isfinite(lost)
    ax.barh(pos[ok], gained[ok], color=_GAIN, label="gained")
    ax.barh(pos[ok], -lost[ok], color=_LOSS, label="lost")
    ax.plot((gained - lost)[ok], pos[ok], "o", color="black", label="net")
    for p in pos[~ok]:
        ax.text(0, p, "no data", ha="center", va="center", fontsize=8, color="0.4")
    ax.axvline(0, color="0.3", lw=0.8)
    ax.set_yticks(pos, regions)
    ax.set_xlabel("suitable area (km²)")
    ax.set_title(title)
    ax.legend(loc="best", fontsize=8)
    fig.get_layout_engine().set(rect=(0, 0.05, 1, 0.95))
    return _save(fig, path, title, caution)


def plot_range_edges(lon, lat, base_suitable, scen_suitable, bands: list[dict],
                     path: str | os.PathLike, *, title: str, labels=("baseline", "scenario"),
                     caution: str = DEFAULT_CAUTION) -> Path:
    """Suitable cells of two periods and their edges per longitude band, in longitude/latitude.

    ``lon``/``lat``: cell centres (2-D); ``*_suitable``: boolean (y, x);
    ``bands``: rows of ``ranges.csv`` (``lon_west``, ``lon_east``,
    ``poleward_edge_lat_baseline`` …, ``centroid_lon_baseline`` …) of one
    comparison; the ``all`` row gives the centroids.
    """
    b = np.asarray(base_suitable, dtype=bool)
    s = np.asarray(scen_suitable, dtype=bool)
    code = np.where(b & s, 3, np.where(s, 2, np.where(b, 1, 0))).astype(float)
    code[code == 0] = np.nan
    fig = Figure(figsize=(8.0, 6.0), dpi=_DPI, layout="constrained")
    FigureCanvasAgg(fig)
    ax = fig.add_subplot()
    from matplotlib.colors import ListedColormap

    cmap = ListedColormap(["#cfe3f3", "#fbe3b8", "#d9d9d9"])  # baseline only, scenario only, both
    ax.pcolormesh(lon, lat, code, shading="nearest", cmap=cmap, vmin=0.5, vmax=3.5)
    for row in bands:
        if row.get("band") == "all":
            for which, colour in (("baseline", _BASE), ("scenario", _SCEN)):
                ax.plot(row.get(f"centroid_lon_{which}", np.nan), row.get(f"centroid_lat_{which}", np.nan),
                        marker="X", ms=10, color=colour, mec="black")
            continue
        west = max(float(row["lon_west"]), float(np.nanmin(lon)))
        east = min(float(row["lon_east"]), float(np.nanmax(lon)))
        for which, colour, style in (("baseline", _BASE, "--"), ("scenario", _SCEN, "-")):
            for edge in ("poleward", "equatorward"):
                y = row.get(f"{edge}_edge_lat_{which}", np.nan)
                if np.isfinite(y):
                    ax.plot([west, east], [y, y], style, color=colour, lw=2.2)
    mid = np.deg2rad(np.clip(np.nanmean(lat), -80, 80))
    ax.set_aspect(1.0 / np.cos(mid))
    ax.set_xlabel("longitude (°E)")
    ax.set_ylabel("latitude (°N)")
    ax.set_title(title)
    handles = [Patch(color="#cfe3f3", label=f"suitable in {labels[0]} only"),
               Patch(color="#fbe3b8", label=f"suitable in {labels[1]} only"),
               Patch(color="#d9d9d9", label="suitable in both"),
               Line2D([], [], ls="--", color=_BASE, label=f"edges, {labels[0]}"),
               Line2D([], [], ls="-", color=_SCEN, label=f"edges, {labels[1]}"),
               Line2D([], [], ls="", marker="X", color="0.5", mec="black", label="centroids")]
    ax.legend(handles=handles, loc="upper left", bbox_to_anchor=(1.01, 1.0), fontsize=8)
    fig.get_layout_engine().set(rect=(0, 0.05, 1, 0.95))
    return _save(fig, path, title, caution)

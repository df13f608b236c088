"""Three-panel figure of one layer and one scenario: baseline | scenario | change.

The baseline and scenario panels share one colour scale (the union of both
ranges, the layer's own colours) so they can be compared by eye; the change
panel uses the diverging map centred on zero.  Missing cells are hatched grey,
cells where an event never happens (event-day layers) vermillion, as in the
one-layer maps of :mod:`suitmap.writers.figures`.
"""

from __future__ import annotations

import os
from pathlib import Path

import matplotlib
import numpy as np
import xarray as xr
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.colors import ListedColormap, Normalize
from matplotlib.figure import Figure
from matplotlib.layout_engine import ConstrainedLayoutEngine
from matplotlib.patches import Patch
from matplotlib.ticker import MaxNLocator

from suitmap.writers import styles
from suitmap.writers.atomic import atomic_path
from suitmap.writers.figures import (DEFAULT_CAUTION, _NEVER_LABEL, _draw_missing_background,
                                     _extent, _missing_patch, axis_labels)
from suitmap.writers.labels import label_with_unit

__all__ = ["panel_figure", "plot_panels"]

_FIGSIZE = (13.0, 5.0)
_DPI = 120


def _north_up(da: xr.DataArray) -> xr.DataArray:
    ydim, xdim = da.rio.y_dim, da.rio.x_dim
    da = da.squeeze(drop=True).transpose(ydim, xdim)
    if da.sizes[ydim] > 1 and float(da[ydim][1] - da[ydim][0]) > 0:
        da = da.isel({ydim: slice(None, None, -1)})
    if da.sizes[xdim] > 1 and float(da[xdim][1] - da[xdim][0]) < 0:
        da = da.isel({xdim: slice(None, None, -1)})
    return da


def _draw(ax, da, layer, attrs, norm, never=None):
    extent = _extent(da)
    _draw_missing_background(ax, extent)
    cmap = matplotlib.colormaps[styles.colormap_name(layer, attrs)].with_extremes(
        bad=(0, 0, 0, 0))
    values = np.asarray(da.values, dtype=float)
    image = ax.imshow(np.ma.masked_invalid(values), cmap=cmap, norm=norm, extent=extent,
                      origin="upper", interpolation="nearest", zorder=1)
    drew_never = False
    if never is not None:
        mask = np.asarray(_north_up(never).values, dtype=bool) & ~np.isfinite(values)
        if mask.any():
            colour = styles.rgb_to_hex(styles.OKABE_ITO[styles.EVENT_STATUS_COLOURS["never"]])
            ax.imshow(np.ma.masked_where(~mask, np.ones(mask.shape)),
                      cmap=ListedColormap([colour]), extent=extent, origin="upper",
                      interpolation="nearest", zorder=1.5)
            drew_never = True
    ax.set_xlim(extent[0], extent[1])
    ax.set_ylim(extent[2], extent[3])
    if da.rio.crs is not None and da.rio.crs.is_geographic:
        mid = np.deg2rad(np.clip((extent[2] + extent[3]) / 2, -80, 80))
        ax.set_aspect(1.0 / np.cos(mid))
    else:
        ax.set_aspect("equal")
    for axis in (ax.xaxis, ax.yaxis):
        axis.set_major_locator(MaxNLocator(nbins=4))
    ax.ticklabel_format(style="plain", useOffset=False)
    return image, drew_never, bool((~np.isfinite(values)).any())


def panel_figure(baseline: xr.DataArray, scenario: xr.DataArray, change: xr.DataArray, *,
                 layer: str, title: str, panel_titles: tuple[str, str, str],
                 caution: str = DEFAULT_CAUTION, never: tuple | None = None) -> Figure:
    """Baseline, scenario and change of *layer* side by side on one figure."""
    base, scen, diff = (_north_up(d) for d in (baseline, scenario, change))
    attrs = dict(baseline.attrs)
    lo, hi = styles.colour_limits(layer, attrs, np.concatenate(
        [np.asarray(base.values, float).ravel(), np.asarray(scen.values, float).ravel()]))
    clo, chi = styles.colour_limits(f"change_{layer}", change.attrs, diff.values)
    fig = Figure(figsize=_FIGSIZE, dpi=_DPI,
                 layout=ConstrainedLayoutEngine(rect=(0.0, 0.1, 1.0, 0.8)))
    FigureCanvasAgg(fig)
    axes = fig.subplots(1, 3)
    never = never or (None, None)
    missing = drew_never = False
    images = []
    for ax, da, t, nv in ((axes[0], base, panel_titles[0], never[0]),
                          (axes[1], scen, panel_titles[1], never[1])):
        image, n, m = _draw(ax, da, layer, attrs, Normalize(lo, hi), nv)
        images.append(image)
        drew_never, missing = drew_never or n, missing or m
        ax.set_title(t, fontsize="medium")
    never_change = never[2] if len(never) > 2 else None
    image, n, m = _draw(axes[2], diff, f"change_{layer}", change.attrs, Normalize(clo, chi),
                        never_change)
    missing, drew_never = missing or m, drew_never or n
    axes[2].set_title(panel_titles[2], fontsize="medium")
    fig.colorbar(images[0], ax=list(axes[:2]), shrink=0.85, pad=0.02,
                 label=label_with_unit(layer, attrs))
    fig.colorbar(image, ax=axes[2], shrink=0.85, pad=0.02,
                 label=label_with_unit(f"change_{layer}", change.attrs))
    xlabel, ylabel = axis_labels(base.rio.crs)
    for ax in axes:
        ax.set_xlabel(xlabel)
    axes[0].set_ylabel(ylabel)
    handles = []
    if drew_never:
        colour = styles.rgb_to_hex(styles.OKABE_ITO[styles.EVENT_STATUS_COLOURS["never"]])
        label = _NEVER_LABEL if never_change is None else (
            "never (in no season; in the change panel: in one period or both)")
        handles.append(Patch(facecolor=colour, edgecolor="#555555", label=label))
    if missing:
        handles.append(_missing_patch())
    if handles:
        fig.legend(handles=handles, loc="lower center", bbox_to_anchor=(0.5, 0.04),
                   ncol=len(handles), frameon=False, fontsize="small")
    # title and footer in the margins the layout leaves free (rect above)
    fig.text(0.5, 0.98, title, ha="center", va="top", fontsize="large")
    fig.text(0.5, 0.012, caution, ha="center", va="bottom", fontsize=8, style="italic")
    return fig


def plot_panels(baseline: xr.DataArray, scenario: xr.DataArray, change: xr.DataArray,
                path: str | os.PathLike, **kwargs) -> Path:
    """Write :func:`panel_figure` as a PNG (atomically); return the path."""
    final = Path(path)
    fig = panel_figure(baseline, scenario, change, **kwargs)
    with atomic_path(final) as tmp:
        fig.savefig(tmp, format="png", dpi=_DPI,
                    metadata={"Title": kwargs.get("title", ""),
                              "Description": kwargs.get("caution", DEFAULT_CAUTION)})
    return final

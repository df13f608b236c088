"""PNG map of one layer, drawn with matplotlib's object API (Agg, no pyplot).

Colours come from :mod:`suitmap.writers.styles`: ``viridis`` for degree-days,
generations and other counts, ``cividis`` for suitability (fixed 0–1
limits), ``RdBu_r`` with symmetric limits centred on zero for ``change_*``
layers, the Okabe–Ito palette with a legend for class layers.  Missing cells
are transparent over a light-grey, hatched background, so they cannot be
mistaken for the near-white centre of the diverging map; the legend or the
colour-bar caption says so.  Event-day layers draw cells where the event never
happens (climate complete) in a solid colour of their own with a legend entry
"never", distinct from "no data".  The colour bar carries a short label and
the unit; a layer with one value everywhere says so instead of showing a
made-up range.  Legends sit below the map inside the figure, so nothing is
clipped when the PNG is printed.
"""

from __future__ import annotations

import os
from pathlib import Path

import matplotlib
import numpy as np
import pyproj
import xarray as xr
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.colors import BoundaryNorm, ListedColormap, Normalize
from matplotlib.figure import Figure
from matplotlib.layout_engine import ConstrainedLayoutEngine
from matplotlib.lines import Line2D
from matplotlib.patches import Patch, Rectangle
from matplotlib.ticker import MaxNLocator

from suitmap.errors import OutputError
from suitmap.writers import styles
from suitmap.writers.atomic import atomic_path
from suitmap.writers.cog import class_codes
from suitmap.writers.labels import label_with_unit

__all__ = ["plot_layer", "layer_figure", "DEFAULT_CAUTION", "axis_labels"]

DEFAULT_CAUTION = ("Screening-level estimate — not a basis for control decisions; "
                   "consult your local plant-protection authority.")

_FIGSIZE = (8.0, 6.0)  # inches
_DPI = 120
_MISSING_LABEL = "no data"
_NEVER_LABEL = "never (climate complete, in no season)"
_NEVER_CHANGE_LABEL = "undefined: never in one period or both"
_HATCH = "////"


def axis_labels(crs) -> tuple[str, str]:
    """Axis labels of a map in *crs*: longitude/latitude, or x/y with the CRS unit."""
    if crs is None:
        return "x", "y"
    crs = pyproj.CRS.from_user_input(crs.to_wkt() if hasattr(crs, "to_wkt") else crs)
    if crs.is_geographic:
        return "longitude (°E)", "latitude (°N)"
    units = {a.direction.lower(): a.unit_name for a in crs.axis_info}
    x_unit = units.get("east", units.get("west", crs.axis_info[0].unit_name))
    y_unit = units.get("north", units.get("south", crs.axis_info[-1].unit_name))
    return f"x ({x_unit})", f"y ({y_unit})"


def _extent(da: xr.DataArray) -> tuple[float, float, float, float]:
    """Outer cell edges (left, right, bottom, top) of a cell-centre grid."""
    x = np.asarray(da[da.rio.x_dim].values, dtype=float)
    y = np.asarray(da[da.rio.y_dim].values, dtype=float)
    dx = abs(x[1] - x[0]) if x.size > 1 else abs(da.rio.resolution()[0])
    dy = abs(y[1] - y[0]) if y.size > 1 else abs(da.rio.resolution()[1])
    return (x.min() - dx / 2, x.max() + dx / 2, y.min() - dy / 2, y.max() + dy / 2)


def _unit_text(units) -> str:
    return f"[{units}]" if units not in (None, "") else "[no unit given]"


def _draw_missing_background(ax, extent) -> None:
    left, right, bottom, top = extent
    ax.add_patch(Rectangle((left, bottom), right - left, top - bottom,
                           facecolor=styles.MISSING_COLOUR, edgecolor="#9a9a9a",
                           hatch=_HATCH, linewidth=0, zorder=0))


def _missing_patch() -> Patch:
    return Patch(facecolor=styles.MISSING_COLOUR, edgecolor="#9a9a9a", hatch=_HATCH,
                 label=_MISSING_LABEL)


def _plot_classes(fig, ax, da, layer, values, extent) -> None:
    try:
        flag_values, meanings = styles.parse_flags(da.attrs)
    except ValueError as exc:
        raise OutputError(f"class layer {layer!r}: {exc}; set CF flag_values and "
                          "flag_meanings") from exc
    codes = class_codes(values, flag_values, layer=layer,
                        fill_value=da.attrs.get("_FillValue", da.encoding.get("_FillValue")))
    colours = styles.class_colours(layer, meanings)
    index = np.full(codes.shape, -1, dtype=int)
    for i, v in enumerate(flag_values):
        index[codes == v] = i
    image = np.ma.masked_less(index, 0)
    cmap = ListedColormap([styles.rgb_to_hex(colours[m]) for m in meanings]).with_extremes(
        bad=(0, 0, 0, 0))
    norm = BoundaryNorm(np.arange(-0.5, len(meanings) + 0.5), cmap.N)
    ax.imshow(image, cmap=cmap, norm=norm, extent=extent, origin="upper",
              interpolation="nearest", zorder=1)
    handles = [Patch(facecolor=styles.rgb_to_hex(colours[m]), edgecolor="#555555",
                     label=m.replace("_", " ")) for m in meanings]
    handles.append(_missing_patch())
    ax.legend(handles=handles, loc="upper left", bbox_to_anchor=(1.02, 1.0),
              borderaxespad=0.0, frameon=False, title=layer.replace("_", " "))


def _plot_continuous(fig, ax, da, layer, values, extent, never=None) -> list:
    """Draw a continuous layer; return the extra legend handles (no data, never)."""
    data = np.asarray(values, dtype=float)
    finite = np.isfinite(data)
    cmap = matplotlib.colormaps[styles.colormap_name(layer, da.attrs)].with_extremes(
        bad=(0, 0, 0, 0))
    lo, hi = styles.colour_limits(layer, da.attrs, data)
    norm = Normalize(vmin=lo, vmax=hi)
    image = ax.imshow(np.ma.masked_invalid(data), cmap=cmap, norm=norm, extent=extent,
                      origin="upper", interpolation="nearest", zorder=1)
    bar = fig.colorbar(image, ax=ax, shrink=0.9, pad=0.02)
    label = label_with_unit(layer, da.attrs)
    uniform = finite.any() and float(np.nanmin(data)) == float(np.nanmax(data))
    if uniform:
        value = float(data[finite][0])
        bar.set_ticks([value])
        label = f"{label}: {value:g} everywhere"
    bar.set_label(label)
    handles = []
    missing = ~finite
    if never is not None:
        never = np.asarray(never, dtype=bool) & missing
        if never.any():
            colour = styles.rgb_to_hex(styles.OKABE_ITO[styles.EVENT_STATUS_COLOURS["never"]])
            ax.imshow(np.ma.masked_where(~never, np.ones(never.shape)),
                      cmap=ListedColormap([colour]), extent=extent, origin="upper",
                      interpolation="nearest", zorder=1.5)
            label = _NEVER_CHANGE_LABEL if layer.startswith("change_") else _NEVER_LABEL
            handles.append(Patch(facecolor=colour, edgecolor="#555555", label=label))
            missing = missing & ~never
    if missing.any():
        handles.append(_missing_patch())
    return handles


def _draw_hatch(ax, mask: np.ndarray, extent, label: str) -> list:
    """Hatch the cells where ``mask`` is True (e.g. where climate models disagree)."""
    if not mask.any():
        return []
    ny, nx = mask.shape
    x = np.linspace(extent[0], extent[1], nx + 1)
    y = np.linspace(extent[3], extent[2], ny + 1)
    ax.pcolor(x, y, np.ma.masked_where(~mask, np.ones(mask.shape)), hatch="////", alpha=0.0,
              shading="flat", zorder=2)
    return [Patch(facecolor="none", edgecolor="#333333", hatch="////", label=label)]


def layer_figure(da: xr.DataArray, *, title: str, caution: str = DEFAULT_CAUTION,
                 hatch: xr.DataArray | None = None,
                 hatch_label: str = "models disagree",
                 never: xr.DataArray | None = None, outlines=None) -> Figure:
    """Draw one layer on a new :class:`~matplotlib.figure.Figure` (Agg canvas).

    The map is ``figure.axes[0]``.  See :func:`plot_layer` for the parameters;
    ``hatch`` is a boolean (y, x) mask on the same grid whose True cells are hatched;
    ``never`` one whose True cells (missing in *da*) are drawn as "never", not "no data";
    ``outlines`` a sequence of (n, 2) arrays of x, y vertices in the layer's CRS
    (region boundaries), drawn as thin dark lines with a legend entry.

    Raises
    ------
    OutputError
        If the layer is not one (y, x) grid or holds unknown class codes.
    """
    layer = str(da.name) if da.name is not None else ""
    try:
        ydim, xdim = da.rio.y_dim, da.rio.x_dim
    except Exception as exc:
        raise OutputError(f"layer {layer!r} has no (y, x) grid: {exc}") from exc
    extra = [d for d in da.dims if d not in (ydim, xdim) and da.sizes[d] != 1]
    if extra:
        raise OutputError(f"layer {layer!r} has extra dimensions {extra}; "
                          "plot one (y, x) slice")
    da = da.squeeze(drop=True).transpose(ydim, xdim)
    if da.sizes[ydim] > 1 and float(da[ydim][1] - da[ydim][0]) > 0:  # draw north up
        da = da.isel({ydim: slice(None, None, -1)})
    if da.sizes[xdim] > 1 and float(da[xdim][1] - da[xdim][0]) < 0:
        da = da.isel({xdim: slice(None, None, -1)})
    values = np.asarray(da.values)
    extent = _extent(da)
    crs = da.rio.crs

    fig = Figure(figsize=_FIGSIZE, dpi=_DPI,
                 layout=ConstrainedLayoutEngine(rect=(0.0, 0.05, 1.0, 0.95), compress=True))
    FigureCanvasAgg(fig)
    ax = fig.add_subplot()
    _draw_missing_background(ax, extent)
    def on_grid(mask: xr.DataArray) -> np.ndarray:
        m = mask.squeeze(drop=True).transpose(*mask.dims[-2:])
        m = m.sel({m.dims[0]: da[ydim].values, m.dims[1]: da[xdim].values})
        return np.asarray(m.values, dtype=bool)

    handles: list = []
    if styles.is_class_layer(layer, da.attrs):
        _plot_classes(fig, ax, da, layer, values, extent)
    else:
        handles += _plot_continuous(fig, ax, da, layer, values, extent,
                                    never=None if never is None else on_grid(never))
    if hatch is not None:
        handles += _draw_hatch(ax, on_grid(hatch), extent, hatch_label)
    if outlines:
        for ring in outlines:
            ax.plot(ring[:, 0], ring[:, 1], color="0.15", linewidth=0.7, zorder=5)
        handles.append(Line2D([], [], color="0.15", linewidth=0.7, label="region boundaries"))
    if handles:
        ax.legend(handles=handles, loc="upper center", bbox_to_anchor=(0.5, -0.12),
                  ncol=min(len(handles), 2), frameon=False, fontsize="small")
    ax.set_xlim(extent[0], extent[1])
    ax.set_ylim(extent[2], extent[3])
    if crs is not None and pyproj.CRS.from_user_input(crs.to_wkt()).is_geographic:
        mid_lat = np.deg2rad(np.clip((extent[2] + extent[3]) / 2, -80, 80))
        ax.set_aspect(1.0 / np.cos(mid_lat))
    else:
        ax.set_aspect("equal")
    for axis in (ax.xaxis, ax.yaxis):
        axis.set_major_locator(MaxNLocator(nbins=5))
    ax.ticklabel_format(style="plain", useOffset=False)
    xlabel, ylabel = axis_labels(crs)
    ax.set_xlabel(xlabel)
    ax.set_ylabel(ylabel)
    ax.set_title(title)
    fig.text(0.5, 0.015, caution, ha="center", va="bottom", fontsize=8, style="italic",
             wrap=True)
    return fig


def plot_layer(da: xr.DataArray, path: str | os.PathLike, *, title: str,
               caution: str = DEFAULT_CAUTION, hatch: xr.DataArray | None = None,
               hatch_label: str = "models disagree", never: xr.DataArray | None = None,
               outlines=None) -> Path:
    """Draw one layer as a PNG map.

    Parameters
    ----------
    da
        The layer on a (y, x) grid; ``da.name`` is the layer name that picks
        the colours (see :mod:`suitmap.writers.styles`).  A CRS (rioxarray)
        gives the axis labels.
    path
        Final file name; written atomically.
    title
        Figure title.
    caution
        Line printed at the foot of the figure (and stored as the PNG's
        ``Description``).

    Returns
    -------
    Path
        *path*.

    Raises
    ------
    OutputError
        If the layer is not one (y, x) grid or the file cannot be written.
    """
    final = Path(path)
    try:
        fig = layer_figure(da, title=title, caution=caution, hatch=hatch, hatch_label=hatch_label,
                           never=never, outlines=outlines)
    except OutputError as exc:
        raise OutputError(f"cannot draw {final.name}: {exc}") from exc
    with atomic_path(final) as tmp:
        fig.savefig(tmp, format="png", dpi=_DPI,
                    metadata={"Title": title, "Description": caution})
    return final

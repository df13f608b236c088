"""Colours of suitmap's layers: one place for every figure, colour table and style.

Continuous layers use matplotlib's perceptually uniform maps (``viridis`` for
degree-days, generations and other counts; ``cividis`` for suitability);
``change_*`` layers a diverging map centred on zero (``RdBu_r``, blue =
decrease); class layers (``limiting_factor``, ``change_class``) the Okabe–Ito
palette, keyed by the class *meaning*, so a class keeps its colour whatever
integer code the layer gives it.

References
----------
Okabe, M. & Ito, K. (2008) Color Universal Design (CUD): how to make figures
and presentations that are friendly to colorblind people.
https://jfly.uni-koeln.de/color/ (the eight-colour set and its RGB values).
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Literal

import numpy as np

RGB = tuple[int, int, int]
RGBA = tuple[int, int, int, int]

#: Okabe & Ito (2008), Color Universal Design: the eight colours in 0–255 RGB.
OKABE_ITO: dict[str, RGB] = {
    "black": (0, 0, 0),
    "orange": (230, 159, 0),
    "sky_blue": (86, 180, 233),
    "bluish_green": (0, 158, 115),
    "yellow": (240, 228, 66),
    "blue": (0, 114, 178),
    "vermillion": (213, 94, 0),
    "reddish_purple": (204, 121, 167),
}

#: Colour of every known class, by layer and class meaning.  Only
#: ``bluish_green`` is shared, and it means "suitable" in both layers.
CLASS_COLOURS: dict[str, dict[str, str]] = {
    "limiting_factor": {
        "none": "bluish_green",
        "too_cool": "sky_blue",
        "too_hot": "orange",
        "cold_kill": "blue",
        "heat_kill": "vermillion",
    },
    "change_class": {
        "stays_unsuitable": "yellow",
        "becomes_suitable": "reddish_purple",
        "stays_suitable": "bluish_green",
        "becomes_unsuitable": "black",
    },
}

#: Colours of the companion flag of event-day layers (``<layer>_status``);
#: ``never`` is also the colour of "never" cells on the event-day map itself.
EVENT_STATUS_COLOURS = {"occurs": "sky_blue", "never": "vermillion",
                        "occurs_in_both": "sky_blue", "never_in_both": "vermillion",
                        "starts": "reddish_purple", "stops": "yellow"}

#: Code of missing cells in class layers (uint8 rasters and NetCDF).
CLASS_NODATA = 255

#: Colour-table entry of missing class cells: fully transparent.
NODATA_RGBA: RGBA = (0, 0, 0, 0)

#: Colour of missing cells in figures (matplotlib "lightgrey"), drawn hatched.
MISSING_COLOUR = "#d3d3d3"

#: Marker returned by :func:`colormap_name` for class layers.
CATEGORICAL = "okabe_ito"

SEQUENTIAL_CMAP = "viridis"
SUITABILITY_CMAP = "cividis"
DIVERGING_CMAP = "RdBu_r"

#: Layers of signed differences, drawn on the zero-centred diverging scale: change layers,
#: their ensemble statistics, and model bias (a model's historical run minus observations).
_DIVERGING_PREFIXES = ("change_", "ensemble_median_change_", "ensemble_p10_change_",
                       "ensemble_p90_change_", "model_bias_")

LayerKind = Literal["class", "change", "suitability", "sequential"]


def is_class_layer(layer: str, attrs: Mapping | None = None) -> bool:
    """Whether *layer* is integer-coded classes (by name or CF ``flag_values``)."""
    if layer in CLASS_COLOURS or layer.endswith("_class"):
        return True
    return attrs is not None and "flag_values" in attrs and "flag_meanings" in attrs


def layer_kind(layer: str, attrs: Mapping | None = None) -> LayerKind:
    """Kind of a layer, which decides its colours.

    ``class`` for class layers, ``change`` for ``change_*`` layers (including
    their ensemble statistics), ``suitability`` for suitability and its
    ensemble statistics, ``sequential`` for everything else (degree-days,
    generations, day counts, fractions of years or models).
    """
    if is_class_layer(layer, attrs):
        return "class"
    if layer.startswith(_DIVERGING_PREFIXES):
        return "change"
    if "suitability" in layer:
        return "suitability"
    return "sequential"


def colormap_name(layer: str, attrs: Mapping | None = None) -> str:
    """Name of the matplotlib colormap of *layer* (:data:`CATEGORICAL` for classes)."""
    kind = layer_kind(layer, attrs)
    return {
        "class": CATEGORICAL,
        "change": DIVERGING_CMAP,
        "suitability": SUITABILITY_CMAP,
        "sequential": SEQUENTIAL_CMAP,
    }[kind]


def is_diverging(layer: str, attrs: Mapping | None = None) -> bool:
    """Whether *layer* is drawn with symmetric limits around zero."""
    return layer_kind(layer, attrs) == "change"


def colour_limits(layer: str, attrs: Mapping | None, values) -> tuple[float, float]:
    """Value range a figure or style file maps onto the colours of *layer*.

    Suitability layers 0–1; change layers symmetric about zero (±max |value|,
    ±1 when all cells are 0); other layers the data range.  A layer with one
    value everywhere gets the range [value, value + 1] (a one-colour map has no
    meaningful range; the figure says "same value everywhere").
    """
    data = np.asarray(values, dtype=float)
    finite = data[np.isfinite(data)]
    kind = layer_kind(layer, attrs)
    if kind == "change":
        limit = float(np.abs(finite).max()) if finite.size else 0.0
        limit = limit if limit > 0 else 1.0
        return -limit, limit
    if kind == "suitability" and not layer.startswith("model_agreement"):
        return 0.0, 1.0
    if not finite.size:
        return 0.0, 1.0
    lo, hi = float(finite.min()), float(finite.max())
    return (lo, lo + 1.0) if hi <= lo else (lo, hi)


def parse_flags(attrs: Mapping) -> tuple[list[int], list[str]]:
    """CF ``flag_values`` and ``flag_meanings`` of a class layer as two lists.

    Raises
    ------
    ValueError
        If the attributes are missing or their lengths differ.
    """
    if "flag_values" not in attrs or "flag_meanings" not in attrs:
        raise ValueError("class layer has no flag_values/flag_meanings attributes")
    values = [int(v) for v in np.atleast_1d(np.asarray(attrs["flag_values"])).ravel()]
    meanings_raw = attrs["flag_meanings"]
    meanings = (meanings_raw.split() if isinstance(meanings_raw, str)
                else [str(m) for m in meanings_raw])
    if len(values) != len(meanings):
        raise ValueError(
            f"flag_values has {len(values)} entries but flag_meanings {len(meanings)}")
    return values, meanings


def class_colours(layer: str, meanings: Sequence[str]) -> dict[str, RGB]:
    """RGB colour of each class meaning of *layer*.

    Known classes get their fixed colour from :data:`CLASS_COLOURS`; unknown
    ones the Okabe–Ito colours not yet used by the layer, in palette order.

    Raises
    ------
    ValueError
        If there are more unknown classes than free Okabe–Ito colours.
    """
    fixed = CLASS_COLOURS.get(layer, EVENT_STATUS_COLOURS if layer.endswith("_status") else {})
    used = {fixed[m] for m in meanings if m in fixed}
    free = [name for name in OKABE_ITO if name not in used]
    out: dict[str, RGB] = {}
    for meaning in meanings:
        if meaning in fixed:
            out[meaning] = OKABE_ITO[fixed[meaning]]
        else:
            if not free:
                raise ValueError(f"layer {layer!r} has more classes than the "
                                 f"{len(OKABE_ITO)} Okabe–Ito colours")
            out[meaning] = OKABE_ITO[free.pop(0)]
    return out


def gdal_colour_table(layer: str, values: Sequence[int],
                      meanings: Sequence[str]) -> dict[int, RGBA]:
    """Colour table (code → RGBA) of a uint8 class raster: all 256 entries, every
    code that is not a class (and 255, missing) fully transparent."""
    colours = class_colours(layer, meanings)
    table: dict[int, RGBA] = {code: NODATA_RGBA for code in range(256)}
    table.update({int(v): (*colours[m], 255) for v, m in zip(values, meanings)})
    return table


def rgb_to_hex(rgb: RGB) -> str:
    """``(r, g, b)`` in 0–255 → ``#rrggbb``."""
    return "#{:02x}{:02x}{:02x}".format(*rgb)

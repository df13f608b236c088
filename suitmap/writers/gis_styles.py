"""Style files beside each GeoTIFF, so a layer opens in GIS software with suitmap's colours.

* ``<layer>.qml`` — a QGIS layer style, loaded by QGIS automatically when the
  GeoTIFF of the same name is opened: a pseudocolour ramp (viridis, cividis,
  or RdBu_r on a range symmetric about zero) for continuous layers, a
  paletted renderer with the Okabe–Ito class colours and class names for
  class layers.
* ``<layer>.sld`` — the same as an OGC Styled Layer Descriptor 1.0.0
  ``RasterSymbolizer`` (``ColorMap`` of type ``ramp`` or ``values``) for map
  servers.
* ``<layer>.tif.aux.xml`` — for class layers only: GDAL's auxiliary file with
  the category names and a thematic raster attribute table (code, class,
  colour), which GDAL, QGIS and ArcGIS read as class labels (a GeoTIFF has
  no tag of its own for them), and the colour table again with alpha: a TIFF
  palette holds RGB only, so GDAL reads every entry of the GeoTIFF's own
  table as opaque; the auxiliary table (which GDAL prefers) makes every code
  that is not a class, and 255 (no data), transparent.

Colours come from :mod:`suitmap.writers.styles`, so figures, colour tables
and style files agree.

References
----------
Open Geospatial Consortium (2007) Styled Layer Descriptor profile of the Web
Map Service Implementation Specification, version 1.1.0 (OGC 05-078r4);
Symbology Encoding 1.1.0 (OGC 05-077r4), ``RasterSymbolizer`` / ``ColorMap``.
GDAL Raster Data Model: category names and raster attribute tables
(``GDALSetRasterCategoryNames``, ``GDALRasterAttributeTable``), PAM ``.aux.xml``.
"""

from __future__ import annotations

import os
from collections.abc import Mapping
from pathlib import Path
from xml.etree import ElementTree as ET

import matplotlib
import numpy as np

from suitmap.writers import styles
from suitmap.writers.atomic import atomic_write_text
from suitmap.writers.labels import label_with_unit

__all__ = ["ramp_stops", "qml_text", "sld_text", "aux_xml_text", "write_styles"]

_STOPS = 11
_SLD_NS = "http://www.opengis.net/sld"


def ramp_stops(layer: str, attrs: Mapping, values) -> list[tuple[float, str]]:
    """(value, ``#rrggbb``) stops of a continuous layer's colour ramp."""
    lo, hi = styles.colour_limits(layer, attrs, values)
    cmap = matplotlib.colormaps[styles.colormap_name(layer, attrs)]
    out = []
    for i in range(_STOPS):
        f = i / (_STOPS - 1)
        rgb = tuple(int(round(255 * c)) for c in cmap(f)[:3])
        out.append((lo + f * (hi - lo), styles.rgb_to_hex(rgb)))
    return out


def _classes(layer: str, attrs: Mapping) -> list[tuple[int, str, str]]:
    values, meanings = styles.parse_flags(attrs)
    colours = styles.class_colours(layer, meanings)
    return [(v, m, styles.rgb_to_hex(colours[m])) for v, m in zip(values, meanings)]


def _fmt(x: float) -> str:
    return f"{x:.6g}"


def _xml(root: ET.Element) -> str:
    ET.indent(root)
    return ET.tostring(root, encoding="unicode", xml_declaration=False) + "\n"


def qml_text(layer: str, attrs: Mapping, values=None) -> str:
    """A QGIS (3.x) raster layer style of *layer*."""
    root = ET.Element("qgis", version="3.22.0", styleCategories="Symbology")
    pipe = ET.SubElement(root, "pipe")
    if styles.is_class_layer(layer, attrs):
        renderer = ET.SubElement(pipe, "rasterrenderer", type="paletted", band="1",
                                 opacity="1", alphaBand="-1", nodataColor="")
        palette = ET.SubElement(renderer, "colorPalette")
        for value, meaning, colour in _classes(layer, attrs):
            ET.SubElement(palette, "paletteEntry", value=str(value), color=colour, alpha="255",
                          label=meaning.replace("_", " "))
    else:
        stops = ramp_stops(layer, attrs, values if values is not None else [])
        lo, hi = stops[0][0], stops[-1][0]
        renderer = ET.SubElement(pipe, "rasterrenderer", type="singlebandpseudocolor",
                                 band="1", opacity="1", alphaBand="-1",
                                 classificationMin=_fmt(lo), classificationMax=_fmt(hi))
        shader = ET.SubElement(ET.SubElement(renderer, "rastershader"), "colorrampshader",
                               colorRampType="INTERPOLATED", classificationMode="1",
                               clip="0", minimumValue=_fmt(lo), maximumValue=_fmt(hi),
                               labelPrecision="2")
        for value, colour in stops:
            ET.SubElement(shader, "item", value=_fmt(value), color=colour, alpha="255",
                          label=_fmt(value))
    return "<!DOCTYPE qgis PUBLIC 'http://mrcc.com/qgis.dtd' 'SYSTEM'>\n" + _xml(root)


def sld_text(layer: str, attrs: Mapping, values=None) -> str:
    """An OGC SLD 1.0.0 document with one ``RasterSymbolizer`` for *layer*."""
    ET.register_namespace("", _SLD_NS)
    ET.register_namespace("ogc", "http://www.opengis.net/ogc")
    q = lambda tag: f"{{{_SLD_NS}}}{tag}"  # noqa: E731
    root = ET.Element(q("StyledLayerDescriptor"), version="1.0.0")
    named = ET.SubElement(root, q("NamedLayer"))
    ET.SubElement(named, q("Name")).text = layer
    style = ET.SubElement(named, q("UserStyle"))
    ET.SubElement(style, q("Title")).text = label_with_unit(layer, attrs)
    symbolizer = ET.SubElement(ET.SubElement(ET.SubElement(style, q("FeatureTypeStyle")),
                                             q("Rule")), q("RasterSymbolizer"))
    ET.SubElement(symbolizer, q("Opacity")).text = "1.0"
    if styles.is_class_layer(layer, attrs):
        cmap = ET.SubElement(symbolizer, q("ColorMap"), type="values")
        for value, meaning, colour in _classes(layer, attrs):
            ET.SubElement(cmap, q("ColorMapEntry"), color=colour, quantity=str(value),
                          label=meaning.replace("_", " "), opacity="1.0")
    else:
        cmap = ET.SubElement(symbolizer, q("ColorMap"), type="ramp")
        for value, colour in ramp_stops(layer, attrs, values if values is not None else []):
            ET.SubElement(cmap, q("ColorMapEntry"), color=colour, quantity=_fmt(value),
                          label=_fmt(value), opacity="1.0")
    return '<?xml version="1.0" encoding="UTF-8"?>\n' + _xml(root)


def aux_xml_text(layer: str, attrs: Mapping) -> str:
    """GDAL PAM ``.aux.xml`` of a class GeoTIFF: category names and attribute table."""
    classes = _classes(layer, attrs)
    by_code = {v: m for v, m, _ in classes}
    root = ET.Element("PAMDataset")
    band = ET.SubElement(root, "PAMRasterBand", band="1")
    ET.SubElement(band, "ColorInterp").text = "Palette"
    table = ET.SubElement(band, "ColorTable")
    values, meanings = styles.parse_flags(attrs)
    for code, rgba in sorted(styles.gdal_colour_table(layer, values, meanings).items()):
        ET.SubElement(table, "Entry", c1=str(rgba[0]), c2=str(rgba[1]), c3=str(rgba[2]),
                      c4=str(rgba[3]))
    names = ET.SubElement(band, "CategoryNames")
    for code in range(max(by_code) + 1):
        ET.SubElement(names, "Category").text = by_code.get(code, "")
    rat = ET.SubElement(band, "GDALRasterAttributeTable", tableType="thematic")
    # field types: 0 integer, 2 string; usages: 5 min-max (the code), 2 name, 6-8 RGB
    fields = (("Value", 0, 5), ("Class", 2, 2), ("Red", 0, 6), ("Green", 0, 7), ("Blue", 0, 8))
    for i, (name, ftype, usage) in enumerate(fields):
        f = ET.SubElement(rat, "FieldDefn", index=str(i))
        ET.SubElement(f, "Name").text = name
        ET.SubElement(f, "Type").text = str(ftype)
        ET.SubElement(f, "Usage").text = str(usage)
    for row, (value, meaning, colour) in enumerate(classes):
        r = ET.SubElement(rat, "Row", index=str(row))
        rgb = [int(colour[k:k + 2], 16) for k in (1, 3, 5)]
        for cell in (value, meaning, *rgb):
            ET.SubElement(r, "F").text = str(cell)
    return _xml(root)


def write_styles(tif: str | os.PathLike, layer: str, attrs: Mapping, values=None) -> list[Path]:
    """Write ``.qml``, ``.sld`` (and for class layers ``.tif.aux.xml``) beside *tif*."""
    tif = Path(tif)
    data = None if values is None else np.asarray(values)
    out = [atomic_write_text(tif.with_suffix(".qml"), qml_text(layer, attrs, data)),
           atomic_write_text(tif.with_suffix(".sld"), sld_text(layer, attrs, data))]
    if styles.is_class_layer(layer, attrs):
        out.append(atomic_write_text(tif.with_name(tif.name + ".aux.xml"),
                                     aux_xml_text(layer, attrs)))
    return out

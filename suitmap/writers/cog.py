"""Cloud-Optimized GeoTIFF writer of one layer.

A layer is first copied into an in-memory GDAL dataset (strip by strip, so a
dask-backed layer is computed piecewise) and then written with GDAL's ``COG``
driver (GDAL >= 3.1, always present with rasterio >= 1.3), which lays out the
tiles, builds the overviews and puts the overviews before the full-resolution
data as the COG layout requires.

Block size and overviews
------------------------
GDAL's COG driver builds overviews (factors 2, 4, 8, ...) only while the
larger side of the last level exceeds the block size.  suitmap therefore
picks the block size from the grid: the largest power of two between 16 and
512 that is *smaller* than the larger side of the grid (see
:func:`choose_blocksize`).  A 40 × 60 demo grid gets 32 × 32 tiles and one
overview (20 × 30); a 4000 × 3000 grid gets 512 × 512 tiles and three
overviews.  A grid no larger than 16 cells on both sides is a single tile and
has no overviews (there is nothing to reduce).

Continuous layers are float32 with NaN as nodata, DEFLATE with the
floating-point predictor, overviews by ``AVERAGE`` (missing cells ignored).
Class layers are uint8 with nodata 255 and an Okabe–Ito colour table
(:mod:`suitmap.writers.styles`), overviews by ``MODE``.
"""

from __future__ import annotations

import math
import os
from collections.abc import Mapping
from pathlib import Path

import numpy as np
import rasterio
import xarray as xr
from rasterio.shutil import copy as gdal_copy

from suitmap.errors import OutputError
from suitmap.writers import styles
from suitmap.writers.atomic import atomic_path
from suitmap.writers.labels import display_unit

__all__ = ["write_cog", "choose_blocksize", "class_codes"]

_MIN_BLOCK = 16  # TIFF tiles must be multiples of 16
_MAX_BLOCK = 512  # GDAL's COG default
_STRIP_ROWS = 1024
_BAND_ATTRS = ("units", "long_name", "standard_name", "cell_methods", "description")


def choose_blocksize(height: int, width: int) -> int:
    """Tile size of a COG: the largest power of two in [16, 512] below max(height, width).

    With GDAL's COG driver this guarantees at least one overview level for
    every grid whose larger side exceeds 16 cells.
    """
    longest = max(int(height), int(width))
    if longest <= 2 * _MIN_BLOCK:
        return _MIN_BLOCK
    block = 2 ** int(math.floor(math.log2(longest - 1)))
    return int(min(_MAX_BLOCK, max(_MIN_BLOCK, block)))


def class_codes(values: np.ndarray, flag_values: list[int], *, layer: str,
                fill_value: float | int | None = None) -> np.ndarray:
    """Class codes of *values* as uint8, missing cells (NaN or *fill_value*) as 255.

    Raises
    ------
    OutputError
        If a cell holds a code that is not one of *flag_values*.
    """
    arr = np.asarray(values)
    missing = np.zeros(arr.shape, dtype=bool)
    if arr.dtype.kind == "f":
        missing |= np.isnan(arr)
    if fill_value is not None and not (isinstance(fill_value, float) and math.isnan(fill_value)):
        missing |= arr == fill_value
    missing |= arr == styles.CLASS_NODATA
    allowed = np.isin(arr, np.asarray(flag_values)) | missing
    if not allowed.all():
        bad = np.unique(arr[~allowed])[:5]
        raise OutputError(f"layer {layer!r} holds codes {bad.tolist()} that are not in its "
                          f"flag_values {list(flag_values)}; fix the class coding")
    out = np.where(missing, styles.CLASS_NODATA, arr)
    return out.astype(np.uint8)


def _as_2d(da: xr.DataArray, layer: str) -> xr.DataArray:
    extra = [d for d in da.dims if d not in (da.rio.y_dim, da.rio.x_dim)]
    for dim in extra:
        if da.sizes[dim] != 1:
            raise OutputError(f"layer {layer!r} has dimension {dim!r} of size {da.sizes[dim]}; "
                              "a GeoTIFF layer must be one (y, x) grid — select one slice")
        da = da.isel({dim: 0}, drop=True)
    return da.transpose(da.rio.y_dim, da.rio.x_dim)


def _north_up(da: xr.DataArray) -> xr.DataArray:
    ydim, xdim = da.rio.y_dim, da.rio.x_dim
    if da.sizes[ydim] > 1 and float(da[ydim][1] - da[ydim][0]) > 0:
        da = da.isel({ydim: slice(None, None, -1)})
    if da.sizes[xdim] > 1 and float(da[xdim][1] - da[xdim][0]) < 0:
        da = da.isel({xdim: slice(None, None, -1)})
    return da


def _fill_value(da: xr.DataArray):
    for source in (da.encoding, da.attrs):
        for key in ("_FillValue", "missing_value"):
            if key in source and source[key] is not None:
                return np.asarray(source[key]).ravel()[0].item()
    return da.rio.nodata


def _tag_text(value) -> str:
    if isinstance(value, (list, tuple, np.ndarray)):
        return " ".join(str(v) for v in np.asarray(value).ravel().tolist())
    return str(value)


def write_cog(da: xr.DataArray, path: str | os.PathLike, *, layer: str,
              tags: Mapping[str, object] | None = None) -> Path:
    """Write one layer as a Cloud-Optimized GeoTIFF.

    Parameters
    ----------
    da
        The layer on a (y, x) grid with a CRS (rioxarray).  Continuous layers
        are float with NaN as missing; class layers (see
        :func:`suitmap.writers.styles.is_class_layer`) are integer codes with
        CF ``flag_values``/``flag_meanings``, missing as 255 or NaN.
    path
        Final file name; written atomically.
    layer
        Layer name (glossary): band description and ``layer`` tag.
    tags
        Extra dataset tags (provenance), written as text.

    Returns
    -------
    Path
        *path*.

    Raises
    ------
    OutputError
        If the layer has no CRS, is not one grid, holds unknown class codes,
        or the file cannot be written.
    """
    final = Path(path)
    if da.rio.crs is None:
        raise OutputError(f"layer {layer!r} for {final.name} has no CRS; attach one with "
                          "da.rio.write_crs(...) before writing")
    try:
        da = _north_up(_as_2d(da, layer))
    except OutputError:
        raise
    except Exception as exc:  # rioxarray cannot find the spatial dims
        raise OutputError(f"layer {layer!r} for {final.name} has no (y, x) grid: {exc}") from exc
    height, width = da.shape
    transform = da.rio.transform(recalc=True)
    if transform.b != 0 or transform.d != 0:
        raise OutputError(f"layer {layer!r} has a rotated grid; suitmap writes north-up only")

    is_class = styles.is_class_layer(layer, da.attrs)
    band_tags = {k: _tag_text(da.attrs[k]) for k in _BAND_ATTRS if k in da.attrs}
    band_tags["layer"] = layer
    if is_class:
        try:
            flag_values, meanings = styles.parse_flags(da.attrs)
            colour_table = styles.gdal_colour_table(layer, flag_values, meanings)
        except ValueError as exc:
            raise OutputError(f"class layer {layer!r}: {exc}; set CF flag_values and "
                              "flag_meanings") from exc
        band_tags["flag_values"] = " ".join(str(v) for v in flag_values)
        band_tags["flag_meanings"] = " ".join(meanings)
        dtype, nodata = "uint8", styles.CLASS_NODATA
        fill = _fill_value(da)
        options = {"PREDICTOR": "NO", "RESAMPLING": "MODE"}
    else:
        dtype, nodata = "float32", float("nan")
        fill = _fill_value(da)
        options = {"PREDICTOR": "YES", "RESAMPLING": "AVERAGE"}

    blocksize = choose_blocksize(height, width)
    options.update(BLOCKSIZE=blocksize, COMPRESS="DEFLATE", LEVEL=6, OVERVIEWS="AUTO",
                   BIGTIFF="IF_SAFER")
    dataset_tags = {str(k): _tag_text(v) for k, v in (tags or {}).items() if v is not None}

    mem_profile = dict(driver="MEM", width=width, height=height, count=1, dtype=dtype,
                       crs=da.rio.crs, transform=transform, nodata=nodata)
    with atomic_path(final) as tmp, rasterio.Env(GDAL_PAM_ENABLED="NO"):
        with rasterio.open("", "w", **mem_profile) as mem:
            for row0 in range(0, height, _STRIP_ROWS):
                rows = slice(row0, min(height, row0 + _STRIP_ROWS))
                block = np.asarray(da.isel({da.rio.y_dim: rows}).values)
                if is_class:
                    block = class_codes(block, flag_values, layer=layer, fill_value=fill)
                else:
                    if block.dtype.kind not in "fiub":
                        raise OutputError(f"layer {layer!r} has non-numeric data "
                                          f"({block.dtype}); cannot write a GeoTIFF")
                    block = block.astype(np.float32)
                    if fill is not None and not (isinstance(fill, float) and math.isnan(fill)):
                        block[block == np.float32(fill)] = np.nan
                mem.write(block, 1, window=((rows.start, rows.stop), (0, width)))
            mem.set_band_description(1, layer)
            mem.update_tags(1, **band_tags)
            mem.update_tags(**{**dataset_tags, "layer": layer})
            units = da.attrs.get("units")
            unit = "" if is_class or units is None else (display_unit(units) or "1")
            if unit:
                mem.set_band_unit(1, unit)
            if is_class:
                mem.write_colormap(1, colour_table)
            gdal_copy(mem, str(tmp), driver="COG", **options)
    return final

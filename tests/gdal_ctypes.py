"""Read GDAL category names through GDAL's own C API (the library rasterio ships).

rasterio has no call for category names; QGIS and ``gdalinfo`` use
``GDALGetRasterCategoryNames``.  Calling it here checks what GDAL itself sees,
independently of suitmap's writer.  ``GDALGetMetadata`` is called first, as
``gdalinfo`` does: the GTiff driver loads the ``.aux.xml`` lazily.
"""

from __future__ import annotations

import ctypes
import glob
import os


def _library():
    import rasterio

    here = os.path.dirname(rasterio.__file__)
    found = (glob.glob(os.path.join(here, os.pardir, "rasterio.libs", "libgdal*"))
             + glob.glob(os.path.join(here, ".dylibs", "libgdal*")))
    if not found:
        return None
    lib = ctypes.CDLL(found[0])
    v = ctypes.c_void_p
    lib.GDALAllRegister()
    lib.GDALOpen.restype = v
    lib.GDALOpen.argtypes = [ctypes.c_char_p, ctypes.c_int]
    lib.GDALGetRasterBand.restype = v
    lib.GDALGetRasterBand.argtypes = [v, ctypes.c_int]
    lib.GDALGetMetadata.restype = v
    lib.GDALGetMetadata.argtypes = [v, ctypes.c_char_p]
    lib.GDALGetRasterCategoryNames.restype = ctypes.POINTER(ctypes.c_char_p)
    lib.GDALGetRasterCategoryNames.argtypes = [v]
    lib.GDALClose.argtypes = [v]
    return lib


def category_names(path) -> list[str] | None:
    """Category names of band 1 as GDAL reads them, or None if libgdal cannot be loaded."""
    lib = _library()
    if lib is None:
        return None
    ds = lib.GDALOpen(os.fsencode(str(path)), 0)
    assert ds, f"GDAL cannot open {path}"
    try:
        band = lib.GDALGetRasterBand(ds, 1)
        lib.GDALGetMetadata(band, None)
        names = lib.GDALGetRasterCategoryNames(band)
        out, i = [], 0
        while names and names[i] is not None:
            out.append(names[i].decode("utf-8"))
            i += 1
        return out
    finally:
        lib.GDALClose(ds)

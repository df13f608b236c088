"""Writers of suitmap's outputs: COG, NetCDF, PNG figures, manifest (atomic writes).

Names are imported lazily, so ``import suitmap.writers.cog`` does not load
matplotlib.
"""

from __future__ import annotations

import importlib

_EXPORTS = {
    "write_cog": "cog",
    "choose_blocksize": "cog",
    "write_netcdf": "netcdf",
    "plot_layer": "figures",
    "layer_figure": "figures",
    "DEFAULT_CAUTION": "figures",
    "Manifest": "manifest",
    "verify_manifest": "manifest",
    "atomic_path": "atomic",
    "sha256_file": "atomic",
}

__all__ = sorted(_EXPORTS)


def __getattr__(name: str):
    if name in _EXPORTS:
        module = importlib.import_module(f"{__name__}.{_EXPORTS[name]}")
        return getattr(module, name)
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


def __dir__() -> list[str]:
    return sorted(list(globals()) + __all__)

"""suitmap: where an insect completes its life cycle, now and in scenario climates.

The Python API does what the command line does::

    import suitmap
    run = suitmap.load_run("demo_run.toml")
    layers = suitmap.compute_run(run).compute()     # lazy until here
    suitmap.write_outputs(layers)

Outputs are screening-level estimates, not a basis for control decisions.
"""

from suitmap._version import __version__

# The API is imported on first use (PEP 562), so ``python -m suitmap`` starts without the
# climate stack (xarray, dask, rioxarray, numba): a rerun with nothing to do answers at once.
_API = {
    "open_climate": "suitmap.climate",
    "compare": "suitmap.comparison.change",
    "daily_development": "suitmap.layers.api",
    "degree_days": "suitmap.layers.api",
    "development_rate": "suitmap.layers.api",
    "compute_layers": "suitmap.layers.compute",
    "season_statistics": "suitmap.layers.compute",
    "write_outputs": "suitmap.pipeline.outputs",
    "check_run": "suitmap.pipeline.analysis",
    "compute_run": "suitmap.pipeline.analysis",
    "open_period": "suitmap.pipeline.analysis",
    "run": "suitmap.pipeline.analysis",
    "load_profile": "suitmap.config.profile",
    "load_run": "suitmap.config.runfile",
}

__all__ = [
    "__version__",
    "check_run",
    "compare",
    "compute_layers",
    "compute_run",
    "daily_development",
    "degree_days",
    "development_rate",
    "load_profile",
    "load_run",
    "open_climate",
    "open_period",
    "run",
    "season_statistics",
    "write_outputs",
]


def __getattr__(name: str):
    if name in _API:
        import importlib

        value = getattr(importlib.import_module(_API[name]), name)
        globals()[name] = value
        return value
    raise AttributeError(f"module 'suitmap' has no attribute {name!r}")


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(__all__))

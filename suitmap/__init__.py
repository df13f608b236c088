"""suitmap: where an insect completes its life cycle, now and in scenario climates.

The Python API does what the command line does::

    import suitmap
    run = suitmap.load_run("demo_run.toml")
    layers = suitmap.compute_run(run).compute()     # lazy until here
    suitmap.write_outputs(layers)

Outputs are screening-level estimates, not a basis for control decisions.
"""

from suitmap._version import __version__  # noqa: E402

from suitmap.climate import open_climate  # noqa: E402
from suitmap.comparison.change import compare  # noqa: E402
from suitmap.layers.api import daily_development, degree_days, development_rate  # noqa: E402
from suitmap.layers.compute import compute_layers, season_statistics  # noqa: E402
from suitmap.pipeline.outputs import write_outputs  # noqa: E402
from suitmap.pipeline.analysis import check_run, compute_run, open_period, run  # noqa: E402
from suitmap.config.profile import load_profile  # noqa: E402
from suitmap.config.runfile import load_run  # noqa: E402

__all__ = [
    "__version__", "open_climate", "compare", "degree_days", "development_rate",
    "daily_development", "compute_layers",
    "season_statistics", "write_outputs", "check_run", "compute_run", "open_period", "run",
    "load_profile", "load_run",
]

"""Bundled organism profiles: INVENTED demonstration organisms.

Every profile here describes an organism invented for demonstration, with
plausible but invented parameters. None is a real species; do not use them
for real decisions.  ``suitmap.config.library.path("ostra_mason_bee")`` gives the
file; a run file can name one with ``[profile] library = "ostra_mason_bee"``.
"""

from __future__ import annotations

from importlib import resources
from pathlib import Path


def names() -> list[str]:
    """Names of the bundled profiles."""
    return sorted(p.name[:-5] for p in resources.files(__name__).iterdir()
                  if p.name.endswith(".toml"))


def path(name: str) -> Path:
    """File of a bundled profile (raises KeyError for an unknown name)."""
    if name not in names():
        raise KeyError(name)
    with resources.as_file(resources.files(__name__) / f"{name}.toml") as p:
        return Path(p)

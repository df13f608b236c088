"""Checks of a run made before anything is read or written, and read errors named.

* :func:`check_output_names`: the folders a run writes (one per period, per
  comparison and per ensemble) and the files beside them (``manifest.json``,
  ``README.txt``, ``.suitmap``) must all differ, also on a file system that
  ignores letter case, so that no output can overwrite another after some
  have been written.
* :func:`named_read_errors`: a read error raised while the layers are computed
  (a corrupt compressed chunk, a file truncated or removed since it was
  opened) becomes the one-line :class:`~suitmap.errors.InputError` naming the
  input files, instead of an internal error.
"""

from __future__ import annotations

import contextlib
from collections.abc import Iterable, Iterator

from suitmap.config.runfile import RunFile
from suitmap.errors import InputError, RunFileError, SuitmapError

__all__ = ["RESERVED", "check_output_names", "comparison_name", "ensemble_name", "named_read_errors"]

#: Names the output folder itself uses, beside the per-period folders.
RESERVED = ("manifest.json", "README.txt", ".suitmap")


def comparison_name(scenario: str, baseline: str) -> str:
    """Folder of the change layers of ``scenario`` against ``baseline``."""
    return f"{scenario}_vs_{baseline}"


def ensemble_name(pathway: str, period: str) -> str:
    """Folder of the ensemble statistics of one (pathway, period) group."""
    return f"ensemble_{pathway}_{period}"


def output_folders(run: RunFile) -> dict[str, str]:
    """Every folder name the run writes -> what it holds (for messages)."""
    out = {p.name: f"period '{p.name}'" for p in run.periods}
    for s in run.scenarios:
        out.setdefault(comparison_name(s.name, run.baseline.name), f"comparison of '{s.name}'")
    groups: dict[tuple[str, str], set[str]] = {}
    for s in run.scenarios:
        if s.model and s.pathway and s.period:
            groups.setdefault((s.pathway, s.period), set()).add(s.model)
    for (pathway, period), models in groups.items():
        if len(models) >= 2:
            out.setdefault(ensemble_name(pathway, period), f"ensemble {pathway} {period}")
    return out


def check_output_names(run: RunFile) -> None:
    """Refuse period names whose output folders collide with each other or with reserved names."""
    where = f"run file {run.path}"
    seen: dict[str, str] = {r.casefold(): f"the output's own '{r}'" for r in RESERVED}
    periods = [p.name for p in run.periods]
    names = list(output_folders(run).items())
    comps = [comparison_name(s.name, run.baseline.name) for s in run.scenarios]
    for name in comps:  # a period named like a comparison is dropped by setdefault above
        if name in periods:
            raise RunFileError(f"{where}: period name '{name}' is also the folder of a comparison; "
                               "rename the period")
    for name, what in names:
        key = name.casefold()
        if key in seen:
            raise RunFileError(f"{where}: the output folder of {what} would be '{name}', which "
                               f"collides with {seen[key]}; rename the period")
        seen[key] = what


@contextlib.contextmanager
def named_read_errors(label: str, files: Iterable[str]) -> Iterator[None]:
    """Turn a read error met while computing into an :class:`InputError` naming ``files``."""
    try:
        yield
    except SuitmapError:
        raise
    except (OSError, RuntimeError) as exc:
        if not isinstance(exc, OSError) and not any(w in str(exc) for w in ("NetCDF", "HDF", "filter")):
            raise  # not a read error: a bug, reported as such
        names = ", ".join(dict.fromkeys(str(f) for f in files)) or "?"
        first = (str(exc).splitlines() or [""])[0][:200]
        raise InputError(f"{label}: reading the climate data failed ({type(exc).__name__}: {first}) "
                         f"in one of {names}; check or re-download these files") from None

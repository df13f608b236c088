"""What a ``[[scenario_set]]`` measures change against, and its scenarios as periods.

Keys of a scenario set (besides ``files``, ``variables``, ``periods``)::

    historical = "historical"            # a key of periods: each model's own historical run
    historical_pathway = "historical"    # the {pathway} text of those files (default "historical")
    change_against = "model_historical"  # or "observations" (must be asked for)
    downscale = { method = "delta", smoothing = "doy", window_days = 31 }

Routes, recorded in every comparison and ensemble output as ``change_reference``:

``model_historical`` (the default when ``historical`` is given)
    every model's future layers minus the layers of *that model's* historical
    run, so a model's bias against the observations is not counted as change.
    The models' absolute future layers are the raw model climate.
``delta_change`` (``downscale`` with ``method = "delta"``; needs ``historical``)
    each model's change (future minus its own historical run, smoothed by day of
    year or month) is added to the observed baseline days; absolute layers are
    then on the observed climate, and their change against the baseline is the
    model's own change.
``observations`` (``change_against = "observations"``, or a set without
    ``historical``) every model's future minus the observed baseline; the
    model's bias is counted as change, and the outputs say so.

With ``historical``, each model's historical layers minus the observed baseline
are written as ``model_bias_<layer>`` (:mod:`suitmap.comparison.reference`).
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from typing import Any

from suitmap.errors import RunFileError

ROUTES = ("model_historical", "delta_change", "observations")


@dataclass(frozen=True)
class SetReference:
    historical: str | None = None
    historical_pathway: str = "historical"
    change_against: str = "observations"
    smoothing: str | None = None      # set: delta change with this smoothing
    window_days: int = 31


def set_reference(table: dict, spans: dict[str, tuple[int, int]], where: str,
                  name_re: re.Pattern) -> SetReference:
    """Validate the reference keys of one scenario set."""
    hist = table.get("historical")
    if hist is not None and (not isinstance(hist, str) or hist not in spans):
        raise RunFileError(f"{where}.historical must name one of the set's periods "
                           f"({', '.join(spans)}), got {hist!r}")
    hp = table.get("historical_pathway", "historical")
    if not isinstance(hp, str) or not name_re.match(hp):
        raise RunFileError(f"{where}.historical_pathway must be the {{pathway}} text of the "
                           f"historical-run files, e.g. \"historical\"; got {hp!r}")
    against = table.get("change_against", "model_historical" if hist else "observations")
    if against not in ("model_historical", "observations"):
        raise RunFileError(f"{where}.change_against must be \"model_historical\" or "
                           f"\"observations\", got {against!r}")
    if against == "model_historical" and hist is None:
        raise RunFileError(f"{where}.change_against = \"model_historical\" needs historical = "
                           "\"<period>\" naming the models' historical period")
    down = table.get("downscale")
    if down is None:
        return SetReference(hist, hp, against)
    if not isinstance(down, dict):
        raise RunFileError(f"{where}.downscale must be a table, e.g. {{ method = \"delta\" }}")
    for k in down:
        if k not in ("method", "smoothing", "window_days"):
            raise RunFileError(f"{where}: unknown key downscale.{k}; allowed keys are method, "
                               "smoothing, window_days (the historical run comes from historical)")
    if down.get("method", "delta") != "delta":
        raise RunFileError(f"{where}.downscale.method must be \"delta\" (the only method so far)")
    if hist is None:
        raise RunFileError(f"{where}.downscale needs historical = \"<period>\": the delta is each "
                           "model's future minus its own historical run")
    if "change_against" in table:
        raise RunFileError(f"{where}: leave out change_against with downscale: delta change already "
                           "measures each model's change against its own historical run")
    smoothing = down.get("smoothing", "doy")
    if smoothing not in ("doy", "monthly"):
        raise RunFileError(f"{where}.downscale.smoothing must be \"doy\" or \"monthly\"")
    window = down.get("window_days", 31)
    if isinstance(window, bool) or not isinstance(window, int) or window < 1 or window % 2 == 0:
        raise RunFileError(f"{where}.downscale.window_days must be an odd whole number of days")
    return SetReference(hist, hp, "delta_change", smoothing, window)


def set_periods(found: list, spans: dict[str, tuple[int, int]], variables: dict[str, str],
                ref: SetReference, source_cls, period_cls, delta_cls) -> list[Any]:
    """The periods of one expanded set (model historical runs first), wired to their reference.

    ``source_cls``, ``period_cls``, ``delta_cls``: the run file's dataclasses
    (passed in so that this module does not import :mod:`suitmap.config.runfile`).
    """
    hist_of = {f.model: f for f in found if f.historical}
    out = []
    for f in sorted(found, key=lambda f: not f.historical):
        tmin = source_cls(f.tmin, variables["tmin"])
        tmax = source_cls(f.tmax, variables["tmax"])
        pr = source_cls(f.pr, variables["pr"]) if f.pr else None
        if f.historical:
            out.append(period_cls(name=f"{f.model}_{f.period}", years=spans[f.period], tmin=tmin,
                                  tmax=tmax, kind="historical", model=f.model, pathway=f.pathway,
                                  period=f.period, pr=pr))
            continue
        h = hist_of.get(f.model)
        delta = reference = None
        if ref.change_against == "delta_change":
            delta = delta_cls(source_cls(h.tmin, variables["tmin"]), source_cls(h.tmax, variables["tmax"]),
                              spans[h.period], ref.smoothing, ref.window_days,
                              source_cls(h.pr, variables["pr"]) if h.pr else None)
        elif ref.change_against == "model_historical":
            reference = f"{f.model}_{h.period}"
        out.append(period_cls(name=f"{f.model}_{f.pathway}_{f.period}", years=spans[f.period],
                              tmin=tmin, tmax=tmax, kind="scenario", model=f.model,
                              pathway=f.pathway, period=f.period, delta=delta, reference=reference,
                              pr=pr,
                              change_against=ref.change_against if ref.historical else None))
    return out

"""CF attributes of the moisture, life-stage and diapause layers (part of :mod:`metadata`)."""

from __future__ import annotations

from typing import Any

BIOLOGY_LAYER_ATTRS: dict[str, dict[str, Any]] = {
    "annual_precipitation": {
        "units": "mm",
        "long_name": "precipitation per calendar year, mean over the period's years",
        "standard_name": "precipitation_amount",
        "cell_methods": "time: sum within years time: mean over years",
    },
    "dry_months": {
        "units": "1",
        "long_name": "months per year with precipitation (mm) below twice the mean temperature "
                     "(degC) (Bagnouls & Gaussen 1957), mean over the period's years",
        "cell_methods": "time: sum within years time: mean over years",
    },
    "aridity_index": {
        "units": "1",
        "long_name": "aridity index: precipitation / Hargreaves-Samani reference "
                     "evapotranspiration (FAO-56 eq. 52), totals over the period",
        "cell_methods": "time: sum",
    },
    "moisture_score": {
        "units": "1",
        "long_name": "moisture score: the least of the profile's moisture factors (0-1)",
        "cell_methods": "time: mean over years",
    },
    "outside_tested_range": {
        "units": "1",
        "long_name": "1 where some day's mean temperature leaves the range of the lab data the "
                     "profile was fitted to (above it, or below it while above the lower "
                     "threshold), 0 elsewhere",
        "cell_methods": "time: maximum",
    },
    "mismatch_days": {
        "units": "days",
        "long_name": "days from an event of the run's organism to an event of a second organism "
                     "(second minus first; means over the seasons in which each happens)",
        "cell_methods": "time: mean over years where the events happen",
    },
    "generations_before_diapause": {
        "units": "1",
        "long_name": "whole generations per season completed before a generation reaches its "
                     "day-length-sensitive stage on short, shortening days, mean over seasons",
        "cell_methods": "time: sum within years time: mean over years",
    },
}


for _q in (10, 50, 90):
    BIOLOGY_LAYER_ATTRS[f"suitability_p{_q}"] = {
        "units": "1",
        "long_name": f"{_q}th percentile of suitability over draws of the profile's fitted "
                     "parameters (parameter uncertainty)",
        "cell_methods": "time: mean over years",
    }


def stage_layer_attrs(name: str) -> dict[str, Any]:
    """``first_<stage>_day`` and ``years_with_<stage>`` of a profile's [[stage]] tables."""
    if name.startswith("first_") and name.endswith("_day"):
        stage = name[len("first_"):-len("_day")]
        return {"units": "days",
                "long_name": f"day of season (1 = season start) on which the first generation "
                             f"completes the {stage} stage, mean over seasons in which it does; "
                             f"where it never does, years_with_{stage} is 0",
                "cell_methods": "time: mean over years where the event happens"}
    if name.startswith("probability_generations_ge_"):
        n = name[len("probability_generations_ge_"):]
        return {"units": "1",
                "long_name": f"share of parameter draws with at least {n} complete generations "
                             "per season (mean over seasons)",
                "cell_methods": "time: mean over years"}
    if name.startswith("years_with_"):
        stage = name[len("years_with_"):]
        return {"units": "1",
                "long_name": f"fraction of seasons in which the first generation completes the "
                             f"{stage} stage (0: never; missing: no data)",
                "cell_methods": "time: mean over years"}
    raise KeyError(name)

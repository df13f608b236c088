"""CF attributes and class codes of suitmap's output layers.

The computation in :mod:`suitmap.layers.compute` produces bare arrays; this module is
the one place that says what they mean (units, long names, CF standard names,
``cell_methods``) and how class layers are coded.
"""

from __future__ import annotations

from typing import Any

from suitmap.layers.metadata_biology import BIOLOGY_LAYER_ATTRS, stage_layer_attrs
from suitmap.spatial.dispersal import RANGE_CHANGE_CLASSES

#: Class layers: names in code order (code = index); 255 marks missing cells.
LIMITING_FACTOR_CLASSES = ("none", "too_cool", "too_hot", "cold_kill", "heat_kill")
#: Classes appended to LIMITING_FACTOR_CLASSES when a profile has [moisture] (codes 5, 6).
MOISTURE_CLASSES = ("too_dry", "too_wet")
CHANGE_CLASSES = ("stays_unsuitable", "becomes_suitable", "stays_suitable", "becomes_unsuitable")
RELOCATION_CLASSES = ("not_candidate", "candidate")
CLASS_LAYERS = {"limiting_factor": LIMITING_FACTOR_CLASSES, "change_class": CHANGE_CLASSES,
                "range_change": RANGE_CHANGE_CLASSES, "relocation_candidates": RELOCATION_CLASSES}
#: ``robust_change_<layer>`` of an ensemble (rule: suitmap.comparison.robustness).
ROBUST_CHANGE_CLASSES = ("no_robust_signal", "robust", "conflicting_signals")
MISSING_CLASS = 255

_PERIOD_MEAN = "time: sum within years time: mean over years"

LAYER_ATTRS: dict[str, dict[str, Any]] = {
    "degree_days": {
        "units": "K d",
        "units_metadata": "temperature: difference",
        "long_name": "degree-days above the lower developmental threshold accumulated over the season, mean over the period's seasons",
        "standard_name": "integral_wrt_time_of_air_temperature_excess",
        "cell_methods": _PERIOD_MEAN,
    },
    "generations": {
        "units": "1",
        "long_name": "generations completed per season (degree-days / thermal constant), mean over seasons",
        "cell_methods": _PERIOD_MEAN,
    },
    "complete_generations": {
        "units": "1",
        "long_name": "whole generations completed per season, mean over seasons",
        "cell_methods": _PERIOD_MEAN,
    },
    "first_generation_day": {
        "units": "days",
        "long_name": "day of season (1 = season start) on which the first generation completes, mean over seasons in which one completes",
        "cell_methods": "time: mean over years",
        "comment": "the mean is over the seasons in which a generation completes",
        "ancillary_variables": "first_generation_day_status",
    },
    "years_with_generation": {
        "units": "1",
        "long_name": "fraction of seasons with at least one complete generation",
        "cell_methods": "time: mean over years",
    },
    "cold_kill_days": {
        "units": "days",
        "long_name": "days per season with daily minimum temperature at or below the lethal cold limit, mean over seasons",
        "cell_methods": "time: sum within years time: mean over years",
    },
    "heat_kill_days": {
        "units": "days",
        "long_name": "days per season with daily maximum temperature at or above the lethal heat limit, mean over seasons",
        "cell_methods": "time: sum within years time: mean over years",
    },
    "development_score": {
        "units": "1",
        "long_name": "development score: fraction of seasons with a generation times min(1, generations / saturating generations)",
        "cell_methods": "time: mean over years",
    },
    "survival_score": {
        "units": "1",
        "long_name": "survival score: fraction of seasons without any lethal cold or heat day",
        "cell_methods": "time: mean over years",
    },
    "suitability": {
        "units": "1",
        "long_name": "thermal suitability (development score times survival score), screening-level",
        "cell_methods": "time: mean over years",
    },
    "limiting_factor": {
        "units": "1",
        "long_name": "factor that holds suitability down",
        "flag_values": list(range(len(LIMITING_FACTOR_CLASSES))),
        "flag_meanings": " ".join(LIMITING_FACTOR_CLASSES),
    },
    **BIOLOGY_LAYER_ATTRS,
    "change_class": {
        "units": "1",
        "long_name": "change of suitable status between baseline and scenario",
        "flag_values": list(range(len(CHANGE_CLASSES))),
        "flag_meanings": " ".join(CHANGE_CLASSES),
    },
    "range_change": {
        "units": "1",
        "long_name": "change of the suitable range between baseline and scenario, gains split by "
                     "whether they lie within the dispersal distance of the baseline range",
        "flag_values": list(range(len(RANGE_CHANGE_CLASSES))),
        "flag_meanings": " ".join(RANGE_CHANGE_CLASSES),
    },
    "relocation_candidates": {
        "units": "1",
        "long_name": "suitable in the scenario but beyond the dispersal distance of the baseline range",
        "flag_values": [0, 1],
        "flag_meanings": " ".join(RELOCATION_CLASSES),
    },
}

#: Companion flag of an event-day layer (``<layer>_status``): a cell whose
#: climate is complete but where the event happens in no season is "never",
#: which is not "no data" (255).  See :mod:`suitmap.layers.events`.
EVENT_STATUS_CLASSES = ("occurs", "never")
LAYER_ATTRS["first_generation_day_status"] = {
    "units": "1",
    "long_name": "whether the first generation completes in at least one season of the period",
    "flag_values": [0, 1],
    "flag_meanings": " ".join(EVENT_STATUS_CLASSES),
}

#: Numeric period layers in the order they are written.
NUMERIC_LAYERS = (
    "degree_days", "generations", "complete_generations", "first_generation_day",
    "years_with_generation", "cold_kill_days", "heat_kill_days",
    "development_score", "survival_score", "suitability",
)
#: Numeric layers present only with precipitation or [diapause]; compared like the above.
OPTIONAL_NUMERIC_LAYERS = ("annual_precipitation", "dry_months", "aridity_index",
                           "moisture_score", "generations_before_diapause", "mismatch_days")


def layer_attrs(name: str) -> dict[str, Any]:
    """Attributes of layer ``name``; ``change_<layer>`` gets the layer's units."""
    if name in LAYER_ATTRS:
        return dict(LAYER_ATTRS[name])
    if name.startswith(("first_", "years_with_", "probability_generations_ge_")) and not \
            name.startswith("first_generation"):
        return stage_layer_attrs(name)
    if name.startswith("change_"):
        base = LAYER_ATTRS[name[len("change_"):]]
        extra = {k: base[k] for k in ("units_metadata",) if k in base}
        return {
            "units": base["units"], **extra,
            "long_name": f"change (scenario minus baseline) of: {base['long_name']}",
            "cell_methods": base.get("cell_methods", ""),
        }
    if name.startswith("model_bias_"):
        base = LAYER_ATTRS[name[len("model_bias_"):]]
        return {"units": base["units"], "cell_methods": base.get("cell_methods", ""),
                "long_name": f"climate model bias (the model's historical run minus the observed "
                             f"baseline) of: {base['long_name']}"}
    raise KeyError(name)

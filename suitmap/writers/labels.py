"""Short names and display units of layers, for colour bars, legends, style files and reports.

CF attributes keep the long, exact description (``long_name``) and the
UDUNITS unit; a map needs a label that fits beside a colour bar.  The label of
a layer is built from its glossary name; prefixes of change and ensemble
layers become words (``ensemble_median_change_degree_days`` → "median change
in degree-days").
"""

from __future__ import annotations

from collections.abc import Mapping

__all__ = ["short_label", "display_unit", "label_with_unit"]

#: Short names of the period layers (glossary names, spelled for people).
_NAMES = {
    "degree_days": "degree-days",
    "generations": "generations",
    "complete_generations": "complete generations",
    "first_generation_day": "first generation day",
    "years_with_generation": "years with a generation",
    "cold_kill_days": "cold-kill days",
    "heat_kill_days": "heat-kill days",
    "development_score": "development score",
    "survival_score": "survival score",
    "suitability": "suitability",
    "limiting_factor": "limiting factor",
    "change_class": "change class",
    "first_generation_day_status": "first generation: occurs or never",
}

_PREFIXES = (
    ("ensemble_median_", "median "),
    ("ensemble_p10_", "10th percentile of "),
    ("ensemble_p90_", "90th percentile of "),
    ("model_agreement_", "model agreement on "),
    ("robust_change_", "robust "),
    ("change_", "change in "),
)

#: CF (UDUNITS) units → what a reader expects to see.  Degree-days are a
#: temperature difference times time: 1 K d = 1 °C·day.
_UNITS = {"K d": "°C·day", "degC d": "°C·day", "K day": "°C·day", "days": "days", "d": "days",
          "1": "", "": "", "mm": "mm", "km": "km", "m": "m"}


def short_label(layer: str) -> str:
    """A short name of *layer* for a colour bar or legend title."""
    if layer in _NAMES:
        return _NAMES[layer]
    for prefix, words in _PREFIXES:
        if layer.startswith(prefix):
            rest = short_label(layer[len(prefix):])
            if words == "robust " and rest.startswith("change in "):
                return "robust " + rest
            return words + rest
    return _NAMES.get(layer, layer.replace("_", " "))


def display_unit(units: object) -> str:
    """The unit as people write it ("" for dimensionless); unknown units pass through."""
    if units is None:
        return ""
    text = str(units).strip()
    return _UNITS.get(text, text)


def label_with_unit(layer: str, attrs: Mapping | None = None) -> str:
    """``short label (unit)``, or the short label alone for dimensionless layers."""
    unit = display_unit((attrs or {}).get("units"))
    if "day" in layer and unit == "days" and layer.endswith("_day"):
        unit = "day of season"
    label = short_label(layer)
    return f"{label} ({unit})" if unit else label

"""A development-rate curve named in a profile: ``[development.rate_curve]`` or a stage's
``rate_curve`` table (a model of :mod:`suitmap.kernels.rates` and its parameters)."""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

from suitmap.errors import ProfileError


@dataclass(frozen=True)
class RateCurve:
    """A nonlinear development-rate model and its parameters (glossary names)."""

    model: str
    params: tuple[tuple[str, float], ...]

    def as_dict(self) -> dict[str, float]:
        return dict(self.params)

    def to_dict(self) -> dict[str, Any]:
        return {"model": self.model, **self.as_dict()}


def parse_rate_curve(raw: Any, key: str, where: str) -> RateCurve:
    """Validate one rate-curve table; ``key`` names it in errors (e.g.
    ``development.rate_curve`` or ``stage[1].rate_curve``)."""
    from suitmap.kernels.rates import MODELS, validate_params

    if not isinstance(raw, dict):
        raise ProfileError(f"{where}: {key} must be a table with model = \"<curve>\" and its "
                           "parameters")
    raw = dict(raw)
    model = raw.pop("model", None)
    if model not in MODELS:
        raise ProfileError(f"{where}: {key}.model must be one of {', '.join(MODELS)}, "
                           f"got {model!r}")
    for name, value in raw.items():
        if isinstance(value, bool) or not isinstance(value, (int, float)):
            raise ProfileError(f"{where}: {key}.{name} must be a number, got {value!r:.60}")
        if not math.isfinite(value):
            raise ProfileError(f"{where}: {key}.{name} is {value}; give a finite number")
    try:
        params = validate_params(model, raw)
    except ValueError as exc:
        raise ProfileError(f"{where}: {key}: {exc}") from None
    return RateCurve(model, tuple(params.items()))

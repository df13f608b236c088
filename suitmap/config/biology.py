"""Profile tables beyond temperature: ``[moisture]``, ``[[stage]]``, ``[season] biofix``
and ``[diapause]`` (see README, "Moisture" and "Life stages").

Validated here, used by :mod:`suitmap.layers.moisture` and :mod:`suitmap.layers.stages`.
A profile without these tables gets an empty :class:`Biology` and behaves as before.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from typing import Any, Callable

from suitmap.config.rate_curve import RateCurve, parse_rate_curve
from suitmap.errors import ProfileError

_NUM = (int, float)
BIOLOGY_SCHEMA: dict[str, dict[str, tuple[tuple[type, ...], bool]]] = {
    "moisture": {
        "min_annual_precipitation": (_NUM, False),
        "max_annual_precipitation": (_NUM, False),
        "max_dry_months": (_NUM, False),
        "min_aridity_index": (_NUM, False),
        "max_aridity_index": (_NUM, False),
    },
    "diapause": {"critical_daylength": (_NUM, True), "sensitive_stage": ((str,), True)},
    "uncertainty": {"parameters": ((list,), True), "covariance": ((list,), True)},
    "tested_range": {"min_temperature": (_NUM, True), "max_temperature": (_NUM, True)},
}
UNCERTAIN_PARAMETERS = ("lower_threshold", "upper_threshold", "degree_days_per_generation")
CURVE_PREFIX = "rate_curve."   # uncertainty.parameters names a curve parameter as rate_curve.<name>
_STAGE_KEYS = ("name", "lower_threshold", "upper_threshold", "degree_days", "rate_curve")
_STAGE_NAME = re.compile(r"^[a-z][a-z0-9_]{0,30}$")
_MMDD = re.compile(r"^(\d{2})-(\d{2})$")
_DAYS_IN_MONTH = (31, 29, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31)


@dataclass(frozen=True)
class Moisture:
    """Moisture limits (mm, months, dimensionless); None = not limited on that side."""

    min_annual_precipitation: float | None = None
    max_annual_precipitation: float | None = None
    max_dry_months: float | None = None
    min_aridity_index: float | None = None
    max_aridity_index: float | None = None

    @property
    def uses_aridity(self) -> bool:
        return self.min_aridity_index is not None or self.max_aridity_index is not None


@dataclass(frozen=True)
class Stage:
    """One life stage: its thresholds (°C) and degree-days (°C·day), or its own
    development-rate curve (then ``degree_days`` is None and the thresholds are not used:
    the stage completes when its summed daily development reaches 1)."""

    name: str
    lower_threshold: float
    upper_threshold: float
    degree_days: float | None
    rate_curve: RateCurve | None = None

    def to_dict(self) -> dict[str, Any]:
        if self.rate_curve is None:   # as before rate-curve stages existed (same hash)
            return {"name": self.name, "lower_threshold": self.lower_threshold,
                    "upper_threshold": self.upper_threshold, "degree_days": self.degree_days}
        return {"name": self.name, "rate_curve": self.rate_curve.to_dict()}


@dataclass(frozen=True)
class Diapause:
    critical_daylength: float      # hours
    sensitive_stage: str


@dataclass(frozen=True)
class BiofixRule:
    """The biofix is the first day, on or after ``after``, that begins ``days`` consecutive
    days with Tmax at or above ``tmax_at_least`` (°C)."""

    after: tuple[int, int]
    tmax_at_least: float
    days: int

    def text(self) -> str:
        return (f"first day from {self.after[0]:02d}-{self.after[1]:02d} beginning {self.days} "
                f"days with Tmax >= {self.tmax_at_least:g} °C")


@dataclass(frozen=True)
class Uncertainty:
    """Covariance of fitted parameters, for parameter draws: development keys
    (``lower_threshold`` …) or the rate curve's parameters as ``rate_curve.<name>``."""

    parameters: tuple[str, ...]
    covariance: tuple[tuple[float, ...], ...]


@dataclass(frozen=True)
class Biology:
    moisture: Moisture | None = None
    stages: tuple[Stage, ...] = ()
    biofix: "tuple[int, int] | BiofixRule | None" = None      # (month, day) or a rule
    diapause: Diapause | None = None
    uncertainty: Uncertainty | None = None
    tested_range: tuple[float, float] | None = None   # °C, the lab data's constant temperatures

    def to_dict(self) -> dict[str, Any]:
        """Only what is configured, so profiles without these tables hash as before."""
        d: dict[str, Any] = {}
        if self.moisture is not None:
            d["moisture"] = {k: v for k, v in self.moisture.__dict__.items() if v is not None}
        if self.stages:
            d["stage"] = [s.to_dict() for s in self.stages]
        if isinstance(self.biofix, BiofixRule):
            d["biofix"] = {"after": f"{self.biofix.after[0]:02d}-{self.biofix.after[1]:02d}",
                           "tmax_at_least": self.biofix.tmax_at_least, "days": self.biofix.days}
        elif self.biofix is not None:
            d["biofix"] = f"{self.biofix[0]:02d}-{self.biofix[1]:02d}"
        if self.diapause is not None:
            d["diapause"] = dict(self.diapause.__dict__)
        if self.tested_range is not None:
            d["tested_range"] = list(self.tested_range)
        if self.uncertainty is not None:
            d["uncertainty"] = {"parameters": list(self.uncertainty.parameters),
                                "covariance": [list(r) for r in self.uncertainty.covariance]}
        return d


def _moisture(section: dict, where: str) -> Moisture | None:
    if not section:
        return None
    m = Moisture(**{k: float(v) for k, v in section.items()})
    for key, value in section.items():
        if value < 0:
            raise ProfileError(f"{where}: moisture.{key} must not be negative, got {value}")
    if m.max_dry_months is not None and m.max_dry_months > 12:
        raise ProfileError(f"{where}: moisture.max_dry_months must be 0-12, got {m.max_dry_months}")
    for lo, hi in (("min_annual_precipitation", "max_annual_precipitation"),
                   ("min_aridity_index", "max_aridity_index")):
        a, b = getattr(m, lo), getattr(m, hi)
        if a is not None and b is not None and not a < b:
            raise ProfileError(f"{where}: moisture.{lo} ({a}) must be below moisture.{hi} ({b})")
    return m


def _stages(raw: Any, lower: float, upper: float, where: str) -> tuple[Stage, ...]:
    if raw is None:
        return ()
    if not isinstance(raw, list) or not raw or not all(isinstance(t, dict) for t in raw):
        raise ProfileError(f"{where}: [[stage]] must be one or more tables, in life-cycle order")
    out = []
    for i, t in enumerate(raw):
        key = f"stage[{i}]"
        for k, v in t.items():
            if k not in _STAGE_KEYS:
                raise ProfileError(f"{where}: unknown key {key}.{k}; allowed keys are "
                                   f"{', '.join(_STAGE_KEYS)}")
            if k not in ("name", "rate_curve") and (isinstance(v, bool) or not isinstance(v, _NUM)):
                raise ProfileError(f"{where}: {key}.{k} must be a number, got {v!r}")
        name = t.get("name")
        if not isinstance(name, str) or not _STAGE_NAME.match(name):
            raise ProfileError(f"{where}: {key}.name must be a short lower-case name "
                               f"(letters, digits, '_'), got {name!r}")
        if "rate_curve" in t:
            extra = [k for k in ("degree_days", "lower_threshold", "upper_threshold") if k in t]
            if extra:
                raise ProfileError(f"{where}: {key} has a rate_curve, so {key}.{extra[0]} is not "
                                   "used; give a stage either degree_days (with optional "
                                   "thresholds) or a rate_curve")
            curve = parse_rate_curve(t["rate_curve"], f"{key}.rate_curve", where)
            out.append(Stage(name, lower, upper, None, curve))
            continue
        if "degree_days" not in t:
            raise ProfileError(f"{where}: missing required key {key}.degree_days (or give the "
                               f"stage its own {key}.rate_curve)")
        lo = float(t.get("lower_threshold", lower))
        hi = float(t.get("upper_threshold", upper))
        dd = float(t["degree_days"])
        if not lo < hi:
            raise ProfileError(f"{where}: {key} lower_threshold ({lo}) must be below its "
                               f"upper_threshold ({hi})")
        if not dd > 0:
            raise ProfileError(f"{where}: {key}.degree_days must be positive, got {dd}")
        out.append(Stage(name, lo, hi, dd))
    names = [s.name for s in out]
    if len(set(names)) != len(names):
        raise ProfileError(f"{where}: stage names must be unique; got {', '.join(names)}")
    return tuple(out)


def _date(value: Any, key: str, where: str) -> tuple[int, int]:
    m = _MMDD.match(value) if isinstance(value, str) else None
    if not m or not (1 <= int(m.group(1)) <= 12) or not (
            1 <= int(m.group(2)) <= _DAYS_IN_MONTH[int(m.group(1)) - 1]) or value == "02-29":
        raise ProfileError(f"{where}: {key} must be a fixed date as MM-DD (not 02-29), "
                           f"got {value!r}")
    return int(m.group(1)), int(m.group(2))


def _biofix(value: Any, where: str) -> "tuple[int, int] | BiofixRule | None":
    if value is None:
        return None
    if not isinstance(value, dict):
        return _date(value, "season.biofix", where)
    keys = ("after", "tmax_at_least", "days")
    if set(value) != set(keys):
        raise ProfileError(f"{where}: season.biofix as a rule needs exactly the keys "
                           f"{', '.join(keys)}, e.g. {{ after = \"03-01\", tmax_at_least = 12.0, "
                           "days = 3 }")
    x, n = value["tmax_at_least"], value["days"]
    if isinstance(x, bool) or not isinstance(x, _NUM) or not -30 <= x <= 50:
        raise ProfileError(f"{where}: season.biofix.tmax_at_least must be a temperature in °C, "
                           f"got {x!r}")
    if isinstance(n, bool) or not isinstance(n, int) or not 1 <= n <= 60:
        raise ProfileError(f"{where}: season.biofix.days must be a whole number of days 1-60, "
                           f"got {n!r}")
    return BiofixRule(_date(value["after"], "season.biofix.after", where), float(x), n)


def parse_biology(raw: dict, stage_raw: Any, biofix: str | None, development, where: str,
                  check_table: Callable[[dict, str, str], dict]) -> Biology:
    """Validate the biology tables of a profile dict (``check_table``: the profile's key check)."""
    moisture = _moisture(check_table(raw, "moisture", where), where) if "moisture" in raw else None
    stages = _stages(stage_raw, development.lower_threshold, development.upper_threshold, where)
    diapause = None
    if "diapause" in raw:
        d = check_table(raw, "diapause", where)
        hours = float(d["critical_daylength"])
        if not 0 < hours < 24:
            raise ProfileError(f"{where}: diapause.critical_daylength must be between 0 and 24 "
                               f"hours, got {hours}")
        if d["sensitive_stage"] not in [s.name for s in stages]:
            raise ProfileError(f"{where}: diapause.sensitive_stage {d['sensitive_stage']!r} is not "
                               "one of the [[stage]] names; name the stage that senses day length")
        diapause = Diapause(hours, d["sensitive_stage"])
    uncertainty = (_uncertainty(check_table(raw, "uncertainty", where), development, stages, where)
                   if "uncertainty" in raw else None)
    fix = _biofix(biofix, where)
    if fix is not None and not stages:
        raise ProfileError(f"{where}: season.biofix is used by [[stage]] tables; add the stages "
                           "or remove the biofix")
    tested = None
    if "tested_range" in raw:
        t = check_table(raw, "tested_range", where)
        tested = (float(t["min_temperature"]), float(t["max_temperature"]))
        if not tested[0] < tested[1]:
            raise ProfileError(f"{where}: tested_range.min_temperature ({tested[0]}) must be below "
                               f"tested_range.max_temperature ({tested[1]})")
    return Biology(moisture, stages, fix, diapause, uncertainty, tested)


def _uncertainty(section: dict, development, stages, where: str) -> Uncertainty:
    import numpy as np

    names = section["parameters"]
    curve = development.rate_curve
    allowed = UNCERTAIN_PARAMETERS + tuple(
        f"{CURVE_PREFIX}{p}" for p in (curve.as_dict() if curve is not None else ()))
    if (not names or not all(isinstance(n, str) for n in names) or len(set(names)) != len(names)
            or any(n not in allowed for n in names)):
        raise ProfileError(f"{where}: uncertainty.parameters must list distinct parameters from "
                           f"{', '.join(allowed)}, got {names!r}")
    if "degree_days_per_generation" in names and development.degree_days_per_generation is None:
        raise ProfileError(f"{where}: uncertainty names degree_days_per_generation, which the "
                           "profile does not set")
    # the draws feed the generation and suitability layers; refuse draws that cannot move them
    if stages:
        raise ProfileError(f"{where}: [uncertainty] with [[stage]] tables: generations come from "
                           "the stages, whose parameters are not drawn; remove one of the two")
    if curve is not None and not any(n.startswith(CURVE_PREFIX) for n in names):
        raise ProfileError(f"{where}: with [development.rate_curve], generations come from the "
                           "curve, so draws of " + ", ".join(names) + " would not change them; "
                           f"name the curve's parameters in uncertainty.parameters "
                           f"({', '.join(a for a in allowed if a.startswith(CURVE_PREFIX))})")
    cov = section["covariance"]
    k = len(names)
    if (not isinstance(cov, list) or len(cov) != k or not all(
            isinstance(r, list) and len(r) == k and all(
                isinstance(v, (int, float)) and not isinstance(v, bool) for v in r) for r in cov)):
        raise ProfileError(f"{where}: uncertainty.covariance must be a {k} x {k} table of numbers "
                           "(one row per parameter)")
    c = np.array(cov, dtype=float)
    if not np.allclose(c, c.T, rtol=1e-9, atol=1e-12) or np.linalg.eigvalsh(c).min() < -1e-9 * max(
            1.0, float(np.abs(c).max())):
        raise ProfileError(f"{where}: uncertainty.covariance must be symmetric and positive "
                           "semi-definite")
    return Uncertainty(tuple(names), tuple(tuple(float(v) for v in r) for r in cov))

"""Organism profiles: the published thermal parameters of one organism.

A profile is a TOML file with the tables ``[organism]``, ``[development]``,
``[survival]`` and an optional ``[season]`` (see README, "Organism profile").
This module validates it completely -- unknown keys, wrong types, impossible
values -- and returns a frozen :class:`Profile`.  It does no I/O beyond
reading the file.
"""

from __future__ import annotations

import math
import re
from dataclasses import asdict, dataclass, field, replace
from pathlib import Path
from typing import Any

from suitmap.config.biology import BIOLOGY_SCHEMA, Biology, parse_biology
from suitmap.config.rate_curve import RateCurve, parse_rate_curve
from suitmap.config.toml_file import read_toml
from suitmap.errors import ProfileError
from suitmap.kernels.degree_days import CUTOFFS, METHODS

ROLES = ("pest", "beneficial", "pollinator", "crop", "other")
DIURNAL = ("sine", "parton_logan")
_MMDD = re.compile(r"^(\d{2})-(\d{2})$")


@dataclass(frozen=True)
class Organism:
    name: str
    role: str = "pest"
    source: str = ""


@dataclass(frozen=True)
class Development:
    lower_threshold: float
    upper_threshold: float
    degree_days_per_generation: float | None
    method: str = "single_sine"
    cutoff: str = "horizontal"
    rate_curve: RateCurve | None = None
    diurnal: str = "sine"


@dataclass(frozen=True)
class Survival:
    lethal_cold: float | None = None
    lethal_heat: float | None = None


@dataclass(frozen=True)
class Season:
    """Season window as (month, day) pairs; ``None`` means the hemisphere default."""

    start: tuple[int, int] | None = None
    end: tuple[int, int] | None = None

    @property
    def is_default(self) -> bool:
        return self.start is None


@dataclass(frozen=True)
class Suitability:
    saturating_generations: float = 2.0


@dataclass(frozen=True)
class Profile:
    organism: Organism
    development: Development
    survival: Survival = field(default_factory=Survival)
    season: Season = field(default_factory=Season)
    suitability: Suitability = field(default_factory=Suitability)
    path: str = ""
    biology: Biology = field(default_factory=Biology)   # [moisture], [[stage]], biofix, [diapause]

    def to_dict(self) -> dict[str, Any]:
        """Plain dict of the profile (for provenance metadata)."""
        d = asdict(self)
        d.pop("path")
        d.pop("biology")
        d.update(self.biology.to_dict())   # nothing added when the tables are absent
        s = d["season"]
        for k in ("start", "end"):
            s[k] = None if s[k] is None else f"{s[k][0]:02d}-{s[k][1]:02d}"
        rc = self.development.rate_curve
        d["development"]["rate_curve"] = (None if rc is None
                                          else {"model": rc.model, **rc.as_dict()})
        return d


# key -> (types, required)
_SCHEMA: dict[str, dict[str, tuple[tuple[type, ...], bool]]] = {
    **BIOLOGY_SCHEMA,
    "organism": {"name": ((str,), True), "role": ((str,), False), "source": ((str,), False)},
    "development": {
        "lower_threshold": ((int, float), True),
        "upper_threshold": ((int, float), True),
        "degree_days_per_generation": ((int, float), False),
        "method": ((str,), False),
        "cutoff": ((str,), False),
        "diurnal": ((str,), False),
        "rate_curve": ((dict,), False),
    },
    "survival": {"lethal_cold": ((int, float), False), "lethal_heat": ((int, float), False)},
    "season": {"start": ((str,), False), "end": ((str,), False), "biofix": ((str, dict), False)},
    "suitability": {"saturating_generations": ((int, float), False)},
}
_REQUIRED_TABLES = ("organism", "development")


def _check_table(raw: dict, table: str, where: str) -> dict:
    section = raw.get(table, {})
    if not isinstance(section, dict):
        raise ProfileError(f"{where}: [{table}] must be a table")
    schema = _SCHEMA[table]
    for key, value in section.items():
        if key not in schema:
            allowed = ", ".join(schema)
            raise ProfileError(f"{where}: unknown key {table}.{key}; allowed keys are {allowed}")
        types, _ = schema[key]
        if isinstance(value, bool) or not isinstance(value, types):
            kind = "a number" if float in types else "a string"
            raise ProfileError(f"{where}: {table}.{key} must be {kind}, got {value!r:.60}")
        _check_range(f"{table}.{key}", value, where)
    for key, (_, required) in schema.items():
        if required and key not in section:
            raise ProfileError(f"{where}: missing required key {table}.{key}")
    return section


#: Bounds of numeric keys (inclusive) and the longest string a key may hold.
_RANGES = {"development.lower_threshold": (-60.0, 60.0), "development.upper_threshold": (-60.0, 70.0),
           "development.degree_days_per_generation": (0.0, 100_000.0),
           "survival.lethal_cold": (-100.0, 60.0), "survival.lethal_heat": (-60.0, 100.0),
           "suitability.saturating_generations": (0.0, 1000.0)}
_MAX_CHARS = {"organism.name": 200, "organism.source": 2000}
_MAX_CHARS_OTHER = 100


def _check_range(key: str, value, where: str) -> None:
    """Numbers finite and inside their bounds; strings of bounded length (every key)."""
    if isinstance(value, str):
        limit = _MAX_CHARS.get(key, _MAX_CHARS_OTHER)
        if len(value) > limit:
            raise ProfileError(f"{where}: {key} is {len(value)} characters long; "
                               f"give at most {limit}")
        return
    if not isinstance(value, (int, float)):
        return
    if not math.isfinite(value):
        raise ProfileError(f"{where}: {key} is {value}; give a finite number")
    lo, hi = _RANGES.get(key, (-math.inf, math.inf))  # rate-curve parameters: validate_params
    if not lo <= value <= hi:
        raise ProfileError(f"{where}: {key} = {value:g} is outside the plausible {lo:g} to {hi:g}; "
                           "check the value and its units")


def _parse_mmdd(value: str, key: str, where: str) -> tuple[int, int]:
    if value == "biofix":
        raise ProfileError(
            f"{where}: season.{key} = 'biofix' is not supported yet; give a date as MM-DD"
        )
    m = _MMDD.match(value)
    if not m:
        raise ProfileError(f"{where}: season.{key} must be a date as MM-DD, got {value!r}")
    month, day = int(m.group(1)), int(m.group(2))
    if not (1 <= month <= 12 and 1 <= day <= 31):
        raise ProfileError(f"{where}: season.{key} = {value!r} is not a valid month and day")
    if day > (29 if month == 2 else 30 if month in (4, 6, 9, 11) else 31):
        raise ProfileError(f"{where}: season.{key} = {value!r} does not exist in any year")
    return month, day


def _rate_curve(raw: dict | None, where: str) -> RateCurve | None:
    return None if raw is None else parse_rate_curve(raw, "development.rate_curve", where)


def profile_from_dict(raw: dict[str, Any], where: str = "profile") -> Profile:
    """Validate a profile given as a dict (as read from TOML)."""
    raw = dict(raw)
    stage_raw = raw.pop("stage", None)
    for table in raw:
        if table not in _SCHEMA:
            raise ProfileError(
                f"{where}: unknown table [{table}]; allowed tables are {', '.join(_SCHEMA)}"
            )
    for table in _REQUIRED_TABLES:
        if table not in raw:
            raise ProfileError(f"{where}: missing table [{table}]")
    org = _check_table(raw, "organism", where)
    dev = _check_table(raw, "development", where)
    surv = _check_table(raw, "survival", where)
    seas = _check_table(raw, "season", where)
    suit = _check_table(raw, "suitability", where)

    role = org.get("role", "pest")
    if role not in ROLES:
        raise ProfileError(f"{where}: organism.role must be one of {', '.join(ROLES)}, got {role!r}")
    organism = Organism(name=org["name"], role=role, source=org.get("source", ""))

    method = dev.get("method", "single_sine")
    if method not in METHODS:
        raise ProfileError(
            f"{where}: development.method must be one of {', '.join(METHODS)}, got {method!r}"
        )
    cutoff = dev.get("cutoff", "horizontal")
    if cutoff not in CUTOFFS:
        raise ProfileError(
            f"{where}: development.cutoff must be one of {', '.join(CUTOFFS)}, got {cutoff!r}"
        )
    lower = float(dev["lower_threshold"])
    upper = float(dev["upper_threshold"])
    if not lower < upper:
        raise ProfileError(
            f"{where}: development.lower_threshold ({lower}) must be below "
            f"development.upper_threshold ({upper})"
        )
    rate_curve = _rate_curve(dev.get("rate_curve"), where)
    if "degree_days_per_generation" in dev:
        ddg = float(dev["degree_days_per_generation"])
        if not ddg > 0:
            raise ProfileError(
                f"{where}: development.degree_days_per_generation must be positive, got {ddg}"
            )
    elif rate_curve is None:
        raise ProfileError(f"{where}: missing required key development.degree_days_per_generation "
                           "(or give a [development.rate_curve])")
    else:
        ddg = None
    diurnal = dev.get("diurnal", "sine")
    if diurnal not in DIURNAL:
        raise ProfileError(
            f"{where}: development.diurnal must be one of {', '.join(DIURNAL)}, got {diurnal!r}"
        )
    development = Development(lower, upper, ddg, method, cutoff, rate_curve, diurnal)

    cold = surv.get("lethal_cold")
    heat = surv.get("lethal_heat")
    cold = None if cold is None else float(cold)
    heat = None if heat is None else float(heat)
    if cold is not None and cold >= lower:
        raise ProfileError(
            f"{where}: survival.lethal_cold ({cold}) must be below development.lower_threshold ({lower})"
        )
    if heat is not None and heat <= upper:
        raise ProfileError(
            f"{where}: survival.lethal_heat ({heat}) must be above development.upper_threshold ({upper})"
        )
    survival = Survival(cold, heat)

    if ("start" in seas) != ("end" in seas):
        raise ProfileError(f"{where}: give both season.start and season.end, or neither")
    if "start" in seas:
        start = _parse_mmdd(seas["start"], "start", where)
        end = _parse_mmdd(seas["end"], "end", where)
        season = Season(start, end)
    else:
        season = Season()

    sat = float(suit.get("saturating_generations", 2.0))
    if not sat > 0:
        raise ProfileError(f"{where}: suitability.saturating_generations must be positive, got {sat}")

    biology = parse_biology(raw, stage_raw, seas.get("biofix"), development, where, _check_table)
    return Profile(organism, development, survival, season, Suitability(sat), path=str(where),
                   biology=biology)


def load_profile(path: str | Path) -> Profile:
    """Read and validate an organism profile TOML file.

    Raises
    ------
    ProfileError
        With a one-line message naming the file and the offending key.
    """
    path = Path(path)
    raw = read_toml(path, ProfileError, "profile")
    prof = profile_from_dict(raw, where=f"profile {path}")
    return replace(prof, path=str(path))

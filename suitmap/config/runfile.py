"""Run files: which climate, which organism, which outputs.

A run file is TOML (see README, "Run file").  Relative paths resolve against
the run file's folder.  Validation is complete and every error names the key.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from suitmap.config.geography import Geography, geography_from_dict
from suitmap.config.toml_file import read_toml
from suitmap.errors import RunFileError

FORMATS = ("geotiff", "netcdf", "png")
_NAME = re.compile(r"^[A-Za-z0-9][A-Za-z0-9_.\-]{0,63}$")  # a folder name part: at most 64 characters


@dataclass(frozen=True)
class ClimateSource:
    """One variable of one period: file patterns and an optional variable name."""

    patterns: tuple[str, ...]
    variable: str | None = None


@dataclass(frozen=True)
class Period:
    name: str
    years: tuple[int, int]
    tmin: ClimateSource
    tmax: ClimateSource
    kind: str = "scenario"  # "baseline" or "scenario"
    model: str | None = None      # climate model, for ensembles
    pathway: str | None = None    # emissions pathway, for ensembles
    period: str | None = None     # period label (e.g. "mid-century"), for ensembles
    delta: "DeltaChange | None" = None  # delta-change downscaling onto the baseline
    reference: str | None = None  # period its change is measured against (None: the baseline)
    change_against: str | None = None  # "model_historical"/"observations" when a set chose it
    pr: ClimateSource | None = None     # precipitation (daily or monthly), for [moisture]
    tmin_offset: tuple[float, ...] | None = None   # what-if: °C added, 1 value or 12 monthly
    tmax_offset: tuple[float, ...] | None = None


@dataclass(frozen=True)
class DeltaChange:
    """Use a model's change (future minus its own historical run), not its daily values."""

    historical_tmin: ClimateSource
    historical_tmax: ClimateSource
    historical_years: tuple[int, int]
    smoothing: str = "doy"        # "doy" (smoothed day-of-year) or "monthly"
    window_days: int = 31
    historical_pr: ClimateSource | None = None   # the model's historical precipitation


@dataclass(frozen=True)
class Mismatch:
    """Two organisms out of step: event of a second profile minus an event of the run's own."""

    profile_path: Path
    event: str = "first_generation_day"            # a layer of the second profile
    reference_event: str = "first_generation_day"  # a layer of the run's profile


@dataclass(frozen=True)
class Output:
    dir: Path
    formats: tuple[str, ...] = FORMATS
    suitable_level: float = 0.5
    agreement_level: float = 0.8   # IPCC AR6 Atlas simple approach (comparison.robustness)


@dataclass(frozen=True)
class RunFile:
    path: Path
    profile_path: Path
    baseline: Period
    scenarios: tuple[Period, ...]
    output: Output
    chunk_cells: int | None = None
    monthly_route: str = "interpolate"
    daily_sd: float | None = None
    fast_tables: bool = True
    threads: int | None = None
    diurnal: str | None = None    # overrides the profile's development.diurnal
    accept_implausible: bool = False  # let suspicious (not impossible) temperatures pass
    mismatch: Mismatch | None = None
    parameter_draws: int | None = None    # draws of the profile's [uncertainty]
    parameter_seed: int = 0
    geography: "Geography | None" = None  # [regions], [terrain], [ranges]
    raw: dict[str, Any] = field(default_factory=dict, compare=False, repr=False)
    inventory: tuple[str, ...] = ()   # scenario sets: model × pathway × period found/missing

    @property
    def base_dir(self) -> Path:
        return self.path.parent

    @property
    def periods(self) -> tuple[Period, ...]:
        return (self.baseline, *self.scenarios)


def _keys(table: dict, allowed: tuple[str, ...], where: str, name: str) -> None:
    for key in table:
        if key not in allowed:
            raise RunFileError(
                f"{where}: unknown key {name}.{key}; allowed keys are {', '.join(allowed)}"
            )


def _resolve(base: Path, p: str) -> str:
    pp = Path(p).expanduser()
    return str(pp if pp.is_absolute() else base / pp)


def _source(value: Any, key: str, base: Path, where: str) -> ClimateSource:
    variable = None
    if isinstance(value, dict):
        _keys(value, ("files", "variable"), where, key)
        if "files" not in value:
            raise RunFileError(f"{where}: {key} needs a 'files' key (a glob or list of globs)")
        variable = value.get("variable")
        if variable is not None and not isinstance(variable, str):
            raise RunFileError(f"{where}: {key}.variable must be a string")
        value = value["files"]
    if isinstance(value, str):
        value = [value]
    if not (isinstance(value, list) and value and all(isinstance(v, str) for v in value)):
        raise RunFileError(f"{where}: {key} must be a file glob, a list of globs, or a table "
                           "{files = ..., variable = ...}")
    return ClimateSource(tuple(_resolve(base, v) for v in value), variable)


def _period(table: Any, name_key: str, base: Path, where: str, kind: str,
            default_name: str | None = None) -> Period:
    if not isinstance(table, dict):
        raise RunFileError(f"{where}: [{name_key}] must be a table")
    _keys(table, ("name", "years", "tmin", "tmax", "pr", "model", "pathway", "period", "downscale",
                  "tmin_offset", "tmax_offset"), where, name_key)
    down = table.get("downscale")
    if isinstance(down, dict) and ("pr" in table) != ("historical_pr" in down):
        raise RunFileError(f"{where}: with downscale, give both {name_key}.pr (the model's future "
                           f"precipitation) and {name_key}.downscale.historical_pr (its historical "
                           "run), or neither")
    for key in ("model", "pathway", "period"):
        if key in table and not (isinstance(table[key], str) and _NAME.match(table[key])):
            raise RunFileError(f"{where}: {name_key}.{key} must be a short name (at most 64 letters, digits, '-', '_', '.'), got {table[key]!r:.80}")
    name = table.get("name", default_name)
    if not isinstance(name, str) or not _NAME.match(name):
        raise RunFileError(
            f"{where}: {name_key}.name must be a short name of at most 64 letters, digits, '-', '_' "
            f"or '.', got {name!r:.80}"
        )
    years = table.get("years")
    if (not isinstance(years, list) or len(years) != 2
            or not all(isinstance(y, int) and not isinstance(y, bool) for y in years)):
        raise RunFileError(f"{where}: {name_key}.years must be [first, last], e.g. [1991, 2020]")
    if years[0] > years[1]:
        raise RunFileError(f"{where}: {name_key}.years first year {years[0]} is after last {years[1]}")
    if not 1 <= years[0] <= years[1] <= 9999:
        raise RunFileError(f"{where}: {name_key}.years must lie within 1 to 9999, got {years}")
    for var in ("tmin", "tmax"):
        if var not in table:
            raise RunFileError(f"{where}: missing key {name_key}.{var} (daily {var} files)")
    return Period(
        name=name,
        years=(years[0], years[1]),
        tmin=_source(table["tmin"], f"{name_key}.tmin", base, where),
        tmax=_source(table["tmax"], f"{name_key}.tmax", base, where),
        kind=kind,
        model=table.get("model"),
        pathway=table.get("pathway"),
        period=table.get("period"),
        delta=_delta(table.get("downscale"), f"{name_key}.downscale", base, where),
        pr=_source(table["pr"], f"{name_key}.pr", base, where) if "pr" in table else None,
        tmin_offset=_offset(table.get("tmin_offset"), f"{name_key}.tmin_offset", where),
        tmax_offset=_offset(table.get("tmax_offset"), f"{name_key}.tmax_offset", where),
    )


def _offset(value: Any, key: str, where: str) -> tuple[float, ...] | None:
    """A what-if temperature change: one number (°C) or twelve, January to December."""
    if value is None:
        return None
    values = value if isinstance(value, list) else [value]
    if (len(values) not in (1, 12) or not all(
            isinstance(v, (int, float)) and not isinstance(v, bool) for v in values)):
        raise RunFileError(f"{where}: {key} must be a number of °C or a list of 12 monthly values")
    if any(abs(v) > 20 for v in values):
        raise RunFileError(f"{where}: {key} beyond ±20 °C is not a plausible what-if change")
    return tuple(float(v) for v in values)


def _delta(raw: Any, key: str, base: Path, where: str) -> DeltaChange | None:
    if raw is None:
        return None
    if not isinstance(raw, dict):
        raise RunFileError(f"{where}: {key} must be a table, e.g. {{ method = \"delta\", ... }}")
    _keys(raw, ("method", "historical_tmin", "historical_tmax", "historical_years", "smoothing",
                "window_days", "historical_pr"), where, key)
    if raw.get("method", "delta") != "delta":
        raise RunFileError(f"{where}: {key}.method must be \"delta\" (the only method so far)")
    for k in ("historical_tmin", "historical_tmax", "historical_years"):
        if k not in raw:
            raise RunFileError(f"{where}: {key} needs {k} (the model's own historical run)")
    years = raw["historical_years"]
    if (not isinstance(years, list) or len(years) != 2 or not all(
            isinstance(y, int) and not isinstance(y, bool) for y in years) or years[0] > years[1]):
        raise RunFileError(f"{where}: {key}.historical_years must be [first, last]")
    smoothing = raw.get("smoothing", "doy")
    if smoothing not in ("doy", "monthly"):
        raise RunFileError(f"{where}: {key}.smoothing must be \"doy\" or \"monthly\"")
    window = raw.get("window_days", 31)
    if isinstance(window, bool) or not isinstance(window, int) or window < 1 or window % 2 == 0:
        raise RunFileError(f"{where}: {key}.window_days must be an odd whole number of days")
    return DeltaChange(_source(raw["historical_tmin"], f"{key}.historical_tmin", base, where),
                       _source(raw["historical_tmax"], f"{key}.historical_tmax", base, where),
                       (years[0], years[1]), smoothing, window,
                       _source(raw["historical_pr"], f"{key}.historical_pr", base, where)
                       if "historical_pr" in raw else None)


def _scenario_sets(raw: Any, base: Path, where: str) -> tuple[list[Period], list[str]]:
    from suitmap.config.scenario_sets import expand, inventory
    from suitmap.config.set_reference import set_periods, set_reference

    if isinstance(raw, dict):
        raw = [raw]
    if not isinstance(raw, list):
        raise RunFileError(f"{where}: [[scenario_set]] must be an array of tables")
    out, lines = [], []
    for i, table in enumerate(raw):
        key = f"scenario_set[{i}]"
        if not isinstance(table, dict):
            raise RunFileError(f"{where}: {key} must be a table")
        _keys(table, ("files", "variables", "periods", "historical", "historical_pathway",
                      "change_against", "downscale"), where, key)
        files = table.get("files")
        if not isinstance(files, str):
            raise RunFileError(f"{where}: {key}.files must be a file-name template string")
        variables = table.get("variables", {"tmin": "tasmin", "tmax": "tasmax"})
        if (not isinstance(variables, dict) or not {"tmin", "tmax"} <= set(variables)
                or not set(variables) <= {"tmin", "tmax", "pr"}
                or not all(isinstance(v, str) for v in variables.values())):
            raise RunFileError(f"{where}: {key}.variables must be {{ tmin = \"...\", tmax = \"...\" }}"
                               " (and optionally pr = \"...\")")
        periods = table.get("periods")
        if not isinstance(periods, dict) or not periods:
            raise RunFileError(f"{where}: {key}.periods must name at least one period, "
                               "e.g. { mid-century = [2041, 2070] }")
        spans = {}
        for name, years in periods.items():
            if not _NAME.match(name) or not (isinstance(years, list) and len(years) == 2 and all(
                    isinstance(y, int) and not isinstance(y, bool) for y in years)) or years[0] > years[1]:
                raise RunFileError(f"{where}: {key}.periods.{name} must be [first, last] years")
            spans[name] = (years[0], years[1])
        ref = set_reference(table, spans, f"{where}: {key}", _NAME)
        found = expand(_resolve(base, files), variables, spans, f"{where}: {key}",
                       ref.historical, ref.historical_pathway)
        lines += inventory(found, spans, ref.historical)
        out += set_periods(found, spans, variables, ref, ClimateSource, Period, DeltaChange)
    return out, lines


def runfile_from_dict(raw: dict[str, Any], path: Path) -> RunFile:
    """Validate a run file given as a dict; ``path`` anchors relative paths."""
    where = f"run file {path}"
    base = path.parent
    _keys(raw, ("profile", "baseline", "scenario", "scenario_set", "output", "compute", "mismatch",
                "regions", "terrain", "ranges"), where, "")
    prof = raw.get("profile")
    if isinstance(prof, dict) and isinstance(prof.get("library"), str) and "path" not in prof:
        from suitmap.config import library

        _keys(prof, ("library",), where, "profile")
        try:
            prof = {"path": str(library.path(prof["library"]))}
        except KeyError:
            raise RunFileError(f"{where}: profile.library {prof['library']!r} is not a bundled "
                               f"profile; choose from {', '.join(library.names())}") from None
    if not isinstance(prof, dict) or not isinstance(prof.get("path"), str):
        raise RunFileError(f"{where}: needs [profile] with path = \"<organism profile .toml>\" "
                           "or library = \"<bundled profile>\"")
    _keys(prof, ("path",), where, "profile")
    if "baseline" not in raw:
        raise RunFileError(f"{where}: missing table [baseline]")
    baseline = _period(raw["baseline"], "baseline", base, where, "baseline", "baseline")
    scen_raw = raw.get("scenario", [])
    if isinstance(scen_raw, dict):
        scen_raw = [scen_raw]
    if not isinstance(scen_raw, list):
        raise RunFileError(f"{where}: [[scenario]] must be an array of tables")
    set_scenarios, inventory = _scenario_sets(raw.get("scenario_set", []), base, where)
    scenarios = tuple(
        _period(s, f"scenario[{i}]", base, where, "scenario") for i, s in enumerate(scen_raw)
    ) + tuple(set_scenarios)
    with_pr = [p.name for p in (baseline, *scenarios) if p.pr is not None]
    if with_pr and len(with_pr) != 1 + len(scenarios):
        raise RunFileError(f"{where}: pr (precipitation) is given for {', '.join(with_pr)} but not "
                           "for every period; give pr files for all periods or for none")
    names = [baseline.name] + [s.name for s in scenarios]
    dupes = sorted({n for n in names if names.count(n) > 1})
    if dupes:
        raise RunFileError(f"{where}: period names must be unique; repeated: {', '.join(dupes)}")

    out = raw.get("output", {})
    if not isinstance(out, dict):
        raise RunFileError(f"{where}: [output] must be a table")
    _keys(out, ("dir", "formats", "suitable_level", "agreement_level"), where, "output")
    out_dir = out.get("dir", "results")
    if not isinstance(out_dir, str) or not out_dir or len(out_dir) > 1024 or "\0" in out_dir:
        raise RunFileError(f"{where}: output.dir must be a folder name")
    formats = out.get("formats", list(FORMATS))
    if not isinstance(formats, list) or not all(isinstance(f, str) for f in formats):
        raise RunFileError(f"{where}: output.formats must be a list, e.g. [\"geotiff\", \"netcdf\"]")
    if not formats:
        raise RunFileError(f"{where}: output.formats is empty, so nothing would be written; "
                           f"name at least one of {', '.join(FORMATS)} (or leave the key out for all)")
    for f in formats:
        if f not in FORMATS:
            raise RunFileError(
                f"{where}: output.formats has unknown format {f!r}; choose from {', '.join(FORMATS)}"
            )
    level = out.get("suitable_level", 0.5)
    if isinstance(level, bool) or not isinstance(level, (int, float)) or not 0 < level <= 1:
        raise RunFileError(f"{where}: output.suitable_level must be a number in (0, 1]")
    agree = out.get("agreement_level", 0.8)
    if isinstance(agree, bool) or not isinstance(agree, (int, float)) or not 0.5 < agree <= 1:
        raise RunFileError(f"{where}: output.agreement_level must be a number above 0.5 and at "
                           "most 1 (default 0.8, the IPCC AR6 Atlas level)")
    output = Output(Path(_resolve(base, out_dir)), tuple(dict.fromkeys(formats)), float(level),
                    float(agree))

    compute = raw.get("compute", {})
    if not isinstance(compute, dict):
        raise RunFileError(f"{where}: [compute] must be a table")
    _keys(compute, ("chunk_cells", "monthly_route", "daily_sd", "fast_tables", "threads",
                    "diurnal", "accept_implausible", "parameter_draws", "parameter_seed"), where,
                   "compute")
    accept = compute.get("accept_implausible", False)
    if not isinstance(accept, bool):
        raise RunFileError(f"{where}: compute.accept_implausible must be true or false")
    draws, seed = compute.get("parameter_draws"), compute.get("parameter_seed", 0)
    for key, v, lo in (("parameter_draws", draws, 2), ("parameter_seed", seed, 0)):
        if v is not None and (isinstance(v, bool) or not isinstance(v, int) or v < lo):
            raise RunFileError(f"{where}: compute.{key} must be a whole number of at least {lo}")
    fast = compute.get("fast_tables", True)
    if not isinstance(fast, bool):
        raise RunFileError(f"{where}: compute.fast_tables must be true or false")
    route = compute.get("monthly_route", "interpolate")
    if route not in ("interpolate", "normal"):
        raise RunFileError(f"{where}: compute.monthly_route must be \"interpolate\" or \"normal\"")
    sd = compute.get("daily_sd")
    if sd is not None and (isinstance(sd, bool) or not isinstance(sd, (int, float))
                           or not 0 <= sd <= 30):
        raise RunFileError(f"{where}: compute.daily_sd must be a finite number from 0 to 30 (°C), "
                           f"got {sd!r}")
    chunk = compute.get("chunk_cells")
    if chunk is not None and (isinstance(chunk, bool) or not isinstance(chunk, int) or chunk < 1):
        raise RunFileError(f"{where}: compute.chunk_cells must be a positive whole number")
    diurnal = compute.get("diurnal")
    if diurnal is not None and diurnal not in ("sine", "parton_logan"):
        raise RunFileError(f"{where}: compute.diurnal must be \"sine\" or \"parton_logan\", "
                           f"got {diurnal!r}")
    threads = compute.get("threads")
    if threads is not None and (isinstance(threads, bool) or not isinstance(threads, int)
                                or threads < 1):
        raise RunFileError(f"{where}: compute.threads must be a positive whole number")

    return RunFile(path=path, profile_path=Path(_resolve(base, prof["path"])), baseline=baseline,
                   scenarios=scenarios, output=output, chunk_cells=chunk, monthly_route=route,
                   daily_sd=None if sd is None else float(sd), fast_tables=fast,
                   threads=threads, diurnal=diurnal, accept_implausible=accept, raw=raw,
                   inventory=tuple(inventory),
                   mismatch=_mismatch(raw.get("mismatch"), base, where),
                   parameter_draws=draws, parameter_seed=seed,
                   geography=geography_from_dict(raw, base, where))


_EVENT = re.compile(r"^first_[a-z][a-z0-9_]*_day$")


def _mismatch(raw: Any, base: Path, where: str) -> Mismatch | None:
    if raw is None:
        return None
    if not isinstance(raw, dict):
        raise RunFileError(f"{where}: [mismatch] must be a table")
    _keys(raw, ("profile", "event", "reference_event"), where, "mismatch")
    if not isinstance(raw.get("profile"), str):
        raise RunFileError(f"{where}: mismatch.profile must name the second organism's profile .toml")
    for key in ("event", "reference_event"):
        value = raw.get(key, "first_generation_day")
        if not isinstance(value, str) or not _EVENT.match(value):
            raise RunFileError(f"{where}: mismatch.{key} must be an event layer, "
                               f"first_generation_day or first_<stage>_day, got {value!r}")
    return Mismatch(Path(_resolve(base, raw["profile"])), raw.get("event", "first_generation_day"),
                    raw.get("reference_event", "first_generation_day"))


def load_run(path: str | Path) -> RunFile:
    """Read and validate a run file.

    Raises
    ------
    RunFileError
        With a one-line message naming the file and the offending key.
    """
    path = Path(path).expanduser().resolve()
    raw = read_toml(path, RunFileError, "run file")
    return runfile_from_dict(raw, path)

"""Expand ``[[scenario_set]]`` tables of a run file into scenarios.

A scenario set names many files with one template::

    [[scenario_set]]
    files = "cmip/{model}_{pathway}_{variable}_{*}.nc"
    variables = { tmin = "tasmin", tmax = "tasmax" }     # what {variable} stands for
    periods = { mid-century = [2041, 2070], end-century = [2071, 2100] }

Fields: ``{model}``, ``{pathway}`` and ``{variable}`` are required;
``{period}`` is optional (then only files whose ``{period}`` text is a key
of ``periods`` serve that period); ``{*}`` matches anything and is ignored.
Every (model, pathway, period) found becomes a scenario named
``<model>_<pathway>_<period>``.

Without ``{period}``, a file whose name ends in a date range, CMIP style
(``..._<start>-<end>.nc`` with ``YYYYMMDD``, ``YYYYMM`` or ``YYYY`` dates, e.g.
``tasmin_day_<model>_<experiment>_<member>_20410101-20451231.nc``), serves
the periods whose years that range overlaps; a file without dates serves every
period.  Several files per period are fine.

With ``historical`` (a key of ``periods``), the files whose ``{pathway}`` is
``historical_pathway`` (default ``"historical"``, the CMIP experiment name)
serve that period only, as each model's own historical run, found as
``<model>_<historical>``; the other pathways serve the other periods.
:func:`inventory` lists model × pathway × period with the files and years
found and what is missing (``suitmap check`` prints it).
"""

from __future__ import annotations

import glob
import re
from collections import defaultdict
from dataclasses import dataclass
from pathlib import Path

from suitmap.errors import RunFileError

FIELDS = ("model", "pathway", "variable", "period")
_TOKEN = re.compile(r"\{(model|pathway|variable|period|\*)\}")


_SPAN = re.compile(r"_(\d{4}|\d{6}|\d{8})-(\d{4}|\d{6}|\d{8})(?:\.[A-Za-z0-9]+)*$")


@dataclass(frozen=True)
class Found:
    model: str
    pathway: str
    period: str
    tmin: tuple[str, ...]
    tmax: tuple[str, ...]
    historical: bool = False           # the model's own historical run
    years_found: tuple[int, ...] | None = None   # years of the period both variables' file names cover
    missing_years: tuple[int, ...] = ()          # years of the period no file name covers
    pr: tuple[str, ...] = ()           # precipitation files, when variables name pr


def file_span(path: str) -> tuple[int, int] | None:
    """First and last year of a file from a date range at the end of its name, or None."""
    m = _SPAN.search(Path(path).name)
    if not m or len(m.group(1)) != len(m.group(2)):
        return None
    first, last = int(m.group(1)[:4]), int(m.group(2)[:4])
    return (first, last) if first <= last else None


def _covered(paths, years: tuple[int, int]) -> set[int] | None:
    spans = [file_span(p) for p in paths]
    if any(s is None for s in spans):
        return None
    return {y for a, b in spans for y in range(max(a, years[0]), min(b, years[1]) + 1)}


def _template_regex(template: str) -> re.Pattern:
    parts, pos, seen = [], 0, set()
    for m in _TOKEN.finditer(template):
        parts.append(re.escape(template[pos:m.start()]))
        name = m.group(1)
        if name == "*":
            parts.append(r"[^/]*?")
        elif name in seen:
            parts.append(f"(?P={name})")
        else:
            parts.append(f"(?P<{name}>[^/]+?)")
            seen.add(name)
        pos = m.end()
    parts.append(re.escape(template[pos:]))
    return re.compile("^" + "".join(parts) + "$")


def expand(template: str, variables: dict[str, str], periods: dict[str, tuple[int, int]],
           where: str, historical: str | None = None,
           historical_pathway: str = "historical") -> list[Found]:
    """Files matching ``template`` grouped into (model, pathway, period) scenarios."""
    names = set(_TOKEN.findall(template))
    for required in ("model", "pathway", "variable"):
        if required not in names:
            raise RunFileError(f"{where}: scenario_set.files needs a {{{required}}} field, "
                               f"e.g. \"{{model}}_{{pathway}}_{{variable}}_{{*}}.nc\"")
    pattern = _TOKEN.sub("*", template)
    regex = _template_regex(template)
    role_of = {token: role for role, token in variables.items()}
    groups: dict[tuple[str, str, str], dict[str, list[str]]] = defaultdict(lambda: {"tmin": [], "tmax": [], "pr": []})
    for path in sorted(glob.glob(pattern)):
        m = regex.match(Path(path).as_posix())
        if not m or m.group("variable") not in role_of:
            continue
        role = role_of[m.group("variable")]
        pathway = m.group("pathway")
        if "period" in names:
            per = [m.group("period")] if m.group("period") in periods else []
        else:
            span = file_span(path)
            per = [p for p, (a, b) in periods.items() if span is None or (span[0] <= b and span[1] >= a)]
        if historical is not None:
            per = [p for p in per if (p == historical) == (pathway == historical_pathway)]
        for p in per:
            groups[(m.group("model"), pathway, p)][role].append(path)
    if not groups:
        raise RunFileError(f"{where}: no file matches scenario_set.files = '{template}' with "
                           f"variables {', '.join(variables.values())} for periods "
                           f"{', '.join(periods)}; check the template and the periods")
    out = []
    for (model, pathway, period), files in sorted(groups.items()):
        for role in ("tmin", "tmax"):
            if not files[role]:
                raise RunFileError(f"{where}: scenario set found {model} {pathway} {period} files for "
                                   f"{'tmax' if role == 'tmin' else 'tmin'} but none for {role} "
                                   f"('{variables[role]}'); add them or fix the template")
        if "pr" in variables and not files["pr"]:
            raise RunFileError(f"{where}: scenario set found {model} {pathway} {period} "
                               f"temperature files but none for pr ('{variables['pr']}'); add "
                               "them, or leave pr out of variables")
        cov = [_covered(files[r], periods[period]) for r in ("tmin", "tmax")]
        found = None if None in cov else tuple(sorted(cov[0] & cov[1]))
        first, last = periods[period]
        missing = () if found is None else tuple(y for y in range(first, last + 1) if y not in found)
        out.append(Found(model, pathway, period, tuple(files["tmin"]), tuple(files["tmax"]),
                         historical is not None and period == historical, found, missing,
                         tuple(files["pr"])))
    if historical is not None:
        with_hist = {f.model for f in out if f.historical}
        lacking = sorted({f.model for f in out if not f.historical} - with_hist)
        if lacking:
            raise RunFileError(f"{where}: model(s) {', '.join(lacking)} have no '{historical_pathway}' "
                               f"files for the historical period '{historical}'; add each model's own "
                               "historical run, or drop scenario_set.historical and set "
                               "change_against = \"observations\"")
    return out


def _years_text(years: tuple[int, ...]) -> str:
    runs, start = [], None
    for i, y in enumerate(years):
        if start is None:
            start = y
        if i + 1 == len(years) or years[i + 1] != y + 1:
            runs.append(f"{start}" if start == y else f"{start}-{y}")
            start = None
    return ", ".join(runs)


def inventory(found: list[Found], periods: dict[str, tuple[int, int]],
              historical: str | None = None) -> list[str]:
    """One line per model × pathway × period: files and years found, or what is missing."""
    models = sorted({f.model for f in found})
    by_key = {(f.model, f.pathway, f.period): f for f in found}
    hist_pathways = sorted({f.pathway for f in found if f.historical})
    pathways = sorted({f.pathway for f in found if not f.historical})
    combos = [(pw, p) for pw in pathways for p in periods if p != historical]
    combos += [(pw, historical) for pw in hist_pathways]
    lines = []
    for model in models:
        for pathway, period in combos:
            f = by_key.get((model, pathway, period))
            first, last = periods[period]
            head = f"{model} × {pathway} × {period} ({first}-{last}):"
            if f is None:
                lines.append(f"{head} MISSING: no files")
                continue
            text = f"{head} {len(f.tmin)} tmin + {len(f.tmax)} tmax files"
            if f.years_found is None:
                text += ", dates not in the file names (years checked when the files are read)"
            else:
                text += f", years {_years_text(f.years_found) or 'none'}"
                if f.missing_years:
                    text += f"; MISSING years {_years_text(f.missing_years)}"
            lines.append(text)
    return lines

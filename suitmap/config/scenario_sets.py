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


@dataclass(frozen=True)
class Found:
    model: str
    pathway: str
    period: str
    tmin: tuple[str, ...]
    tmax: tuple[str, ...]


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
           where: str) -> list[Found]:
    """Files matching ``template`` grouped into (model, pathway, period) scenarios."""
    names = set(_TOKEN.findall(template))
    for required in ("model", "pathway", "variable"):
        if required not in names:
            raise RunFileError(f"{where}: scenario_set.files needs a {{{required}}} field, "
                               f"e.g. \"{{model}}_{{pathway}}_{{variable}}_{{*}}.nc\"")
    pattern = _TOKEN.sub("*", template)
    regex = _template_regex(template)
    role_of = {token: role for role, token in variables.items()}
    groups: dict[tuple[str, str, str], dict[str, list[str]]] = defaultdict(lambda: {"tmin": [], "tmax": []})
    for path in sorted(glob.glob(pattern)):
        m = regex.match(Path(path).as_posix())
        if not m or m.group("variable") not in role_of:
            continue
        role = role_of[m.group("variable")]
        if "period" in names:
            per = [m.group("period")] if m.group("period") in periods else []
        else:
            per = list(periods)
        for p in per:
            groups[(m.group("model"), m.group("pathway"), p)][role].append(path)
    if not groups:
        raise RunFileError(f"{where}: no file matches scenario_set.files = '{template}' with "
                           f"variables {', '.join(variables.values())}; check the template")
    out = []
    for (model, pathway, period), files in sorted(groups.items()):
        for role in ("tmin", "tmax"):
            if not files[role]:
                raise RunFileError(f"{where}: scenario set found {model} {pathway} files for "
                                   f"{'tmax' if role == 'tmin' else 'tmin'} but none for {role} "
                                   f"('{variables[role]}'); add them or fix the template")
        out.append(Found(model, pathway, period, tuple(files["tmin"]), tuple(files["tmax"])))
    return out

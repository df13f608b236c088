"""Laboratory rearing data for ``suitmap fit``: the table, its reader, its groups and weights."""

from __future__ import annotations

import csv
import math
import re
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from suitmap.errors import InputError
from suitmap.kernels.rates import MODELS, PARAMS

MIN_TEMPERATURES = 4

def _needed_text() -> str:
    by_k: dict[int, list[str]] = {}
    for m in MODELS:
        by_k.setdefault(len(PARAMS[m]), []).append(m)
    return ", ".join(f"{'/'.join(ms)} {k + 1}" for k, ms in sorted(by_k.items()))


@dataclass(eq=False)
class LabData:
    """Development times at constant temperatures: one row per rearing group or per
    individual (:func:`group_by_temperature` pools rows that share a temperature).

    ``temperature`` (°C), ``days`` (mean development time, > 0), ``n`` (sample
    size, > 0, the weights of the fits; or None) and ``source`` (file path, in
    messages).  Arrays are checked on construction (InputError).
    """

    temperature: np.ndarray
    days: np.ndarray
    n: np.ndarray | None = None
    source: str = "lab data"

    def __post_init__(self) -> None:
        where = f"lab data {self.source}" if self.source != "lab data" else "lab data"
        self.temperature = np.asarray(self.temperature, dtype=float).ravel()
        self.days = np.asarray(self.days, dtype=float).ravel()
        if self.temperature.size != self.days.size:
            raise InputError(f"{where}: {self.temperature.size} temperatures but "
                             f"{self.days.size} development times; give one of each per row")
        checks = [("temperature", self.temperature, False), ("days", self.days, True)]
        if self.n is not None:
            self.n = np.asarray(self.n, dtype=float).ravel()
            if self.n.size != self.days.size:
                raise InputError(f"{where}: {self.n.size} sample sizes for {self.days.size} rows")
            checks.append(("n", self.n, True))
        for name, values, positive in checks:
            bad = ~np.isfinite(values) | ((values <= 0) if positive else False)
            if bad.any():
                i = int(np.flatnonzero(bad)[0])
                need = "a positive number" if positive else "a finite number"
                raise InputError(f"{where}: row {i + 1}, column {name}: {float(values[i]):g} "
                                 f"is not {need}; fix or remove the row")
        distinct = np.unique(self.temperature)
        if distinct.size < MIN_TEMPERATURES:
            shown = ", ".join(f"{t:g}" for t in distinct)
            raise InputError(
                f"{where}: only {distinct.size} distinct temperatures ({shown} °C); at least "
                f"{MIN_TEMPERATURES} are needed (a model with k parameters needs more than k: "
                f"{_needed_text()}); add rearing temperatures")

    @property
    def rate(self) -> np.ndarray:
        """Development rate 1/days (1/day)."""
        return 1.0 / self.days

    @property
    def distinct_temperatures(self) -> np.ndarray:
        return np.unique(self.temperature)

    def __len__(self) -> int:
        return int(self.days.size)


def group_by_temperature(data: LabData) -> LabData:
    """Pool the rows that share a temperature into one group per temperature.

    Lab files often hold one row per individual (many rows at one rearing
    temperature).  The individuals at one temperature share a chamber and a
    cohort, so they are not independent replicates of the temperature
    response; fitting every row inflates the number of observations and
    shrinks the standard errors (pseudo-replication, Hurlbert 1984).  Each
    group becomes one row:

    * development time: the mean of the rows' times, weighted by their
      sample sizes ``n`` (1 per row without an ``n`` column), i.e. the mean
      development time of all individuals at that temperature;
    * sample size: the number of individuals, ``sum(n)``;
    * the fitted development rate is the reciprocal of the group's mean
      development time (Campbell et al. 1974), with weight ``sum(n)`` in the
      weighted least squares (the variance of a mean of ``n`` is
      ``sigma**2 / n``).  This is what a published table of mean times and
      sample sizes gives, so a per-individual file and its table of means
      give the same fit.  The reciprocal of the mean time is not the mean of
      the individual rates (Jensen's inequality); the two differ little when
      the times at one temperature vary little.

    With one row per temperature and no ``n`` column the data are returned
    unchanged.  Rows with an ``n`` column that already are group means pool
    into their weighted mean.

    References
    ----------
    Campbell, A., Frazer, B.D., Gilbert, N., Gutierrez, A.P. & Mackauer, M.
    (1974) Temperature requirements of some aphids and their parasites.
    J. Appl. Ecol. 11:431-438.
    Hurlbert, S.H. (1984) Pseudoreplication and the design of ecological field
    experiments. Ecol. Monogr. 54:187-211.
    """
    temps, index = np.unique(data.temperature, return_inverse=True)
    if data.n is None and temps.size == len(data):
        return data
    n = np.ones(len(data)) if data.n is None else np.asarray(data.n, dtype=float)
    total = np.bincount(index, weights=n, minlength=temps.size)
    days = np.bincount(index, weights=n * data.days, minlength=temps.size) / total
    return LabData(temps, days, total, source=data.source)


def _weights(data: LabData, weights: str | None) -> np.ndarray:
    if weights in (None, "equal"):
        return np.ones(len(data))
    if weights == "n":
        return np.ones(len(data)) if data.n is None else np.asarray(data.n, dtype=float)
    raise ValueError(f"weights must be 'n', 'equal' or None, got {weights!r}")



_ALIASES = {
    "temperature": ("temperature", "temp", "t_c", "temperature_c", "temp_c"),
    "days": ("days", "development_time", "time_days", "development_days", "dev_time"),
    "n": ("n", "sample_size", "count"),
}


def _norm_header(name: str) -> str:
    name = re.sub(r"[(\[].*?[)\]]", "", name.strip().lower())
    return re.sub(r"[\s\-.]+", "_", name.strip().replace("°", "")).strip("_")


def read_lab_csv(path: str | Path) -> LabData:
    """Read a lab-data CSV: temperature (°C), development time (days), optional sample size.

    Header spellings (case-insensitive, units in brackets ignored):
    ``temperature``/``temp``/``t_c``; ``days``/``development_time``/``time_days``;
    ``n``/``sample_size``/``count``.  Other columns are ignored.  ``#`` starts a
    comment (whole line or rest of line); blank lines are skipped; the
    delimiter is ``,``, ``;`` or a tab, whichever the header line uses.

    Raises
    ------
    InputError
        One line naming the file, the line and the column: missing or
        ambiguous columns, empty, non-numeric or NaN cells, non-positive times
        or sample sizes, fewer than :data:`MIN_TEMPERATURES` temperatures.
    """

    path = Path(path)
    where = f"lab data {path}"
    if not path.is_file():
        raise InputError(f"{where}: file not found; check the path")
    try:
        text = path.read_text(encoding="utf-8-sig")
    except UnicodeDecodeError:
        raise InputError(f"{where}: not UTF-8 text; save it as UTF-8 CSV") from None
    except OSError as exc:
        raise InputError(f"{where}: cannot be read ({exc.strerror})") from None
    lines = [(no, line.split("#", 1)[0].rstrip()) for no, line in enumerate(text.splitlines(), 1)]
    lines = [(no, line) for no, line in lines if line.strip()]
    if not lines:
        raise InputError(f"{where}: no header line; the first row must name the columns "
                         "(temperature, days, optional n)")
    delim = next((d for d in (",", ";", "\t") if d in lines[0][1]), ",")
    rows = [next(csv.reader([line], delimiter=delim)) for _, line in lines]  # one row a line
    header = [_norm_header(h) for h in rows[0]]
    col: dict[str, int] = {}
    for role, aliases in _ALIASES.items():
        hits = [i for i, h in enumerate(header) if h in aliases]
        if len(hits) > 1:
            raise InputError(f"{where}: columns {', '.join(rows[0][i].strip() for i in hits)} "
                             f"all look like the {role} column; keep one")
        if hits:
            col[role] = hits[0]
        elif role != "n":
            raise InputError(f"{where}: no {role} column (header: {', '.join(rows[0])}); "
                             f"name it one of {', '.join(aliases)}")
    values: dict[str, list[float]] = {role: [] for role in col}
    for (lineno, _), row in zip(lines[1:], rows[1:], strict=True):
        for role, i in col.items():
            label = rows[0][i].strip()
            cell = row[i].strip() if i < len(row) else ""
            if not cell:
                raise InputError(f"{where}: line {lineno}, column {label}: empty cell; "
                                 "fill it in or remove the row")
            try:
                x = float(cell)
            except ValueError:
                hint = "use a dot as the decimal mark" if "," in cell else "give a number"
                raise InputError(f"{where}: line {lineno}, column {label}: {cell!r} is not a "
                                 f"number; {hint}") from None
            if not math.isfinite(x):
                raise InputError(f"{where}: line {lineno}, column {label}: {cell!r} is not a "
                                 "finite number; remove the row or give a value")
            if role != "temperature" and x <= 0:
                what = "development time" if role == "days" else "sample size"
                raise InputError(f"{where}: line {lineno}, column {label}: {what} must be "
                                 f"positive, got {cell}; remove rows without development")
            values[role].append(x)
    if not values["days"]:
        raise InputError(f"{where}: no data rows below the header")
    return LabData(np.array(values["temperature"]), np.array(values["days"]),
                   np.array(values["n"]) if "n" in values else None, source=str(path))

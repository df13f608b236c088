"""The model ranking table of ``suitmap fit``: criteria, ΔAICc and Akaike weights per model.

One row per fitted model, in the order given (best first from
:func:`suitmap.fit.fit_all`).  Written atomically (:mod:`suitmap.writers.atomic`);
an existing file is replaced only with ``overwrite=True``.

References
----------
Burnham, K.P. & Anderson, D.R. (2002) Model Selection and Multimodel
Inference, 2nd ed. Springer.  Sec. 2.4 (AICc), 2.9 (Akaike weights).
"""

from __future__ import annotations

import csv
import io
import math
from collections.abc import Sequence
from pathlib import Path

import numpy as np

from suitmap.fit.curves import FitResult
from suitmap.fit.report import _refuse_existing
from suitmap.kernels.rates import MODELS, PARAMS
from suitmap.writers.atomic import atomic_path

__all__ = ["RANKING_COLUMNS", "akaike_weights", "ranking_rows", "write_ranking_csv"]

#: Columns before the fitted parameters (one column per parameter name after these).
RANKING_COLUMNS = ("model", "converged", "n_parameters", "n_obs", "rss", "aic", "aicc", "bic",
                   "delta_aicc", "akaike_weight")


def akaike_weights(criterion: Sequence[float]) -> tuple[np.ndarray, np.ndarray]:
    """Differences to the best value and Akaike weights of information-criterion values.

    ``delta_i = c_i - min(c)`` and ``w_i = exp(-delta_i / 2) / sum_j exp(-delta_j / 2)``
    (Burnham & Anderson 2002, sec. 2.9): the weight of evidence for model ``i``
    being the best of the set.  Values that are not finite (a model that did
    not converge, or AICc undefined because ``N - K - 1 <= 0``) get NaN and
    take no part: the other weights sum to 1.
    """
    c = np.asarray(criterion, dtype=float)
    ok = np.isfinite(c)
    delta = np.full(c.shape, np.nan)
    weight = np.full(c.shape, np.nan)
    if ok.any():
        delta[ok] = c[ok] - c[ok].min()
        rel = np.exp(-0.5 * delta[ok])
        weight[ok] = rel / rel.sum()
    return delta, weight


def _cell(value) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, (int, np.integer)):
        return str(int(value))
    value = float(value)
    return repr(value + 0.0) if math.isfinite(value) else ""


def ranking_rows(results: Sequence[FitResult]) -> list[dict[str, str]]:
    """The table as rows of text cells (empty: no value), columns :data:`RANKING_COLUMNS`
    then the parameters of the models present (glossary names, model order).

    ``n_parameters`` counts the curve's parameters ``k``; the criteria also
    count the residual variance (``K = k + 1``, see :mod:`suitmap.fit.curves`).
    ``delta_aicc`` and ``akaike_weight`` are empty for models that did not
    converge or whose AICc is undefined.
    """
    aicc = [r.aicc if r.converged else math.nan for r in results]
    delta, weight = akaike_weights(aicc)
    present = {r.model for r in results}
    params: list[str] = []
    for model in MODELS:
        if model in present:
            params += [p for p in PARAMS[model] if p not in params]
    rows = []
    for r, d, w in zip(results, delta, weight, strict=True):
        row = {"model": r.model, "converged": _cell(bool(r.converged)),
               "n_parameters": _cell(len(PARAMS[r.model])), "n_obs": _cell(r.n_obs),
               "rss": _cell(r.rss), "aic": _cell(r.aic), "aicc": _cell(r.aicc),
               "bic": _cell(r.bic), "delta_aicc": _cell(d), "akaike_weight": _cell(w)}
        row.update({p: _cell(r.params[p]) if p in r.params else "" for p in params})
        rows.append(row)
    return rows


def write_ranking_csv(results: Sequence[FitResult], path: str | Path, *,
                      overwrite: bool = False) -> Path:
    """Write :func:`ranking_rows` as a comma-separated file with a header line.

    Raises
    ------
    OutputError
        If ``path`` exists and ``overwrite`` is False, or cannot be written.
    """
    path = Path(path)
    _refuse_existing(path, overwrite, "ranking table")
    rows = ranking_rows(results)
    buf = io.StringIO()
    writer = csv.DictWriter(buf, fieldnames=list(rows[0]) if rows else list(RANKING_COLUMNS),
                            lineterminator="\n")
    writer.writeheader()
    writer.writerows(rows)
    with atomic_path(path) as tmp:
        tmp.write_text(buf.getvalue(), encoding="utf-8")
    return path

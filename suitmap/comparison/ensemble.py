"""Statistics across climate models: median, 10th/90th percentiles, sign agreement.

:func:`ensemble_stats` takes one period or change dataset per climate model, all
on one grid, and returns for every numeric layer ``L``:

* ``ensemble_median_<L>``, ``ensemble_p10_<L>``, ``ensemble_p90_<L>`` — across
  models (CF's ensemble dimension name is ``realization``).  Percentiles use
  numpy's ``"linear"`` method, Hyndman & Fan (1996) type 7: with the models'
  values sorted, x₍₁₎ ≤ … ≤ x₍ₙ₎, and h = (n − 1)p + 1, Q(p) = x₍⌊h⌋₎ + (h − ⌊h⌋)
  (x₍⌊h⌋+1₎ − x₍⌊h⌋₎); the median is Q(0.5), the usual median.
* for change layers (``change_<L>``) also ``model_agreement_change_<L>``: the
  fraction of models whose change has the same *sign* as the ensemble-median
  change, and ``robust_change_<L>`` (one ``change_`` only): ``robust``,
  ``no_robust_signal`` or ``conflicting_signals`` by the rule of
  :mod:`suitmap.comparison.robustness` (IPCC AR6 Atlas simple approach: at
  least ``agreement_level``, default 0.8, of all models share the sign),
  255 where missing.

Rules:

* **Sign and zeros.**  A change counts as zero when ``|change| <= zero_tol``
  (default 0: only exact zeros); its sign is then 0, and sign 0 agrees only with
  sign 0.  So where the median change is zero, ``model_agreement`` is the
  fraction of models whose change is zero too.  A zero change supports neither
  sign in the robustness rule.
* **Missing cells.**  A cell missing (NaN) in *any* member is missing in every
  ensemble layer: a statistic over fewer models than ``n_models`` would mix
  ensembles of different sizes on one map.
* **Class layers** (a ``flag_values`` attribute or a ``uint8`` dtype, e.g.
  ``limiting_factor``, ``change_class``) are skipped: a median of class codes
  has no meaning.
* ``agreement_level`` is compared with a slack of 1e-12 so that, e.g., 4 of 5
  models reach the default 0.8 whatever the rounding.
* **Small ensembles.**  With fewer than five models every layer and the dataset
  carry a ``small_ensemble_caution`` attribute
  (:func:`suitmap.comparison.robustness.small_ensemble_caution`).

CF has no ``percentile`` cell method (CF conventions, Appendix E), so the median
gets ``cell_methods`` ``"... realization: median"`` while the percentile layers
keep the member layer's cell methods and say which percentile they are in the
attributes ``percentile`` and ``percentile_method``.

References
----------
Hyndman, R.J., Fan, Y. (1996) Sample quantiles in statistical packages.
*The American Statistician* 50(4): 361–365.
"""

from __future__ import annotations

import warnings
from typing import Any

import numpy as np
import pandas as pd
import xarray as xr

from suitmap.comparison.robustness import (DEFAULT_AGREEMENT_LEVEL, robust_change_name,
                                           robustness_classes, small_ensemble_caution)
from suitmap.errors import GridMismatch, InputError, SuitmapWarning
from suitmap.layers.metadata import MISSING_CLASS, ROBUST_CHANGE_CLASSES
from suitmap.spatial.regrid import grid_description, grids_match

__all__ = ["ENSEMBLE_LAYER_ATTRS", "PERCENTILE_METHOD", "ensemble_layer_attrs", "ensemble_stats",
           "hatch_mask", "is_class_layer"]

PERCENTILE_METHOD = "linear (Hyndman & Fan 1996 type 7, numpy 'linear')"
_SLACK = 1e-12

#: Attribute templates of the ensemble layers, by prefix; ``{long_name}``,
#: ``{cell_methods}``, ``{units}`` and ``{n}`` are filled from the member layer.
ENSEMBLE_LAYER_ATTRS: dict[str, dict[str, Any]] = {
    "ensemble_median": {
        "units": "{units}",
        "long_name": "ensemble median across {n} climate models of: {long_name}",
        "cell_methods": "{cell_methods} realization: median",
    },
    "ensemble_p10": {
        "units": "{units}",
        "long_name": "10th percentile across {n} climate models of: {long_name}",
        "cell_methods": "{cell_methods}",
        "percentile": 10,
        "percentile_method": PERCENTILE_METHOD,
    },
    "ensemble_p90": {
        "units": "{units}",
        "long_name": "90th percentile across {n} climate models of: {long_name}",
        "cell_methods": "{cell_methods}",
        "percentile": 90,
        "percentile_method": PERCENTILE_METHOD,
    },
    "model_agreement": {
        "units": "1",
        "long_name": "fraction of the {n} climate models whose change has the same sign as the "
                     "ensemble-median change (sign 0 agrees only with 0) of: {long_name}",
        "valid_range": [0.0, 1.0],
    },
    "robust_change": {
        "units": "1",
        "long_name": "robustness of the change across {n} climate models (robust: at least the "
                     "agreement level of all models share one non-zero sign; conflicting signals: "
                     "the minority sign alone denies that) of: {long_name}",
        "flag_values": list(range(len(ROBUST_CHANGE_CLASSES))),
        "flag_meanings": " ".join(ROBUST_CHANGE_CLASSES),
        "robustness_rule": "IPCC AR6 WGI Atlas simple approach (Gutierrez et al. 2021, "
                           "Cross-Chapter Box Atlas.1); conflicting signals: suitmap's definition",
    },
}
_PREFIXES = tuple(ENSEMBLE_LAYER_ATTRS)


def ensemble_layer_attrs(prefix: str, member_attrs: dict[str, Any], n_models: int) -> dict[str, Any]:
    """Attributes of ``<prefix>_<L>`` from the attributes of member layer ``L``."""
    base = {"units": member_attrs.get("units", "1"), "long_name": member_attrs.get("long_name", ""),
            "cell_methods": member_attrs.get("cell_methods", ""), "n": n_models}
    out = {}
    for key, value in ENSEMBLE_LAYER_ATTRS[prefix].items():
        out[key] = " ".join(value.format(**base).split()) if isinstance(value, str) else value
    if not out.get("cell_methods", "x"):
        del out["cell_methods"]
    return out


def is_class_layer(da: xr.DataArray) -> bool:
    """True for class-coded layers (``flag_values`` attribute or ``uint8`` dtype)."""
    return "flag_values" in da.attrs or da.dtype == np.uint8


def _sign(x: xr.DataArray, zero_tol: float) -> xr.DataArray:
    return xr.where(np.abs(x) <= zero_tol, 0.0, np.sign(x)).where(x.notnull())


def _choose_layers(members: dict[str, xr.Dataset], layers) -> list[str]:
    names = list(members)
    first = members[names[0]]
    if layers is None:
        candidates = [v for v in first.data_vars if {"y", "x"} <= set(first[v].dims)
                      and not is_class_layer(first[v]) and np.issubdtype(first[v].dtype, np.number)]
        chosen = [v for v in candidates if all(v in members[m] for m in names)]
        dropped = sorted(set(candidates) - set(chosen))
        if dropped:
            warnings.warn(f"ensemble: layers {dropped} are not in every model's dataset and are left out",
                          SuitmapWarning, stacklevel=3)
        return chosen
    chosen = [layers] if isinstance(layers, str) else list(layers)
    for layer in chosen:
        for m in names:
            if layer not in members[m]:
                raise InputError(f"ensemble: layer '{layer}' is missing from model '{m}'; "
                                 "compute it for every model or leave it out of layers")
        if is_class_layer(members[names[0]][layer]):
            raise InputError(f"ensemble: '{layer}' is a class layer; ensemble statistics need numeric layers")
    return chosen


def ensemble_stats(members: dict[str, xr.Dataset], *, layers=None,
                   agreement_level: float = DEFAULT_AGREEMENT_LEVEL,
                   zero_tol: float = 0.0) -> xr.Dataset:
    """Median, 10th and 90th percentiles and sign agreement across climate models.

    Parameters
    ----------
    members : dict of str to xarray.Dataset
        Climate-model name → period layers (:func:`suitmap.compute_layers`) or
        change layers (:func:`suitmap.compare`) of one scenario, all on one grid.
    layers : str or sequence of str, optional
        Layers to summarise; default every numeric (non-class) ``(y, x)`` layer
        present in all members (layers missing from some member are left out
        with a warning).
    agreement_level : float
        Share of all models (above 0.5, at most 1) that must share the sign of
        a change for it to be robust (default 0.8, IPCC AR6 Atlas).
    zero_tol : float
        Changes with ``|change| <= zero_tol`` count as no change (sign 0).

    Returns
    -------
    xarray.Dataset
        ``ensemble_median_<L>``, ``ensemble_p10_<L>``, ``ensemble_p90_<L>``
        (float32) for every layer, plus ``model_agreement_<L>`` (float32) and
        ``robust_change_<L>`` (uint8 classes, 255 = missing) for change layers
        ``change_<L>``; lazy if
        the members are.  Attributes ``n_models`` and ``models`` on every layer
        and on the dataset.

    Raises
    ------
    InputError
        Fewer than two members, a bad ``agreement_level``/``zero_tol``, or a
        requested layer that is missing or class-coded.
    GridMismatch
        Members on different grids.

    References
    ----------
    Hyndman, R.J., Fan, Y. (1996) Sample quantiles in statistical packages.
    *The American Statistician* 50(4): 361–365 (definition 7).
    """
    names = [str(m) for m in members]
    members = {str(k): v for k, v in members.items()}
    if len(names) < 2:
        raise InputError(f"ensemble: {len(names)} climate model given; ensemble statistics need at least two")
    if not 0.5 < agreement_level <= 1.0:
        raise InputError(f"ensemble: agreement_level {agreement_level} must be above 0.5 and at most 1 "
                         "(0.8 is the IPCC AR6 Atlas level)")
    if zero_tol < 0:
        raise InputError(f"ensemble: zero_tol {zero_tol} is negative; give 0 or a positive tolerance")
    ref = members[names[0]]
    for m in names[1:]:
        if not grids_match(ref, members[m]):
            raise GridMismatch(f"ensemble: model '{m}' ({grid_description(members[m])}) is not on the grid of "
                               f"'{names[0]}' ({grid_description(ref)}); snap it with "
                               "suitmap.spatial.regrid.snap_to_grid first")
    n = len(names)
    model_list = "; ".join(names)
    out: dict[str, xr.DataArray] = {}
    realization = pd.Index(names, name="realization")
    for layer in _choose_layers(members, layers):
        base_attrs = dict(ref[layer].attrs)
        stack = xr.concat([members[m][layer].astype(np.float64).assign_coords(x=ref["x"], y=ref["y"])
                           for m in names], dim=realization, coords="minimal", compat="override",
                          join="override", combine_attrs="drop")
        stack = stack.drop_vars([c for c in stack.coords if c not in ("realization", "y", "x")])
        if stack.chunks is not None:
            stack = stack.chunk({"realization": -1})
        present = stack.notnull().all("realization")
        q = stack.quantile([0.1, 0.5, 0.9], dim="realization", method="linear", skipna=False)
        stats = {"ensemble_p10": q.sel(quantile=0.1), "ensemble_median": q.sel(quantile=0.5),
                 "ensemble_p90": q.sel(quantile=0.9)}
        for prefix, arr in stats.items():
            out[f"{prefix}_{layer}"] = arr.drop_vars("quantile").where(present).astype(np.float32)
            out[f"{prefix}_{layer}"].attrs = ensemble_layer_attrs(prefix, base_attrs, n)
        if layer.startswith("change_"):
            median = stats["ensemble_median"].drop_vars("quantile")
            s_med = _sign(median, zero_tol)
            agree = (_sign(stack, zero_tol) == s_med).sum("realization") / n
            agree = agree.where(present)
            robust = robustness_classes(stack, agreement_level, zero_tol)
            rname = robust_change_name(layer)
            out[f"model_agreement_{layer}"] = agree.astype(np.float32)
            out[f"model_agreement_{layer}"].attrs = dict(ensemble_layer_attrs("model_agreement", base_attrs, n),
                                                         zero_tol=zero_tol)
            out[rname] = robust
            out[rname].attrs = dict(ensemble_layer_attrs("robust_change", base_attrs, n),
                                    agreement_level=agreement_level, zero_tol=zero_tol)
            out[rname].encoding["_FillValue"] = MISSING_CLASS
    ds = xr.Dataset(out)
    caution = small_ensemble_caution(n)
    for name in ds.data_vars:
        ds[name].attrs.update(n_models=n, models=model_list)
        if caution:
            ds[name].attrs["small_ensemble_caution"] = caution
        if name.startswith("robust_change_"):
            ds[name].encoding["_FillValue"] = MISSING_CLASS
    for c in ("x", "y"):
        ds[c].attrs = dict(ref[c].attrs)
    if ref.rio.crs is not None:
        ds = ds.rio.write_crs(ref.rio.crs)
    common = {k: v for k, v in ref.attrs.items()
              if all(k in members[m].attrs and _same(members[m].attrs[k], v) for m in names[1:])}
    ds.attrs.update(common)
    ds.attrs.update(n_models=n, models=model_list, ensemble_dimension="realization",
                    percentile_method=PERCENTILE_METHOD, agreement_level=agreement_level,
                    missing_rule="a cell missing in any model is missing in the ensemble")
    if caution:
        ds.attrs["small_ensemble_caution"] = caution
    return ds


def _same(a, b) -> bool:
    try:
        return bool(np.all(np.asarray(a) == np.asarray(b)))
    except Exception:  # noqa: BLE001 - attributes of odd types are simply not carried over
        return False


def hatch_mask(agreement: xr.DataArray, level: float = DEFAULT_AGREEMENT_LEVEL) -> xr.DataArray:
    """Cells where the models disagree: ``model_agreement < level``.

    Parameters
    ----------
    agreement : xarray.DataArray
        A ``model_agreement_<L>`` layer (fraction 0–1, NaN where missing).
    level : float
        Agreement below which a cell is hatched (same slack as in
        :func:`ensemble_stats`): hatched cells are those that fail the agreement
        part of the ``robust_change`` rule.

    Returns
    -------
    xarray.DataArray
        Boolean; True where models disagree, False where they agree and where
        the cell is missing (missing cells are masked in figures, not hatched).
    """
    mask = (agreement < level - _SLACK) & agreement.notnull()
    mask.name = "models_disagree"
    mask.attrs = {"long_name": f"models disagree: model agreement below {level:g}", "agreement_level": level}
    return mask

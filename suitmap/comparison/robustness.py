"""A robustness rule for a multi-model change that can say "no".

Each climate model's change in a cell has a sign: +1, −1, or 0 where
``|change| <= zero_tol`` (default 0: only exact zeros).  With ``n`` models,
``n_pos`` positive and ``n_neg`` negative changes, the cell is classed

``robust`` (code 1)
    at least ``agreement_level`` of *all* models share one non-zero sign:
    ``max(n_pos, n_neg) >= agreement_level * n``.  This is the simple approach
    of the IPCC AR6 WGI Atlas (Gutiérrez et al. 2021, Cross-Chapter Box
    Atlas.1): a change is robust where at least 80 % of the models agree on
    its sign, so the default level is 0.8.
``conflicting_signals`` (code 2)
    not robust, and the models of the *minority* sign alone are too many for
    the majority sign to be robust: ``min(n_pos, n_neg) > (1 − agreement_level)
    * n``.  A sizeable share of the models lies on each side of zero; the
    ensemble's sign is contested, not merely weak.  (suitmap's definition; the
    AR6 "conflicting signals" of its advanced approach also test each model's
    significance, which a screening tool with one run per model cannot do.)
``no_robust_signal`` (code 0)
    everything else: too few models share a sign because many show (almost)
    no change, or the split is too small to call a conflict.  A model with zero
    change supports neither sign; a cell where every model shows zero change
    has no robust signal.
255
    missing in any model.

``agreement_level`` must exceed 0.5, or two opposite signs could both be
"robust".  Comparisons carry a slack of 1e-12 so that, e.g., 4 of 5 models
reach 0.8 whatever the rounding.

With fewer than :data:`SMALL_ENSEMBLE` models the agreement fraction moves in
coarse steps (1/n) and the 10th/90th percentiles are interpolations between
the two lowest or highest members, not estimates of a distribution's tails;
:func:`small_ensemble_caution` words the caution every ensemble output carries.

References
----------
Gutiérrez, J.M., Jones, R.G., Narisma, G.T., et al. (2021) Atlas. In: Climate
Change 2021: The Physical Science Basis. Contribution of Working Group I to the
Sixth Assessment Report of the IPCC. Cambridge University Press, 1927–2058.
Cross-Chapter Box Atlas.1 (visualising robustness and uncertainty).
"""

from __future__ import annotations

import numpy as np
import xarray as xr

from suitmap.layers.metadata import MISSING_CLASS, ROBUST_CHANGE_CLASSES

__all__ = ["DEFAULT_AGREEMENT_LEVEL", "SMALL_ENSEMBLE", "robust_change_name", "robustness_classes",
           "small_ensemble_caution"]

DEFAULT_AGREEMENT_LEVEL = 0.8
SMALL_ENSEMBLE = 5
_SLACK = 1e-12
_ROBUST = ROBUST_CHANGE_CLASSES.index("robust")
_CONFLICT = ROBUST_CHANGE_CLASSES.index("conflicting_signals")
_NONE = ROBUST_CHANGE_CLASSES.index("no_robust_signal")


def robust_change_name(layer: str) -> str:
    """``robust_change_<layer>`` for ``layer`` or ``change_<layer>`` (never ``change_change_``)."""
    return "robust_change_" + layer.removeprefix("change_")


def robustness_classes(stack: xr.DataArray, agreement_level: float = DEFAULT_AGREEMENT_LEVEL,
                       zero_tol: float = 0.0, dim: str = "realization") -> xr.DataArray:
    """Class every cell robust / no robust signal / conflicting signals (see module docstring).

    Parameters
    ----------
    stack : xarray.DataArray
        The models' changes along ``dim`` (NaN where missing).
    agreement_level : float
        Share of all models (0.5 < level <= 1) that must share a sign.
    zero_tol : float
        Changes with ``|change| <= zero_tol`` count as no change.
    dim : str
        The model dimension.

    Returns
    -------
    xarray.DataArray
        ``uint8`` codes of :data:`~suitmap.layers.metadata.ROBUST_CHANGE_CLASSES`,
        255 where any model is missing.

    References
    ----------
    Gutiérrez et al. (2021), IPCC AR6 WGI Atlas, Cross-Chapter Box Atlas.1.
    """
    if not 0.5 < agreement_level <= 1.0:
        raise ValueError(f"agreement_level {agreement_level} must be above 0.5 and at most 1")
    n = stack.sizes[dim]
    present = stack.notnull().all(dim)
    n_pos = (stack > zero_tol).sum(dim)
    n_neg = (stack < -zero_tol).sum(dim)
    major = np.maximum(n_pos, n_neg)
    minor = np.minimum(n_pos, n_neg)
    robust = major >= agreement_level * n - _SLACK
    conflict = minor > (1.0 - agreement_level) * n + _SLACK
    code = xr.where(robust, _ROBUST, xr.where(conflict, _CONFLICT, _NONE))
    return xr.where(present, code, MISSING_CLASS).astype(np.uint8)


def small_ensemble_caution(n_models: int) -> str | None:
    """The caution of an ensemble of fewer than :data:`SMALL_ENSEMBLE` models (else None)."""
    if n_models >= SMALL_ENSEMBLE:
        return None
    return (f"small ensemble: only {n_models} climate models. Model agreement moves in steps of "
            f"1/{n_models}; the 10th/90th percentiles are linear interpolations between the lowest "
            "(highest) two members, not estimates of the spread of possible climates. Treat "
            "ensemble statistics as indicative.")

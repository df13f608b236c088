"""Fit development-rate curves to laboratory rearing data (``suitmap fit``).

Modules: ``data`` (the lab table and its reader), ``start`` (bounds and
starting values), ``curves`` (weighted least squares, intervals, ranking),
``report`` (the profile TOML and the figure), ``ranking`` (the table of
criteria and Akaike weights).
"""

from suitmap.fit.curves import FitResult, LinearPart, fit_all, fit_model, linear_part
from suitmap.fit.data import MIN_TEMPERATURES, LabData, group_by_temperature, read_lab_csv
from suitmap.fit.report import curve_optimum, plot_fits, upper_limit, write_profile_toml

__all__ = ["FitResult", "LabData", "LinearPart", "MIN_TEMPERATURES", "curve_optimum", "fit_all",
           "fit_model", "group_by_temperature", "linear_part", "plot_fits", "read_lab_csv",
           "upper_limit", "write_profile_toml"]

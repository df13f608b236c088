"""Conventions the climate readers share: variable roles, temperature units, calendars, dates.

Units are never guessed: a temperature must say K, degC or degF (CF
``units``); calendars are the CF calendar names.
"""

from __future__ import annotations

import re

import cftime
import xarray as xr

from suitmap.errors import InputError

ROLES = ("tmin", "tmax")
_UNIT_SPELLINGS = {  # lower case, spaces as "_"
    "K": ("k", "kelvin", "kelvins", "degk", "deg_k", "degree_k", "degrees_k", "°k"),
    "degC": ("degc", "deg_c", "°c", "c", "celsius", "degree_c", "degrees_c", "degree_celsius", "degrees_celsius"),
    "degF": ("degf", "deg_f", "°f", "f", "fahrenheit", "degree_f", "degrees_f", "degree_fahrenheit",
             "degrees_fahrenheit")}
_CALENDARS = {"standard": "standard", "gregorian": "standard", "proleptic_gregorian": "proleptic_gregorian",
              "noleap": "noleap", "365_day": "noleap", "all_leap": "all_leap", "366_day": "all_leap",
              "360_day": "360_day", "julian": "julian"}
_CFTIME_TYPES = {"noleap": cftime.DatetimeNoLeap, "all_leap": cftime.DatetimeAllLeap,
                 "360_day": cftime.Datetime360Day, "julian": cftime.DatetimeJulian}
_ISO_DATE = re.compile(r"^\s*(-?\d{1,4})-(\d{1,2})-(\d{1,2})(?:[T ][0-9:.]*)?\s*$")

def _canonical_units(units, where: str) -> str:
    if units is None or str(units).strip() == "":
        raise InputError(f"{where} has no units attribute; add units = 'K', 'degC' or 'degF' to the file")
    key = str(units).strip().lower().replace("º", "°").replace(" ", "_")
    for canon, spellings in _UNIT_SPELLINGS.items():
        if key in spellings:
            return canon
    raise InputError(f"{where} has units '{units}', not a temperature in K, degC or degF; "
                     "fix the units attribute (suitmap never guesses units)")


def _to_celsius(da: xr.DataArray, canon: str) -> xr.DataArray:
    x = da.astype("float64")
    if canon == "K":
        x = x - 273.15  # t/°C = T/K − 273.15 (SI Brochure, 9th ed., 2019)
    elif canon == "degF":
        x = (x - 32.0) / 1.8  # t/°F = 1.8 t/°C + 32 (NIST SP 811, 2008)
    return x.astype("float32")


def _canonical_calendar(name, where: str) -> str:
    key = str(name or "standard").strip().lower()
    if key not in _CALENDARS:
        raise InputError(f"{where} uses calendar '{name}', which suitmap does not know; "
                         f"use one of {', '.join(sorted(_CALENDARS))}")
    return _CALENDARS[key]

"""Moisture: extraterrestrial radiation, Hargreaves-Samani evapotranspiration, dry months,
aridity index and the moisture score.

Pure numpy on arrays of any (broadcastable) shape; no I/O.  Temperatures in
°C, precipitation and evapotranspiration in mm, radiation in MJ m-2 day-1.

References
----------
Allen, R.G., Pereira, L.S., Raes, D. & Smith, M. (1998) Crop evapotranspiration:
guidelines for computing crop water requirements. FAO Irrigation and Drainage
Paper 56, Rome; chapter 3, equations 21-25 (Ra) and 52 (Hargreaves).
Hargreaves, G.H. & Samani, Z.A. (1985) Reference crop evapotranspiration from
temperature. Applied Engineering in Agriculture 1(2):96-99.
Bagnouls, F. & Gaussen, H. (1957) Les climats biologiques et leur
classification. Annales de Géographie 66(355):193-220 (volume and pages from memory).
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike

__all__ = ["MJ_TO_MM", "SOLAR_CONSTANT", "aridity_index", "dry_month", "extraterrestrial_radiation",
           "hargreaves_et0", "moisture_factors"]

SOLAR_CONSTANT = 0.0820
"""G_sc, MJ m-2 min-1 (FAO-56 eq. 21)."""

MJ_TO_MM = 0.408
"""Radiation in MJ m-2 day-1 to equivalent evaporation in mm/day (1 / latent heat 2.45 MJ kg-1;
FAO-56 eq. 20)."""


def extraterrestrial_radiation(lat_deg: ArrayLike, doy: ArrayLike,
                               days_in_year: ArrayLike = 365.0) -> np.ndarray:
    """Daily extraterrestrial radiation Ra (MJ m-2 day-1) from latitude and day of year.

    Parameters
    ----------
    lat_deg : array_like
        Latitude, degrees north (negative south), within [-90, 90].
    doy : array_like
        Day of year J, 1 = 1 January.
    days_in_year : array_like
        365 as printed in FAO-56 (366 in leap years if wanted; 360 for a
        360-day calendar).

    Returns
    -------
    numpy.ndarray
        Ra, broadcast shape of the inputs; 0 in polar night.  The sunset hour
        angle's argument is clipped to [-1, 1] (polar day: ωs = π).

    References
    ----------
    Allen et al. (1998), FAO-56 chapter 3: eq. 21 (Ra), 22 (latitude in
    radians), 23 (inverse relative Earth-Sun distance dr), 24 (solar
    declination δ), 25 (sunset hour angle ωs).
    """
    lat = np.asarray(lat_deg, dtype=np.float64)
    if np.any(np.abs(lat[np.isfinite(lat)]) > 90.0):
        raise ValueError("latitude must lie within -90..90 degrees")
    phi = np.radians(lat)                                                 # eq. 22
    j = np.asarray(doy, dtype=np.float64)
    n = np.asarray(days_in_year, dtype=np.float64)
    dr = 1.0 + 0.033 * np.cos(2.0 * np.pi * j / n)                        # eq. 23
    delta = 0.409 * np.sin(2.0 * np.pi * j / n - 1.39)                    # eq. 24
    ws = np.arccos(np.clip(-np.tan(phi) * np.tan(delta), -1.0, 1.0))     # eq. 25
    ra = (24.0 * 60.0 / np.pi) * SOLAR_CONSTANT * dr * (                 # eq. 21
        ws * np.sin(phi) * np.sin(delta) + np.cos(phi) * np.cos(delta) * np.sin(ws))
    return np.maximum(ra, 0.0)


def hargreaves_et0(tmin: ArrayLike, tmax: ArrayLike, ra_mj: ArrayLike,
                   tmean: ArrayLike | None = None) -> np.ndarray:
    """Reference evapotranspiration ET0 (mm/day) by Hargreaves & Samani (1985).

    ``ET0 = 0.0023 (Tmean + 17.8) (Tmax - Tmin)^0.5 · 0.408 Ra``, Tmean =
    (Tmin + Tmax)/2 unless given.  Days with Tmax < Tmin use the absolute
    range; days colder than -17.8 °C give 0, not a negative loss.

    References
    ----------
    Hargreaves & Samani (1985); Allen et al. (1998), FAO-56 eq. 52 (Ra as
    equivalent evaporation through the factor 0.408 of eq. 20).
    """
    tn = np.asarray(tmin, dtype=np.float64)
    tx = np.asarray(tmax, dtype=np.float64)
    tm = 0.5 * (tn + tx) if tmean is None else np.asarray(tmean, dtype=np.float64)
    et0 = 0.0023 * (tm + 17.8) * np.sqrt(np.abs(tx - tn)) * MJ_TO_MM * np.asarray(ra_mj, np.float64)
    return np.maximum(et0, 0.0)


def dry_month(precip_mm: ArrayLike, tmean_c: ArrayLike) -> np.ndarray:
    """True where a month is dry: its precipitation (mm) < 2 × its mean temperature (°C).

    NaN in either input gives False; count dry months with the inputs'
    missingness handled by the caller.

    References
    ----------
    Bagnouls & Gaussen (1957): the ombrothermic criterion P < 2T.
    """
    p = np.asarray(precip_mm, dtype=np.float64)
    t = np.asarray(tmean_c, dtype=np.float64)
    return p < 2.0 * t


def aridity_index(precip_mm: ArrayLike, et0_mm: ArrayLike) -> np.ndarray:
    """Aridity index P / ET0 over the same span (dimensionless).

    Where ET0 is 0 (no evaporative demand): +inf if P > 0, NaN if P is 0 too.

    References
    ----------
    The ratio of precipitation to reference evapotranspiration as used by
    UNEP (1992, World Atlas of Desertification) with ET0 from Hargreaves &
    Samani (1985).
    """
    p = np.asarray(precip_mm, dtype=np.float64)
    e = np.asarray(et0_mm, dtype=np.float64)
    with np.errstate(divide="ignore", invalid="ignore"):
        return p / e


def _below(x: np.ndarray, limit: float | None) -> np.ndarray:
    """1 at or above ``limit``, falling linearly to 0 at 0 (x / limit)."""
    if limit is None:
        return np.ones_like(x)
    return np.clip(x / limit, 0.0, 1.0) if limit > 0 else np.ones_like(x)


def _above(x: np.ndarray, limit: float | None) -> np.ndarray:
    """1 at or below ``limit``, ``limit / x`` above it (halved at twice the limit)."""
    if limit is None:
        return np.ones_like(x)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(x <= limit, 1.0, limit / x)


def moisture_factors(annual_precip: ArrayLike | None = None, dry_months: ArrayLike | None = None,
                     aridity: ArrayLike | None = None, *,
                     min_annual_precipitation: float | None = None,
                     max_annual_precipitation: float | None = None,
                     max_dry_months: float | None = None,
                     min_aridity_index: float | None = None,
                     max_aridity_index: float | None = None) -> tuple[np.ndarray, np.ndarray]:
    """The dry-side and wet-side moisture scores (each 0-1); the moisture score is their minimum.

    Each configured limit gives one factor, 1 inside the limit:

    * below ``min_annual_precipitation`` (mm): P / min, 0 with no rain;
    * above ``max_annual_precipitation``: max / P (0.5 at twice the limit);
    * more than ``max_dry_months``: 1 - (dry - max) / (12 - max), 0 when all
      twelve months are dry;
    * below ``min_aridity_index``: AI / min; above ``max_aridity_index``: max / AI.

    The dry side is the least of the factors of too little water, the wet
    side that of too much: a limiting-factor (Liebig) minimum rather than a
    product, so the lowest factor names what limits.  A factor whose input is
    not given (None) is 1.  NaN inputs give NaN.

    Returns
    -------
    (dry_score, wet_score) : tuple of numpy.ndarray
        Broadcast shape of the inputs given.

    References
    ----------
    # common practice, no source: the linear and reciprocal ramps are this
    # program's own simple, documented form (see README, "Moisture").
    """
    given = [np.asarray(a, dtype=np.float64) for a in (annual_precip, dry_months, aridity)
             if a is not None]
    if not given:
        raise ValueError("give at least one of annual_precip, dry_months, aridity")
    shape = np.broadcast_shapes(*(g.shape for g in given))
    nan = np.zeros(shape)
    for g in given:
        nan = nan + np.where(np.isnan(g), np.nan, 0.0)
    dry = np.ones(shape)
    wet = np.ones(shape)
    if annual_precip is not None:
        p = np.broadcast_to(np.asarray(annual_precip, dtype=np.float64), shape)
        dry = np.minimum(dry, _below(p, min_annual_precipitation))
        wet = np.minimum(wet, _above(p, max_annual_precipitation))
    if dry_months is not None and max_dry_months is not None:
        d = np.broadcast_to(np.asarray(dry_months, dtype=np.float64), shape)
        span = 12.0 - max_dry_months
        f = 1.0 - (d - max_dry_months) / span if span > 0 else np.ones(shape)
        dry = np.minimum(dry, np.clip(f, 0.0, 1.0))
    if aridity is not None:
        a = np.broadcast_to(np.asarray(aridity, dtype=np.float64), shape)
        dry = np.minimum(dry, _below(a, min_aridity_index))
        wet = np.minimum(wet, _above(a, max_aridity_index))
    return dry + nan, wet + nan

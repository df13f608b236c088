"""The methods paragraph of a run (``methods.md``) and the method behind each layer.

Written from the manifest's provenance (profile, periods, methods), ready to
paste into a paper and to edit: data, periods, methods with their citations,
parameters with their sources, the suitmap version.
"""

from __future__ import annotations

import json

from suitmap._version import __version__

__all__ = ["METHOD_TEXT", "methods_text", "METHOD_CITATIONS"]

#: How each layer is computed (the report's "method" column).
METHOD_TEXT = {
    "degree_days": "daily degree-days above the lower threshold (method and cutoff of the "
                   "profile), summed over the season; mean over the period's seasons",
    "generations": "degree-days / degree_days_per_generation (thermal constant), or the "
                   "development rate summed over the season (rate summation); mean over seasons",
    "complete_generations": "floor(generations) per season; mean over seasons",
    "first_generation_day": "day of season on which the running sum reaches one generation; "
                            "mean over the seasons in which that happens",
    "first_generation_day_status": "0 where a first generation completes in some season, 1 "
                                   "where climate is complete but it never does, 255 no data",
    "years_with_generation": "fraction of seasons with complete_generations ≥ 1",
    "cold_kill_days": "days per season with daily minimum ≤ lethal_cold; mean over seasons",
    "heat_kill_days": "days per season with daily maximum ≥ lethal_heat; mean over seasons",
    "development_score": "years_with_generation × min(1, generations / saturating_generations)",
    "survival_score": "fraction of seasons without a lethal cold or heat day",
    "suitability": "development_score × survival_score",
    "limiting_factor": "the smallest of development, cold-survival and heat-survival scores "
                       "(too_cool or too_hot for development by mean Tmax against the upper "
                       "threshold); none where suitability is 1",
    "change_class": "suitable (suitability ≥ suitable level) in baseline and/or scenario",
}
for _name in list(METHOD_TEXT):
    if not _name.endswith(("_class", "_status", "limiting_factor")):
        METHOD_TEXT[f"change_{_name}"] = f"scenario minus baseline of {_name}"

#: Published methods a run may use, by the word that names them in the provenance.
METHOD_CITATIONS = {
    "single_sine": "Baskerville, G.L. & Emin, P. (1969) Rapid estimation of heat accumulation "
                   "from maximum and minimum temperatures. Ecology 50:514–517.",
    "double_sine": "Allen, J.C. (1976) A modified sine wave method for calculating degree days. "
                   "Environmental Entomology 5:388–396.",
    "triangle": "Zalom, F.G., Goodell, P.B., Wilson, L.T., Barnett, W.W. & Bentley, W.J. (1983) "
                "Degree-days: the calculation and use of heat units in pest management. "
                "University of California DANR Leaflet 21373.",
    "parton_logan": "Parton, W.J. & Logan, J.A. (1981) A model for diurnal variation in soil "
                    "and air temperature. Agricultural Meteorology 23:205–216.",
    "briere": "Briere, J.-F., Pracros, P., Le Roux, A.-Y. & Pierre, J.-S. (1999) A novel rate "
              "model of temperature-dependent development for arthropods. Environmental "
              "Entomology 28:22–29.",
    "lactin": "Lactin, D.J., Holliday, N.J., Johnson, D.L. & Craigen, R. (1995) Improved rate "
              "model of temperature-dependent development by arthropods. Environmental "
              "Entomology 24:68–75.",
    "logan": "Logan, J.A., Wollkind, D.J., Hoyt, S.C. & Tanigoshi, L.K. (1976) An analytic "
             "model for description of temperature dependent rate phenomena in arthropods. "
             "Environmental Entomology 5:1133–1140.",
    "sharpe_schoolfield": "Schoolfield, R.M., Sharpe, P.J.H. & Magnuson, C.E. (1981) Non-linear "
                          "regression of biological temperature-dependent rate parameters "
                          "derived from reaction kinetics. Journal of Theoretical Biology "
                          "88:719–731.",
}
_ALWAYS = ("Eaton, B. et al. (2023) NetCDF Climate and Forecast (CF) Metadata Conventions, "
           "version 1.11.",
           "Okabe, M. & Ito, K. (2008) Color Universal Design (CUD): how to make figures and "
           "presentations that are friendly to colorblind people.")


def _load(attrs: dict, key: str, default):
    try:
        return json.loads(attrs[key]) if attrs.get(key) else default
    except (ValueError, TypeError):
        return default


def methods_text(manifest: dict) -> str:
    """The Markdown methods paragraph of the run whose manifest is *manifest*."""
    attrs = manifest.get("attrs", {})
    profile = _load(attrs, "profile", {})
    periods = _load(attrs, "periods", [])
    methods = _load(attrs, "methods", {})
    dev = profile.get("development", {}) if isinstance(profile, dict) else {}
    organism = profile.get("organism", {}) if isinstance(profile, dict) else {}
    version = attrs.get("suitmap_version", __version__)
    base = [p for p in periods if p.get("kind") == "baseline"]
    scen = [p for p in periods if p.get("kind") != "baseline"]

    def describe(p):
        extra = ", ".join(x for x in (p.get("model"), p.get("pathway")) if x)
        return f"{p.get('name')} ({p.get('years')}{'; ' + extra if extra else ''})"

    rc = dev.get("rate_curve")
    if rc:
        gen = (f"Development was accumulated by rate summation with the {rc.get('model')} "
               "development-rate curve integrated over the day")
    else:
        gen = (f"Generations were counted as degree-days divided by a thermal constant of "
               f"{dev.get('degree_days_per_generation')} °C·day")
    text = [
        "# Methods",
        "",
        f"Thermal development of {organism.get('name', attrs.get('organism', 'the organism'))} "
        f"was mapped with suitmap {version} from daily minimum and maximum air temperature on "
        f"a grid, for the baseline period {', '.join(describe(p) for p in base) or '—'}"
        + (f" and the scenario period(s) {', '.join(describe(p) for p in scen)}" if scen else "")
        + ". "
        f"Daily degree-days above a lower developmental threshold of "
        f"{dev.get('lower_threshold')} °C with an upper threshold of "
        f"{dev.get('upper_threshold')} °C were computed by the {dev.get('method')} method "
        f"with a {dev.get('cutoff')} cutoff ({methods.get('degree_days_from', '')}) and "
        f"summed over each season. {gen}; the first generation day is the day of the season "
        "on which one generation completes. Each layer is the mean over the period's seasons. "
        "Suitability is the product of a development score (the fraction of seasons with a "
        "complete generation times the number of generations relative to a saturating "
        "number) and a survival score (the fraction of seasons without a day beyond the "
        "lethal temperature limits); a cell is counted suitable at suitability ≥ "
        f"{attrs.get('suitable_level')}. Change layers are scenario minus baseline. "
        f"Parameters are from the organism profile ({attrs.get('profile_file', '')}); its "
        f"stated source: {(organism.get('source') or 'not given').rstrip('.')}.",
        "",
        "These are screening-level estimates; they do not replace the advice of local "
        "plant-protection authorities and licensed practice.",
        "",
        "## References",
        "",
    ]
    words = " ".join(str(v) for v in (dev.get("method"), dev.get("diurnal"),
                                      (rc or {}).get("model", ""),
                                      methods.get("degree_days_from", "")))
    refs = [ref for key, ref in METHOD_CITATIONS.items() if key in words]
    if "Forsythe" in words:
        refs.append("Forsythe, W.C., Rykiel, E.J., Stahl, R.S., Wu, H. & Schoolfield, R.M. "
                    "(1995) A model comparison for daylength as a function of latitude and "
                    "day of year. Ecological Modelling 80:87–95.")
    refs += list(_ALWAYS)
    refs.append(f"suitmap {version} (see CITATION.cff of the suitmap source).")
    text += [f"- {r}" for r in refs]
    return "\n".join(text) + "\n"

"""Files of ``suitmap fit``: the lab-data CSV in; a profile TOML and a PNG of the fits out.

Output files are written atomically (temporary name in the destination folder,
then :func:`os.replace`, see :mod:`suitmap.writers.atomic`), and an existing
file is replaced only with ``overwrite=True``.  Imported by :mod:`suitmap.fit`,
which re-exports the public functions; the fitting lives there (imported
lazily here, so either module can be imported first).
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np

from suitmap.errors import InputError, OutputError
from suitmap.fit.curves import FitResult, linear_part
from suitmap.fit.data import LabData, read_lab_csv  # noqa: F401  (re-exported)
from suitmap.kernels.rates import PARAMS, optimum_temperature, rate_limits
from suitmap.writers.atomic import atomic_path
from suitmap.writers.styles import OKABE_ITO


__all__ = ["curve_optimum", "fits_figure", "read_lab_csv", "write_profile_toml", "plot_fits",
           "upper_limit"]

_UPPER_CHOICES = ("limit", "optimum")


def upper_limit(result: FitResult, data: LabData) -> float:
    """Temperature (°C) above the optimum where the fitted rate falls to zero.

    Briere-1/2, Lactin-1 and Logan-6: ``t_high``.  Lactin-2: its upper root,
    below ``t_high`` when ``lam < 0`` (:func:`suitmap.kernels.rates.rate_limits`).
    Sharpe–Schoolfield never reaches zero: ``th_half - 273.15``, the
    temperature at which half the enzyme is in the high-temperature inactive
    state (Schoolfield, Sharpe & Magnuson 1981, J. Theor. Biol. 88:719–731).
    Linear: the hottest temperature with development in the data.
    """
    p = result.params
    if result.model == "linear":
        return float(np.max(data.temperature))
    if result.model == "sharpe_schoolfield":
        return float(p["th_half"] - 273.15)
    return float(rate_limits(result.model, p)[1])


def curve_optimum(result: FitResult) -> float | None:
    """Temperature (°C) of the fastest development on the fitted curve, or None.

    None for the linear model (no maximum) and for a curve whose maximum cannot be
    located (:func:`suitmap.kernels.rates.optimum_temperature`).  Informational:
    the profile's ``upper_threshold`` is the curve's upper limit (:func:`upper_limit`).
    """
    if result.model == "linear" or not result.converged:
        return None
    try:
        t = float(optimum_temperature(result.model, result.params))
    except ValueError:
        return None
    return t if math.isfinite(t) else None


def _toml_float(value: float, key: str) -> str:
    value = float(value) + 0.0  # no -0.0
    if not math.isfinite(value):
        raise InputError(f"fit result: {key} is {value}; the fit did not give a usable value")
    return repr(value)


def _refuse_existing(path: Path, overwrite: bool, what: str) -> None:
    if path.exists() and not overwrite:
        raise OutputError(f"{what} {path} already exists; choose another name or pass "
                          "overwrite=True (--overwrite) to replace it")


def write_profile_toml(result: FitResult, data: LabData, path: str | Path, *,
                       organism_name: str, overwrite: bool = False,
                       upper: str = "limit") -> Path:
    """Write a suitmap organism profile from a fitted rate curve.

    ``[development]`` holds the degree-day parameters: ``lower_threshold`` and
    ``degree_days_per_generation`` from :func:`suitmap.fit.linear_part` (the
    x-intercept and inverse slope of the linear part, Campbell et al. 1974),
    whatever the curve; ``upper_threshold`` from the fitted curve: with
    ``upper="limit"`` its upper limit (:func:`upper_limit`), with
    ``upper="optimum"`` the temperature of the fastest development (not a
    development threshold: the rate is still near its maximum there; kept for
    comparison).  The optimum (:func:`curve_optimum`) is written as a comment.
    ``method = "single_sine"``; ``cutoff = "vertical"`` with ``upper="limit"``
    (the curve has no development above its limit), ``"horizontal"`` with
    ``upper="optimum"`` (development goes on near its fastest above it).
    ``[development.rate_curve]`` holds ``model`` and the fitted parameters by
    their glossary names (full precision); intervals and AIC are comments.
    ``[uncertainty]`` holds the covariance of the curve's parameters
    (``rate_curve.<name>``, :attr:`suitmap.fit.FitResult.covariance`) for
    parameter draws (``[compute] parameter_draws``): with a rate curve the
    generations come from the curve, so its parameters are what the draws
    vary.  The linear part's covariance (:attr:`suitmap.fit.LinearPart.covariance`)
    is a comment.  No ``[uncertainty]`` when the curve's covariance is singular.

    Raises
    ------
    OutputError
        If ``path`` exists and ``overwrite`` is False, or cannot be written.
    InputError
        If the fit gave no usable thresholds (not converged, upper <= lower).
    """

    path = Path(path)
    if upper not in _UPPER_CHOICES:
        raise ValueError(f"upper must be one of {', '.join(_UPPER_CHOICES)}, got {upper!r}")
    if not organism_name or not organism_name.strip():
        raise ValueError("organism_name must not be empty")
    _refuse_existing(path, overwrite, "profile")
    if not result.converged:
        raise InputError(f"{result.model} fit did not converge ({result.message}); "
                         "write a profile from a converged fit")
    lp = linear_part(data)
    if upper == "limit":
        u = upper_limit(result, data)
    else:
        u = float(optimum_temperature(result.model, result.params))
    topt = curve_optimum(result)
    lower = lp.lower_threshold
    if not (math.isfinite(u) and u > lower):
        raise InputError(f"lab data {data.source}: the {result.model} curve gives an upper "
                         f"threshold of {u:.4g} °C, not above the lower threshold "
                         f"{lower:.4g} °C; choose another model")
    name = Path(data.source).name
    used = ", ".join(f"{t:g}" for t in lp.temperatures)
    lines = [
        f"# Organism profile written by suitmap fit from {name}.",
        f"# Rate curve: {result.model}, weighted least squares on 1/days, N = {result.n_obs}, "
        f"AIC = {result.aic:.4g}, AICc = {result.aicc:.4g}, BIC = {result.bic:.4g}.",
        f"# Degree-day parameters: linear part at {used} °C (Campbell et al. 1974): "
        f"lower_threshold se {lp.lower_threshold_se:.6g}, "
        f"degree_days_per_generation se {lp.degree_days_per_generation_se:.6g}.",
        f"# upper_threshold = " + ("upper limit of the curve (where the fitted rate falls to "
                                   "zero)." if upper == "limit" else "optimum of the curve."),
        (f"# optimum = {topt!r} °C (fastest development on the curve; a note, not read "
         "by suitmap)." if topt is not None else "# optimum: none (the curve has no maximum)."),
        "",
        "[organism]",
        f"name = {json.dumps(organism_name.strip(), ensure_ascii=False)}",
        'role = "pest"',
        f"source = {json.dumps(f'fitted by suitmap fit from {name}', ensure_ascii=False)}",
        "",
        "[development]",
        f"lower_threshold = {_toml_float(lower, 'lower_threshold')}",
        f"upper_threshold = {_toml_float(u, 'upper_threshold')}",
        f"degree_days_per_generation = "
        f"{_toml_float(lp.degree_days_per_generation, 'degree_days_per_generation')}",
        'method = "single_sine"',
        f'cutoff = "{"vertical" if upper == "limit" else "horizontal"}"',
        "",
        "[development.rate_curve]",
        f'model = "{result.model}"',
    ]
    for key in PARAMS[result.model]:
        lo, hi = result.ci95[key]
        lines.append(f"{key} = {_toml_float(result.params[key], key)}"
                     f"  # 95 % CI {lo:.6g} to {hi:.6g}")
    lines += ["", "[tested_range]  # the lab data's rearing temperatures (outside_tested_range)",
              f"min_temperature = {_toml_float(float(np.min(data.temperature)), 'min_temperature')}",
              f"max_temperature = {_toml_float(float(np.max(data.temperature)), 'max_temperature')}"]
    (v_t, c_tk), (_, v_k) = lp.covariance
    lines += ["", f"# linear part: covariance of (lower_threshold, degree_days_per_generation) by "
              f"the delta method: [[{v_t:.6g}, {c_tk:.6g}], [{c_tk:.6g}, {v_k:.6g}]]"]
    if result.covariance is None:
        lines.append("# no [uncertainty]: the curve's covariance is singular (parameters not "
                     "all identifiable from these data)")
    else:
        names = ", ".join(f'"rate_curve.{k}"' for k in PARAMS[result.model])
        rows = ", ".join("[" + ", ".join(_toml_float(v, "covariance") for v in row) + "]"
                         for row in result.covariance)
        lines += ["[uncertainty]  # covariance of the curve's parameters (weighted least squares)",
                  f"parameters = [{names}]", f"covariance = [{rows}]"]
    text = "\n".join(lines) + "\n"
    with atomic_path(path) as tmp:
        tmp.write_text(text, encoding="utf-8")
    return path


#: Colour of the linear part's regression line (a neutral grey; the fits use Okabe–Ito).
LINEAR_PART_COLOUR = "#555555"


def fits_figure(data: LabData, results: list[FitResult], *, observations: LabData | None = None,
                criterion: str = "aicc"):
    """The figure of :func:`plot_fits`, not saved (a :class:`matplotlib.figure.Figure`).

    Artists with ids (``Artist.get_gid``): ``"observed"`` (the fitted rows),
    ``"rows"`` (``observations``: the individual rows before grouping, when
    given), ``"linear_part"`` (the regression line of :func:`suitmap.fit.linear_part`
    over the temperatures it used), ``"linear_part_extrapolated"`` (the same
    line, dotted, from the lower threshold to the first temperature used) and
    ``"fit:<model>"`` for each converged curve.
    """
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    t, r = data.temperature, data.rate
    n = data.n if data.n is not None else np.ones(t.size)
    ok = [res for res in results if res.converged]
    failed = [res.model for res in results if not res.converged]
    try:
        lp = linear_part(data)
    except InputError:
        lp = None
    span = float(t.max() - t.min())
    lo, hi = float(t.min()) - 0.3 * span, float(t.max()) + 0.3 * span
    for res in ok:
        for key in ("t_low", "t_high"):
            if key in res.params and math.isfinite(res.params[key]):
                lo, hi = min(lo, res.params[key] - 1.0), max(hi, res.params[key] + 1.0)
    if lp is not None and math.isfinite(lp.lower_threshold):
        lo = min(lo, lp.lower_threshold - 1.0)
    grid = np.linspace(lo, hi, 600)
    fig = Figure(figsize=(7.5, 5.0), layout="constrained")
    FigureCanvasAgg(fig)
    ax = fig.add_subplot()
    top = float(r.max())
    if observations is not None:
        ax.scatter(observations.temperature, observations.rate, s=7.0, color="#999999",
                   alpha=0.6, linewidths=0, zorder=2, gid="rows",
                   label=f"individual rows ({len(observations)})")
        top = max(top, float(observations.rate.max()))
    sizes = 12.0 + 150.0 * n / n.max()
    what = "group means" if observations is not None else "observed"
    ax.scatter(t, r, s=sizes, color="black", alpha=0.75, zorder=4, gid="observed",
               label=what + (" (marker area ∝ n)" if data.n is not None else ""))
    if lp is not None:
        used = np.array([min(lp.temperatures), max(lp.temperatures)])
        ax.plot(used, lp.intercept + lp.slope * used, color=LINEAR_PART_COLOUR, linewidth=5.0,
                alpha=0.45, solid_capstyle="butt", zorder=1, gid="linear_part",
                label=f"linear part {used[0]:g}–{used[1]:g} °C: lower_threshold "
                      f"{lp.lower_threshold:.1f} °C, {lp.degree_days_per_generation:.0f} °C·day")
        ext = np.array([lp.lower_threshold, used[0]])
        ax.plot(ext, lp.intercept + lp.slope * ext, color=LINEAR_PART_COLOUR, linewidth=1.8,
                linestyle=(0, (1, 1.5)), zorder=1, gid="linear_part_extrapolated")
    order = ("orange", "sky_blue", "bluish_green", "blue", "vermillion", "reddish_purple",
             "yellow")  # yellow, faint on white, last; black is the data
    colours = [OKABE_ITO[key] for key in order]
    styles = ["-", "--", "-.", ":", (0, (5, 1)), (0, (3, 1, 1, 1, 1, 1)), (0, (1, 3))]
    name = criterion.upper().replace("AICC", "AICc")
    for i, res in enumerate(ok):
        with np.errstate(all="ignore"):
            curve = res.rate(grid)
        rgb = tuple(c / 255 for c in colours[i % len(colours)])
        score = getattr(res, criterion)
        ax.plot(grid, curve, color=rgb, linestyle=styles[i % len(styles)], linewidth=1.8,
                zorder=3, gid=f"fit:{res.model}",
                label=f"{res.model} ({name} {score:.1f})" if math.isfinite(score)
                else f"{res.model} ({name} undefined)")
    ax.set_xlabel("temperature (°C)")
    ax.set_ylabel("development rate (1/day)")
    ax.set_xlim(lo, hi)
    ax.set_ylim(bottom=0.0, top=max(top, 1e-12) * 1.25)
    ax.set_title(f"Development-rate fits: {Path(data.source).name}")
    ax.grid(True, color="#dddddd", linewidth=0.6)
    ax.legend(loc="upper left", fontsize="small", frameon=False)
    if failed:
        fig.text(0.01, 0.005, "not converged: " + ", ".join(failed), fontsize="small")
    return fig


def plot_fits(data: LabData, results: list[FitResult], path: str | Path, *,
              overwrite: bool = False, observations: LabData | None = None,
              criterion: str = "aicc") -> Path:
    """PNG of the observed rates (marker area ∝ sample size) and the fitted curves.

    Converged fits are drawn in the order given (best first from
    :func:`suitmap.fit.fit_all`) with their ``criterion`` in the legend, in
    Okabe–Ito colours (Okabe & Ito 2008) with distinct line styles; fits that
    did not converge are listed under the axes.  The regression line of the
    linear part (:func:`suitmap.fit.linear_part`) is drawn, wide and grey, over
    the temperatures it used, dotted down to the lower threshold.  With
    ``observations`` (the rows before :func:`suitmap.fit.group_by_temperature`)
    the individual rows are drawn as small grey dots behind the group means.
    Drawn with :class:`matplotlib.figure.Figure` (no pyplot state); see
    :func:`fits_figure`.

    Raises
    ------
    OutputError
        If ``path`` exists and ``overwrite`` is False, or cannot be written.
    """
    path = Path(path)
    _refuse_existing(path, overwrite, "figure")
    fig = fits_figure(data, results, observations=observations, criterion=criterion)
    with atomic_path(path) as tmp:
        fig.savefig(tmp, format="png", dpi=120,
                    metadata={"Title": f"Development-rate fits of {Path(data.source).name}"})
    return path

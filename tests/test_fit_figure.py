"""The figure of `suitmap fit` shows the linear part's regression line (and the rows)."""

from __future__ import annotations

import numpy as np
import pytest

from suitmap.fit import LabData, fit_model, group_by_temperature, linear_part, plot_fits
from suitmap.fit.report import fits_figure


def briere1(t, a, t_low, t_high):
    """r = a T (T - T0) sqrt(TL - T) on (T0, TL), else 0 (Briere et al. 1999, eq. 2)."""
    t = np.asarray(t, float)
    inside = (t > t_low) & (t < t_high)
    return np.where(inside, a * t * (t - t_low) * np.sqrt(np.clip(t_high - t, 0, None)), 0.0)


def rows_and_groups():
    rng = np.random.default_rng(31)
    t = np.repeat([13.0, 16, 19, 22, 25, 28, 31, 33], [5, 9, 7, 12, 8, 10, 6, 7])
    days = 1 / briere1(t, 1.7e-4, 10.55, 34.0) * np.exp(rng.normal(0, 0.08, t.size))
    rows = LabData(t, days, source="rows.csv")
    return rows, group_by_temperature(rows)


def _by_gid(fig, gid):
    ax = fig.axes[0]
    return [a for a in [*ax.lines, *ax.collections] if a.get_gid() == gid]


def test_figure_draws_the_linear_part_regression():
    rows, data = rows_and_groups()
    results = [fit_model(data, "briere1"), fit_model(data, "linear")]
    fig = fits_figure(data, results, observations=rows)
    lp = linear_part(data)
    (line,) = _by_gid(fig, "linear_part")
    x, y = line.get_xdata(), line.get_ydata()
    # over the temperatures the regression used, with its slope and intercept
    assert (x[0], x[-1]) == (min(lp.temperatures), max(lp.temperatures))
    slope = (y[-1] - y[0]) / (x[-1] - x[0])
    assert slope == pytest.approx(lp.slope, rel=1e-10)
    assert y[0] - slope * x[0] == pytest.approx(lp.intercept, rel=1e-9)
    # ... which is the weighted regression of the group rates (numpy.polyfit, w = sqrt(n))
    used = np.isin(data.temperature, lp.temperatures)
    b, a = np.polyfit(data.temperature[used], data.rate[used], 1, w=np.sqrt(data.n[used]))
    assert slope == pytest.approx(b, rel=1e-9)
    assert "linear part" in line.get_label() and f"{lp.lower_threshold:.1f} °C" in line.get_label()
    assert line.get_label() in [t.get_text() for t in fig.axes[0].get_legend().get_texts()]
    # dotted down to the lower threshold, where the line reaches zero
    (ext,) = _by_gid(fig, "linear_part_extrapolated")
    assert ext.get_xdata()[0] == pytest.approx(-a / b, rel=1e-9)
    assert ext.get_ydata()[0] == pytest.approx(0.0, abs=1e-12)
    # the individual rows behind the group means, and one curve per converged fit
    (dots,) = _by_gid(fig, "rows")
    assert len(dots.get_offsets()) == len(rows)
    assert len(_by_gid(fig, "observed")[0].get_offsets()) == 8
    assert len(_by_gid(fig, "fit:briere1")) == len(_by_gid(fig, "fit:linear")) == 1


def test_plot_fits_writes_the_figure(tmp_path):
    from matplotlib.image import imread

    rows, data = rows_and_groups()
    out = plot_fits(data, [fit_model(data, "briere1")], tmp_path / "f.png", observations=rows)
    img = imread(out)
    assert img.shape[:2] == (600, 900)  # 7.5 x 5 in at 120 dpi
    assert [p.name for p in tmp_path.iterdir()] == ["f.png"]  # no temporary file left

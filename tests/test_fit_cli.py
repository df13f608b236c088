"""`suitmap fit` from a lab table to a profile that `suitmap run` accepts."""

import math
import re

import numpy as np
import pytest
from scipy import optimize

from suitmap.cli import main
from suitmap.kernels.rates import development_rate
from suitmap.config.profile import load_profile


def lab_csv(path, noise=0.02, seed=4):
    # Briere et al. 1999 (Environ. Entomol. 28:22-29) Briere-1 egg parameters; a from memory
    t = np.arange(14.0, 34.0, 2.0)
    rate = development_rate(t, "briere1", a=1.7e-4, t_low=10.55, t_high=34.0)
    rng = np.random.default_rng(seed)
    days = 1.0 / (rate * (1 + rng.normal(0, noise, t.size)))
    rows = "\n".join(f"{a},{b:.4f},20" for a, b in zip(t, days))
    path.write_text("# invented rearing table for tests\ntemperature,days,n\n" + rows + "\n")
    return path


def test_fit_writes_a_usable_profile(tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    csv = lab_csv(tmp_path / "rearing.csv")
    code = main(["fit", str(csv), "--name", "test moth (invented)", "--model", "linear,briere1,lactin1"])
    out = capsys.readouterr().out
    assert code == 0, out
    assert "models ranked by AICC" in out and "briere1" in out
    prof = load_profile(tmp_path / "rearing_profile.toml")
    assert prof.development.rate_curve is not None
    assert prof.organism.name == "test moth (invented)"
    # the lower threshold from the linear part sits near the true t_low (10.55)
    assert 7.0 < prof.development.lower_threshold < 13.0
    assert (tmp_path / "rearing_fits.png").read_bytes()[:4] == b"\x89PNG"
    # a second run refuses to overwrite
    code = main(["fit", str(csv)])
    err = capsys.readouterr().err
    assert code == 2 and "--overwrite" in err


def test_fit_bad_input(tmp_path, capsys):
    csv = tmp_path / "bad.csv"
    csv.write_text("temperature,days\n20,10\n25,-3\n")
    code = main(["fit", str(csv)])
    err = capsys.readouterr().err
    assert code == 2 and "bad.csv" in err and len(err.strip().splitlines()) == 1


def briere1(t, a, t_low, t_high):
    """r = a T (T - T0) sqrt(TL - T) on (T0, TL), else 0 (Briere et al. 1999, eq. 2)."""
    t = np.asarray(t, float)
    inside = (t > t_low) & (t < t_high)
    return np.where(inside, a * t * (t - t_low) * np.sqrt(np.clip(t_high - t, 0, None)), 0.0)


def briere1_optimum(t_low, t_high):
    """Closed form, Briere et al. (1999): [4TL + 3T0 + sqrt(16TL^2 + 9T0^2 - 16T0TL)]/10."""
    return (4 * t_high + 3 * t_low + math.sqrt(16 * t_high**2 + 9 * t_low**2
                                                - 16 * t_low * t_high)) / 10


TRUE = dict(a=1.7e-4, t_low=10.55, t_high=34.0)  # Briere et al. 1999 T0, TL; a from memory


def test_briere1_optimum_formula_is_the_maximum():
    # the closed form used below, checked against a numerical maximum (scipy)
    opt = optimize.minimize_scalar(lambda x: -briere1(x, **TRUE), bounds=(11, 33.9),
                                   method="bounded", options={"xatol": 1e-9})
    assert briere1_optimum(10.55, 34.0) == pytest.approx(opt.x, abs=1e-5)


def test_upper_threshold_is_the_curve_limit_and_optimum_reported(tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    t = np.arange(12.0, 34.0, 1.5)
    rng = np.random.default_rng(17)
    rate = briere1(t, **TRUE) * (1 + rng.normal(0, 0.01, t.size))
    csv = tmp_path / "lab.csv"
    csv.write_text("temperature,days,n\n" + "\n".join(f"{a},{1 / float(b)!r},25" for a, b in zip(t, rate)))
    assert main(["fit", str(csv), "--model", "briere1,linear"]) == 0
    out = capsys.readouterr().out
    text = (tmp_path / "lab_profile.toml").read_text()
    prof = load_profile(tmp_path / "lab_profile.toml")
    fitted = prof.development.rate_curve.as_dict()
    assert prof.development.rate_curve.model == "briere1"
    # upper_threshold: where the fitted curve falls to zero (t_high), near the true 34 °C
    assert prof.development.upper_threshold == fitted["t_high"]
    assert prof.development.upper_threshold == pytest.approx(TRUE["t_high"], abs=0.5)
    # the optimum is reported (printed and as a comment), the analytic Briere-1 optimum
    topt = briere1_optimum(fitted["t_low"], fitted["t_high"])
    printed = float(re.search(r"optimum ([\d.]+) °C", out).group(1))
    assert printed == pytest.approx(topt, abs=1e-3)
    noted = float(re.search(r"^# optimum = ([\d.]+) °C", text, re.MULTILINE).group(1))
    assert noted == pytest.approx(topt, rel=1e-9)
    assert abs(topt - briere1_optimum(10.55, 34.0)) < 0.5
    assert prof.development.upper_threshold - noted > 3.0  # the limit is not the optimum

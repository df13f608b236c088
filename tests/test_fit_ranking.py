"""The ranking table of `suitmap fit`: criteria, ΔAICc and Akaike weights per model."""

from __future__ import annotations

import csv
import math

import numpy as np
import pytest
from scipy import special

from suitmap.cli import main
from suitmap.errors import OutputError
from suitmap.fit import LabData, fit_all
from suitmap.fit.ranking import RANKING_COLUMNS, akaike_weights, write_ranking_csv


def briere1(t, a, t_low, t_high):
    """r = a T (T - T0) sqrt(TL - T) on (T0, TL), else 0 (Briere et al. 1999, eq. 2)."""
    t = np.asarray(t, float)
    inside = (t > t_low) & (t < t_high)
    return np.where(inside, a * t * (t - t_low) * np.sqrt(np.clip(t_high - t, 0, None)), 0.0)


def test_weights_by_hand():
    # w_i = exp(-Δ_i/2) / Σ exp(-Δ_j/2) (Burnham & Anderson 2002, sec. 2.9), here by hand:
    # Δ = (0, 2, 6): exp(0) = 1, exp(-1) = 0.36787944, exp(-3) = 0.04978707; sum 1.41766651
    delta, w = akaike_weights([100.0, 102.0, 106.0])
    np.testing.assert_allclose(delta, [0.0, 2.0, 6.0])
    np.testing.assert_allclose(w, [1 / 1.41766651, 0.36787944 / 1.41766651,
                                   0.04978707 / 1.41766651], rtol=1e-7)
    # the order of the input does not matter, and non-finite values take no part
    delta, w = akaike_weights([106.0, math.nan, 100.0, math.inf, 102.0])
    assert np.isnan(delta[[1, 3]]).all() and np.isnan(w[[1, 3]]).all()
    np.testing.assert_allclose(w[[2, 4, 0]], [0.70538, 0.25950, 0.03512], atol=5e-6)
    assert np.isnan(akaike_weights([math.nan, math.nan])[1]).all()


def test_weights_are_the_normalised_exponential_of_minus_half_the_criterion():
    # independent implementation: scipy.special.softmax(-c/2); evidence ratio
    # w_i / w_j = exp((c_j - c_i) / 2) (Burnham & Anderson 2002, sec. 2.10; from memory)
    c = np.random.default_rng(1).uniform(-50, 50, 9)
    _, w = akaike_weights(c)
    np.testing.assert_allclose(w, special.softmax(-c / 2), rtol=1e-12)
    assert w.sum() == pytest.approx(1.0, abs=1e-15)
    assert w[3] / w[5] == pytest.approx(math.exp((c[5] - c[3]) / 2), rel=1e-12)


def _lab_csv(path, temps):
    t = np.asarray(temps, float)
    rng = np.random.default_rng(3)
    rate = briere1(t, 1.7e-4, 10.55, 34.0) * (1 + rng.normal(0, 0.03, t.size))
    path.write_text("temperature,days,n\n" + "\n".join(
        f"{a:g},{1 / float(b)!r},20" for a, b in zip(t, rate)) + "\n")
    return path


def _read(path):
    with open(path, newline="", encoding="utf-8") as fh:
        return list(csv.DictReader(fh))


def test_cli_writes_the_ranking_table(tmp_path, capsys):
    # 7 temperatures: sharpe_schoolfield (6 parameters) can be fitted, but its AICc is
    # undefined (N - K - 1 = 7 - 7 - 1 < 0); the 4-parameter curves have N - K - 1 = 1.
    csv_in = _lab_csv(tmp_path / "cage.csv", [14, 17, 20, 23, 26, 29, 32])
    out_dir = tmp_path / "out"
    out_dir.mkdir()
    code = main(["fit", str(csv_in), "--profile", str(out_dir / "p.toml"),
                 "--figure", str(out_dir / "f.png")])
    assert code == 0, capsys.readouterr().err
    assert "ranking: " in capsys.readouterr().out
    rows = _read(out_dir / "cage_ranking.csv")  # beside the profile
    assert len(rows) == 7
    assert list(rows[0])[:len(RANKING_COLUMNS)] == list(RANKING_COLUMNS)
    for key in ("a", "t_low", "t_high", "thermal_constant", "rho", "th_half"):
        assert key in rows[0]  # the parameters of the models present
    usable = [r for r in rows if r["converged"] == "true" and r["aicc"]]
    assert len(usable) >= 3
    # AICc = AIC + 2K(K+1)/(N-K-1), K = n_parameters + 1 (Burnham & Anderson 2002, sec. 2.4)
    for r in usable:
        big_k, n = int(r["n_parameters"]) + 1, int(r["n_obs"])
        assert float(r["aicc"]) == pytest.approx(
            float(r["aic"]) + 2 * big_k * (big_k + 1) / (n - big_k - 1), rel=1e-12)
    # Δ and weights recomputed by hand from the table's own AICc column
    best = min(float(r["aicc"]) for r in usable)
    rel = [math.exp(-(float(r["aicc"]) - best) / 2) for r in usable]
    for r, x in zip(usable, rel):
        assert float(r["delta_aicc"]) == pytest.approx(float(r["aicc"]) - best, abs=1e-9)
        assert float(r["akaike_weight"]) == pytest.approx(x / sum(rel), rel=1e-9)
    assert sum(float(r["akaike_weight"]) for r in usable) == pytest.approx(1.0, abs=1e-12)
    # no Δ or weight where AICc is undefined or the fit did not converge
    for r in rows:
        if r not in usable:
            assert r["delta_aicc"] == "" and r["akaike_weight"] == ""
    ss = next(r for r in rows if r["model"] == "sharpe_schoolfield")
    assert ss["aicc"] == "" and ss["delta_aicc"] == ""
    briere = next(r for r in rows if r["model"] == "briere1")
    assert briere["thermal_constant"] == "" and float(briere["t_high"]) > 32
    # a second run refuses to overwrite the table (one line, exit 2), and --overwrite replaces it
    before = (out_dir / "cage_ranking.csv").read_bytes()
    (out_dir / "p.toml").unlink()
    (out_dir / "f.png").unlink()
    code = main(["fit", str(csv_in), "--profile", str(out_dir / "p.toml"),
                 "--figure", str(out_dir / "f.png")])
    err = capsys.readouterr().err
    assert code == 2 and "cage_ranking.csv exists" in err and len(err.strip().splitlines()) == 1
    assert (out_dir / "cage_ranking.csv").read_bytes() == before
    assert not (out_dir / "p.toml").exists()
    code = main(["fit", str(csv_in), "--model", "briere1,linear", "--overwrite",
                 "--ranking", str(tmp_path / "named.csv"), "--profile", str(out_dir / "p.toml"),
                 "--figure", str(out_dir / "f.png")])
    assert code == 0 and [r["model"] for r in _read(tmp_path / "named.csv")] == [
        "briere1", "linear"]


def test_non_converged_rows_have_empty_delta_and_weight(tmp_path):
    t = np.array([12.0, 16, 20, 24, 28, 32])  # 6 temperatures: too few for 6 parameters
    noise = 1 + np.array([0.02, -0.01, 0.015, -0.02, 0.01, -0.005])
    data = LabData(t, 1 / (briere1(t, 1.7e-4, 10.55, 34.0) * noise), np.full(6, 10.0))
    ranked = fit_all(data, models=("sharpe_schoolfield", "briere1", "linear"))
    path = write_ranking_csv(ranked, tmp_path / "r.csv")
    rows = _read(path)
    assert [r["model"] for r in rows] == [r.model for r in ranked]
    failed = next(r for r in rows if r["model"] == "sharpe_schoolfield")
    assert failed["converged"] == "false"
    assert failed["delta_aicc"] == failed["akaike_weight"] == failed["rho25"] == ""
    ok = [r for r in rows if r["converged"] == "true"]
    assert sum(float(r["akaike_weight"]) for r in ok) == pytest.approx(1.0)
    with pytest.raises(OutputError, match="r.csv already exists"):
        write_ranking_csv(ranked, path)

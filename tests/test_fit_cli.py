"""`suitmap fit` from a lab table to a profile that `suitmap run` accepts."""

import numpy as np

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

"""Organism profile validation: every bad key gives one error naming it."""

import pytest

from suitmap.errors import ProfileError
from suitmap.config.profile import load_profile, profile_from_dict


def good():
    return {
        "organism": {"name": "test moth (invented)", "role": "pest", "source": "test"},
        "development": {"lower_threshold": 10.0, "upper_threshold": 30.0,
                        "degree_days_per_generation": 400, "method": "single_sine",
                        "cutoff": "horizontal"},
        "survival": {"lethal_cold": -15.0, "lethal_heat": 40.0},
        "season": {"start": "03-01", "end": "10-31"},
    }


def test_valid_profile_round_trip():
    p = profile_from_dict(good())
    assert p.development.lower_threshold == 10.0
    assert p.development.degree_days_per_generation == 400.0
    assert p.season.start == (3, 1) and p.season.end == (10, 31)
    assert p.to_dict()["season"] == {"start": "03-01", "end": "10-31"}


def test_defaults():
    raw = good()
    del raw["season"], raw["survival"]
    del raw["development"]["method"], raw["development"]["cutoff"]
    p = profile_from_dict(raw)
    assert p.season.is_default
    assert p.development.method == "single_sine" and p.development.cutoff == "horizontal"
    assert p.survival.lethal_cold is None


@pytest.mark.parametrize("edit, key", [
    (lambda r: r["development"].update(lower_threshold=30.0), "lower_threshold"),
    (lambda r: r["development"].update(lower_threshold=35.0), "lower_threshold"),
    (lambda r: r["development"].update(degree_days_per_generation=0), "degree_days_per_generation"),
    (lambda r: r["development"].update(degree_days_per_generation=-5), "degree_days_per_generation"),
    (lambda r: r["development"].update(upper_threshold="hot"), "upper_threshold"),
    (lambda r: r["development"].update(upper_threshold=True), "upper_threshold"),
    (lambda r: r["development"].update(method="fancy"), "method"),
    (lambda r: r["development"].update(cutoff="diagonal"), "cutoff"),
    (lambda r: r["development"].update(colour="red"), "development.colour"),
    (lambda r: r["development"].pop("degree_days_per_generation"), "degree_days_per_generation"),
    (lambda r: r.update(extras={}), "extras"),
    (lambda r: r.pop("development"), "development"),
    (lambda r: r["organism"].update(role="villain"), "role"),
    (lambda r: r["survival"].update(lethal_cold=12.0), "lethal_cold"),
    (lambda r: r["survival"].update(lethal_heat=25.0), "lethal_heat"),
    (lambda r: r["season"].update(start="13-01"), "season.start"),
    (lambda r: r["season"].update(end="02-30"), "season.end"),
    (lambda r: r["season"].update(start="March"), "season.start"),
    (lambda r: r["season"].pop("end"), "season"),
    (lambda r: r["season"].update(start="biofix"), "biofix"),
])
def test_bad_profiles_name_the_key(edit, key):
    raw = good()
    edit(raw)
    with pytest.raises(ProfileError) as err:
        profile_from_dict(raw, where="profile x.toml")
    msg = str(err.value)
    assert key in msg and "x.toml" in msg
    assert "\n" not in msg


def test_load_profile_file_errors(tmp_path):
    with pytest.raises(ProfileError, match="not found"):
        load_profile(tmp_path / "missing.toml")
    bad = tmp_path / "bad.toml"
    bad.write_text("[organism\nname = 1")
    with pytest.raises(ProfileError, match="not valid TOML"):
        load_profile(bad)


def test_rate_curve_profile():
    raw = good()
    # Briere et al. 1999 (Environ. Entomol. 28:22-29) egg parameters; a from memory
    raw["development"]["rate_curve"] = {"model": "briere1", "a": 1.7e-4, "t_low": 10.55,
                                        "t_high": 34.0}
    raw["development"]["diurnal"] = "parton_logan"
    p = profile_from_dict(raw)
    assert p.development.rate_curve.model == "briere1"
    assert p.development.rate_curve.as_dict()["t_high"] == 34.0
    assert p.development.diurnal == "parton_logan"
    assert p.to_dict()["development"]["rate_curve"]["model"] == "briere1"
    # with a curve, the thermal constant may be left out
    del raw["development"]["degree_days_per_generation"]
    assert profile_from_dict(raw).development.degree_days_per_generation is None


@pytest.mark.parametrize("curve, key", [
    ({"model": "spline"}, "rate_curve.model"),
    ({"model": "briere1", "a": 1e-4, "t_low": 30.0, "t_high": 20.0}, "t_high"),
    ({"model": "briere1", "a": 1e-4, "t_low": 10.0}, "t_high"),
    ({"model": "briere1", "a": "big", "t_low": 10.0, "t_high": 30.0}, "rate_curve.a"),
    ({"model": "lactin1", "rho": 0.15, "t_high": 38.0, "delta": 6.4, "extra": 1.0}, "extra"),
])
def test_bad_rate_curves_name_the_key(curve, key):
    raw = good()
    raw["development"]["rate_curve"] = curve
    with pytest.raises(ProfileError) as err:
        profile_from_dict(raw, where="profile x.toml")
    assert key in str(err.value) and "\n" not in str(err.value)


def test_diurnal_must_be_known():
    raw = good()
    raw["development"]["diurnal"] = "square"
    with pytest.raises(ProfileError, match="development.diurnal"):
        profile_from_dict(raw)


def test_bundled_library_profiles_are_valid_and_invented():
    from suitmap.config import library
    from suitmap.config.profile import load_profile

    assert len(library.names()) >= 3
    roles = set()
    for name in library.names():
        p = load_profile(library.path(name))
        assert "invented" in p.organism.name.lower() and "not a real" in p.organism.source
        roles.add(p.organism.role)
    assert {"pest", "pollinator", "crop"} <= roles

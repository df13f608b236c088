"""[[scenario_set]]: one template expands into scenarios by model, pathway and period."""

import textwrap

import pytest

from suitmap.errors import RunFileError
from suitmap.config.runfile import load_run

HEAD = """
[profile]
path = "p.toml"
[baseline]
years = [1991, 2020]
tmin = "obs_tmin.nc"
tmax = "obs_tmax.nc"
"""


def touch(folder, *names):
    for n in names:
        (folder / n).parent.mkdir(parents=True, exist_ok=True)
        (folder / n).write_bytes(b"")


def test_expansion_by_model_pathway_and_period(tmp_path):
    touch(tmp_path, *[f"cm/{m}_{p}_{v}_{d}.nc" for m in ("alpha", "beta") for p in ("lowpath", "highpath")
                      for v in ("tasmin", "tasmax") for d in ("2041-2070", "2071-2100")],
          "cm/alpha_lowpath_pr_2041-2070.nc")  # another variable: ignored
    run = tmp_path / "run.toml"
    run.write_text(HEAD + textwrap.dedent("""
        [[scenario_set]]
        files = "cm/{model}_{pathway}_{variable}_{*}.nc"
        variables = { tmin = "tasmin", tmax = "tasmax" }
        periods = { mid-century = [2041, 2070], end-century = [2071, 2100] }
        """))
    r = load_run(run)
    names = sorted(s.name for s in r.scenarios)
    assert len(names) == 2 * 2 * 2
    assert "alpha_lowpath_mid-century" in names and "beta_highpath_end-century" in names
    s = next(s for s in r.scenarios if s.name == "beta_lowpath_end-century")
    assert (s.model, s.pathway, s.period, s.years) == ("beta", "lowpath", "end-century", (2071, 2100))
    # the names end in year ranges: each file serves the period its years overlap
    assert s.tmin.patterns == (str(tmp_path / "cm/beta_lowpath_tasmin_2071-2100.nc"),)
    assert s.tmin.variable == "tasmin"


def test_period_field_in_file_names(tmp_path):
    touch(tmp_path, *[f"{m}/{v}_ssp_{per}.nc" for m in ("a", "b") for v in ("tn", "tx")
                      for per in ("mid", "late")])
    run = tmp_path / "run.toml"
    run.write_text(HEAD + textwrap.dedent("""
        [[scenario_set]]
        files = "{model}/{variable}_{pathway}_{period}.nc"
        variables = { tmin = "tn", tmax = "tx" }
        periods = { mid = [2041, 2070] }
        """))
    r = load_run(run)
    assert sorted(s.name for s in r.scenarios) == ["a_ssp_mid", "b_ssp_mid"]
    assert all(p.endswith("_mid.nc") for s in r.scenarios for p in s.tmin.patterns)


@pytest.mark.parametrize("table, needle", [
    ('files = "cm/{model}_{variable}.nc"\nperiods = { mid = [2041, 2070] }', "{pathway}"),
    ('files = "cm/{model}_{pathway}_{variable}.nc"\nperiods = { mid = [2041, 2070] }', "no file matches"),
    ('files = "cm/{model}_{pathway}_{variable}.nc"', "periods"),
])
def test_bad_sets(tmp_path, table, needle):
    touch(tmp_path, "cm/x.nc")
    run = tmp_path / "run.toml"
    run.write_text(HEAD + "\n[[scenario_set]]\n" + table + "\n")
    with pytest.raises(RunFileError, match="scenario_set"):
        try:
            load_run(run)
        except RunFileError as e:
            assert needle in str(e)
            raise


def test_one_variable_missing(tmp_path):
    touch(tmp_path, "cm/a_p_tasmin_1.nc")
    run = tmp_path / "run.toml"
    run.write_text(HEAD + '\n[[scenario_set]]\nfiles = "cm/{model}_{pathway}_{variable}_{*}.nc"\n'
                   'periods = { mid = [2041, 2070] }\n')
    with pytest.raises(RunFileError, match="none for tmax"):
        load_run(run)

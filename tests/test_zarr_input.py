"""Zarr stores as climate input: the same data as NetCDF give identical layers.

The stores are written by xarray's own Zarr writer from the bundled sample
NetCDF files, so what suitmap reads is checked against an independent writer.
"""

from __future__ import annotations

import numpy as np
import pytest
import xarray as xr

import suitmap
from suitmap.errors import InputError
from suitmap.pipeline.demo import prepare_demo



def _to_zarr(folder):
    for nc in sorted(folder.glob("baseline_*.nc")):
        with xr.open_dataset(nc, decode_coords="all") as ds:
            ds.to_zarr(nc.with_suffix(".zarr"), mode="w", consolidated=False)


def test_zarr_and_netcdf_give_identical_layers(tmp_path):
    run_file = prepare_demo(tmp_path / "demo")
    _to_zarr(run_file.parent / "climate")
    text = run_file.read_text()
    head = text[:text.index("[[scenario]]")] + text[text.index("[output]"):]
    (run_file.parent / "nc_run.toml").write_text(head.replace('dir = "results"', 'dir = "out_nc"'))
    (run_file.parent / "zarr_run.toml").write_text(
        head.replace('dir = "results"', 'dir = "out_zarr"').replace("_*.nc", "_*.zarr"))
    nc = suitmap.compute_run(suitmap.load_run(run_file.parent / "nc_run.toml")).compute()
    zr = suitmap.compute_run(suitmap.load_run(run_file.parent / "zarr_run.toml")).compute()
    a, b = nc.periods["baseline"], zr.periods["baseline"]
    assert set(a.data_vars) == set(b.data_vars) and len(a.data_vars) > 5
    for name in a.data_vars:
        np.testing.assert_array_equal(a[name].values, b[name].values, err_msg=name)
    assert np.isfinite(a["degree_days"].values).any()


def test_a_broken_zarr_store_is_named(tmp_path):
    bad = tmp_path / "tmin.zarr"
    bad.mkdir()
    (bad / "zarr.json").write_text("not json")
    with pytest.raises(InputError, match="tmin.zarr.*Zarr store"):
        suitmap.open_climate([bad], "tmin")


def test_demo_inputs_found_from_a_source_checkout(monkeypatch):
    """Run from a checkout (``python -m pytest`` imports the source tree, where the
    sample folder is not inside the package), the demo still finds ``sample_rasters/``."""
    from suitmap.pipeline import demo

    def not_installed(name):
        raise ModuleNotFoundError(name)

    monkeypatch.setattr(demo.resources, "files", not_installed)
    found = demo.sample_dir()
    assert found.name == "sample_rasters" and (found / demo.RUN_FILE).is_file()

"""The mismatch transect: both organisms' event days along latitude (or elevation), per period.
Checked against row medians computed here with numpy from the written GeoTIFF layers."""

from __future__ import annotations

import csv

import numpy as np
import pytest
import rasterio
from matplotlib.figure import Figure
from rasterio.transform import from_origin

import suitmap
from conftest import write_period, write_profile, write_runfile

NY, NX = 8, 6          # rows 49.5 … 42.5 °N, 1° cells (write_period's lat0 = 50, res = 1)


def _climate():
    # a warm south and a cool north, columns a little apart, a seasonal cycle and day noise:
    # event days differ along rows and across them; the northern row is too cool for the
    # second organism in some cells (never), and cell (3, 2) is missing
    rng = np.random.default_rng(4)
    day = np.arange(730)[:, None, None]
    mean = (9.0 + 1.2 * np.arange(NY)[None, :, None] + 0.4 * np.arange(NX)[None, None, :]
            - 9.0 * np.cos(2 * np.pi * (day - 15) / 365.0) + rng.normal(0, 1.5, (730, NY, NX)))
    tmin, tmax = (mean - 4.0).astype("float32"), (mean + 4.0).astype("float32")
    tmin[:, 3, 2] = np.nan
    tmax[:, 3, 2] = np.nan
    return tmin, tmax


def _case(tmp_path, *, mismatch=True, extra=""):
    tmin, tmax = _climate()
    first = write_profile(tmp_path, lower=10.0, upper=30.0, ddg=300.0)
    first.write_text(first.read_text().replace('name = "test moth (invented)"',
                                               'name = "Velm orchard moth (invented)"'))
    (tmp_path / "second").mkdir()
    second = write_profile(tmp_path / "second", lower=12.0, upper=30.0, ddg=260.0)
    second.write_text(second.read_text().replace('name = "test moth (invented)"',
                                                 'name = "Orrin wasp (invented)"'))
    b = write_period(tmp_path / "c", "b", tmin, tmax)
    s = write_period(tmp_path / "c", "s", tmin + 1.5, tmax + 1.5, start="2053-01-01")
    text = f'\n[mismatch]\nprofile = "second/profile.toml"\n' if mismatch else ""
    return write_runfile(tmp_path, first, [
        {"name": "baseline", "years": (2001, 2002), "tmin": f"c/{b[0]}", "tmax": f"c/{b[1]}"},
        {"name": "warm", "years": (2053, 2054), "tmin": f"c/{s[0]}", "tmax": f"c/{s[1]}"}],
        formats=("geotiff", "png"), extra=text + extra)


def _capture(monkeypatch):
    figures = []
    save = Figure.savefig

    def spy(self, *a, **k):
        figures.append(self)
        return save(self, *a, **k)

    monkeypatch.setattr(Figure, "savefig", spy)
    return figures


def _read(path):
    with rasterio.open(path) as f:
        return f.read(1).astype(float)


def _medians_by_group(values, groups):
    """Median and 25th/75th percentiles (numpy linear) of the finite values of each group."""
    out = []
    for g in groups:
        v = values[g]
        v = v[np.isfinite(v)]
        out.append((np.median(v), *np.percentile(v, [25, 75])) if v.size else (np.nan,) * 3)
    return np.array(out)


def test_transect_lines_are_the_row_medians_of_the_layers(tmp_path, monkeypatch):
    figures = _capture(monkeypatch)
    root = suitmap.run(_case(tmp_path)).parent
    transect_figs = [f for f in figures if any(ln.get_gid() == "median-0"
                                               for ax in f.axes for ln in ax.lines)]
    assert len(transect_figs) == 2                         # one per period
    for period in ("baseline", "warm"):
        png = root / period / "mismatch_transect.png"
        assert png.is_file()
        ref = _read(root / period / "first_generation_day.tif")
        gap = _read(root / period / "mismatch_days.tif")
        both = np.isfinite(ref) & np.isfinite(gap)
        assert both.any() and not both.all()               # some cells drop out (never, missing)
        # independent: rows of the GeoTIFF, north-up, so reversed to run south to north
        rows = [np.s_[r, :] for r in range(NY)][::-1]
        want_ref = _medians_by_group(np.where(both, ref, np.nan), rows)
        want_sec = _medians_by_group(np.where(both, ref + gap, np.nan), rows)
        lat = 50.0 - 0.5 - np.arange(NY)[::-1]               # row centres, south to north
        with open(root / period / "mismatch_transect.csv", newline="") as fh:
            table = list(csv.DictReader(fh))
        assert [float(r["latitude_deg"]) for r in table] == pytest.approx(lat)
        got = np.array([[float(r[k]) if r[k] else np.nan for k in
                         ("reference_median_day", "reference_p25_day", "reference_p75_day")]
                        for r in table])
        np.testing.assert_allclose(got, want_ref, rtol=1e-5)
        # the figure of this period (its title names it) draws exactly these medians
        fig = next(f for f in transect_figs if f"{period} " in f.axes[0].get_title())
        lines = {ln.get_gid(): ln for ln in fig.axes[0].lines}
        np.testing.assert_allclose(lines["median-0"].get_xdata(), lat)
        np.testing.assert_allclose(lines["median-0"].get_ydata(), want_ref[:, 0], rtol=1e-5)
        np.testing.assert_allclose(lines["median-1"].get_ydata(), want_sec[:, 0], rtol=1e-5)
        title = fig.axes[0].get_title()
        assert "Velm orchard moth" in title and "Orrin wasp" in title
        assert "2001-2002" in title if period == "baseline" else "2053-2054" in title
        texts = " ".join(t.get_text() for t in fig.texts)
        assert "Screening-level" in texts and "median" in texts


def test_no_transect_without_mismatch(tmp_path):
    root = suitmap.run(_case(tmp_path, mismatch=False)).parent
    assert not list(root.rglob("mismatch_transect*"))


def test_elevation_transect_with_terrain(tmp_path, monkeypatch):
    # elevation on the climate grid itself (so the bilinear resampling is the identity at
    # cell centres): 150 m per row southwards and 40 m per column eastwards, 0 … 1250 m ->
    # 100 m bands (13 of them; 50 m would need 26 > 15)
    elev = (150.0 * np.arange(NY)[:, None] + 40.0 * np.arange(NX)[None, :]).astype("float32")
    with rasterio.open(tmp_path / "dem.tif", "w", driver="GTiff", width=NX, height=NY, count=1,
                       dtype="float32", crs="EPSG:4326",
                       transform=from_origin(-2.0, 50.0, 1.0, 1.0)) as f:
        f.write(elev, 1)
    figures = _capture(monkeypatch)
    root = suitmap.run(_case(tmp_path, extra='\n[terrain]\nelevation = "dem.tif"\n')).parent
    with open(root / "baseline" / "mismatch_transect.csv", newline="") as fh:
        table = list(csv.DictReader(fh))
    assert [float(r["elevation_m"]) for r in table] == pytest.approx(50.0 + 100.0 * np.arange(13))
    ref = _read(root / "baseline" / "first_generation_day.tif")
    gap = _read(root / "baseline" / "mismatch_days.tif")
    both = np.isfinite(ref) & np.isfinite(gap)
    bands = [np.floor(elev / 100.0) == k for k in range(13)]
    want = _medians_by_group(np.where(both, ref, np.nan), bands)
    got = np.array([float(r["reference_median_day"]) if r["reference_median_day"] else np.nan
                    for r in table])
    np.testing.assert_allclose(got, want[:, 0], rtol=1e-5)
    fig = next(f for f in figures if any(ln.get_gid() == "median-0" for ln in f.axes[0].lines))
    assert fig.axes[0].get_xlabel() == "elevation (m)"

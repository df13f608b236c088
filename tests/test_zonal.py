"""suitmap.spatial.zonal: regional means and areas, against an independent computation.

The independent computation: each cell's coverage fraction is the shapely
intersection area of the cell's rectangle with the polygon (in the grid's
coordinates, which is what a coverage fraction is), and its area comes from
pyproj Geod.polygon_area_perimeter on the cell's corners (Karney 2013), not
from suitmap.spatial.areas.
"""

from __future__ import annotations


import geopandas as gpd
import numpy as np
import pytest
import rioxarray  # noqa: F401
import shapely
import shapely.affinity
import xarray as xr
from pyproj import Geod, Transformer
from shapely.geometry import Polygon, box

from suitmap.errors import InputError, SuitmapWarning
from suitmap.pipeline.regions import region_table
from suitmap.spatial.zonal import read_regions, region_weights, summarize_group, weighted_percentiles

RES = 0.1
WEST, NORTH, NY, NX = 10.0, 51.0, 10, 12


def layers():
    x = WEST + (np.arange(NX) + 0.5) * RES
    y = NORTH - (np.arange(NY) + 0.5) * RES
    xx, yy = np.meshgrid(x, y)
    rng = np.random.default_rng(3)
    temp = 10 + rng.normal(0, 3, (NY, NX))
    suit = np.clip(0.5 + 0.4 * np.sin(3 * xx) * np.cos(5 * yy) + rng.normal(0, 0.1, (NY, NX)), 0, 1)
    temp[7:, :3] = np.nan  # a "lake" in the south-west corner
    suit[7:, :3] = np.nan
    ds = xr.Dataset({"degree_days": (("y", "x"), temp), "suitability": (("y", "x"), suit)},
                    coords={"y": y, "x": x})
    return ds.rio.write_crs("EPSG:4326")


def independent(ds, poly_lonlat, name, level=0.5):
    """Σ f·A·v / Σ f·A with shapely fractions and Geod corner areas."""
    geod = Geod(ellps="WGS84")
    num, den, covered, suitable = 0.0, 0.0, 0.0, 0.0
    for j, yc in enumerate(ds["y"].values):
        for i, xc in enumerate(ds["x"].values):
            cell = box(xc - RES / 2, yc - RES / 2, xc + RES / 2, yc + RES / 2)
            f = cell.intersection(poly_lonlat).area / cell.area
            if f <= 0:
                continue
            a, _ = geod.polygon_area_perimeter(*np.array(cell.exterior.coords)[:-1].T.tolist())
            w = f * abs(a) / 1e6
            v = float(ds[name].values[j, i])
            s = float(ds["suitability"].values[j, i])
            if np.isfinite(v):
                num += w * v
                den += w
            if np.isfinite(s):
                covered += w
                suitable += w * (s >= level)
    return (num / den if den else np.nan), covered, suitable


def regions_gdf(polys: dict, crs="EPSG:4326"):
    return gpd.GeoDataFrame({"region": list(polys)}, geometry=list(polys.values()), crs=crs)


def test_means_and_areas_match_independent_computation():
    ds = layers()
    polys = {
        "north": Polygon([(10.13, 50.97), (10.87, 50.91), (10.95, 50.52), (10.2, 50.44)]),
        "sub-cell": box(10.52, 50.62, 10.55, 50.64),  # inside one cell
        "lakeside": box(10.05, 50.05, 10.55, 50.45),  # partly over missing cells
    }
    w = region_weights(regions_gdf(polys), ds)
    rows, empty = summarize_group(ds, w, reference="suitability", level=0.5)
    assert empty == []
    for row in rows:
        poly = polys[row["region"]]
        for name in ("degree_days", "suitability"):
            mean, covered, suitable = independent(ds, poly, name)
            assert row[f"mean_{name}"] == pytest.approx(mean, rel=1e-6)
        assert row["covered_km2"] == pytest.approx(covered, rel=1e-6)
        assert row["suitable_area_km2"] == pytest.approx(suitable, rel=1e-6, abs=1e-9)
        # polygon edges are straight in the file's coordinates (the GIS convention, and what a
        # coverage fraction assumes), so the geodesic area is taken over densified edges
        a, _ = Geod(ellps="WGS84").geometry_area_perimeter(shapely.segmentize(poly, 0.001))
        assert row["area_km2"] == pytest.approx(abs(a) / 1e6, rel=1e-6)
    sub = next(r for r in rows if r["region"] == "sub-cell")
    # a polygon inside one cell takes that cell's value
    j, i = int((NORTH - 50.63) / RES), int((10.535 - WEST) / RES)
    assert sub["mean_degree_days"] == pytest.approx(float(ds["degree_days"].values[j, i]))
    north = next(r for r in rows if r["region"] == "north")
    # wholly on data: equal up to the area density varying with latitude inside a cell
    assert north["covered_km2"] == pytest.approx(north["area_km2"], rel=5e-5)
    lake = next(r for r in rows if r["region"] == "lakeside")
    assert lake["covered_km2"] < lake["area_km2"] * 0.9  # the lake part has no data


def test_region_in_projected_crs_over_lonlat_grid():
    ds = layers()
    to_laea = Transformer.from_crs("EPSG:4326", "EPSG:3035", always_xy=True)
    cx, cy = to_laea.transform(10.6, 50.55)
    poly3035 = box(cx - 20_000, cy - 15_000, cx + 20_000, cy + 15_000)  # 40 km × 30 km
    w = region_weights(regions_gdf({"laea": poly3035}, crs="EPSG:3035"), ds)
    rows, _ = summarize_group(ds, w, reference="suitability", level=0.5)
    # independent: densify the projected box's edges, move it to lon/lat, then as above
    back = Transformer.from_crs("EPSG:3035", "EPSG:4326", always_xy=True)
    poly_ll = shapely.transform(shapely.segmentize(poly3035, 100.0),
                                lambda x, y: back.transform(x, y), interleaved=False)
    mean, covered, _ = independent(ds, poly_ll, "degree_days")
    assert rows[0]["mean_degree_days"] == pytest.approx(mean, rel=1e-5)
    assert rows[0]["covered_km2"] == pytest.approx(covered, rel=1e-4)
    # EPSG:3035 is equal-area, so the region's true area is its planar area: 1200 km²
    assert rows[0]["area_km2"] == pytest.approx(1200.0, rel=1e-4)


def test_regions_outside_or_on_missing_cells_are_empty_with_warning():
    ds = layers()
    polys = {"lake": box(10.02, 50.02, 10.28, 50.28), "far": box(30, 10, 31, 11),
             "ok": box(10.5, 50.5, 10.8, 50.8)}
    with pytest.warns(SuitmapWarning, match="far, lake"):
        table = region_table([("period", "baseline", ds)], regions_gdf(polys), 0.5)
    lake = table.set_index("region").loc["lake"]
    far = table.set_index("region").loc["far"]
    for r in (lake, far):
        assert r["covered_km2"] == 0
        assert np.isnan(r["mean_degree_days"]) and np.isnan(r["suitable_area_km2"])
        assert np.isnan(r["suitable_share"])
    assert far["area_km2"] > 10_000  # still the polygon's own area
    assert np.isfinite(table.set_index("region").loc["ok", "mean_degree_days"])


def test_class_layers_give_areas_per_class():
    ds = layers()
    code = np.where(np.isnan(ds["suitability"].values), 255, (ds["suitability"].values >= 0.5) * 1)
    ds["change_class"] = (("y", "x"), code.astype("uint8"))
    ds["change_class"].attrs = {"flag_values": [0, 1], "flag_meanings": "low high"}
    w = region_weights(regions_gdf({"r": box(10.0, 50.0, 11.2, 51.0)}), ds)
    row = summarize_group(ds, w, reference="suitability", level=0.5)[0][0]
    assert "mean_change_class" not in row
    assert row["change_class_high_km2"] == pytest.approx(row["suitable_area_km2"], rel=1e-12)
    assert row["change_class_low_km2"] + row["change_class_high_km2"] == pytest.approx(
        row["covered_km2"], rel=1e-12)


def test_read_regions_merges_names_and_names_bad_input(tmp_path):
    gdf = gpd.GeoDataFrame({"district": ["A", "A", "B"], "n": [1, 2, 3]},
                           geometry=[box(0, 0, 1, 1), box(1, 0, 2, 1), box(5, 5, 6, 6)], crs=4326)
    path = tmp_path / "d.gpkg"
    gdf.to_file(path, layer="districts", engine="pyogrio")
    got = read_regions(path, "district")
    assert sorted(got["region"]) == ["A", "B"]
    assert got.set_index("region").loc["A"].geometry.area == pytest.approx(2.0)
    with pytest.raises(InputError, match="no field 'name'.*district"):
        read_regions(path, "name")
    with pytest.raises(InputError, match="no layer 'x'"):
        read_regions(path, "district", "x")
    with pytest.raises(InputError, match="does not exist"):
        read_regions(tmp_path / "missing.gpkg", "district")
    (tmp_path / "bad.geojson").write_text("not json")
    with pytest.raises(InputError, match="bad.geojson"):
        read_regions(tmp_path / "bad.geojson", "district")


def test_south_up_grid_and_0_360_longitudes_give_the_same_rows():
    ds = layers()
    polys = {"a": Polygon([(10.13, 50.97), (10.87, 50.91), (10.95, 50.52), (10.2, 50.44)]),
             "b": box(10.52, 50.62, 10.55, 50.64)}
    ref = summarize_group(ds, region_weights(regions_gdf(polys), ds), reference="suitability",
                          level=0.5)[0]
    south_up = ds.isel(y=slice(None, None, -1))
    got = summarize_group(south_up, region_weights(regions_gdf(polys), south_up),
                          reference="suitability", level=0.5)[0]
    for g, r in zip(got, ref):
        assert g.keys() == r.keys()
        for key in r:  # names compare exactly, numbers to rounding (empty values stay empty)
            if isinstance(r[key], str) or r[key] is None:
                assert g[key] == r[key], key
            else:
                assert g[key] == pytest.approx(r[key], rel=1e-12, nan_ok=True), key
    # a 0…360 grid at 190…191.2°E, regions given in −180…180 (−170…−168.8)
    shifted = ds.assign_coords(x=ds["x"] + 180.0).rio.write_crs("EPSG:4326")
    west = {k: shapely.affinity.translate(g, xoff=-180.0) for k, g in polys.items()}
    got = summarize_group(shifted, region_weights(regions_gdf(west), shifted),
                          reference="suitability", level=0.5)[0]
    for g, r in zip(got, ref):
        assert g["mean_degree_days"] == pytest.approx(r["mean_degree_days"], rel=1e-9)
        assert g["covered_km2"] == pytest.approx(r["covered_km2"], rel=1e-9)


def test_weighted_percentiles():
    rng = np.random.default_rng(1)
    v = rng.normal(500, 100, 37)
    # equal weights: the mid-point rule is the Hazen plotting position (Hyndman & Fan 1996,
    # definition 5), numpy's method="hazen"
    for q in (5, 25, 50, 95):
        assert weighted_percentiles(v, np.ones_like(v), q) == pytest.approx(
            np.percentile(v, q, method="hazen"))
    # weights 1 and 3 on 0 and 10: centres at 0.5 and 2.5 of 4, so the median is 7.5 (by hand)
    assert weighted_percentiles(np.array([10.0, 0.0]), np.array([3.0, 1.0]), 50) == pytest.approx(7.5)


def test_projected_grid_with_lonlat_region():
    # a 1 km grid in EPSG:3035 (equal-area, so planar cell areas are true: 1 km² each)
    x = 4_300_000 + (np.arange(30) + 0.5) * 1000.0
    y = 2_900_000 + (np.arange(25)[::-1] + 0.5) * 1000.0
    v = np.add.outer(np.arange(25.0), 2 * np.arange(30.0))
    ds = xr.Dataset({"degree_days": (("y", "x"), v)}, coords={"y": y, "x": x}).rio.write_crs("EPSG:3035")
    to_ll = Transformer.from_crs("EPSG:3035", "EPSG:4326", always_xy=True)
    lo0, la0 = to_ll.transform(4_305_300, 2_904_700)
    lo1, la1 = to_ll.transform(4_322_900, 2_917_100)
    poly_ll = box(lo0, la0, lo1, la1)
    row = summarize_group(ds, region_weights(regions_gdf({"r": poly_ll}), ds))[0][0]
    # independent: the lon/lat box, densified and projected, intersected with each 1 km cell
    to_laea = Transformer.from_crs("EPSG:4326", "EPSG:3035", always_xy=True)
    poly = shapely.transform(shapely.segmentize(poly_ll, 1e-4), lambda a, b: to_laea.transform(a, b),
                             interleaved=False)
    num = den = 0.0
    for j, yc in enumerate(y):
        for i, xc in enumerate(x):
            f = box(xc - 500, yc - 500, xc + 500, yc + 500).intersection(poly).area / 1e6
            num += f * v[j, i]
            den += f
    assert row["mean_degree_days"] == pytest.approx(num / den, rel=1e-6)
    assert row["covered_km2"] == pytest.approx(den, rel=1e-6)
    assert row["area_km2"] == pytest.approx(poly.area / 1e6, rel=1e-4)

"""The Python package against the CLI and against reference libraries.

Run from the repository root: ``.venv/bin/python -m pytest python/tests`` (scripts/test.sh
does). The CLI binary is ``$AREAL_BIN`` or ``target/release/areal``.

Reference libraries: rasterio (GDAL) reads the rasters, geopandas/pyogrio the vectors,
pandas the CSV tables, pyproj.Geod (GeographicLib, Karney 2013) measures areas on WGS84,
jsonschema (JSON Schema draft 2020-12) validates summary.json.
"""

import json
import math
import os
import subprocess
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

import areal

ROOT = Path(__file__).resolve().parents[2]
DEMO = ROOT / "demo-data"
BIN = os.environ.get("AREAL_BIN", str(ROOT / "target" / "release" / "areal"))
GEOD = None


def geod():
    global GEOD
    if GEOD is None:
        import pyproj

        GEOD = pyproj.Geod(ellps="WGS84")
    return GEOD


DEMO_OPTS = dict(omission=5, accessible=DEMO / "accessible.geojson", gap_km=20, min_patch_km2=10,
                 vectors=True)


@pytest.fixture(scope="module")
def runs(tmp_path_factory):
    """The demo run twice: through the Python package and through the CLI."""
    base = tmp_path_factory.mktemp("demo")
    py = areal.range(DEMO / "suitability.tif", DEMO / "records.csv", base / "py", **DEMO_OPTS)
    cli_out = base / "cli"
    subprocess.run(
        [BIN, "range", "--suitability", str(DEMO / "suitability.tif"), "--records",
         str(DEMO / "records.csv"), "--omission", "5", "--accessible",
         str(DEMO / "accessible.geojson"), "--gap-km", "20", "--min-patch-km2", "10",
         "--vectors", "--quiet", "--out", str(cli_out)],
        check=True, capture_output=True)
    return py, cli_out


def test_python_summary_equals_the_cli_summary(runs):
    py, cli_out = runs
    cli = json.loads((cli_out / "summary.json").read_text())
    # The same run; both record the canonical `areal range` command that reproduces it
    # (its paths are as each was given them).
    assert cli.pop("command_line")[:3] == ["areal", "range", "--suitability"]
    assert py["summary"].pop("command_line")[:3] == ["areal", "range", "--suitability"]
    assert py["summary"] == cli
    written = json.loads(Path(py["paths"]["summary"]).read_text())
    written.pop("command_line")
    assert written == cli


def test_python_files_equal_the_cli_files(runs):
    import rasterio

    py, cli_out = runs
    for name in ("patches.csv", "records.csv", "classes.qml", "patches.qml"):
        assert (Path(py["paths"]["summary"]).parent / name).read_bytes() == \
            (cli_out / name).read_bytes(), name
    with rasterio.open(py["paths"]["classes"]) as a, rasterio.open(cli_out / "classes.tif") as b:
        assert np.array_equal(a.read(1), b.read(1))
    assert set(py["paths"]) >= {"classes", "classes_style", "patches", "records", "summary",
                                "gpkg", "patches_geojson"}


def test_summary_validates_against_the_schema_and_a_wrong_type_fails(runs):
    import jsonschema

    schema = json.loads((ROOT / "docs" / "summary.schema.json").read_text())
    s = runs[0]["summary"]
    jsonschema.validate(s, schema)
    assert s["inputs"]["data_type"] == "Float32"
    bad = json.loads(json.dumps(s))
    bad["cells"]["unsuitable"] = "65830"
    with pytest.raises(jsonschema.ValidationError):
        jsonschema.validate(bad, schema)


def test_classes_read_by_rasterio_agree_with_the_summary(runs):
    import rasterio

    py, _ = runs
    s = py["summary"]
    with rasterio.open(py["paths"]["classes"]) as ds:
        assert ds.dtypes[0] == "uint8" and ds.nodata == 255
        assert ds.crs.to_epsg() == 4326
        data = ds.read(1)
        cmap = ds.colormap(1)
        tags = ds.tags(1)
        transform, crs = ds.transform, ds.crs
    counts = {c: int((data == c).sum()) for c in (0, 1, 2, 255)}
    assert counts[0] == s["cells"]["unsuitable"]
    assert counts[1] == s["cells"]["inside_accessible"]
    assert counts[2] == s["cells"]["outside_accessible"]
    assert counts[255] == s["cells"]["nodata"]
    assert cmap[1][:3] == (0, 158, 115)
    # Class names inside the GeoTIFF itself (GDAL_METADATA tag), not only in the sidecar.
    assert tags["CLASS_1"] == "suitable, accessible (in M)"
    # Class areas: per-cell areas from pyproj.Geod (cell polygons with densified parallels).
    lat_edges = transform.f + transform.e * np.arange(data.shape[0] + 1)
    dlon = transform.a
    row_area = np.empty(data.shape[0])
    for r in range(data.shape[0]):
        s_, n_ = lat_edges[r + 1], lat_edges[r]
        lons = np.concatenate([np.linspace(0, dlon, 50), np.linspace(dlon, 0, 50)])
        lats = np.concatenate([np.full(50, s_), np.full(50, n_)])
        row_area[r] = abs(geod().polygon_area_perimeter(lons, lats)[0]) / 1e6
    for c, key in ((0, "unsuitable"), (1, "inside_accessible"), (2, "outside_accessible")):
        area = float(((data == c).sum(axis=1) * row_area).sum())
        assert area == pytest.approx(s["area_km2"][key], rel=1e-6), key
    # And areal's own cell areas on the same grid agree with pyproj to 1e-6.
    mine = areal.cell_areas_km2(transform=transform, shape=data.shape, crs=crs)
    assert np.allclose(mine[:, 0], row_area, rtol=1e-6)


def test_raster_attribute_table_in_the_sidecar(runs):
    """The GDAL PAM sidecar holds a thematic RAT whose cells and areas are the summary's."""
    import xml.etree.ElementTree as ET

    py, _ = runs
    s = py["summary"]
    root = ET.parse(py["paths"]["classes_aux"]).getroot()
    rat = root.find(".//GDALRasterAttributeTable")
    assert rat.get("tableType") == "thematic"
    names = [f.find("Name").text for f in rat.findall("FieldDefn")]
    assert names == ["value", "name", "red", "green", "blue", "alpha", "cells", "area_km2"]
    rows = [[f.text for f in row.findall("F")] for row in rat.findall("Row")]
    assert [r[0] for r in rows] == ["0", "1", "2"]
    keys = ["unsuitable", "inside_accessible", "outside_accessible"]
    for r, key in zip(rows, keys):
        assert int(float(r[6])) == s["cells"][key]
        assert float(r[7]) == pytest.approx(s["area_km2"][key], rel=1e-12)


def test_patches_csv_types_as_pandas_infers_them(runs):
    py, _ = runs
    p = pd.read_csv(py["paths"]["patches"])
    assert p["reachable"].dtype == bool
    assert p["patch_id"].dtype == np.int64 and p["cells"].dtype == np.int64
    assert p["area_km2"].dtype == np.float64
    s = py["summary"]
    assert int(p["reachable"].sum()) == s["metrics"]["reach"]["reachable_patches"]
    inside = p.loc[p["class"] == 1, "area_km2"].sum()
    assert inside == pytest.approx(s["area_km2"]["inside_accessible"], rel=1e-12)


def test_vectors_read_by_geopandas_agree_with_the_tables(runs):
    import geopandas as gpd
    import pyogrio

    py, _ = runs
    s = py["summary"]
    layers = dict(pyogrio.list_layers(py["paths"]["gpkg"]))
    assert set(layers) == {"range", "patches", "unreachable", "accessible", "records"}
    patches = pd.read_csv(py["paths"]["patches"])
    g = gpd.read_file(py["paths"]["gpkg"], layer="patches")
    assert len(g) == len(patches) and g.is_valid.all()
    assert sorted(g["patch_id"]) == sorted(patches["patch_id"])
    rec = gpd.read_file(py["paths"]["gpkg"], layer="records")
    assert rec["dropped_by_threshold"].dtype == bool
    assert len(rec) == s["records"]["total"]
    # Geodesic areas of the GeoJSON patches (pyproj.Geod, edges densified to 0.001 degree
    # so that east-west edges follow their parallel) agree with areal's cell sums.
    gj = gpd.read_file(py["paths"]["patches_geojson"]).sort_values("patch_id")
    dens = gj.geometry.segmentize(0.001)
    geo = np.array([abs(geod().geometry_area_perimeter(x)[0]) / 1e6 for x in dens])
    assert np.allclose(geo, gj["area_km2"].to_numpy(), rtol=1e-6)


def test_threshold_rule_on_numpy_arrays():
    # Hand-worked: n = 4, E = 25 %: k = floor(4 * 25 / 100) = 1; T = 0.5.
    t = areal.omission_threshold(np.array([0.9, 0.2, 0.5, 0.7]), omission=25)
    assert (t["value"], t["records_dropped"], t["records_used"]) == (0.5, 1, 4)
    # Against numpy: T is the (k+1)-th smallest value, k = floor(n E / 100).
    rng = np.random.default_rng(7)
    v = rng.random((40, 25)).astype(np.float32)
    for e in (0, 5, 10, 33.3):
        k = math.floor(v.size * e / 100)
        t = areal.omission_threshold(v, omission=e)
        assert t["value"] == float(np.sort(v, axis=None)[k])
        assert t["records_dropped"] == k
    assert areal.omission_threshold(v, threshold=0.5)["records_omitted"] == int((v < 0.5).sum())
    with pytest.raises(areal.ArealError) as e:
        areal.omission_threshold([0.3, float("nan")], omission=5)
    assert "non-finite" in str(e.value)
    with pytest.raises(areal.ArealError) as e:
        areal.omission_threshold([0.3], omission=100)
    assert e.value.exit_code == 2


def test_cell_areas_against_pyproj_and_equal_area_cells():
    # A 1 x 1 degree lon/lat grid from 60 N to 58 N: GeographicLib areas of the cells.
    a = areal.cell_areas_km2(transform=(10, 1, 0, 60, 0, -1), shape=(2, 3), crs="EPSG:4326")
    for r, (n, s_) in enumerate(((60, 59), (59, 58))):
        lons = np.concatenate([np.linspace(10, 11, 200), np.linspace(11, 10, 200)])
        lats = np.concatenate([np.full(200, s_), np.full(200, n)])
        ref = abs(geod().polygon_area_perimeter(lons, lats)[0]) / 1e6
        assert a[r] == pytest.approx([ref] * 3, rel=1e-6)
    # EPSG:6933 is equal-area: every cell is its nominal size, 1 km x 1 km.
    ea = areal.cell_areas_km2(transform=(0, 1000, 0, 0, 0, -1000), shape=(2, 2), crs="EPSG:6933")
    assert np.all(ea == 1.0)
    with pytest.raises(areal.ArealError):
        areal.cell_areas_km2(transform=(0, 1, 0, 0, 0, 1), shape=(2, 2), crs="EPSG:4326")


def test_errors_carry_the_cli_exit_code(tmp_path):
    with pytest.raises(areal.ArealError) as e:
        areal.range(tmp_path / "missing.tif", DEMO / "records.csv", tmp_path / "o", omission=5)
    assert e.value.exit_code == 3 and "missing.tif" in str(e.value)
    with pytest.raises(areal.ArealError) as e:
        areal.range(DEMO / "suitability.tif", DEMO / "records.csv", tmp_path / "o")
    assert e.value.exit_code == 2
    assert not (tmp_path / "o").exists()

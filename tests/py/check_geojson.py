#!/usr/bin/env python3
"""Reference-library check of areal's GeoJSON (run by scripts/test.sh after cargo test).

Builds a global 1-degree grid with a patch (holding a hole) across the antimeridian and a
patch touching the north pole, runs
`areal range --vectors` on it, and reads the GeoJSON files with shapely (validity, RFC 7946
winding) and pyproj.Geod (GeographicLib's geodesic polygon area) to compare every patch's
area with patches.csv. The polygons are measured as written, every edge a geodesic: areal
adds the vertices along parallels that this needs (docs/vectors.md).

Usage: check_geojson.py PATH/TO/areal
Prints 'N passed, N failed' and exits non-zero on any failure.
"""

import csv
import json
import os
import subprocess
import sys
import tempfile

from shapely.geometry import shape
from pyproj import Geod

PASSED = 0
FAILED = 0


def check(ok, what):
    global PASSED, FAILED
    if ok:
        PASSED += 1
    else:
        FAILED += 1
        print(f"FAIL: {what}", file=sys.stderr)


def make_inputs(d, west):
    w, h = 360, 180
    v = [[0.1] * w for _ in range(h)]

    def col(lon):
        return int((lon - west) % 360)

    for r in range(76, 81):  # latitudes 14 N .. 9 N
        for lon in (177, 178, 179, 180, 181, 182):
            if not (r == 78 and lon == 181):  # a one-cell hole east of 180
                v[r][col(lon)] = 0.9
    for r in range(0, 3):  # a patch touching the north pole, 30 degrees wide
        for lon in range(10, 40):
            v[r][col(lon)] = 0.9
    for r in range(40, 44):  # a patch across Greenwich
        for lon in (-2, -1, 0, 1):
            v[r][col(lon)] = 0.9
    asc = os.path.join(d, "g.asc")
    with open(asc, "w") as f:
        f.write(f"ncols {w}\nnrows {h}\nxllcorner {west}\nyllcorner -90\ncellsize 1\n")
        for row in v:
            f.write(" ".join(str(x) for x in row) + "\n")
    tif = os.path.join(d, "g.tif")
    subprocess.run(
        ["gdal_translate", "-q", "-a_srs", "EPSG:4326", "-ot", "Float32", asc, tif],
        check=True,
    )
    rec = os.path.join(d, "r.csv")
    with open(rec, "w") as f:
        f.write("lon,lat\n179.5,11.5\n")
    return tif, rec


def ring_is_ccw(coords):
    s = 0.0
    for (x1, y1), (x2, y2) in zip(coords, coords[1:]):
        s += x1 * y2 - x2 * y1
    return s > 0


def main():
    areal = sys.argv[1]
    geod = Geod(ellps="WGS84")
    for west in (-180.0, 0.0):
        with tempfile.TemporaryDirectory() as d:
            tif, rec = make_inputs(d, west)
            out = os.path.join(d, "out")
            subprocess.run(
                [areal, "range", "--suitability", tif, "--records", rec,
                 "--threshold", "0.5", "--buffer-km", "1500", "--out", out, "--vectors"],
                check=True, stdout=subprocess.DEVNULL,
            )
            with open(os.path.join(out, "patches.csv")) as f:
                rows = list(csv.DictReader(f))
            for name in ("range", "patches", "unreachable", "accessible", "records"):
                with open(os.path.join(out, f"{name}.geojson")) as f:
                    fc = json.load(f)
                check("crs" not in fc, f"{name}: no crs member (RFC 7946 section 4)")
                for feat in fc["features"]:
                    g = shape(feat["geometry"])
                    check(g.is_valid, f"west {west}, {name}: shapely finds the geometry valid")
                    if g.geom_type in ("Polygon", "MultiPolygon"):
                        polys = list(g.geoms) if g.geom_type == "MultiPolygon" else [g]
                        for p in polys:
                            lons = [c[0] for c in p.exterior.coords]
                            check(min(lons) >= -180 and max(lons) <= 180,
                                  f"west {west}, {name}: longitudes in [-180, 180]")
                            check(max(lons) - min(lons) < 180,
                                  f"west {west}, {name}: no part spans the antimeridian")
                            check(ring_is_ccw(list(p.exterior.coords)),
                                  f"west {west}, {name}: exterior counter-clockwise (RFC 7946 3.1.6)")
                            for hole in p.interiors:
                                check(not ring_is_ccw(list(hole.coords)),
                                      f"west {west}, {name}: hole clockwise")
            with open(os.path.join(out, "patches.geojson")) as f:
                feats = json.load(f)["features"]
            check(len(feats) == len(rows), f"west {west}: one feature per patches.csv row")
            crossing = 0
            for feat, row in zip(feats, rows):
                check(str(feat["properties"]["patch_id"]) == row["patch_id"], "patch ids in order")
                g = shape(feat["geometry"])
                b = g.bounds
                if b[0] == -180 and b[2] == 180:
                    crossing += 1
                    check(g.geom_type == "MultiPolygon",
                          f"west {west}: the crossing patch is a MultiPolygon (RFC 7946 3.1.9)")
                area_m2, _ = geod.geometry_area_perimeter(g)
                want = float(row["area_km2"])
                rel = abs(area_m2 / 1e6 - want) / want
                check(rel < 1e-6, f"west {west}, patch {row['patch_id']}: "
                                  f"pyproj area {area_m2 / 1e6} vs {want} (rel {rel:.2e})")
            check(crossing == 1, f"west {west}: exactly one patch crosses 180 ({crossing})")
    print(f"{PASSED} passed, {FAILED} failed")
    return 1 if FAILED else 0


if __name__ == "__main__":
    sys.exit(main())

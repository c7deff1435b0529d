#!/usr/bin/env python3
"""Check `areal extent --json` against shapely + pyproj on generated point sets.

EOO: the convex hull is rebuilt independently (shapely, in a spherical gnomonic projection
centred on the points, where great circles are straight lines) and its vertices measured with
pyproj.Geod (GeographicLib's geodesic polygon area on WGS84). The relative difference with
areal's `eoo_hull_km2` must be <= 1e-6. Point sets include one across the antimeridian and
sets around both poles.

AOO: the records are projected with pyproj into the LAEA areal reports (`aoo_grid.crs`) and
the distinct 2 km cells counted for the 16 documented origins; min and max must match.

Usage: python tests/py/check_eoo.py [path/to/areal]   (default target/release/areal)
Prints 'N passed, M failed' and exits non-zero on any failure.
"""

import csv
import json
import math
import os
import random
import subprocess
import sys
import tempfile

import numpy as np
from pyproj import CRS, Geod, Transformer
from shapely.geometry import MultiPoint

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
AREAL = sys.argv[1] if len(sys.argv) > 1 else os.path.join(ROOT, "target", "release", "areal")
CONTRACT = ["eoo_km2", "eoo_method", "aoo_km2", "aoo_min_km2", "aoo_max_km2", "aoo_cell_km", "records_used"]


def point_sets():
    rnd = random.Random(20240611)

    def box(n, lon0, lon1, lat0, lat1):
        pts = []
        for _ in range(n):
            lon = rnd.uniform(lon0, lon1)
            lon = (lon + 180.0) % 360.0 - 180.0
            pts.append((lon, rnd.uniform(lat0, lat1)))
        return pts

    return {
        "regional (10-15E, 40-45N)": box(50, 10, 15, 40, 45),
        "across the antimeridian (175E-175W, 20-15S)": box(40, 175, 185, -20, -15),
        "antimeridian and equator (170E-170W, 5S-5N)": box(60, 170, 190, -5, 5),
        "around the north pole (80-89N, all longitudes)": box(30, -180, 180, 80, 89),
        "around the south pole (82-89S, all longitudes)": box(30, -180, 180, -89, -82),
        "near the north pole, one side (60-120E, 84-89N)": box(25, 60, 120, 84, 89),
        "continental (10W-30E, 35-60N)": box(100, -10, 30, 35, 60),
        "small (0.01 degree)": box(12, 7.0, 7.01, 46.0, 46.01),
        "clustered (0.1 degree, 200 points)": box(200, 20.0, 20.1, 50.0, 50.1),
    }


def reference_hull_area_km2(pts):
    """Convex hull in a spherical gnomonic projection, area with pyproj.Geod on WGS84."""
    v = np.zeros(3)
    for lon, lat in pts:
        la, lo = math.radians(lat), math.radians(lon)
        v += [math.cos(la) * math.cos(lo), math.cos(la) * math.sin(lo), math.sin(la)]
    lat0 = math.degrees(math.atan2(v[2], math.hypot(v[0], v[1])))
    lon0 = math.degrees(math.atan2(v[1], v[0]))
    sphere = CRS.from_proj4("+proj=longlat +R=1 +no_defs")
    gnom = CRS.from_proj4(f"+proj=gnom +lat_0={lat0!r} +lon_0={lon0!r} +R=1 +no_defs")
    fwd = Transformer.from_crs(sphere, gnom, always_xy=True)
    inv = Transformer.from_crs(gnom, sphere, always_xy=True)
    xs, ys = fwd.transform([p[0] for p in pts], [p[1] for p in pts])
    hull = MultiPoint(list(zip(xs, ys))).convex_hull
    hx, hy = hull.exterior.coords.xy
    lons, lats = inv.transform(list(hx)[:-1], list(hy)[:-1])
    area, _ = Geod(ellps="WGS84").polygon_area_perimeter(lons, lats)
    return abs(area) / 1e6, len(lons)


def reference_aoo(pts, crs, cell_km):
    t = Transformer.from_crs(CRS.from_epsg(4326), CRS.from_proj4(crs), always_xy=True)
    xs, ys = t.transform([p[0] for p in pts], [p[1] for p in pts])
    w = cell_km * 1000.0
    counts = []
    for fx in (0.0, 0.25, 0.5, 0.75):
        for fy in (0.0, 0.25, 0.5, 0.75):
            cells = {(math.floor((x - fx * w) / w), math.floor((y - fy * w) / w)) for x, y in zip(xs, ys)}
            counts.append(len(cells))
    return min(counts) * cell_km**2, max(counts) * cell_km**2


def run_extent(pts, tmp, name):
    path = os.path.join(tmp, name + ".csv")
    with open(path, "w", newline="") as f:
        w = csv.writer(f)
        w.writerow(["decimalLongitude", "decimalLatitude"])
        for lon, lat in pts:
            w.writerow([repr(lon), repr(lat)])
    out = subprocess.run([AREAL, "extent", "--records", path, "--json"], capture_output=True, text=True)
    if out.returncode != 0:
        raise RuntimeError(f"areal extent failed ({out.returncode}): {out.stderr.strip()}")
    return json.loads(out.stdout)


def main():
    if not os.path.exists(AREAL):
        print(f"{AREAL} not found; build it first (cargo build --release)")
        print("0 passed, 1 failed")
        return 1
    passed = failed = 0
    with tempfile.TemporaryDirectory() as tmp:
        for i, (name, pts) in enumerate(point_sets().items()):
            try:
                got = run_extent(pts, tmp, f"set{i}")
                missing = [k for k in CONTRACT if k not in got]
                ref, nv = reference_hull_area_km2(pts)
                eoo = got["eoo_hull_km2"]
                rel = abs(eoo - ref) / ref
                amin, amax = reference_aoo(pts, got["aoo_grid"]["crs"], got["aoo_cell_km"])
                ok = (
                    not missing
                    and rel <= 1e-6
                    and got["eoo_hull_vertices"] == nv
                    and got["eoo_km2"] == max(eoo, got["aoo_km2"])
                    and (got["aoo_min_km2"], got["aoo_max_km2"]) == (amin, amax)
                    and got["aoo_km2"] == amin
                    and got["records_used"] == len(pts)
                )
                status = "ok" if ok else "FAIL"
                print(
                    f"{status:4} {name}: EOO hull {eoo:.6f} km2, shapely+pyproj {ref:.6f} km2 "
                    f"(rel {rel:.1e}, {got['eoo_hull_vertices']}/{nv} vertices); "
                    f"AOO {got['aoo_min_km2']}..{got['aoo_max_km2']} km2, pyproj {amin}..{amax}"
                    + (f"; missing keys {missing}" if missing else "")
                )
            except Exception as e:  # report and count, never stop the run
                ok = False
                print(f"FAIL {name}: {e}")
            passed += ok
            failed += not ok
    print(f"{passed} passed, {failed} failed")
    return 0 if failed == 0 else 1


if __name__ == "__main__":
    sys.exit(main())

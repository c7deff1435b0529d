#!/usr/bin/env python3
"""The peer pipeline for the benchmark: the same job as `areal range`, written the way a
competent analyst would with numpy, scipy and rasterio (whole-array, vectorised).

  peer.py SUITABILITY RECORDS.csv OUTDIR (--accessible M.geojson | --buffer-km D) [--omission E]

It reads the raster whole, samples the records, applies the omission rule (one value per
occupied cell, k = floor(n*E/100)), builds M (rasterio.features.geometry_mask for a polygon,
a scipy cKDTree on 3-D unit vectors for a buffer, spherical chord distance), classifies,
labels class 1 and class 2 with scipy.ndimage.label (8-connected), measures patches with
the exact ellipsoidal cell area per row, and writes classes.tif and patches.csv.
"""
import argparse
import csv
import json
import math
import os
import sys

import numpy as np
import rasterio
import rasterio.features
from scipy import ndimage
from scipy.spatial import cKDTree

A = 6378137.0
F = 1 / 298.257223563
E2 = F * (2 - F)
E = math.sqrt(E2)
R_MEAN = 6371008.8


def q(phi):
    s = np.sin(np.radians(phi))
    return (1 - E2) * (s / (1 - E2 * s * s) + np.arctanh(E * s) / E)


def unit(lon, lat):
    lo, la = np.radians(lon), np.radians(lat)
    return np.stack([np.cos(la) * np.cos(lo), np.cos(la) * np.sin(lo), np.sin(la)], axis=-1)


def main():
    p = argparse.ArgumentParser()
    p.add_argument("suitability")
    p.add_argument("records")
    p.add_argument("out")
    p.add_argument("--accessible")
    p.add_argument("--buffer-km", type=float)
    p.add_argument("--omission", type=float, default=5.0)
    a = p.parse_args()
    os.makedirs(a.out, exist_ok=True)

    with rasterio.open(a.suitability) as ds:
        s = ds.read(1)
        profile = ds.profile
        tr = ds.transform
        nodata = ds.nodata
        h, w = s.shape
        with open(a.records) as f:
            rd = list(csv.DictReader(f))
        lon = np.array([float(r["lon"]) for r in rd])
        lat = np.array([float(r["lat"]) for r in rd])
        rows, cols = rasterio.transform.rowcol(tr, lon, lat)
        rows, cols = np.asarray(rows), np.asarray(cols)
    inside = (rows >= 0) & (rows < h) & (cols >= 0) & (cols < w)
    valid = np.isfinite(s) & (s != nodata)
    cells = np.unique(rows[inside] * w + cols[inside])
    vals = s.ravel()[cells]
    vals = np.sort(vals[valid.ravel()[cells]].astype(np.float64))
    k = int(math.floor(len(vals) * a.omission / 100 + 1e-9))
    t = vals[k]

    if a.accessible:
        with open(a.accessible) as f:
            geoms = [ft["geometry"] for ft in json.load(f)["features"]]
        in_m = rasterio.features.geometry_mask(geoms, out_shape=(h, w), transform=tr, invert=True)
    else:
        tree = cKDTree(unit(lon, lat))
        chord = 2 * math.sin(a.buffer_km * 1000 / R_MEAN / 2)
        in_m = np.zeros((h, w), dtype=bool)
        xs = tr.c + (np.arange(w) + 0.5) * tr.a
        step = 256
        for y0 in range(0, h, step):
            ys = tr.f + (np.arange(y0, min(h, y0 + step)) + 0.5) * tr.e
            glon, glat = np.meshgrid(xs, ys)
            d, _ = tree.query(unit(glon, glat).reshape(-1, 3), distance_upper_bound=chord, workers=2)
            in_m[y0:y0 + len(ys)] = (d <= chord).reshape(len(ys), w)

    suit = valid & (s >= t)
    classes = np.zeros((h, w), dtype=np.uint8)
    classes[suit & in_m] = 1
    classes[suit & ~in_m] = 2
    classes[~valid] = 255
    del s, suit

    lat_edges = tr.f + np.arange(h + 1) * tr.e
    row_area = (A * A / 2) * math.radians(abs(tr.a)) * np.abs(q(lat_edges[:-1]) - q(lat_edges[1:]))
    structure = ndimage.generate_binary_structure(2, 2)
    out_rows = []
    pid = 0
    for cls in (1, 2):
        labels, n = ndimage.label(classes == cls, structure=structure)
        if n == 0:
            continue
        # Per-patch sums in row chunks, so no full-size float64 weight array is made.
        area = np.zeros(n + 1)
        count = np.zeros(n + 1, dtype=np.int64)
        for y0 in range(0, h, 1024):
            lab = labels[y0:y0 + 1024]
            flat = lab.ravel()
            area += np.bincount(flat, weights=np.repeat(row_area[y0:y0 + 1024], w), minlength=n + 1)
            count += np.bincount(flat, minlength=n + 1)
        area, count = area[1:], count[1:]
        for i in range(n):
            pid += 1
            out_rows.append((pid, cls, int(count[i]), area[i] / 1e6))
        del labels
    with open(os.path.join(a.out, "patches.csv"), "w") as f:
        f.write("patch_id,class,cells,area_km2\n")
        for r in out_rows:
            f.write("%d,%d,%d,%.6f\n" % r)
    profile.update(dtype="uint8", nodata=255, compress="deflate", tiled=True, blockxsize=256, blockysize=256,
                   predictor=1, BIGTIFF="IF_SAFER")
    with rasterio.open(os.path.join(a.out, "classes.tif"), "w", **profile) as dst:
        dst.write(classes, 1)
    print(json.dumps({"threshold": float(t), "patches": pid,
                      "inside_km2": float(sum(r[3] for r in out_rows if r[1] == 1)),
                      "outside_km2": float(sum(r[3] for r in out_rows if r[1] == 2))}))


if __name__ == "__main__":
    sys.exit(main())

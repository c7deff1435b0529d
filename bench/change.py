#!/usr/bin/env python3
"""Benchmark of `areal change`: wall time and peak memory as ratios to the GDAL decode floor
of both rasters (present + future), side by side in one run.

  bench/change.py [--sizes S,M,L] [--dispersal-km 50] [--metrics [--metrics-sizes S,M]]
                  [--out docs/bench-change.md]

Inputs come from ../shared/tools/make-landscape.py into bench-data/ (reused when present):
the present is the preset with seed 42 (the same files as bench/run.py). The future is
- for regional presets (M): the same world with the window moved 0.5 degrees east (same
  size), its geotransform then set to the present's, so it sits on the present grid;
- for global presets (tiny, S, L), where a window cannot move: the same seed with
  --land-fraction 0.32 (0.30 for the present), which keeps most of the world and moves its
  suitability (on tiny: correlation 0.51, 59 % of the suitable cells stay suitable). Another
  seed would share almost no land with the present, leaving no stable or lost cells and
  no reach to compute: not a workload worth timing.
The floor is examples/decode_floor (2 threads) on each raster, summed. Run through
bench/change.sh, which sets up the venv and builds the binaries.
"""
import argparse
import json
import os
import subprocess
import sys

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import run as common  # noqa: E402  (timed, ensure_inputs, write_table, paths)

PRESETS = {  # name: (width, height, bbox) of make-landscape.py, for the moved window
    "M": (12000, 10000, (20.0, -60.0, 120.0, -60.0 + 10000.0 / 120.0)),
}


def ensure_future(size):
    prefix = os.path.join(common.DATA, size + "-future")
    if os.path.exists(prefix + ".tif"):
        return prefix
    present = common.ensure_inputs(size) + ".tif"
    if size in PRESETS:
        w, h, (west, south, east, north) = PRESETS[size]
        cmd = [common.PY, common.GEN, "--width", str(w), "--height", str(h), "--bbox",
               str(west + 0.5), str(south), str(east + 0.5), str(north), "--seed", "42",
               "--out", prefix, "--quiet"]
    else:
        cmd = [common.PY, common.GEN, "--preset", size, "--seed", "42", "--land-fraction", "0.32",
               "--out", prefix, "--quiet"]
    print("generating future", size, file=sys.stderr)
    subprocess.run(cmd, check=True)
    if size in PRESETS:
        # Put the moved window on the present grid (values unchanged).
        fix = ("import rasterio,sys\n"
               "with rasterio.open(sys.argv[1]) as p: t = p.transform\n"
               "with rasterio.open(sys.argv[2], 'r+') as f: f.transform = t\n")
        subprocess.run([common.PY, "-c", fix, present, prefix + ".tif"], check=True)
    return prefix


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--sizes", default="S")
    ap.add_argument("--dispersal-km", default="50")
    ap.add_argument("--buffer-km", default="200")
    ap.add_argument("--metrics", action="store_true",
                    help="also time the default run (metrics and report on)")
    ap.add_argument("--metrics-sizes", default=None,
                    help="with --metrics, only these sizes (e.g. S,M: on L the metrics take minutes)")
    ap.add_argument("--out", default=os.path.join(common.ROOT, "docs", "bench-change.md"))
    a = ap.parse_args()
    env = dict(os.environ)
    env.setdefault("GDAL_CACHEMAX", "32")
    rows = []
    for size in a.sizes.split(","):
        prefix = common.ensure_inputs(size)
        fut = ensure_future(size) + ".tif"
        tif, occ, m = prefix + ".tif", prefix + ".occ.csv", prefix + ".m.geojson"
        floor_s = floor_mb = 0.0
        for r in (tif, fut):
            ok, s, mb, _, tail = common.timed([common.FLOOR, r, "2"], env=env)
            if not ok:
                sys.exit("decode floor failed: " + tail)
            floor_s += s
            floor_mb = max(floor_mb, mb)
        rows.append((size, "-", "GDAL decode floor, present + future (2 threads)", floor_s, floor_mb, 1.0, None, None))
        modes = [("polygon", ["--accessible", m]), ("buffer", ["--buffer-km", a.buffer_km])]
        for mode, marg in modes:
            with_metrics = a.metrics and (a.metrics_sizes is None or size in a.metrics_sizes.split(","))
            for metrics in ([False, True] if with_metrics else [False]):
                out = os.path.join(common.DATA, f"change-{size}-{mode}")
                cmd = [common.AREAL, "change", "--present", tif, "--future", fut, "--records", occ,
                       "--omission", "5", *marg, "--dispersal-km", a.dispersal_km, "--out", out,
                       "--overwrite", "--json", "--quiet"] + ([] if metrics else ["--no-metrics"])
                ok, s, mb, stdout, tail = common.timed(cmd, env=env)
                if not ok:
                    sys.exit(f"areal change failed on {size} {mode}: {tail}")
                c = json.loads(stdout)["change"]
                print(f"{size} {mode}: stable {c['area_km2']['stable']:.0f} km2, lost {c['area_km2']['lost']:.0f}, "
                      f"gained within {c['area_km2']['gained_within_reach']:.0f}, beyond "
                      f"{c['area_km2']['gained_out_of_reach']:.0f}", file=sys.stderr)
                label = f"areal change, D = {a.dispersal_km} km" + (
                    ", default run (metrics, report)" if metrics else ", --no-metrics (report on)")
                rows.append((size, mode, label, s, mb, s / floor_s, None, None))
    common.write_table(a.out, rows)


if __name__ == "__main__":
    main()

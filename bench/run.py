#!/usr/bin/env python3
"""Benchmark runner: the GDAL decode floor, areal, and the numpy/scipy/rasterio peer on
the same inputs, each under /usr/bin/time -v, side by side in one run.

  bench/run.py [--sizes S,M,L] [--modes polygon,buffer,vectors,vectors-metrics] [--out docs/bench-results.md]

Modes: `polygon` and `buffer` time the pass (`--no-metrics`) with a polygon or a record-buffer
M, beside the peer. `vectors` times the pass and the vector step (`--vectors --no-metrics`,
polygon M, every vector file written); `vectors-metrics` times `areal range --vectors` as
users run it (metrics on). Both areal only (the peer writes no vectors).

Inputs come from ../shared/tools/make-landscape.py (seed 42; L with 1,000 points) into
bench-data/ and are reused when present. The peer runs under an address-space limit
(--peer-limit-gb, default 20) so that it fails cleanly instead of exhausting the machine.
"""
import argparse
import csv
import json
import os
import platform
import re
import subprocess
import sys
import time

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
DATA = os.path.join(ROOT, "bench-data")
PY = os.path.join(ROOT, ".venv", "bin", "python")
GEN = os.path.join(ROOT, "..", "shared", "tools", "make-landscape.py")
AREAL = os.path.join(ROOT, "target", "release", "areal")
FLOOR = os.path.join(ROOT, "target", "release", "examples", "decode_floor")
POINTS = {"tiny": None, "S": None, "M": None, "L": "1000"}
tail_full = [""]  # stderr of the last timed() call


def timed(cmd, limit_kb=None, env=None):
    """Run cmd under /usr/bin/time -v; return (ok, wall_s, peak_rss_mb, stdout, stderr_tail)."""
    pre = f"ulimit -v {limit_kb}; " if limit_kb else ""
    shell = pre + "exec /usr/bin/time -v " + " ".join(f"'{c}'" for c in cmd)
    p = subprocess.run(["bash", "-c", shell], capture_output=True, text=True, env=env)
    err = p.stderr
    tail_full[0] = err
    m = re.search(r"Elapsed \(wall clock\) time \(h:mm:ss or m:ss\): (\S+)", err)
    parts = [float(x) for x in m.group(1).split(":")] if m else [float("nan")]
    wall = sum(v * 60 ** i for i, v in enumerate(reversed(parts)))
    rss = re.search(r"Maximum resident set size \(kbytes\): (\d+)", err)
    rss_mb = int(rss.group(1)) / 1024 if rss else float("nan")
    tail = "\n".join(l for l in err.splitlines() if "Command being timed" not in l)[-400:]
    return p.returncode == 0, wall, rss_mb, p.stdout, tail


def ensure_inputs(size):
    prefix = os.path.join(DATA, size)
    if not os.path.exists(prefix + ".tif"):
        os.makedirs(DATA, exist_ok=True)
        cmd = [PY, GEN, "--preset", size, "--seed", "42", "--out", prefix, "--quiet"]
        if POINTS[size]:
            cmd += ["--points", POINTS[size]]
        print("generating", size, file=sys.stderr)
        subprocess.run(cmd, check=True)
    return prefix


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--sizes", default="S")
    ap.add_argument("--modes", default="polygon,buffer")
    ap.add_argument("--buffer-km", default="200")
    ap.add_argument("--out", default=None,
                    help="table file (default docs/bench-results.md, or docs/bench-report-cost.md with --report-cost)")
    ap.add_argument("--peer-limit-gb", type=float, default=20.0)
    ap.add_argument("--no-peer", action="store_true")
    ap.add_argument("--rounds", type=int, default=1, help="rounds of the main table (fastest kept)")
    ap.add_argument("--report-cost", action="store_true",
                    help="only measure what report.html, map.png and the classes.tif overviews add to a run")
    ap.add_argument("--repeat", type=int, default=3, help="rounds with --report-cost (median and fastest shown)")
    a = ap.parse_args()
    if a.out is None:
        a.out = os.path.join(ROOT, "docs", "bench-report-cost.md" if a.report_cost else "bench-results.md")
    if a.report_cost:
        return report_cost(a)
    rows = []
    env = dict(os.environ)
    env.setdefault("GDAL_CACHEMAX", "32")
    load0 = os.getloadavg()
    checks = []
    for size in a.sizes.split(","):
        prefix = ensure_inputs(size)
        tif, occ, m = prefix + ".tif", prefix + ".occ.csv", prefix + ".m.geojson"
        modes = a.modes.split(",")
        # Rounds alternate the floor and every mode, so each sees the same machine; the
        # fastest of the rounds is kept (other work only ever slows a run down).
        floor, runs, peers, summaries = [], {m_: [] for m_ in modes}, {}, {}
        for _ in range(a.rounds):
            ok, floor_s, floor_mb, _, tail = timed([FLOOR, tif, "2"], env=env)
            if not ok:
                sys.exit("decode floor failed: " + tail)
            floor.append((floor_s, floor_mb))
            for mode in modes:
                marg = ["--buffer-km", a.buffer_km] if mode == "buffer" else ["--accessible", m]
                # polygon and buffer: the default run a user types (metrics and report on);
                # pass: the pass alone (--no-metrics); vectors: the default run with --vectors.
                extra = {"vectors": ["--vectors"], "vectors-nometrics": ["--vectors", "--no-metrics"],
                         "pass": ["--no-metrics"]}.get(mode, [])
                out = os.path.join(DATA, f"out-{size}-{mode}")
                ok, s, mb, stdout, tail = timed([AREAL, "range", "--suitability", tif, "--records", occ,
                                                "--omission", "5", *marg, *extra, "--out", out, "--overwrite", "--json"],
                                               env=env)
                if not ok:
                    sys.exit(f"areal failed on {size} {mode}: {tail}")
                runs[mode].append((s, mb))
                summaries[mode] = json.loads(stdout)
                if mode.startswith("vectors"):
                    checks.append(f"{size}: " + vector_layer_check(out))
        floor_s = min(f[0] for f in floor)
        rows.append((size, "-", "GDAL decode floor (2 threads)", floor_s, max(f[1] for f in floor), 1.0, None, None))
        for mode in modes:
            s = min(r[0] for r in runs[mode])
            mb = max(r[1] for r in runs[mode])
            if mode.startswith("vectors") or mode == "pass":
                label = {"vectors": "areal range --vectors (default run + vectors)",
                         "vectors-nometrics": "areal range --vectors --no-metrics",
                         "pass": "areal range --no-metrics (the pass alone)"}[mode]
                rows.append((size, mode, label, s, mb, s / floor_s, None, None))
                continue
            summary = summaries[mode]
            peer = None
            if not a.no_peer:
                pout = os.path.join(DATA, f"peer-{size}-{mode}")
                pm = ["--accessible", m] if mode == "polygon" else ["--buffer-km", a.buffer_km]
                pok, ps, pmb, pstdout, ptail = timed([PY, os.path.join(ROOT, "bench", "peer.py"), tif, occ, pout, *pm],
                                                     limit_kb=int(a.peer_limit_gb * 1024 * 1024))
                peer = (pok, ps, pmb, ptail)
                if pok:
                    pj = json.loads(pstdout.strip().splitlines()[-1])
                    agree = abs(pj["inside_km2"] - summary["area_km2"]["inside_accessible"]) / max(1.0, pj["inside_km2"])
                    print(f"{size} {mode}: peer inside {pj['inside_km2']:.1f} km2, areal "
                          f"{summary['area_km2']['inside_accessible']:.1f} km2 (rel. diff {agree:.2e})", file=sys.stderr)
            rows.append((size, mode, "areal range (default run: metrics, report)", s, mb, s / floor_s, peer, None))
            if peer:
                pok, ps, pmb, ptail = peer
                label = "numpy/scipy/rasterio peer" + ("" if pok else f" (FAILED: {ptail.splitlines()[-1] if ptail else '?'})")
                rows.append((size, mode, label, ps, pmb, ps / floor_s, None, None))
    note = (f"Fastest of {a.rounds} round(s) per row (floor and runs alternate within a round); "
            f"load average {load0[0]:.1f} before, {os.getloadavg()[0]:.1f} after.")
    if checks:
        note += " Vector layers against patches.csv (ogr2ogr): " + "; ".join(sorted(set(checks))) + "."
    write_table(a.out, rows, note)


def report_cost(a):
    """The report (report.html, map.png) and the classes.tif overviews as a share of the run.

    Side by side on the polygon-M input, alternating round by round, --repeat rounds: areal
    as shipped, areal --no-report, and areal --no-report with AREAL_CLASS_OVERVIEWS=0 (no
    overviews): the run without both. Wall and CPU (user + system) seconds are given as the
    median over the rounds and the fastest; the load average before and after is printed,
    as other work on the machine moves wall times by more than the report costs."""
    lines = ["| size | kind | wall s, median (fastest) | CPU s, median (fastest) | peak RSS MB |",
             "|---|---|---:|---:|---:|"]
    env = dict(os.environ)
    env.setdefault("GDAL_CACHEMAX", "32")
    bare_env = dict(env, AREAL_CLASS_OVERVIEWS="0")
    load0 = os.getloadavg()
    summary = []
    for size in a.sizes.split(","):
        prefix = ensure_inputs(size)
        tif, occ, m = prefix + ".tif", prefix + ".occ.csv", prefix + ".m.geojson"
        base = [AREAL, "range", "--suitability", tif, "--records", occ, "--omission", "5",
                "--accessible", m, "--no-metrics", "--overwrite", "--quiet"]
        kinds = [("areal as shipped", base, env), ("--no-report", base + ["--no-report"], env),
                 ("--no-report, no overviews", base + ["--no-report"], bare_env)]
        wall = {k: [] for k, _, _ in kinds}
        cpu = {k: [] for k, _, _ in kinds}
        rss = {k: 0.0 for k, _, _ in kinds}
        for _ in range(a.repeat):
            for i, (k, cmd, e) in enumerate(kinds):
                ok, s, mb, _, tail = timed(cmd + ["--out", os.path.join(DATA, f"out-{size}-cost{i}")], env=e)
                if not ok:
                    sys.exit(f"areal failed on {size} ({k}): {tail}")
                wall[k].append(s)
                rss[k] = max(rss[k], mb)
                u = re.search(r"User time \(seconds\): ([\d.]+)", tail_full[0])
                y = re.search(r"System time \(seconds\): ([\d.]+)", tail_full[0])
                cpu[k].append(float(u.group(1)) + float(y.group(1)) if u and y else float("nan"))
        med = lambda v: sorted(v)[len(v) // 2]
        for k, _, _ in kinds:
            lines.append(f"| {size} | {k} | {med(wall[k]):.2f} ({min(wall[k]):.2f}) | "
                         f"{med(cpu[k]):.2f} ({min(cpu[k]):.2f}) | {rss[k]:.0f} |")
        full, nrep, bare = (k for k, _, _ in kinds)
        for what, f in (("median", med), ("fastest", min)):
            summary.append(f"{size}, {what}: report {f(cpu[full]) - f(cpu[nrep]):+.2f} CPU s, "
                           f"overviews {f(cpu[nrep]) - f(cpu[bare]):+.2f} CPU s, together "
                           f"{(f(cpu[full]) / f(cpu[bare]) - 1) * 100:+.1f} % CPU and "
                           f"{(f(wall[full]) / f(wall[bare]) - 1) * 100:+.1f} % wall over the run without both")
    load1 = os.getloadavg()
    text = "\n".join(lines) + "\n\n" + "\n".join(f"- {x}" for x in summary) + "\n"
    header = (f"Report cost, run {time.strftime('%Y-%m-%d %H:%M UTC', time.gmtime())} on {platform.node()} "
              f"({os.cpu_count()} cores), {a.repeat} rounds; load average (1, 5, 15 min) before "
              f"{load0[0]:.2f}, {load0[1]:.2f}, {load0[2]:.2f}, after {load1[0]:.2f}, {load1[1]:.2f}, {load1[2]:.2f}.\n\n")
    with open(a.out + ".tmp", "w") as f:
        f.write(header + text)
    os.replace(a.out + ".tmp", a.out)
    print(header + text)


def vector_layer_check(out):
    """The `patches` layer of range.gpkg against patches.csv: same ids, cells, areas."""
    dump = out + "-patches-layer.csv"
    if os.path.exists(dump):
        os.remove(dump)
    subprocess.run(["ogr2ogr", "-f", "CSV", dump, os.path.join(out, "range.gpkg"), "patches"], check=True)
    with open(os.path.join(out, "patches.csv")) as f:
        table = {r["patch_id"]: r for r in csv.DictReader(f)}
    with open(dump) as f:
        layer = [r for r in csv.DictReader(f)]
    ids = {r["patch_id"] for r in layer}
    both = [r for r in layer if r["patch_id"] in table]
    cells_off = sum(int(r["cells"]) != int(table[r["patch_id"]]["cells"]) for r in both)
    rel = max((abs(float(r["area_km2"]) - float(table[r["patch_id"]]["area_km2"]))
               / float(table[r["patch_id"]]["area_km2"]) for r in both), default=0.0)
    same = "equal" if ids == set(table) else "DIFFER"
    return (f"{len(layer)} polygons, ids {same}, {cells_off} cell counts differ, "
            f"largest relative area difference {rel:.1e}")


def write_table(path, rows, note=""):
    cpu = "unknown CPU"
    try:
        with open("/proc/cpuinfo") as f:
            cpu = next(l.split(":", 1)[1].strip() for l in f if l.startswith("model name"))
    except Exception:
        pass
    mem = os.sysconf("SC_PAGE_SIZE") * os.sysconf("SC_PHYS_PAGES") / 2**30
    lines = [
        "| size | mode | program | wall s | peak RSS MB | wall / floor | peer wall / areal wall | peer RSS / areal RSS |",
        "|---|---|---|---:|---:|---:|---:|---:|",
    ]
    for size, mode, prog, s, mb, rf, peer, _ in rows:
        pr = rm = ""
        if peer and peer[0]:
            pr, rm = f"{peer[1] / s:.2f}", f"{peer[2] / mb:.1f}"
        elif peer:
            pr, rm = "peer failed", "peer failed"
        lines.append(f"| {size} | {mode} | {prog} | {s:.2f} | {mb:.0f} | {rf:.2f} | {pr} | {rm} |")
    text = "\n".join(lines) + "\n"
    header = (f"Run {time.strftime('%Y-%m-%d %H:%M UTC', time.gmtime())} on {platform.node()}: {os.cpu_count()} cores "
              f"({cpu}), {mem:.0f} GiB, {platform.system()} {platform.release()}. {note}\n\n")
    with open(path + ".tmp", "w") as f:
        f.write(header + text)
    os.replace(path + ".tmp", path)
    print(header + text)


if __name__ == "__main__":
    main()

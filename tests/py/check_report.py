#!/usr/bin/env python3
"""Check report.html and map.png of `areal range` from outside areal.

Cases: the demo; a global 0.5-degree grid that wraps the globe, with a range across the
antimeridian; a 4000 x 2000 grid holding a single class-1 cell; a projected grid (ETRS89 /
LAEA Europe, EPSG:3035) with classes 1, 2, nodata and a one-cell patch in the frame.

- map.png is decoded by Pillow (which, unlike browsers, refuses a corrupt PNG) and must equal
  the PNG inlined in report.html byte for byte.
- classes.tif is read with rasterio: its colour table gives the class colours. The cells of
  the map's window (report.html `data-window`) are decimated independently here with numpy,
  a block showing its highest class (1 > 2 > 0 > nodata, the documented rule), and compared
  with the map's pixels: every class present in the window must appear in its colour-table
  colour, and at least 85% of the pixels (overlays cover the rest) must be exactly the
  expected colour. The single class-1 cell must be visible, in its colour, on its pixel.
- The scale bar (report.html `data-scalebar`: km, pixels) is a round length, true at the
  panel's centre against a geodesic on WGS84 (pyproj.Geod) within 1 %, and drawn that long.
- The graticule (`data-graticule`: step in degrees): pixels along the lines of constant
  longitude and latitude, placed by PROJ (rasterio), are graticule grey over the expected
  class colour; half a step away they are not.
- `areal report DIR` on each run folder writes report.html and map.png byte for byte again.
- Headless Chromium (Debian's `chromium`, driven by Playwright) opens each report.html: no
  page errors or console errors, nothing fetched, every image decodes, the page has its
  charts, the one embedded font face loads and the body, the command line and every chart
  label use it, and a
  full-page screenshot is taken (kept in --shots DIR; with --update-docs the demo's goes to
  docs/report-demo.png).

Usage: python tests/py/check_report.py [path/to/areal] [--shots DIR] [--update-docs]
Prints 'N passed, M failed' and exits non-zero on any failure.
"""

import base64
import io
import os
import re
import shutil
import subprocess
import sys
import tempfile

import numpy as np
import rasterio
from PIL import Image
from pyproj import Geod
from rasterio.transform import from_origin
from rasterio.warp import transform

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
args = [a for a in sys.argv[1:] if not a.startswith("--")]
AREAL = args[0] if args else os.path.join(ROOT, "target", "release", "areal")
AREAL = os.path.abspath(AREAL) if os.sep in AREAL else AREAL  # the demo runs from ROOT
SHOTS = sys.argv[sys.argv.index("--shots") + 1] if "--shots" in sys.argv else None
UPDATE_DOCS = "--update-docs" in sys.argv

passed, failed = 0, 0


def check(ok, what):
    global passed, failed
    if ok:
        passed += 1
    else:
        failed += 1
        print("FAIL:", what)


def run(cmd, cwd=None):
    p = subprocess.run([AREAL] + cmd, capture_output=True, text=True, cwd=cwd)
    if p.returncode != 0:
        raise SystemExit(f"areal {' '.join(cmd)} failed: {p.stderr}")


def write_tif(path, values, west, north, cell, nodata=None, crs="EPSG:4326"):
    h, w = values.shape
    with rasterio.open(path, "w", driver="GTiff", width=w, height=h, count=1, dtype="float32",
                       crs=crs, transform=from_origin(west, north, cell, cell),
                       nodata=nodata, compress="deflate") as ds:
        ds.write(values.astype("float32"), 1)


def write_records(path, pts):
    with open(path, "w") as f:
        f.write("lon,lat\n")
        for lon, lat in pts:
            f.write(f"{lon},{lat}\n")


def make_cases(tmp):
    cases = {}
    # 1. The demo, run from the repository's root as scripts/demo.sh runs it, so the page's
    #    command line (and docs/report-demo.png) reads demo-data/... and no machine's folders.
    out = os.path.join(tmp, "demo")
    run(["range", "--suitability", "demo-data/suitability.tif", "--records",
         "demo-data/records.csv", "--omission", "5", "--accessible", "demo-data/accessible.geojson",
         "--gap-km", "20", "--out", out, "--quiet"], cwd=ROOT)
    cases["demo"] = (out, None)
    # 2. A global grid wrapping the globe: a suitable blob centred on 180 degrees, 10N,
    #    an 'ocean' of nodata in the south, records in the blob, M a 900 km buffer.
    w, h, cell = 720, 360, 0.5
    lon = -180 + (np.arange(w) + 0.5) * cell
    lat = 90 - (np.arange(h) + 0.5) * cell
    dlon = (lon[None, :] - 180.0 + 180.0) % 360.0 - 180.0
    d2 = dlon ** 2 + (lat[:, None] - 10.0) ** 2
    vals = np.exp(-d2 / (2 * 8.0 ** 2)) + 0.05 * np.cos(lat[:, None] * 0.3) * np.sin(lon[None, :] * 0.2)
    vals[lat < -50] = -9999
    suit = os.path.join(tmp, "global.tif")
    write_tif(suit, vals, -180.0, 90.0, cell, nodata=-9999)
    recs = os.path.join(tmp, "global.csv")
    rng = np.random.default_rng(7)
    pts = [(((178 + rng.uniform(-6, 6)) + 180) % 360 - 180, 10 + rng.uniform(-5, 5)) for _ in range(25)]
    write_records(recs, pts)
    out = os.path.join(tmp, "global")
    run(["range", "--suitability", suit, "--records", recs, "--omission", "5",
         "--buffer-km", "900", "--out", out, "--quiet"])
    cases["global across the antimeridian"] = (out, None)
    # 3. One class-1 cell on a 4000 x 2000 grid (0.01 degree), records elsewhere below T.
    w, h = 4000, 2000
    vals = np.full((h, w), 0.2, dtype="float32")
    vals[777, 1234] = 0.9
    suit = os.path.join(tmp, "onecell.tif")
    write_tif(suit, vals, 0.0, 20.0, 0.01)
    recs = os.path.join(tmp, "onecell.csv")
    write_records(recs, [(35.555, 3.333), (31.111, 1.777)])
    out = os.path.join(tmp, "onecell")
    run(["range", "--suitability", suit, "--records", recs, "--threshold", "0.5",
         "--no-metrics", "--out", out, "--quiet"])
    cases["one class-1 cell on 4000 x 2000"] = (out, (777, 1234, True))
    # 4. A projected grid: ETRS89 / LAEA Europe (EPSG:3035), 600 x 400 cells of 2 km. A
    #    suitable blob holding the records, a second blob straddling the edge of M (a 250 km
    #    buffer), so classes 1 and 2 both lie in the frame, a band of nodata, and one isolated
    #    suitable cell inside M.
    w, h, cell, west, north = 600, 400, 2000.0, 4_000_000.0, 3_200_000.0
    x = west + (np.arange(w) + 0.5) * cell
    y = north - (np.arange(h) + 0.5) * cell
    X, Y = np.meshgrid(x, y)
    blob = lambda cx, cy, r: np.exp(-((X - cx) ** 2 + (Y - cy) ** 2) / (2 * r ** 2))
    vals = 0.95 * blob(4_500_000, 2_900_000, 50_000) + 0.95 * blob(4_780_000, 2_900_000, 30_000)
    vals[(Y > 2_700_000) & (Y < 2_740_000) & (X < 4_600_000)] = -9999
    lone = (int(np.argmin(abs(y - 3_050_000))), int(np.argmin(abs(x - 4_400_000))))
    vals[lone] = 0.9
    suit = os.path.join(tmp, "laea.tif")
    write_tif(suit, vals, west, north, cell, nodata=-9999, crs="EPSG:3035")
    rng = np.random.default_rng(11)
    gx = 4_500_000 + rng.uniform(-40_000, 40_000, 20)
    gy = 2_900_000 + rng.uniform(-40_000, 40_000, 20)
    lons, lats = transform("EPSG:3035", "EPSG:4326", list(gx), list(gy))
    recs = os.path.join(tmp, "laea.csv")
    write_records(recs, list(zip(lons, lats)))
    out = os.path.join(tmp, "laea")
    run(["range", "--suitability", suit, "--records", recs, "--omission", "10",
         "--buffer-km", "250", "--out", out, "--quiet"])
    cases["projected grid (EPSG:3035)"] = (out, lone + (False,))
    return cases


RANK = np.array([2, 4, 3] + [1] * 253, dtype=np.uint8)  # class 0, 1, 2, other (nodata)
CLASS_OF_RANK = np.array([255, 255, 0, 2, 1], dtype=np.uint8)


def decimate(classes, f):
    """Highest class per f x f block: 1 > 2 > 0 > nodata."""
    h, w = classes.shape
    H, W = -(-h // f) * f, -(-w // f) * f
    r = np.zeros((H, W), dtype=np.uint8)  # padding ranks 0: never wins
    r[:h, :w] = RANK[classes]
    return CLASS_OF_RANK[r.reshape(H // f, f, W // f, f).max(axis=(1, 3))]


def check_map(name, out, one_cell):
    html = open(os.path.join(out, "report.html"), encoding="utf-8").read()
    png = open(os.path.join(out, "map.png"), "rb").read()
    m = re.search(r'<img id="map" src="data:image/png;base64,([A-Za-z0-9+/=]+)"([^>]*)>', html)
    check(m is not None, f"{name}: report.html inlines the map")
    if not m:
        return
    inlined = base64.b64decode(m.group(1))
    check(inlined == png, f"{name}: the inlined PNG is map.png")
    img = Image.open(io.BytesIO(png))
    img.load()  # raises on a corrupt PNG
    a = np.asarray(img.convert("RGB"))
    attrs = dict(re.findall(r'data-(\w+)="([^"]*)"', m.group(2)))
    x0, y0, pw, ph = map(int, attrs["panel"].split(","))
    s = int(attrs["scale"])
    col0, row0, cols, rows, f = map(int, attrs["window"].split(","))
    with rasterio.open(os.path.join(out, "classes.tif")) as ds:
        cmap = ds.colormap(1)
        classes = ds.read(1)
        gt, crs = ds.transform, ds.crs
    width = classes.shape[1]
    win = classes[row0:row0 + rows][:, [(col0 + c) % width for c in range(cols)]]
    expect = decimate(win, f)
    check(expect.shape == (ph // s, pw // s), f"{name}: panel size {pw}x{ph}/{s} vs window {expect.shape}")
    panel = a[y0:y0 + ph, x0:x0 + pw]
    sampled = panel[s // 2::s, s // 2::s][: expect.shape[0], : expect.shape[1]]
    colour = {k: tuple(cmap[k][:3]) for k in (0, 1, 2)}
    colour[255] = (255, 255, 255)  # nodata: transparent in the table, white on the map
    want = np.zeros(expect.shape + (3,), dtype=np.uint8)
    for k, c in colour.items():
        want[expect == k] = c
    agree = np.all(sampled == want, axis=2)
    share = agree.mean()
    check(share >= 0.85, f"{name}: {share:.1%} of map pixels have the expected class colour")
    flat = panel.reshape(-1, 3)
    for k in np.unique(win):
        k = int(k) if int(k) in colour else 255
        c = np.array(colour[k], dtype=np.uint8)
        n = int(np.all(flat == c, axis=1).sum())
        check(n > 0, f"{name}: class {k} is in the frame but its colour {colour[k]} is not on the map")
    geo = MapGeo(gt, crs, width, (x0, y0, pw, ph, s), (col0, row0, f))
    check_scale_bar(name, a, attrs, geo)
    check_graticule(name, a, attrs, geo, want)
    if one_cell:
        r, c, alone = one_cell
        py, px = (r - row0) // f, ((c - col0) % width) // f
        got = tuple(int(v) for v in sampled[py, px])
        check(got == colour[1], f"{name}: the one class-1 cell's pixel is {got}, not {colour[1]}")
        if alone:
            check(int((expect == 1).sum()) == 1, f"{name}: exactly one class-1 pixel expected")
        with rasterio.open(os.path.join(out, "classes.tif")) as ds:
            check(int(ds.read(1)[r, c]) == 1, f"{name}: the lone cell is not class 1 in classes.tif")
    return html


class MapGeo:
    """PNG pixels <-> lon/lat for a map, from classes.tif's geotransform and CRS (PROJ through
    rasterio) and the window report.html gives; independent of areal's own code."""

    def __init__(self, gt, crs, width, panel, window):
        self.gt, self.crs, self.width = gt, crs, width
        self.x0, self.y0, self.pw, self.ph, self.s = panel
        self.col0, self.row0, self.f = window

    def px_to_lonlat(self, xs, ys):
        """PNG pixels to lon/lat (geographic grids: unwrapped, as the window runs)."""
        cols = self.col0 + (np.asarray(xs, float) - self.x0) / self.s * self.f
        rows = self.row0 + (np.asarray(ys, float) - self.y0) / self.s * self.f
        gx, gy = self.gt.c + cols * self.gt.a, self.gt.f + rows * self.gt.e
        if self.crs.is_geographic:
            return gx, gy
        lon, lat = transform(self.crs, "EPSG:4326", list(gx), list(gy))
        return np.array(lon), np.array(lat)

    def lonlat_to_px(self, lon, lat):
        if self.crs.is_geographic:
            gx, gy = np.asarray(lon, float), np.asarray(lat, float)
        else:
            gx, gy = map(np.array, transform("EPSG:4326", self.crs, list(lon), list(lat)))
        cols = (gx - self.gt.c) / self.gt.a - self.col0
        if self.crs.is_geographic:
            cols = cols % self.width  # a window may run across the seam of a global grid
        rows = (gy - self.gt.f) / self.gt.e - self.row0
        return self.x0 + cols / self.f * self.s, self.y0 + rows / self.f * self.s


def check_scale_bar(name, a, attrs, geo):
    """The bar's length against a geodesic on WGS84 (pyproj.Geod, Karney 2013) along the
    horizontal through the panel's centre, one pixel long: true at the centre within 1 %
    (the map measures over a fifth of the panel; common practice, no source)."""
    km, px = map(float, attrs["scalebar"].split(","))
    check(np.isfinite(km) and px > 20, f"{name}: scale bar {km} km over {px} px")
    if not np.isfinite(km):
        return
    mant = km / 10 ** np.floor(np.log10(km))
    check(any(abs(mant - m) < 1e-9 for m in (1, 2, 5)), f"{name}: scale bar {km} km is not a round length")
    cx, cy = geo.x0 + geo.pw / 2, geo.y0 + geo.ph / 2
    lon, lat = geo.px_to_lonlat([cx - 0.5, cx + 0.5], [cy, cy])
    _, _, metres = Geod(ellps="WGS84").inv(lon[0], lat[0], lon[1], lat[1])
    true_km = px * metres / 1000
    check(abs(true_km - km) / km < 0.01, f"{name}: the {km} km bar measures {true_km:.4g} km at the centre")
    # The bar as drawn: the longest dark horizontal run under the panel, left column.
    below = a[geo.y0 + geo.ph:, geo.x0 - 2:geo.x0 + 290].max(axis=2) < 100
    longest = 0
    for row in below:
        edges = np.diff(np.concatenate([[0], row.astype(int), [0]]))
        starts, ends = np.flatnonzero(edges == 1), np.flatnonzero(edges == -1)
        if len(starts):
            longest = max(longest, int((ends - starts).max()))
    check(abs(longest - px) <= 3, f"{name}: drawn scale bar {longest} px, expected {px:.1f}")


GRATICULE = np.array([0x77, 0x77, 0x77], float)  # docs/report.md: graticule lines, mid grey


def graticule_hits(a, geo, want, lon, lat):
    """Share of the points (inside the panel) with a pixel nearby that is the graticule grey
    laid over the expected class colour (one blend factor for all channels)."""
    x, y = geo.lonlat_to_px(lon, lat)
    hits = total = 0
    for px, py in zip(x, y):
        if not (geo.x0 + 3 <= px < geo.x0 + geo.pw - 3 and geo.y0 + 3 <= py < geo.y0 + geo.ph - 3):
            continue
        total += 1
        ok = False
        for yy in range(int(py) - 1, int(py) + 2):
            for xx in range(int(px) - 1, int(px) + 2):
                c = want[(yy - geo.y0) // geo.s, (xx - geo.x0) // geo.s].astype(float)
                p = a[yy, xx].astype(float)
                d = GRATICULE - c
                k = np.abs(d) > 30
                if not k.any():
                    continue
                t = (p - c)[k] / d[k]
                ok |= bool(t.min() > 0.1 and t.max() - t.min() < 0.06 and np.all(np.abs((p - c)[~k]) <= 3))
        hits += ok
    return hits / max(total, 1), total


def check_graticule(name, a, attrs, geo, want):
    """Lines of constant longitude and latitude at the step report.html names, placed by
    PROJ: the pixels along them are graticule grey, those half a step away are not."""
    step = float(attrs["graticule"])
    check(np.isfinite(step) and step > 0, f"{name}: graticule step {step}")
    if not (np.isfinite(step) and step > 0):
        return
    t = np.linspace(0, 1, 41)
    ex = np.concatenate([geo.x0 + t * geo.pw, geo.x0 + t * geo.pw, np.full(41, geo.x0), np.full(41, geo.x0 + geo.pw)])
    ey = np.concatenate([np.full(41, geo.y0), np.full(41, geo.y0 + geo.ph), geo.y0 + t * geo.ph, geo.y0 + t * geo.ph])
    lon, lat = geo.px_to_lonlat(ex, ey)
    lo = (lon.min(), lon.max(), max(lat.min(), -89.9), min(lat.max(), 89.9))
    lines = [(v, True) for v in np.arange(np.ceil(lo[0] / step) * step, lo[1] + 1e-9, step)]
    lines += [(v, False) for v in np.arange(np.ceil(lo[2] / step) * step, lo[3] + 1e-9, step)]
    check(2 <= len(lines) <= 20, f"{name}: {len(lines)} graticule lines at {step} degrees")
    u = np.linspace(0, 1, 300)
    for shift, want_share in ((0.0, "on"), (step / 2, "off")):
        shares = []
        for v, is_lon in lines:
            v = v + shift
            if is_lon:
                pts = (np.full(300, v), lo[2] + u * (lo[3] - lo[2]))
            else:
                pts = (lo[0] + u * (lo[1] - lo[0]), np.full(300, v))
            share, n = graticule_hits(a, geo, want, *pts)
            if n >= 20:
                shares.append(share)
        check(len(shares) >= 2, f"{name}: only {len(shares)} graticule lines cross the panel")
        if want_share == "on":
            check(shares and min(shares) >= 0.8, f"{name}: graticule grey along the lines {np.round(shares, 2)}")
        else:
            check(shares and max(shares) <= 0.3, f"{name}: graticule grey half a step off the lines {np.round(shares, 2)}")


def check_report_again(name, out):
    """`areal report DIR` on the finished run writes the run's own files again, byte for
    byte (buffer M rebuilt from summary.json, a wrapping grid, a projected grid, no M)."""
    files = {f: open(os.path.join(out, f), "rb").read() for f in ("report.html", "map.png")}
    for f in files:
        os.remove(os.path.join(out, f))
    run(["report", out])
    for f, before in files.items():
        check(open(os.path.join(out, f), "rb").read() == before, f"{name}: areal report DIR wrote another {f}")


def check_in_chromium(pages, shots):
    from playwright.sync_api import sync_playwright

    with sync_playwright() as p:
        b = p.chromium.launch(executable_path=shutil.which("chromium") or "/usr/bin/chromium",
                              args=["--no-sandbox", "--disable-gpu"])
        for name, (out, _) in pages.items():
            page = b.new_page(viewport={"width": 1000, "height": 1000})
            errors = []
            page.on("pageerror", lambda e: errors.append(str(e)))
            page.on("console", lambda msg: msg.type == "error" and errors.append(msg.text))
            page.on("request", lambda r: r.url.startswith("file:") or r.url.startswith("data:") or errors.append("fetch " + r.url))
            page.goto("file://" + os.path.abspath(os.path.join(out, "report.html")), wait_until="load")
            widths = page.evaluate("""() => Promise.all([...document.images].map(i =>
                i.decode().then(() => i.naturalWidth, () => 0)))""")
            svgs = page.evaluate("() => document.querySelectorAll('svg').length")
            # The embedded font (CSS Font Loading API, W3C): loaded from the page itself, and
            # the family every chart label and the body text compute to.
            fonts = page.evaluate("""async () => { await document.fonts.ready;
                const faces = [...document.fonts].map(f => [f.family, f.status]);
                const fam = t => getComputedStyle(t).fontFamily;
                return {faces, labels: [...document.querySelectorAll('svg text')].map(fam),
                        body: fam(document.body), pre: [...document.querySelectorAll('pre')].map(fam)}; }""")
            faces = fonts["faces"]
            check(len(faces) == 1 and faces[0][1] == "loaded", f"{name}: embedded font faces {faces}")
            family = faces[0][0].strip('"') if faces else None
            check(fonts["labels"] and all(f.strip('"') == family for f in fonts["labels"]),
                  f"{name}: chart labels in {set(fonts['labels'])}, not {family}")
            check(fonts["body"].split(",")[0].strip('"') == family, f"{name}: body text in {fonts['body']}")
            check(all(f.split(",")[0].strip('"') == family for f in fonts["pre"]), f"{name}: command line in {fonts['pre']}")
            # The fonts Chromium drew each node's text with, ::marker pseudo-elements included
            # (Chrome DevTools Protocol, CSS.getPlatformFontsForNode): the embedded face alone,
            # so no character of the page fell back to a system font for want of a glyph.
            drawn = drawn_fonts(page)
            check(drawn and all(custom for _, custom in drawn), f"{name}: text drawn in {drawn}")
            check(not errors, f"{name}: Chromium reported {errors}")
            check(len(widths) >= 1 and all(w > 0 for w in widths), f"{name}: images decoded {widths}")
            check(svgs >= 2, f"{name}: {svgs} inline SVG charts")
            # The full-page screenshot, always taken (kept with --shots DIR).
            os.makedirs(shots, exist_ok=True)
            shot = os.path.join(shots, re.sub(r"[^a-z0-9]+", "-", name.lower()) + ".png")
            page.screenshot(path=shot, full_page=True)
            Image.open(shot).load()
            check(os.path.getsize(shot) > 10000, f"{name}: screenshot written")
            if UPDATE_DOCS and name == "demo":
                shutil.copy(shot, os.path.join(ROOT, "docs", "report-demo.png"))
            page.close()
        b.close()


def drawn_fonts(page):
    """{(family, is the page's own face): glyphs drawn} over every node of the page."""
    cdp = page.context.new_cdp_session(page)
    cdp.send("DOM.enable")
    cdp.send("CSS.enable")
    stack, used = [cdp.send("DOM.getDocument", {"depth": -1})["root"]], {}
    while stack:
        node = stack.pop()
        stack += node.get("children", []) + node.get("pseudoElements", [])
        if node.get("nodeType") != 1:
            continue
        for f in cdp.send("CSS.getPlatformFontsForNode", {"nodeId": node["nodeId"]})["fonts"]:
            key = (f["familyName"], f["isCustomFont"])
            used[key] = used.get(key, 0) + f["glyphCount"]
    cdp.detach()
    return used


def main():
    with tempfile.TemporaryDirectory() as tmp:
        cases = make_cases(tmp)
        for name, (out, one) in cases.items():
            check_map(name, out, one)
            check_report_again(name, out)
        pages = {k: v for k, v in cases.items() if not k.startswith("one")}
        check_in_chromium(pages, SHOTS or os.path.join(tmp, "shots"))
    print(f"{passed} passed, {failed} failed")
    sys.exit(1 if failed else 0)


if __name__ == "__main__":
    main()

#!/usr/bin/env python3
"""Check the report of `areal change` from outside areal.

Case: the demo suitability raster as the present, and as the future the same values moved
12 columns east (rasterio, numpy), D = 5 km, so stable, lost and both kinds of gain occur.

- change-map.png is decoded by Pillow and must equal the change map inlined in report.html
  byte for byte.
- change.tif is read with rasterio: its colour table gives the class colours. The grid is
  decimated independently here with numpy (a block shows its highest-ranked class: lost >
  gained within reach > stable > gained out of reach > unsuitable > nodata, the documented
  rule; nodata white) and must equal the PNG's pixels exactly, after undoing its integer
  upscaling.
- The numbers of the change section (their `data-key` pointers) must be the values of
  summary.json, as shown.
- Headless Chromium (Debian's `chromium`, driven by Playwright) opens report.html: no page
  errors or console errors and every image, the change map included, decodes.

Usage: python tests/py/check_change_report.py [path/to/areal]
Prints 'N passed, M failed' and exits non-zero on any failure.
"""

import base64
import io
import json
import os
import re
import shutil
import subprocess
import sys
import tempfile

import numpy as np
import rasterio
from PIL import Image

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
args = [a for a in sys.argv[1:] if not a.startswith("--")]
AREAL = args[0] if args else os.path.join(ROOT, "target", "release", "areal")
DEMO = os.path.join(ROOT, "demo-data")
RANK = {2: 6, 3: 5, 1: 4, 4: 3, 0: 2}  # nodata ranks 1

passed, failed = 0, 0


def check(ok, what):
    global passed, failed
    if ok:
        passed += 1
    else:
        failed += 1
        print("FAIL:", what)


def make_case(tmp):
    with rasterio.open(os.path.join(DEMO, "suitability.tif")) as src:
        a = src.read(1)
        profile = src.profile
    fut = np.roll(a, 12, axis=1)
    path = os.path.join(tmp, "later.tif")
    with rasterio.open(path, "w", **profile) as dst:
        dst.write(fut, 1)
    out = os.path.join(tmp, "out")
    cmd = [AREAL, "change", "--present", os.path.join(DEMO, "suitability.tif"), "--future", path,
           "--records", os.path.join(DEMO, "records.csv"), "--omission", "5", "--dispersal-km", "5",
           "--out", out, "--quiet"]
    p = subprocess.run(cmd, capture_output=True, text=True)
    if p.returncode != 0:
        raise SystemExit(f"areal change failed: {p.stderr}")
    return out


def check_map(out):
    html = open(os.path.join(out, "report.html"), encoding="utf-8").read()
    png = open(os.path.join(out, "change-map.png"), "rb").read()
    m = re.search(r'class="change-map" src="data:image/png;base64,([^"]+)"', html)
    check(m is not None and base64.b64decode(m.group(1)) == png, "change map inlined as written")
    img = np.asarray(Image.open(io.BytesIO(png)).convert("RGB"))
    with rasterio.open(os.path.join(out, "change.tif")) as ds:
        cls = ds.read(1)
        table = ds.colormap(1)
    h, w = cls.shape
    ph, pw, _ = img.shape
    # The image: ceil(w / f) x ceil(h / f) pixels, each drawn s x s.
    f = max(-(-w // 900), -(-h // 560), 1)
    cols, rows = -(-w // f), -(-h // f)
    s = pw // cols
    check(pw == cols * s and ph == rows * s, f"map size {pw} x {ph} for factor {f}")
    rank = np.vectorize(lambda k: RANK.get(int(k), 1))(cls)
    pad = np.ones((rows * f, cols * f), dtype=rank.dtype)
    pad[:h, :w] = rank
    best = pad.reshape(rows, f, cols, f).max(axis=(1, 3))
    back = {v: k for k, v in RANK.items()}
    colour = {k: tuple(table[k][:3]) for k in range(5)}
    expect = np.zeros((rows, cols, 3), dtype=np.uint8)
    for r in range(1, 7):
        expect[best == r] = colour[back[r]] if r in back else (255, 255, 255)
    got = img[::s, ::s]
    check(got.shape == expect.shape and bool((got == expect).all()),
          f"change map pixels differ from the decimated change.tif in {int((got != expect).any(axis=2).sum())} pixels")
    present = set(np.unique(cls).tolist())
    check({1, 2, 3, 4} <= present, f"case holds stable, lost and both gains: {sorted(present)}")
    return html


def check_numbers(out, html):
    summary = json.load(open(os.path.join(out, "summary.json")))
    keys = re.findall(r'data-key="(/change/[^"]+)">([^<]+)<', html)
    check(len(keys) >= 15, f"{len(keys)} numbers of the change section carry data-key")
    for ptr, shown in keys:
        v = summary
        for part in ptr.strip("/").split("/"):
            v = v[part]
        num = float(shown.replace(",", ""))
        decimals = len(shown.split(".")[1]) if "." in shown else 0
        check(abs(num - v) <= 0.5 * 10 ** -decimals + 1e-9, f"{ptr}: shown {shown}, summary {v}")


def check_in_chromium(out):
    from playwright.sync_api import sync_playwright

    with sync_playwright() as p:
        b = p.chromium.launch(executable_path=shutil.which("chromium") or "/usr/bin/chromium",
                              args=["--no-sandbox", "--disable-gpu"])
        page = b.new_page(viewport={"width": 1000, "height": 1000})
        errors = []
        page.on("pageerror", lambda e: errors.append(str(e)))
        page.on("console", lambda msg: msg.type == "error" and errors.append(msg.text))
        page.goto("file://" + os.path.abspath(os.path.join(out, "report.html")), wait_until="load")
        widths = page.evaluate("""() => Promise.all([...document.images].map(i =>
            i.decode().then(() => i.naturalWidth, () => 0)))""")
        has_change = page.evaluate("() => document.querySelectorAll('img.change-map').length")
        check(not errors, f"Chromium reported {errors}")
        check(len(widths) >= 2 and all(w > 0 for w in widths), f"images decoded {widths}")
        check(has_change == 1, f"{has_change} change maps on the page")
        b.close()


def main():
    with tempfile.TemporaryDirectory() as tmp:
        out = make_case(tmp)
        html = check_map(out)
        check_numbers(out, html)
        check_in_chromium(out)
    print(f"{passed} passed, {failed} failed")
    sys.exit(1 if failed else 0)


if __name__ == "__main__":
    main()

"""Open an areal run folder in QGIS (Debian python3-qgis, not part of CI) and print what QGIS
shows: the renderer and legend of classes.tif (with classes.qml beside it), and the renderer,
categories and fields of each GeoJSON layer (with its .qml) and of the range.gpkg layers.
    /usr/bin/python3 scripts/check-styles-qgis.py RUN"""
import os
import sys

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
from qgis.core import QgsApplication, QgsRasterLayer, QgsRenderContext, QgsVectorLayer  # noqa: E402

app = QgsApplication([], False)
app.initQgis()
d = sys.argv[1]
r = QgsRasterLayer(os.path.join(d, "classes.tif"), "classes")
print("classes.tif valid", r.isValid(), "renderer", r.renderer().type())
items = r.renderer().legendSymbologyItems()
print("  legend entries", len(items), [(label, c.name()) for label, c in items[:5]])
for name in ["range", "patches", "unreachable", "accessible", "records"]:
    p = os.path.join(d, name + ".geojson")
    if not os.path.exists(p):
        continue
    v = QgsVectorLayer(p, name, "ogr")
    rend = v.renderer()
    if rend.type() == "categorizedSymbol":
        detail = [(c.value(), c.label(), c.symbol().color().name()) for c in rend.categories()]
    else:
        detail = [s.color().name() for s in rend.symbols(QgsRenderContext())]
    print(f"{name}.geojson valid", v.isValid(), "features", v.featureCount(), rend.type(), detail)
    print("  fields", [(f.name(), f.typeName()) for f in v.fields()])
for name in ["range", "patches", "unreachable", "accessible", "records"]:
    v = QgsVectorLayer(os.path.join(d, "range.gpkg") + "|layername=" + name, name, "ogr")
    print(f"range.gpkg|{name}", v.isValid(), v.renderer().type(), v.renderer().dump()[:70])
app.exitQgis()

"""Polygon areas of an areal run's patches.geojson as QGIS measures them (QgsDistanceArea),
against areal's area_km2. For docs/clients.md; needs QGIS's Python bindings (Debian
python3-qgis), not part of CI:  /usr/bin/python3 scripts/measure-client-areas-qgis.py RUN"""
import os
import sys

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
from qgis.core import (QgsApplication, QgsCoordinateReferenceSystem, QgsDistanceArea,  # noqa: E402
                       QgsProject, QgsUnitTypes, QgsVectorLayer)

app = QgsApplication([], False)
app.initQgis()
layer = QgsVectorLayer(os.path.join(sys.argv[1], "patches.geojson"), "patches", "ogr")
for ellipsoid in ("EPSG:7030", "NONE"):
    da = QgsDistanceArea()
    da.setSourceCrs(QgsCoordinateReferenceSystem("EPSG:4326"),
                    QgsProject.instance().transformContext())
    da.setEllipsoid(ellipsoid)
    r = [da.convertAreaMeasurement(da.measureArea(f.geometry()),
                                   QgsUnitTypes.AreaSquareKilometers) / f["area_km2"] - 1
         for f in layer.getFeatures()]
    print(f"QgsDistanceArea, ellipsoid {ellipsoid:9} {min(r):+.2e} .. {max(r):+.2e}")
app.exitQgis()

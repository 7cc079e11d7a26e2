"""Open a paleomap build in QGIS (PyQGIS, headless) and report what QGIS made of it.

Run with the Python that has PyQGIS (Debian: /usr/bin/python3, package python3-qgis) and
``QT_QPA_PLATFORM=offscreen``; tests/test_qgis.py does so in a subprocess. Prints one JSON
object: per feature layer of paleomap.gpkg its CRS, renderer and categories (as QGIS loaded
them from the stored default style) and temporal settings; per raster its renderer and
classes or ramp; and, for one slice, the colours QGIS rendered at the cores' positions
(facies belts filtered by the time slider, and the slice's belt raster).

Usage: qgis_probe.py BUILD_DIR SLICE_NAME SLICE_START_ISO SLICE_END_ISO [OTHER_BUILD_DIR]

For OTHER_BUILD_DIR only the CRS of each layer and raster is reported.
"""

import json
import os
import sys
from collections import Counter
from pathlib import Path


def _color(c):
    return f"#{c.red():02x}{c.green():02x}{c.blue():02x}"


def main(argv):
    from qgis.core import (
        QgsApplication,
        QgsDateTimeRange,
        QgsFeatureRequest,
        QgsMapRendererCustomPainterJob,
        QgsMapSettings,
        QgsPointXY,
        QgsProject,
        QgsProviderRegistry,
        QgsRasterLayer,
        QgsVectorLayer,
        QgsVectorLayerTemporalContext,
    )
    from qgis.PyQt.QtCore import QDateTime, QSize, Qt
    from qgis.PyQt.QtGui import QColor, QImage, QPainter

    build, slice_name, start_iso, end_iso = Path(argv[1]), argv[2], argv[3], argv[4]
    app = QgsApplication([], False)
    app.initQgis()
    out = {"qgis_version": __import__("qgis.core").core.Qgis.QGIS_VERSION, "layers": {}}
    gpkg = build / "paleomap.gpkg"
    meta = QgsProviderRegistry.instance().providerMetadata("ogr")
    vectors = {}
    for sub in meta.querySublayers(str(gpkg)):
        if sub.type() != 0:  # QgsMapLayerType.VectorLayer
            continue
        name = sub.name()
        # As QGIS desktop adds a layer (from memory of its source): constructed without
        # the default style, which is loaded afterwards, so that the style's temporal
        # settings are not reset by the provider's defaults.
        options = QgsVectorLayer.LayerOptions(QgsProject.instance().transformContext())
        options.loadDefaultStyle = False
        layer = QgsVectorLayer(f"{gpkg}|layername={name}", name, "ogr", options)
        message, loaded = layer.loadDefaultStyle()
        info = {"valid": layer.isValid(), "spatial": layer.isSpatial(), "style": message}
        if layer.isSpatial():
            r = layer.renderer()
            info["crs"] = layer.crs().authid()
            info["renderer"] = r.type()
            if r.type() == "categorizedSymbol":
                info["field"] = r.classAttribute()
                info["categories"] = [
                    [str(c.value()), c.label(), _color(c.symbol().color())] for c in r.categories()
                ]
            elif r.type() == "singleSymbol":
                info["color"] = _color(r.symbol().color())
            units = set()
            for sym in r.symbols(__import__("qgis.core").core.QgsRenderContext()):
                for sl in sym.symbolLayers():
                    props = sl.properties()
                    units |= {v for k, v in props.items() if k.endswith("_unit")}
            info["size_units"] = sorted(units)
            tp = layer.temporalProperties()
            info["temporal"] = {
                "active": tp.isActive(),
                "mode": int(tp.mode()),
                "start": tp.startField(),
                "end": tp.endField(),
            }
            vectors[name] = layer
        out["layers"][name] = info

    out["rasters"] = {}
    for tif in sorted((build / "rasters").glob("*.tif")):
        layer = QgsRasterLayer(str(tif), tif.stem)
        r = layer.renderer()
        info = {"valid": layer.isValid(), "renderer": r.type(), "crs": layer.crs().authid()}
        if r.type() == "paletted":
            info["classes"] = [[int(c.value), c.label, _color(c.color)] for c in r.classes()]
        elif r.type() == "singlebandpseudocolor":
            shader = r.shader().rasterShaderFunction()
            info["band"] = r.band()
            info["ramp"] = [[i.value, _color(i.color)] for i in shader.colorRampItemList()]
        out["rasters"][tif.name] = info

    # One slice rendered: belts selected by the time slider, then the slice's belt raster.
    samples = vectors["core_slices"]
    samples.setSubsetString(f"\"slice\" = '{slice_name}'")
    cores = [(f["core_id"], f["belt"], f.geometry().asPoint()) for f in samples.getFeatures()]
    belts = vectors["facies_belts"]
    belt_file = argv[6] if len(argv) > 6 else f"belt_{slice_name}.tif"
    raster = QgsRasterLayer(str(build / "rasters" / belt_file), "belt")
    rendered = {}
    for key, layer, temporal in (("facies_belts", belts, True), ("belt_raster", raster, False)):
        settings = QgsMapSettings()
        settings.setLayers([layer])
        settings.setDestinationCrs(layer.crs())
        settings.setExtent(raster.extent())
        settings.setOutputSize(QSize(800, 800))
        settings.setBackgroundColor(QColor("white"))
        if temporal:
            settings.setIsTemporal(True)
            settings.setTemporalRange(
                QgsDateTimeRange(
                    QDateTime.fromString(start_iso, Qt.ISODate),
                    QDateTime.fromString(end_iso, Qt.ISODate),
                )
            )
        image = QImage(settings.outputSize(), QImage.Format_ARGB32)
        image.fill(QColor("white"))
        painter = QPainter(image)
        job = QgsMapRendererCustomPainterJob(settings, painter)
        job.start()
        job.waitForFinished()
        painter.end()
        m2p = settings.mapToPixel()
        found = []
        for core_id, belt, pt in cores:
            px = m2p.transform(QgsPointXY(pt))
            x, y = int(round(px.x())), int(round(px.y()))
            # The most common colour of the 3 x 3 pixels: a belt outline through the
            # core's own pixel does not hide the fill around it.
            around = Counter(
                _color(QColor(image.pixel(x + dx, y + dy)))
                for dx in (-1, 0, 1)
                for dy in (-1, 0, 1)
                if 0 <= x + dx < image.width() and 0 <= y + dy < image.height()
            )
            found.append([core_id, belt, around.most_common(1)[0][0]])
        rendered[key] = found
    out["rendered"] = rendered
    # Which slices the time slider shows at the slice's instant.
    context = QgsVectorLayerTemporalContext()
    context.setLayer(belts)
    window = QgsDateTimeRange(
        QDateTime.fromString(start_iso, Qt.ISODate), QDateTime.fromString(end_iso, Qt.ISODate)
    )
    expression = belts.temporalProperties().createFilterString(context, window)
    shown = {
        f["slice"] for f in belts.getFeatures(QgsFeatureRequest().setFilterExpression(expression))
    }
    out["slider"] = {"filter": expression, "slices_shown": sorted(shown)}
    if len(argv) > 5:
        other = Path(argv[5])
        crs = {}
        for sub in meta.querySublayers(str(other / "paleomap.gpkg")):
            layer = QgsVectorLayer(f"{other / 'paleomap.gpkg'}|layername={sub.name()}", "x", "ogr")
            if layer.isSpatial():
                crs[sub.name()] = layer.crs().authid()
        for tif in sorted((other / "rasters").glob("*.tif")):
            crs[tif.name] = QgsRasterLayer(str(tif), tif.stem).crs().authid()
        out["other_crs"] = crs
    print(json.dumps(out), flush=True)
    # QGIS 3.22 can crash tearing down layers still alive at exit; the report is out.
    os._exit(0)


if __name__ == "__main__":
    sys.exit(main(sys.argv))

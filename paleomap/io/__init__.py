"""Reading the user's files and writing the build's files.

Readers turn project files and tables into validated inputs (:mod:`.readers`).
Writers put every deliverable on disk atomically (:mod:`.atomic`): the layers in one
OGC GeoPackage (:mod:`.geopackage`), rasters as GeoTIFF (:mod:`.geotiff`), and the
styles (:mod:`.styles`, paleomap's own description) as QGIS QML (:mod:`.qml`) and OGC SLD
1.1.0 (:mod:`.sld`), with ages as date-times for GIS time sliders (:mod:`.timeslider`).
"""

__all__: list[str] = []

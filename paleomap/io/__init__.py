"""Reading the user's files and writing the build's files.

Readers turn project files and tables into validated inputs (:mod:`.readers`).
Writers put every deliverable on disk atomically (:mod:`.atomic`): the layers in one
OGC GeoPackage (:mod:`.geopackage`), rasters as GeoTIFF (:mod:`.geotiff`), and layer
styles as OGC SLD 1.1.0 documents (:mod:`.styles`).
"""

__all__: list[str] = []

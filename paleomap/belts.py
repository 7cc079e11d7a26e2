"""Facies-belt polygons from the mean latent field.

Belts are filled contours of the mean latent field at the scheme's thresholds, so they
are nested in scheme order by construction: a continuous field cannot pass from belt
``k`` to belt ``k + 2`` without crossing belt ``k + 1``, which is Walther's Law on the
map (Walther 1894; Middleton 1973).

Every core must lie inside the belt it logs. The kriged latent honours each core at
the core itself, but the contours are drawn from the grid nodes; where a core sits
close to a threshold, the interpolated node value at its position can land on the
wrong side. :func:`honour_cores` shifts the four nodes around such a core by the same
small amount, which moves the interpolated value at the core by exactly that amount
and keeps the field continuous (so the nesting above still holds).

Examples
--------
>>> import numpy as np
>>> from paleomap.grid import make_grid
>>> g = make_grid(np.array([0.0, 1000, 0, 1000]), np.array([0.0, 0, 1000, 1000]),
...               cell_size=50.0, margin=0.0)
>>> latent = np.broadcast_to((g.easting - 500.0) / 500.0, g.shape).copy()
>>> polys = belt_polygons(latent, g, thresholds=np.array([0.0]))
>>> [round(p.area / 1e4) for p in polys]
[50, 50]
"""

from __future__ import annotations

import logging
import threading
from dataclasses import dataclass, field

import contourpy
import numpy as np
import shapely

__all__ = [
    "NodeField",
    "belt_polygons",
    "cell_field_at",
    "classify",
    "honour_cores",
    "node_field",
    "walther_contacts",
]

log = logging.getLogger(__name__)


def classify(latent: np.ndarray, thresholds: np.ndarray) -> np.ndarray:
    """Belt rank of each latent value: the number of thresholds at or below it.

    >>> classify(np.array([-2.0, 0.0, 0.5, 3.0]), np.array([-1.0, 1.0]))
    array([0, 1, 1, 2])
    """
    return np.searchsorted(np.asarray(thresholds), latent, side="right")


@dataclass
class NodeField:
    """The latent field on contouring nodes: the cell centres plus an outer ring of nodes
    on the grid's edges (values copied from the nearest cell), so the contours cover the
    whole grid rectangle and can be clipped to the mapped area.

    ``easting`` increases; ``northing`` decreases (rows north to south).
    """

    easting: np.ndarray
    northing: np.ndarray
    values: np.ndarray
    _generator: object = field(default=None, init=False, repr=False, compare=False)

    def contours(self):
        """A contourpy generator over the nodes (filled polygons and lines), made on
        first use and kept until the values change (:func:`honour_cores` drops it)."""
        if self._generator is None:
            x, y = _node_mesh(self.easting, self.northing)
            z = self.values if self.values.dtype == np.float64 else self.values.astype(float)
            self._generator = contourpy.contour_generator(
                x, y, z, fill_type="OuterOffset", line_type="Separate"
            )
        return self._generator

    def at(self, easting: np.ndarray, northing: np.ndarray) -> np.ndarray:
        """Bilinear interpolation of the node values at points inside the rectangle."""
        c, r, fc, fr = self._locate(easting, northing)
        v = self.values
        return _bilinear(lambda rr, cc: v[rr, cc], r, c, fr, fc)

    def _locate(self, easting, northing):
        e = np.asarray(easting, dtype=float)
        n = np.asarray(northing, dtype=float)
        c = np.clip(np.searchsorted(self.easting, e, side="right") - 1, 0, len(self.easting) - 2)
        # northing decreases with the row index
        r = np.clip(
            np.searchsorted(-self.northing, -n, side="right") - 1, 0, len(self.northing) - 2
        )
        fc = (e - self.easting[c]) / (self.easting[c + 1] - self.easting[c])
        fr = (self.northing[r] - n) / (self.northing[r] - self.northing[r + 1])
        return c, r, np.clip(fc, 0, 1), np.clip(fr, 0, 1)


_MESHES: dict = {}
_MESH_LOCK = threading.Lock()


def _node_mesh(easting: np.ndarray, northing: np.ndarray):
    """The nodes' 2-D coordinates (contourpy wants them), shared by every slice of a grid."""
    key = (easting.size, float(easting[0]), float(easting[-1]), northing.size,
           float(northing[0]), float(northing[-1]))  # fmt: skip
    with _MESH_LOCK:
        mesh = _MESHES.get(key)
        if mesh is None:
            _MESHES.clear()  # one grid at a time
            mesh = _MESHES[key] = np.meshgrid(easting, northing)
    return mesh


def node_field(latent: np.ndarray, grid) -> NodeField:
    """Contouring nodes for a latent grid of shape ``grid.shape`` (cell-centre values);
    float32 values stay float32 (large maps), anything else becomes float64."""
    latent = np.asarray(latent)
    padded = np.pad(latent if latent.dtype == np.float32 else latent.astype(float), 1, mode="edge")
    e = np.concatenate([[grid.west], grid.easting, [grid.east]])
    n = np.concatenate([[grid.north], grid.northing, [grid.south]])
    return NodeField(e, n, padded)


def cell_field_at(grid, easting, northing, cell_values) -> np.ndarray:
    """What ``node_field(values, grid).at(easting, northing)`` gives, for a cell field
    known only as a function ``cell_values(rows, cols)``: evaluated at the four nodes
    around each point alone (for fields too costly to hold for every cell)."""
    e = np.concatenate([[grid.west], grid.easting, [grid.east]])
    n = np.concatenate([[grid.north], grid.northing, [grid.south]])
    c, r, fc, fr = NodeField(e, n, np.empty((0, 0)))._locate(easting, northing)

    def v(rr, cc):  # node (rr, cc) holds cell (rr - 1, cc - 1), edges copied
        return cell_values(np.clip(rr - 1, 0, grid.n_rows - 1), np.clip(cc - 1, 0, grid.n_cols - 1))

    return _bilinear(v, r, c, fr, fc)


def _bilinear(value_at, r, c, fr, fc):
    """Bilinear interpolation between the nodes (r, c) .. (r + 1, c + 1), given
    ``value_at(rows, cols)`` of the nodes and the fractions along rows and columns."""
    return (
        value_at(r, c) * (1 - fc) * (1 - fr)
        + value_at(r, c + 1) * fc * (1 - fr)
        + value_at(r + 1, c) * (1 - fc) * fr
        + value_at(r + 1, c + 1) * fc * fr
    )


def honour_cores(
    nodes: NodeField,
    easting: np.ndarray,
    northing: np.ndarray,
    ranks: np.ndarray,
    thresholds: np.ndarray,
    *,
    inset: float = 0.25,
) -> int:
    """Shift node values so that every core's interpolated latent lies in its own belt.

    A core whose interpolated value lies outside its belt's interval (or within
    ``inset`` of the interval's width from its edge) has its four surrounding nodes
    shifted by the same amount, which puts the value at ``inset`` inside the interval.
    Belts that are open-ended (the most proximal and the most distal) use a width of 1
    on the open side. Returns the number of cores adjusted. Works in place.
    """
    t = np.concatenate([[-np.inf], np.asarray(thresholds, dtype=float), [np.inf]])
    ranks = np.asarray(ranks, dtype=int)
    lo, hi = t[ranks], t[ranks + 1]
    width = np.where(np.isfinite(hi - lo), hi - lo, 1.0)
    low_target = lo + inset * width
    high_target = hi - inset * width
    nodes._generator = None  # the values change
    adjusted = 0
    for _ in range(4):  # cores sharing a cell can undo each other; a few passes settle it
        value = nodes.at(easting, northing)
        shift = np.where(value < low_target, low_target - value, 0.0)
        shift = np.where(value > high_target, high_target - value, shift)
        bad = np.nonzero(shift != 0.0)[0]
        if bad.size == 0:
            break
        adjusted = max(adjusted, bad.size)
        c, r, _, _ = nodes._locate(easting[bad], northing[bad])
        for dr in (0, 1):
            for dc in (0, 1):
                np.add.at(nodes.values, (r + dr, c + dc), shift[bad])
    return adjusted


def belt_polygons(latent, grid, thresholds: np.ndarray, *, nodes: NodeField | None = None):
    """One (Multi)Polygon per belt rank, clipped to the mapped area.

    Parameters
    ----------
    latent : numpy.ndarray, shape grid.shape
        Mean latent value at the cell centres (ignored when ``nodes`` is given).
    grid : paleomap.grid.Grid
    thresholds : numpy.ndarray, shape (K - 1,)
    nodes : NodeField, optional
        Contouring nodes already adjusted by :func:`honour_cores`.

    Returns
    -------
    list of shapely geometry
        Index = rank; an empty geometry where a belt does not occur in the area.
    """
    if nodes is None:
        nodes = node_field(latent, grid)
    gen = nodes.contours()
    levels = np.concatenate([[-np.inf], np.asarray(thresholds, dtype=float), [np.inf]])
    area = grid.area
    out = []
    for k in range(len(levels) - 1):
        points, offsets = gen.filled(levels[k], levels[k + 1])
        polys = []
        for pts, off in zip(points, offsets, strict=True):
            rings = [pts[off[i] : off[i + 1]] for i in range(len(off) - 1)]
            polys.append(shapely.Polygon(rings[0], rings[1:]))
        geom = (
            shapely.union_all(shapely.make_valid(np.array(polys, dtype=object)))
            if polys
            else shapely.Polygon()
        )
        geom = shapely.intersection(geom, area)
        out.append(_polygonal(geom))
    return out


def _polygonal(geom):
    """Keep only the polygonal part of a geometry (intersections can leave lines)."""
    if geom.is_empty:
        return shapely.MultiPolygon()
    if geom.geom_type in ("Polygon", "MultiPolygon"):
        return geom
    parts = [g for g in shapely.get_parts(geom) if g.geom_type in ("Polygon", "MultiPolygon")]
    return shapely.union_all(parts) if parts else shapely.MultiPolygon()


def walther_contacts(polygons, tolerance: float = 0.0) -> list[tuple[int, int]]:
    """Pairs of belt ranks more than one apart whose polygons touch or overlap.

    An empty list means the map keeps Walther's Law: belts that were not neighbours
    in the scheme never touch (Walther 1894; Middleton 1973).
    """
    bad = []
    for i in range(len(polygons)):
        a = polygons[i]
        if a.is_empty:
            continue
        shapely.prepare(a)  # tested against every belt beyond its neighbour
        for j in range(i + 2, len(polygons)):
            b = polygons[j]
            if b.is_empty:
                continue
            # distance <= 0 is intersection; the predicates stop at the first contact
            near = shapely.intersects(a, b) if tolerance <= 0 else shapely.dwithin(a, b, tolerance)
            if near:
                bad.append((i, j))
    return bad

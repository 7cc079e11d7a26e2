"""Control points: the user's pseudo-cores that impose an interpretation on the maps.

Where the cores leave a map open (a lobe between two wells, a shoreline the cores do not
reach), a geologist may know more: a seismic line, an outcrop, a regional map. A
control point says "at this position, at this age, the belt was this", with a weight.
It conditions the field like a core does at the slices of its age, and is drawn and
exported as a control point (its own layer, its own symbol), never as a core: it is an
interpretation, not an observation, and the core reading never sees it.

The file (``[inputs] control_points``, CSV) has one row per point and age:

``point_id, x, y, age, facies`` and optionally ``weight``

* ``x, y``: position in the project CRS, like ``cores.csv``.
* ``age``: a surface name, or an age (number, age unit) that is one of the slices.
* ``facies``: a belt id or alias of the scheme (matched like ``intervals.csv``).
* ``weight``: the probability that the interpretation holds, in (0, 1]; default 1.
  At weight 1 the point is imposed like a core. Below 1, the slice's map is the mixture
  of the map with the slice's control points (with probability w, the mean weight of
  the points at that slice) and the map without them (1 - w): belt probabilities mix
  exactly, and the mean and spread of the latent field mix as a mixture's moments.

Examples
--------
>>> p = ControlPoint("CP1", 1.0, 2.0, 1.0, 2.0, 50.0, None, 3, "shoreface", 0.5, 2)
>>> p.weight, p.rank
(0.5, 3)
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from .cores import parse_number

__all__ = [
    "CONTROL_COLUMNS",
    "ControlPoint",
    "build_control_points",
    "mix_fields",
    "slice_points",
]

CONTROL_COLUMNS = (("point_id", "x", "y", "age", "facies"), ("weight",))
"""(required, optional) columns of the control-points file."""


@dataclass(frozen=True)
class ControlPoint:
    """One control point at one age.

    Parameters
    ----------
    point_id : str
    x, y : float
        Position as given (project CRS).
    easting, northing : float
        Position in the working CRS (m).
    age : float
        Age (project age unit).
    surface : str or None
        The surface named in the file, if the age was given as a surface.
    rank : int
        Belt rank imposed.
    facies : str
        The facies name as written.
    weight : float
        Probability that the interpretation holds, in (0, 1].
    line : int or None
        Line in the file, for messages.
    """

    point_id: str
    x: float
    y: float
    easting: float
    northing: float
    age: float
    surface: str | None
    rank: int
    facies: str
    weight: float = 1.0
    line: int | None = None


def build_control_points(table, scheme, surfaces, slices, file: str, log) -> tuple:
    """Validated control points from the file's text cells.

    Every problem is logged with the file, line, column and value (the caller raises).

    Parameters
    ----------
    table : pandas.DataFrame
        Text cells with ``point_id, x, y, age, facies`` (optionally ``weight``), ``line``
        and ``easting, northing`` (working CRS, NaN where a position did not project).
    scheme : Scheme
    surfaces, slices : sequence of Surface, Slice
    file : str
        The file as named in messages.
    log : paleomap.errors.ProblemLog

    Returns
    -------
    tuple of ControlPoint
    """
    by_name = {s.name: s for s in surfaces}
    slice_ages = {float(s.age) for s in slices}
    out = []
    seen: dict[tuple[str, float], int] = {}
    for row in table.to_dict("records"):
        line = row.get("line")
        ok = True
        pid = str(row.get("point_id") or "").strip()
        if not pid:
            log.error(file, line, "point_id", row.get("point_id"), "is empty")
            ok = False
        values = {}
        for col in ("x", "y"):
            try:
                values[col] = parse_number(row.get(col))
            except ValueError as exc:
                log.error(file, line, col, row.get(col), str(exc))
                ok = False
        e, n = row.get("easting"), row.get("northing")
        if ok and not (np.isfinite(e) and np.isfinite(n)):
            log.error(file, line, "x", row.get("x"), "is a position that cannot be projected")
            ok = False
        raw_age = str(row.get("age") or "").strip()
        surface = None
        age = None
        if raw_age in by_name:
            surface, age = raw_age, float(by_name[raw_age].age)
        else:
            try:
                age = parse_number(raw_age)
            except ValueError:
                log.error(
                    file,
                    line,
                    "age",
                    row.get("age"),
                    "is neither a surface name nor an age",
                    f"surfaces: {list(by_name)}; or an age in the project's age unit",
                )
                ok = False
        if age is not None and age not in slice_ages:
            log.warn(
                file,
                line,
                "age",
                raw_age,
                "matches no slice, so the control point is not used",
                f"slice ages: {sorted(slice_ages)}",
            )
        facies = str(row.get("facies") or "").strip()
        rank = scheme.rank(facies) if facies else None
        if rank is None:
            close = scheme.suggest(facies) if facies else []
            hint = f"did you mean {' or '.join(repr(c) for c in close)}? " if close else ""
            log.error(
                file,
                line,
                "facies",
                row.get("facies"),
                f"is not a facies of the {scheme.name!r} scheme",
                hint + f"accepted names: {', '.join(scheme.names())}",
            )
            ok = False
        weight = 1.0
        raw_w = row.get("weight")
        if raw_w is not None and str(raw_w).strip():
            try:
                weight = parse_number(raw_w)
            except ValueError as exc:
                log.error(file, line, "weight", raw_w, str(exc))
                ok = False
            else:
                if not 0.0 < weight <= 1.0:
                    log.error(
                        file,
                        line,
                        "weight",
                        raw_w,
                        "is not in (0, 1]",
                        "the weight is the probability that the interpretation holds",
                    )
                    ok = False
        if ok and (pid, age) in seen:
            log.error(
                file,
                line,
                "age",
                raw_age,
                f"control point {pid!r} is already given at this age on line {seen[(pid, age)]}",
            )
            ok = False
        if not ok:
            continue
        seen[(pid, age)] = line
        out.append(
            ControlPoint(
                pid,
                values["x"],
                values["y"],
                float(e),
                float(n),
                float(age),
                surface,
                int(rank),
                facies,
                float(weight),
                line,
            )
        )
    return tuple(out)


def mix_fields(weight: float, mean_with, sd_with, mean_without, sd_without):
    """Moments of the mixture: the map with control points (probability ``weight``) and
    without them.

    Returns
    -------
    (mean, sd) : numpy.ndarray

    Examples
    --------
    >>> m, s = mix_fields(0.5, np.array([1.0]), np.array([0.0]), np.array([-1.0]),
    ...                   np.array([0.0]))
    >>> float(m[0]), float(s[0])
    (0.0, 1.0)
    """
    w = float(weight)
    a, sa = np.asarray(mean_with, float), np.asarray(sd_with, float)
    b, sb = np.asarray(mean_without, float), np.asarray(sd_without, float)
    mean = w * a + (1 - w) * b
    second = w * (sa**2 + a**2) + (1 - w) * (sb**2 + b**2)
    return mean, np.sqrt(np.maximum(second - mean**2, 0.0))


def slice_points(points: Sequence[ControlPoint], age: float) -> list[ControlPoint]:
    """The control points given at a slice's age."""
    return [p for p in points if p.age == float(age)]

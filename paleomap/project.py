"""The project: every setting of a build and the validated cores.

A project is one TOML file whose paths are relative to it. :class:`Project` is the
validated, typed result of reading that file and the tables it names; every later
stage reads only this value.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

import pyproj

from .cores import Core
from .crs import delivery_crs_for
from .errors import Problem
from .scheme import Scheme

__all__ = [
    "AGE_UNITS",
    "DEPTH_UNITS",
    "GridSettings",
    "MappingSettings",
    "MigrationSettings",
    "Project",
    "ReadingOptions",
    "Slice",
    "Surface",
    "age_name",
]

AGE_UNITS = {"ka": 1.0, "Ma": 1000.0}
"""Accepted ``[time] age_unit`` values and their length in kyr."""

DEPTH_UNITS = {"m": 1.0, "ft": 0.3048}
"""Accepted ``[inputs] depth_unit`` values and their length in metres."""


@dataclass(frozen=True)
class Surface:
    """A correlated, dated time surface.

    Parameters
    ----------
    name : str
    age : float
        In the project's ``age_unit``, positive into the past.
    age_sd : float
        One standard deviation of the age, same unit (0 when not given).
    erosional : bool
        Time is missing below the surface.
    line : int or None
        TOML line of its ``[[surfaces]]`` table, for messages.
    """

    name: str
    age: float
    age_sd: float = 0.0
    erosional: bool = False
    line: int | None = None


@dataclass(frozen=True)
class Slice:
    """One age at which a map is made.

    ``surface`` is the surface's name for a slice at a surface, else None (the slice is
    then named by its age, e.g. ``"125ka"``).
    """

    name: str
    age: float
    surface: str | None = None


@dataclass(frozen=True)
class GridSettings:
    """``[grid]``: cell size and margin in working-CRS metres, optional area polygon file."""

    cell_size: float
    margin: float | None = None
    area: Path | None = None


@dataclass(frozen=True)
class MappingSettings:
    """``[mapping]``: the ordinal field's settings. ``None`` means fitted from the data.

    Parameters
    ----------
    model : str
        Covariance model: ``"auto"`` (fitted choice), ``"exponential"``, ``"spherical"``,
        ``"gaussian"`` or ``"matern32"``.
    range_m : float or None
        Practical range along the major axis (along strike), metres.
    anisotropy : float or None
        Minor-to-major range ratio, in (0, 1].
    azimuth_deg : float or None
        Azimuth of the major axis, degrees clockwise from north.
    nugget : float or None
        Nugget as a fraction of the sill, in [0, 1).
    samples : int or None
        Gibbs samples kept; ``None``: the engine's own default (100 for the
        slice engines, 200 for ``space_time``).
    burn_in : int or None
        Gibbs sweeps discarded before the first kept sample; ``None``: the engine's own
        default (50 for the slice engines, 200 for ``space_time``).
    seed : int
        Random seed of the sampler.
    deterministic : bool
        Skip sampling; use each core's truncated-interval mean (fast).
    neighbours : int or None
        Cores in a local kriging neighbourhood; ``None`` lets paleomap choose.
    engine : str
        The field engine, by its name in :data:`paleomap.field.engine.ENGINES`:
        ``"shared_relief"`` (default; all slices mapped together with a latent relief
        shared between them, the inherited paleotopography) or ``"per_slice"`` (each
        slice on its own). The project file's older ``joint = true/false`` still selects
        them, with a deprecation warning.
    """

    model: str = "auto"
    range_m: float | None = None
    anisotropy: float | None = None
    azimuth_deg: float | None = None
    nugget: float | None = None
    samples: int | None = None
    burn_in: int | None = None
    seed: int = 0
    deterministic: bool = False
    neighbours: int | None = None
    engine: str = "shared_relief"


@dataclass(frozen=True)
class MigrationSettings:
    """``[migration]``: transects and the stillstand tolerance.

    Parameters
    ----------
    transects : Path or None
        A line vector file of the user's own transects; None for default dip transects.
    transect_spacing_m : float or None
        Spacing of default transects; None lets paleomap choose.
    stillstand_m_per_kyr : float
        Rates smaller in magnitude than this are called a stillstand.
    """

    transects: Path | None = None
    transect_spacing_m: float | None = None
    stillstand_m_per_kyr: float = 0.1


@dataclass(frozen=True)
class ReadingOptions:
    """``[reading]``: the scales of the core reading, in the project's depth unit.

    ``None`` takes the default of :class:`paleomap.stacking.ReadingSettings` (given there
    in metres and converted to the depth unit).

    Parameters
    ----------
    noise_thickness : float or None
        Beds thinner than this are noise to the turnaround search (default 0.6 m, about
        2 ft: four steps of a log described every 0.5 ft).
    pick_tolerance : float or None
        How far a pick may lie outside a turnaround's span and still be "at" it
        (default 1 m).
    contact_tolerance : float or None
        How far an erosional pick may lie from a contact and still be "at" it
        (default 0.1 m).
    """

    noise_thickness: float | None = None
    pick_tolerance: float | None = None
    contact_tolerance: float | None = None


@dataclass(frozen=True)
class Project:
    """A validated project, ready to build.

    Coordinates of cores are in ``working_crs`` (projected, metres). When the project
    CRS is projected the two are the same; a geographic project CRS is projected to a
    local azimuthal equidistant CRS centred on the cores.
    """

    name: str
    path: Path
    crs: pyproj.CRS
    working_crs: pyproj.CRS
    depth_unit: str
    age_unit: str
    scheme: Scheme
    surfaces: tuple[Surface, ...]
    slices: tuple[Slice, ...]
    cores: tuple[Core, ...]
    grid: GridSettings
    mapping: MappingSettings = field(default_factory=MappingSettings)
    migration: MigrationSettings = field(default_factory=MigrationSettings)
    reading: ReadingOptions = field(default_factory=ReadingOptions)
    control_points: tuple = ()
    """The user's control points (:class:`paleomap.control.ControlPoint`), pseudo-cores
    that impose an interpretation; never cores."""
    area: object | None = None
    """Area of interest (shapely Polygon/MultiPolygon in working CRS) or None."""
    transect_lines: tuple = ()
    """User transects as (transect id, shapely LineString in working CRS); empty for default."""
    config_text: str = ""
    checksums: dict = field(default_factory=dict)
    """sha256 of every input file, keyed by its path relative to the project file."""
    warnings: tuple[Problem, ...] = ()
    output_crs: pyproj.CRS | None = None
    """CRS the layers and rasters are delivered in (see :func:`delivery_crs_for`); None
    for the default, the project CRS."""

    @property
    def delivery_crs(self) -> pyproj.CRS:
        """The CRS of the deliverables: ``output_crs``, else the project CRS."""
        return self.output_crs if self.output_crs is not None else delivery_crs_for(self.crs)

    @property
    def root(self) -> Path:
        return self.path.parent

    @property
    def kyr_per_age_unit(self) -> float:
        return AGE_UNITS[self.age_unit]

    def surface(self, name: str) -> Surface:
        for s in self.surfaces:
            if s.name == name:
                return s
        raise KeyError(name)


def age_name(age: float, age_unit: str) -> str:
    """Name of a slice at a free age: the age and its unit, e.g. ``"125ka"``.

    >>> age_name(125.0, "ka"), age_name(2.5, "Ma")
    ('125ka', '2.5Ma')
    """
    return f"{format(float(age), '.10g')}{age_unit}"

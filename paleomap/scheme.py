"""Facies schemes: belts ordered from most proximal to most distal.

A scheme lists its belts landward to basinward. Rank 0 is the most proximal belt.
Marine belts form one contiguous distal run, so a scheme has at most one
shoreline: the boundary between the last non-marine and the first marine belt.
The *tracked boundary* is the shoreline by default, or any boundary between two
adjacent belts named in ``track``.

A boundary is identified by its index ``b`` (1 to K-1): the boundary between the
belt of rank ``b - 1`` (proximal side) and the belt of rank ``b`` (distal side).

Examples
--------
>>> s = builtin_scheme("siliciclastic")
>>> s.ids
('gravel', 'coarse_sand', 'fine_sand', 'silt', 'clay')
>>> s.shoreline_boundary, s.tracked_boundary
(2, 2)
>>> s.rank("Fine Sand"), s.rank("FINE_SAND")
(2, 2)
>>> builtin_scheme("carbonate_ramp").boundary_name(1)
'grainstone|packstone'
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field

import numpy as np

from .errors import InputError, Problem
from .figures.palette import belt_colors

__all__ = ["BUILTIN_SCHEMES", "Belt", "Scheme", "builtin_scheme", "custom_scheme", "phi"]

_HEX = re.compile(r"^#[0-9a-fA-F]{6}\Z")  # \Z: "$" would let a final newline through


@dataclass(frozen=True)
class Belt:
    """One facies belt of a scheme.

    Parameters
    ----------
    id : str
        Identifier used in tables and outputs.
    marine : bool
        Whether the belt was deposited below sea level.
    aliases : tuple of str
        Other names that match this belt in ``intervals.csv`` (case-insensitive).
    color : str
        ``#rrggbb`` colour for maps and rasters.
    label : str
        Human-readable name for legends.
    grain_size_mm : tuple of float or None
        (finest, coarsest) grain size in mm of a siliciclastic belt, Wentworth (1922).
    texture : str or None
        Depositional texture of a carbonate belt, Dunham (1962).
    """

    id: str
    marine: bool
    aliases: tuple[str, ...] = ()
    color: str = "#999999"
    label: str = ""
    grain_size_mm: tuple[float, float] | None = None
    texture: str | None = None

    def names(self) -> tuple[str, ...]:
        """Every lower-case name that matches this belt."""
        return tuple(n.strip().lower() for n in (self.id, *self.aliases))


@dataclass(frozen=True)
class Scheme:
    """An ordered facies scheme (proximal to distal).

    Parameters
    ----------
    name : str
        ``"siliciclastic"``, ``"carbonate_ramp"`` or a user's own name.
    belts : tuple of Belt
        Belts, most proximal first.
    track : tuple of str or None
        Two adjacent belt ids whose boundary is tracked; ``None`` tracks the shoreline.
    family : str
        ``"siliciclastic"``, ``"carbonate"`` or ``"custom"``; siliciclastic schemes
        describe trends as fining-upward / coarsening-upward too.
    """

    name: str
    belts: tuple[Belt, ...]
    track: tuple[str, str] | None = None
    family: str = "custom"
    _lookup: dict = field(default=None, init=False, repr=False, compare=False)

    def __post_init__(self) -> None:
        problems = _scheme_problems(self.belts, self.track, "scheme")
        if problems:
            raise InputError(problems)
        lookup = {}
        for rank, belt in enumerate(self.belts):
            for n in belt.names():
                lookup[n] = rank
        object.__setattr__(self, "_lookup", lookup)

    @property
    def n_belts(self) -> int:
        return len(self.belts)

    @property
    def ids(self) -> tuple[str, ...]:
        return tuple(b.id for b in self.belts)

    @property
    def colors(self) -> tuple[str, ...]:
        return tuple(b.color for b in self.belts)

    @property
    def marine(self) -> tuple[bool, ...]:
        return tuple(b.marine for b in self.belts)

    def rank(self, facies: str) -> int | None:
        """Rank of a facies name (id or alias, case-insensitive), or None if unknown."""
        return self._lookup.get(str(facies).strip().lower())

    @property
    def shoreline_boundary(self) -> int | None:
        """Index of the shoreline boundary, or None in an all-marine or all-non-marine scheme."""
        for b in range(1, self.n_belts):
            if not self.belts[b - 1].marine and self.belts[b].marine:
                return b
        return None

    @property
    def tracked_boundary(self) -> int:
        """Index of the tracked boundary: ``track`` if given, else the shoreline."""
        if self.track is not None:
            return self.ids.index(self.track[1])
        b = self.shoreline_boundary
        assert b is not None  # guaranteed by validation
        return b

    def boundary_name(self, b: int) -> str:
        """``"proximal|distal"`` name of boundary ``b``."""
        return f"{self.belts[b - 1].id}|{self.belts[b].id}"

    @property
    def tracks_shoreline(self) -> bool:
        return self.tracked_boundary == self.shoreline_boundary


def _scheme_problems(belts, track, where: str, file=None, line=None) -> list[Problem]:
    """Check the structural rules of a scheme; return the problems found."""
    out: list[Problem] = []

    def bad(column, value, message, hint=None):
        out.append(Problem(file, line, column, value, message, hint))

    if len(belts) < 2:
        bad(f"{where}.belts", len(belts), "a scheme needs at least two belts")
        return out
    seen: dict[str, str] = {}
    for belt in belts:
        if not belt.id or not str(belt.id).strip():
            bad(f"{where}.belts", belt.id, "a belt id is empty")
        for n in belt.names():
            if n in seen:
                bad(
                    f"{where}.belts",
                    n,
                    f"name is used by both belt {seen[n]!r} and belt {belt.id!r}",
                    "each id and alias must be unique, ignoring case",
                )
            seen[n] = belt.id
        if not _HEX.match(belt.color):
            bad(f"{where}.belts.color", belt.color, "is not a colour", 'write "#rrggbb"')
    flags = [b.marine for b in belts]
    first_marine = flags.index(True) if True in flags else len(flags)
    if any(not m for m in flags[first_marine:]):
        bad(
            f"{where}.belts",
            [b.id for b in belts if b.marine],
            "marine belts are not one contiguous distal run",
            "list belts proximal to distal, every non-marine belt before every marine one",
        )
    ids = [b.id for b in belts]
    if track is not None:
        if len(track) != 2:
            bad(f"{where}.track", list(track), "must name exactly two belts")
        else:
            unknown = [t for t in track if t not in ids]
            if unknown:
                bad(f"{where}.track", list(track), "names unknown belts", f"known belts: {ids}")
            elif ids.index(track[1]) - ids.index(track[0]) != 1:
                bad(
                    f"{where}.track",
                    list(track),
                    "the two belts are not adjacent in the scheme",
                    "name a proximal belt and the belt just distal of it",
                )
    elif 0 < first_marine < len(flags):
        pass  # the shoreline is tracked
    else:
        bad(
            f"{where}.track",
            None,
            "the scheme has no shoreline (it is all marine or all non-marine) and no track",
            'add track = ["belt_a", "belt_b"] naming two adjacent belts',
        )
    return out


def _with_colors(belts: list[Belt]) -> tuple[Belt, ...]:
    colors = belt_colors([b.marine for b in belts])
    return tuple(
        Belt(
            b.id,
            b.marine,
            b.aliases,
            b.color if b.color != "#999999" else c,
            b.label or b.id.replace("_", " "),
            b.grain_size_mm,
            b.texture,
        )
        for b, c in zip(belts, colors, strict=True)
    )


def _siliciclastic() -> Scheme:
    # Grain-size class limits in mm after Wentworth (1922): gravel > 2 mm; very coarse and
    # coarse sand 0.5-2 mm; medium to very fine sand 0.0625-0.5 mm; silt 1/256-1/16 mm;
    # clay < 1/256 mm. Non-marine: gravel and coarse sand (fluvial, alluvial); marine from
    # the beach and shoreface sands basinward.
    belts = [
        Belt(
            "gravel",
            False,
            ("conglomerate", "granule", "pebble", "cobble", "boulder"),
            label="gravel",
            grain_size_mm=(2.0, 4096.0),
        ),
        Belt(
            "coarse_sand",
            False,
            ("very_coarse_sand", "coarse sand", "fluvial sand"),
            label="coarse sand",
            grain_size_mm=(0.5, 2.0),
        ),
        Belt(
            "fine_sand",
            True,
            ("fine sand", "medium_sand", "very_fine_sand", "shoreface"),
            label="fine sand (beach, shoreface)",
            grain_size_mm=(0.0625, 0.5),
        ),
        Belt(
            "silt",
            True,
            ("siltstone", "offshore transition"),
            label="silt",
            grain_size_mm=(1 / 256, 0.0625),
        ),
        Belt(
            "clay",
            True,
            ("mud", "mudstone", "shale", "claystone", "offshore"),
            label="clay",
            grain_size_mm=(0.0, 1 / 256),
        ),
    ]
    return Scheme("siliciclastic", _with_colors(belts), None, "siliciclastic")


def _carbonate_ramp() -> Scheme:
    # Dunham (1962): from grain-supported without mud to mud-supported. All marine on a
    # ramp; the tracked boundary is the edge of the grainstone shoal belt.
    belts = [
        Belt(
            "grainstone",
            True,
            ("oolite", "shoal"),
            label="grainstone",
            texture="grain-supported, no mud",
        ),
        Belt("packstone", True, (), label="packstone", texture="grain-supported, with mud"),
        Belt(
            "wackestone",
            True,
            (),
            label="wackestone",
            texture="mud-supported, more than 10 % grains",
        ),
        Belt(
            "mudstone",
            True,
            ("lime_mudstone", "micrite"),
            label="mudstone",
            texture="mud-supported, less than 10 % grains",
        ),
    ]
    return Scheme("carbonate_ramp", _with_colors(belts), ("grainstone", "packstone"), "carbonate")


BUILTIN_SCHEMES = ("siliciclastic", "carbonate_ramp")
"""Names accepted by :func:`builtin_scheme` and by ``[scheme] builtin`` in a project."""


def builtin_scheme(name: str) -> Scheme:
    """A built-in scheme by name.

    Parameters
    ----------
    name : {"siliciclastic", "carbonate_ramp"}

    Raises
    ------
    InputError
        For an unknown name; the message lists the built-in names.
    """
    if name == "siliciclastic":
        return _siliciclastic()
    if name == "carbonate_ramp":
        return _carbonate_ramp()
    raise InputError(
        [
            Problem(
                None,
                None,
                "scheme.builtin",
                name,
                "is not a built-in scheme",
                f"choose one of {list(BUILTIN_SCHEMES)}",
            )
        ]
    )


def custom_scheme(name: str, belts: list[Belt], track: tuple[str, str] | None) -> Scheme:
    """A user's own scheme; belts without a colour get the default palette."""
    return Scheme(name, _with_colors(belts), track, "custom")


def phi(d_mm):
    """Krumbein (1934) phi grain size of a diameter in millimetres: phi = -log2(d).

    Parameters
    ----------
    d_mm : float or array_like
        Grain diameter in mm, positive.

    Returns
    -------
    float or numpy.ndarray

    Examples
    --------
    >>> phi(2.0), phi(0.25), phi(1 / 256)
    (-1.0, 2.0, 8.0)
    """
    d = np.asarray(d_mm, dtype=float)
    if np.any(d <= 0):
        raise ValueError("a grain diameter must be positive")
    out = -np.log2(d)
    return float(out) if out.ndim == 0 else out

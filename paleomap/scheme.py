"""Facies schemes: belts ordered from most proximal to most distal.

A scheme lists its belts landward to basinward. Rank 0 is the most proximal belt.
Belts are depositional environments (coastal plain, shoreface, offshore; lagoon, shoal,
mid ramp); lithologies and textures that point to one environment unambiguously are
its aliases. Marine belts form one contiguous distal run, so a scheme has at most one
shoreline: the boundary between the last non-marine and the first marine belt. The
*tracked boundary* is the shoreline by default, or any boundary between two adjacent
belts named in ``track``; a scheme may track more boundaries beside it (``also_track``:
a carbonate ramp tracks the shoal's seaward edge as well as its shoreline).

A boundary is identified by its index ``b`` (1 to K-1): the boundary between the
belt of rank ``b - 1`` (proximal side) and the belt of rank ``b`` (distal side).

Facies names match ignoring case, spaces, hyphens and underscores, so ``medium sand``,
``Medium-Sand`` and ``medium_sand`` are one name.

Examples
--------
>>> s = builtin_scheme("shoreface_shelf")
>>> s.ids
('alluvial_plain', 'coastal_plain', 'foreshore', 'shoreface', 'offshore_transition', 'offshore')
>>> s.boundary_name(s.shoreline_boundary)
'coastal_plain|foreshore'
>>> s.rank("Offshore Transition"), s.rank("OFFSHORE-TRANSITION"), s.rank("beach")
(4, 4, 2)
>>> ramp = builtin_scheme("carbonate_ramp")
>>> [ramp.boundary_name(b) for b in ramp.tracked_boundaries]
['sabkha_tidal_flat|lagoon', 'shoal|mid_ramp']
>>> suggest_names("ofshore", s.names())
['offshore', 'foreshore']
"""

from __future__ import annotations

import difflib
import re
from dataclasses import dataclass, field

import numpy as np

from .errors import InputError, Problem
from .palette import belt_colors

__all__ = [
    "BUILTIN_SCHEMES",
    "ENVIRONMENT_SCHEMES",
    "LITHOLOGY_SCHEMES",
    "RETIRED_SCHEMES",
    "Belt",
    "Scheme",
    "builtin_belts",
    "builtin_scheme",
    "custom_scheme",
    "lithology_track_problem",
    "name_key",
    "phi",
    "suggest_names",
]

_HEX = re.compile(r"^#[0-9a-fA-F]{6}\Z")  # \Z: "$" would let a final newline through
_SEPARATORS = re.compile(r"[\s_\-]+")


def name_key(name: str) -> str:
    """The form in which facies and belt names are compared: lower case, with spaces,
    hyphens and underscores removed.

    Examples
    --------
    >>> name_key(" Medium-Sand "), name_key("medium_sand"), name_key("MEDIUM SAND")
    ('mediumsand', 'mediumsand', 'mediumsand')
    """
    return _SEPARATORS.sub("", str(name).strip().lower())


def suggest_names(name: str, known, n: int = 3) -> list[str]:
    """Up to ``n`` known names close to ``name`` (compared as :func:`name_key`), best first.

    Examples
    --------
    >>> suggest_names("grainston", ["grainstone", "packstone", "shoal"])
    ['grainstone']
    """
    by_key: dict[str, str] = {}
    for k in known:
        by_key.setdefault(name_key(k), str(k))
    close = difflib.get_close_matches(name_key(name), list(by_key), n=n, cutoff=0.75)
    return [by_key[c] for c in close]


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
        Other names that match this belt in ``intervals.csv`` (compared ignoring case,
        spaces, hyphens and underscores).
    color : str
        ``#rrggbb`` colour for maps and rasters.
    label : str
        Human-readable name for legends.
    grain_size_mm : tuple of float or None
        (finest, coarsest) grain size in mm of a grain-size class, Wentworth (1922).
    texture : str or None
        Depositional texture of a carbonate texture class, Dunham (1962).
    setting : str or None
        Where an environment belt lies (relative to sea level and wave base).
    """

    id: str
    marine: bool
    aliases: tuple[str, ...] = ()
    color: str = "#999999"
    label: str = ""
    grain_size_mm: tuple[float, float] | None = None
    texture: str | None = None
    setting: str | None = None

    def names(self) -> tuple[str, ...]:
        """The id and every alias, as written."""
        return (self.id, *self.aliases)

    def keys(self) -> tuple[str, ...]:
        """Every name that matches this belt, in :func:`name_key` form."""
        return tuple(dict.fromkeys(name_key(n) for n in self.names()))


@dataclass(frozen=True)
class Scheme:
    """An ordered facies scheme (proximal to distal).

    Parameters
    ----------
    name : str
        A built-in name (:data:`BUILTIN_SCHEMES`) or a user's own name.
    belts : tuple of Belt
        Belts, most proximal first.
    track : tuple of str or None
        Two adjacent belt ids whose boundary is tracked; ``None`` tracks the shoreline.
    family : str
        ``"siliciclastic"``, ``"carbonate"`` or ``"custom"``; siliciclastic schemes
        describe trends as fining-upward / coarsening-upward too.
    also_track : tuple of (str, str)
        Further boundaries (pairs of adjacent belt ids) mapped and measured beside the
        tracked one.
    kind : str
        ``"environment"`` (belts are depositional environments), ``"lithology"``
        (belts are lithology classes: the user says which boundary to track) or
        ``"custom"``.
    """

    name: str
    belts: tuple[Belt, ...]
    track: tuple[str, str] | None = None
    family: str = "custom"
    also_track: tuple[tuple[str, str], ...] = ()
    kind: str = "custom"
    _lookup: dict = field(default=None, init=False, repr=False, compare=False)

    def __post_init__(self) -> None:
        problems = _scheme_problems(self.belts, self.track, "scheme")
        for pair in self.also_track:
            problems += _scheme_problems(self.belts, tuple(pair), "scheme", what="also_track")
        if problems:
            raise InputError(problems)
        lookup = {}
        for rank, belt in enumerate(self.belts):
            for k in belt.keys():
                lookup[k] = rank
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
        """Rank of a facies name (id or alias, ignoring case, spaces, hyphens and
        underscores), or None if unknown."""
        return self._lookup.get(name_key(facies))

    def names(self) -> list[str]:
        """Every accepted facies name (ids and aliases), proximal belts first."""
        return [n for b in self.belts for n in b.names()]

    def suggest(self, facies: str) -> list[str]:
        """Accepted names close to an unknown ``facies`` ("did you mean")."""
        return suggest_names(facies, self.names())

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

    @property
    def tracked_boundaries(self) -> tuple[int, ...]:
        """The tracked boundary, then every ``also_track`` boundary (no repeats)."""
        out = [self.tracked_boundary]
        for pair in self.also_track:
            b = self.ids.index(pair[1])
            if b not in out:
                out.append(b)
        return tuple(out)

    def boundary_name(self, b: int) -> str:
        """``"proximal|distal"`` name of boundary ``b``."""
        return f"{self.belts[b - 1].id}|{self.belts[b].id}"

    def boundary_label(self, b: int) -> str:
        """What a reader calls boundary ``b``: ``"shoreline"`` where it is the shoreline,
        else ``"<proximal>|<distal> boundary"``.

        >>> s = builtin_scheme("carbonate_ramp")
        >>> s.boundary_label(1), s.boundary_label(3)
        ('shoreline', 'shoal|mid_ramp boundary')
        """
        if b == self.shoreline_boundary:
            return "shoreline"
        return f"{self.boundary_name(b)} boundary"

    @property
    def tracks_shoreline(self) -> bool:
        return self.tracked_boundary == self.shoreline_boundary


def _scheme_problems(
    belts, track, where: str, file=None, line=None, what: str = "track"
) -> list[Problem]:
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
            k = name_key(n)
            if k in seen and seen[k] != belt.id:
                bad(
                    f"{where}.belts",
                    n,
                    f"name is used by both belt {seen[k]!r} and belt {belt.id!r}",
                    "each id and alias must be unique, ignoring case, spaces, hyphens and "
                    "underscores",
                )
            seen.setdefault(k, belt.id)
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
            bad(f"{where}.{what}", list(track), "must name exactly two belts")
        else:
            unknown = [t for t in track if t not in ids]
            if unknown:
                bad(f"{where}.{what}", list(track), "names unknown belts", f"known belts: {ids}")
            elif ids.index(track[1]) - ids.index(track[0]) != 1:
                bad(
                    f"{where}.{what}",
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
            b.setting,
        )
        for b, c in zip(belts, colors, strict=True)
    )


def _shoreface_shelf() -> Scheme:
    # A wave-dominated shoreface profile (common practice): alluvial plain, coastal plain
    # (non-marine), foreshore between low and high tide, shoreface down to fair-weather
    # wave base, offshore transition down to storm wave base, offshore below. The
    # shoreline is the coastal plain | foreshore boundary. Aliases are environment words
    # and lithofacies that point to one belt only; grain sizes point to several (a
    # fine sand may be foreshore, shoreface or a storm bed offshore) and are not aliases.
    belts = [
        Belt(
            "alluvial_plain",
            False,
            ("alluvial", "fluvial", "floodplain", "braided river", "fluvial channel"),
            setting="above the coastal plain, rivers and their floodplains",
        ),
        Belt(
            "coastal_plain",
            False,
            ("coal", "lignite", "marsh", "rooted mudstone", "delta plain"),
            setting="near sea level, landward of the beach",
        ),
        Belt(
            "foreshore",
            True,
            ("beach", "swash-laminated sandstone", "intertidal beach"),
            setting="between low and high tide",
        ),
        Belt(
            "shoreface",
            True,
            (
                "upper shoreface",
                "middle shoreface",
                "lower shoreface",
                "swaley cross-stratified sandstone",
            ),
            setting="low tide to fair-weather wave base",
        ),
        Belt(
            "offshore_transition",
            True,
            ("heterolithic storm beds", "hummocky cross-stratified sandstone"),
            setting="fair-weather to storm wave base",
        ),
        Belt(
            "offshore",
            True,
            ("shelf mudstone", "offshore mudstone", "marine shale"),
            setting="below storm wave base",
        ),
    ]
    return Scheme(
        "shoreface_shelf", _with_colors(belts), None, "siliciclastic", (), kind="environment"
    )


def _carbonate_ramp() -> Scheme:
    # Burchette & Wright (1992, from memory): the inner ramp lies above fair-weather wave
    # base (tidal flat, lagoon, shoal), the mid ramp between fair-weather and storm wave
    # base, the outer ramp below storm wave base, then the basin. The sabkha and tidal
    # flat lie above the lagoon at the shoreline; the ramp tracks that shoreline and, as a
    # second boundary, the shoal's seaward edge. Textures (Dunham 1962) occur in several
    # belts (a lagoon mudstone and a basin mudstone), so they are not aliases.
    belts = [
        Belt(
            "sabkha_tidal_flat",
            False,
            ("sabkha", "tidal flat", "supratidal", "nodular anhydrite", "microbial laminite"),
            setting="inner ramp: at and above high tide",
        ),
        Belt(
            "lagoon",
            True,
            ("lagoonal", "back shoal", "restricted lagoon"),
            setting="inner ramp: behind the shoal, above fair-weather wave base",
        ),
        Belt(
            "shoal",
            True,
            ("oolite", "ooid grainstone", "oolitic grainstone", "ooid shoal", "barrier shoal"),
            setting="inner ramp: at fair-weather wave base and above",
        ),
        Belt(
            "mid_ramp",
            True,
            ("tempestite", "storm bed"),
            setting="fair-weather to storm wave base",
        ),
        Belt(
            "outer_ramp",
            True,
            ("nodular limestone",),
            setting="below storm wave base",
        ),
        Belt(
            "basin",
            True,
            ("basinal", "pelagic limestone", "calciturbidite"),
            setting="beyond the toe of the ramp",
        ),
    ]
    return Scheme(
        "carbonate_ramp",
        _with_colors(belts),
        None,
        "carbonate",
        (("shoal", "mid_ramp"),),
        kind="environment",
    )


def _siliciclastic_lithology() -> list[Belt]:
    # Grain-size class limits in mm after Wentworth (1922): gravel > 2 mm; very coarse and
    # coarse sand 0.5-2 mm; medium to very fine sand 0.0625-0.5 mm; silt 1/256-1/16 mm;
    # clay < 1/256 mm. These are lithologies, not environments: which of their
    # boundaries stands for a shoreline is the user's call (``track``).
    belts = [
        Belt(
            "gravel",
            False,
            ("conglomerate", "granule", "pebble", "cobble", "boulder"),
            grain_size_mm=(2.0, 4096.0),
        ),
        Belt("coarse_sand", False, ("very_coarse_sand",), grain_size_mm=(0.5, 2.0)),
        Belt(
            "fine_sand",
            True,
            ("medium_sand", "very_fine_sand", "sand", "sandstone"),
            grain_size_mm=(0.0625, 0.5),
        ),
        Belt("silt", True, ("siltstone",), grain_size_mm=(1 / 256, 0.0625)),
        Belt(
            "clay",
            True,
            ("mud", "mudstone", "shale", "claystone"),
            grain_size_mm=(0.0, 1 / 256),
        ),
    ]
    return belts


def _carbonate_lithology() -> list[Belt]:
    # Dunham (1962): from grain-supported without mud to mud-supported. A texture says
    # how agitated the water was, not where on the ramp it lay: the user says which
    # boundary to track.
    belts = [
        Belt("grainstone", True, (), texture="grain-supported, no mud"),
        Belt("packstone", True, (), texture="grain-supported, with mud"),
        Belt("wackestone", True, (), texture="mud-supported, more than 10 % grains"),
        Belt(
            "mudstone",
            True,
            ("lime_mudstone", "micrite"),
            texture="mud-supported, less than 10 % grains",
        ),
    ]
    return belts


ENVIRONMENT_SCHEMES = ("shoreface_shelf", "carbonate_ramp")
"""Built-in schemes whose belts are depositional environments."""

LITHOLOGY_SCHEMES = ("siliciclastic_lithology", "carbonate_lithology")
"""Built-in schemes whose belts are lithology classes; they need a ``track``."""

BUILTIN_SCHEMES = ENVIRONMENT_SCHEMES + LITHOLOGY_SCHEMES
"""Names accepted by :func:`builtin_scheme` and by ``[scheme] builtin`` in a project."""

RETIRED_SCHEMES = {
    "siliciclastic": (
        'its belts were grain sizes, not environments; use builtin = "shoreface_shelf" '
        '(environments), or builtin = "siliciclastic_lithology" with track = '
        '["coarse_sand", "fine_sand"] (or the boundary you read as the shoreline)'
    ),
}
"""Names of earlier built-ins, with what to write instead."""


_LITHOLOGY = {
    "siliciclastic_lithology": (_siliciclastic_lithology, "siliciclastic"),
    "carbonate_lithology": (_carbonate_lithology, "carbonate"),
}


def lithology_track_problem(name: str, column: str = "scheme.track") -> Problem:
    """The problem of a lithology scheme used without ``track``: it asks which boundary
    to track, listing every boundary of the scheme.

    >>> print(lithology_track_problem("carbonate_lithology").hint)  # doctest: +ELLIPSIS
    write track = one of ["grainstone", "packstone"], ...
    """
    ids = [b.id for b in _LITHOLOGY[name][0]()]
    listed = ", ".join(f'["{a}", "{b}"]' for a, b in zip(ids[:-1], ids[1:], strict=True))
    return Problem(
        None,
        None,
        column,
        None,
        f"the {name!r} scheme orders lithologies, not environments, so it cannot tell "
        "which boundary is the shoreline: say which boundary to track",
        f"write track = one of {listed}, or use an environment scheme "
        f"({', '.join(ENVIRONMENT_SCHEMES)})",
    )


def builtin_belts(name: str) -> tuple[Belt, ...] | None:
    """The belts of a built-in scheme (None for an unknown name), whatever its track.

    >>> [b.id for b in builtin_belts("carbonate_lithology")][:2]
    ['grainstone', 'packstone']
    """
    if name in _LITHOLOGY:
        return _with_colors(_LITHOLOGY[name][0]())
    if name == "shoreface_shelf":
        return _shoreface_shelf().belts
    if name == "carbonate_ramp":
        return _carbonate_ramp().belts
    return None


def builtin_scheme(name: str, track: tuple[str, str] | None = None) -> Scheme:
    """A built-in scheme by name.

    Parameters
    ----------
    name : str
        One of :data:`BUILTIN_SCHEMES`.
    track : (str, str), optional
        Two adjacent belt ids whose boundary to track instead of the default; required by
        the lithology schemes (:data:`LITHOLOGY_SCHEMES`).

    Raises
    ------
    InputError
        For an unknown name (the message lists the built-in names), or a lithology
        scheme without ``track``.

    Examples
    --------
    >>> builtin_scheme("siliciclastic_lithology", ("coarse_sand", "fine_sand")).tracked_boundary
    2
    """
    track = tuple(track) if track is not None else None
    if name in _LITHOLOGY:
        make, family = _LITHOLOGY[name]
        belts = _with_colors(make())
        if track is None:
            raise InputError([lithology_track_problem(name)])
        return Scheme(name, belts, track, family, kind="lithology")
    if name == "shoreface_shelf":
        base = _shoreface_shelf()
    elif name == "carbonate_ramp":
        base = _carbonate_ramp()
    else:
        hint = RETIRED_SCHEMES.get(name)
        if hint is None:
            close = suggest_names(name, BUILTIN_SCHEMES)
            hint = (f"did you mean {close[0]!r}? " if close else "") + (
                f"choose one of {list(BUILTIN_SCHEMES)}"
            )
        raise InputError(
            [Problem(None, None, "scheme.builtin", name, "is not a built-in scheme", hint)]
        )
    if track is None:
        return base
    return Scheme(base.name, base.belts, track, base.family, base.also_track, base.kind)


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

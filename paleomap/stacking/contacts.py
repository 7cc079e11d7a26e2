"""Contacts between vertically adjacent intervals, checked against Walther's Law.

Walther's Law (Walther 1894; restated by Middleton 1973): in a conformable vertical
succession, facies that are vertically adjacent were deposited in laterally adjacent
environments. A contact between belts whose ranks differ by more than one skips a belt
and so is a sign of a break (an unconformity, a ravinement, a fault or a mis-logged
interval) unless an erosional surface is already picked there.

Rules
-----
* A **contact** joins two consecutive intervals of a core that touch (the base of the
  upper equals the top of the lower, to 1e-9 of the core's logged depth range). Two
  intervals of the same belt logged one on the other make a contact with jump 0.
* Consecutive intervals that do not touch leave a **gap** (no recovery). A gap is not a
  contact: nothing is known of the transition, so it is listed apart and never flagged.
* ``jump = upper rank - lower rank``; ranks grow distal, so a positive jump deepens
  upward and a negative one shallows upward.
* ``|jump| <= 1`` is ``"conformable"``.
* ``|jump| > 1`` is ``"at_erosional_surface"`` when a pick of an erosional surface lies
  within the tolerance of the contact, else ``"possible_break"``. The tolerance is
  ``contact_tolerance`` (default 0.1 depth units, about the precision to which a contact is
  logged), but never more than half the thinner of the two intervals, so a pick on the
  next contact up or down is not taken for this one.
* Every contact carries the nearest pick of any surface (name and absolute depth
  distance), so a flagged contact can be tied to the surface it probably belongs to.

Examples
--------
>>> from paleomap.cores import Core, Interval
>>> core = Core("C1", 0.0, 0.0, intervals=(Interval(0, 5, 4), Interval(5, 9, 0)))
>>> c = core_contacts(core, {})
>>> c[0].jump, c[0].flag
(4, 'possible_break')
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

from ..cores import Core
from ..project import Surface

__all__ = ["CONTACT_FLAGS", "Contact", "Gap", "core_contacts", "core_gaps"]

CONTACT_FLAGS = ("conformable", "possible_break", "at_erosional_surface")
"""The values of :attr:`Contact.flag`."""

_TOUCH = 1e-9


@dataclass(frozen=True)
class Contact:
    """One contact between two touching intervals of a core.

    Parameters
    ----------
    depth : float
        Depth of the contact (depth unit of the project, positive down).
    lower_rank, upper_rank : int
        Belt ranks below and above the contact.
    flag : str
        One of :data:`CONTACT_FLAGS`.
    nearest_surface : str
        Name of the nearest pick in the core ("" when the core has none).
    surface_distance : float
        Absolute depth distance to that pick (NaN when the core has none).
    erosional_surface : str
        The erosional surface picked at the contact, or "".
    """

    depth: float
    lower_rank: int
    upper_rank: int
    flag: str
    nearest_surface: str = ""
    surface_distance: float = float("nan")
    erosional_surface: str = ""

    @property
    def jump(self) -> int:
        """Upper rank minus lower rank (positive = deepening upward)."""
        return self.upper_rank - self.lower_rank


@dataclass(frozen=True)
class Gap:
    """An unrecovered depth range between two logged intervals."""

    top: float
    base: float
    lower_rank: int
    upper_rank: int

    @property
    def thickness(self) -> float:
        return self.base - self.top


def _touch_eps(core: Core) -> float:
    span = abs(core.base - core.top) if core.intervals else 0.0
    return _TOUCH * max(span, 1.0)


def core_contacts(
    core: Core,
    surfaces: Mapping[str, Surface],
    contact_tolerance: float = 0.1,
) -> list[Contact]:
    """Every contact of a core, top down, flagged after Walther's Law.

    Parameters
    ----------
    core : Core
    surfaces : mapping of str to Surface
        The project's surfaces by name; a pick of a surface missing here counts as
        not erosional.
    contact_tolerance : float
        Largest depth distance (project depth unit) at which an erosional pick counts as
        lying at a contact; capped at half the thinner adjacent interval.

    Returns
    -------
    list of Contact

    Examples
    --------
    >>> from paleomap.cores import Core, Interval, Pick
    >>> from paleomap.project import Surface
    >>> core = Core("C1", 0.0, 0.0, intervals=(Interval(0, 5, 4), Interval(5, 9, 0)),
    ...             picks=(Pick("SB", 5.02),))
    >>> core_contacts(core, {"SB": Surface("SB", 10.0, erosional=True)})[0].flag
    'at_erosional_surface'
    """
    out: list[Contact] = []
    eps = _touch_eps(core)
    picks = core.picks
    for upper, lower in zip(core.intervals[:-1], core.intervals[1:], strict=True):
        if abs(lower.top - upper.base) > eps:
            continue
        depth = upper.base
        near_name, near_dist = "", float("nan")
        for p in picks:
            d = abs(p.depth - depth)
            if not near_name or d < near_dist:
                near_name, near_dist = p.surface, d
        tol = min(contact_tolerance, 0.5 * min(upper.thickness, lower.thickness))
        erosional = ""
        best = float("inf")
        for p in picks:
            s = surfaces.get(p.surface)
            d = abs(p.depth - depth)
            if s is not None and s.erosional and d <= tol and d < best:
                erosional, best = p.surface, d
        jump = upper.rank - lower.rank
        if abs(jump) <= 1:
            flag = "conformable"
        elif erosional:
            flag = "at_erosional_surface"
        else:
            flag = "possible_break"
        out.append(Contact(depth, lower.rank, upper.rank, flag, near_name, near_dist, erosional))
    return out


def core_gaps(core: Core) -> list[Gap]:
    """Unrecovered depth ranges between consecutive intervals of a core, top down.

    Examples
    --------
    >>> from paleomap.cores import Core, Interval
    >>> core = Core("C1", 0.0, 0.0, intervals=(Interval(0, 5, 1), Interval(6, 9, 2)))
    >>> core_gaps(core)[0].thickness
    1.0
    """
    eps = _touch_eps(core)
    return [
        Gap(float(upper.base), float(lower.top), lower.rank, upper.rank)
        for upper, lower in zip(core.intervals[:-1], core.intervals[1:], strict=True)
        if lower.top - upper.base > eps
    ]

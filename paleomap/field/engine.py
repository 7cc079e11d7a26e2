"""Field engines: which one a project asks for, and its settings.

The ``[mapping]`` table of the project file chooses the engine and sets it up.

Examples
--------
>>> field_settings(project)   # doctest: +SKIP
SharedSettings(...)
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from .ordinal import FieldSettings
from .shared import SharedSettings

if TYPE_CHECKING:
    from ..project import Project

__all__ = ["field_settings"]


def field_settings(project: Project):
    """The engine's settings from the project's ``[mapping]`` table.

    Returns a :class:`~paleomap.field.shared.SharedSettings` when ``joint`` (the
    default), else a :class:`~paleomap.field.ordinal.FieldSettings`.
    """

    m = project.mapping
    overrides = {
        k: v
        for k, v in dict(
            model=None if m.model == "auto" else m.model,
            range_m=m.range_m,
            anisotropy=m.anisotropy,
            azimuth_deg=m.azimuth_deg,
            nugget=m.nugget,
        ).items()
        if v is not None
    }
    kwargs = dict(
        covariance=overrides or None,
        samples=m.samples,
        burn_in=m.burn_in,
        seed=m.seed,
        deterministic=m.deterministic,
    )
    if m.joint:
        return SharedSettings(**kwargs)
    if m.neighbours is not None:
        kwargs["kriging_neighbours"] = m.neighbours
    return FieldSettings(**kwargs)

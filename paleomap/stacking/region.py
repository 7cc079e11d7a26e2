"""Across the region: trend counts per slice pair, the map cross-check, turnaround ties.

Rules
-----
* **Pairs** are consecutive surfaces by age, older first; a pair is named
  ``"<older>-<younger>"`` (the older surface lies below).
* **Counts**: per pair, the number of cores with a trend in that interval and how many of
  them are deepening-upward, shallowing-upward, aggrading and mixed. The cores' sense is
  ``"transgression"`` when more than half of the counted cores deepen upward,
  ``"regression"`` when more than half shallow upward, else ``""`` (senses are nouns
  everywhere, in the cores' columns as in the map's).
* **Cross-check** against the mapped shoreline shift of the same pair
  (``"transgression"``, ``"regression"``, ``"stillstand"`` or ``"uncertain"``):
  ``"disagree"`` where the cores record a transgression while the map regresses, or a
  regression while the map transgresses; ``"no_data"`` where the pair has no counted
  core or no mapped sense; ``"map_uncertain"`` where the map's P10-P90 shift spans zero;
  ``"agree"`` otherwise (a stillstand or a core majority of aggrading/mixed contradicts
  neither).
* **Turnaround ties**: a core's suggested MFS or MRS lies at a surface when the surface's
  pick in that core falls within the turnaround's extreme-rank span widened by
  ``tolerance`` depth units on each side (so a pick in the same interval always counts).

Examples
--------
>>> import pandas as pd
>>> region = pd.DataFrame({"older_surface": ["S1"], "younger_surface": ["S2"],
...                        "n_cores": [5], "n_deepening": [4], "n_shallowing": [1]})
>>> cross_check(region, {("S1", "S2"): "regression"})["agreement"].tolist()
['disagree']
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence

import pandas as pd

from ..project import Surface

__all__ = [
    "AGREEMENT_FLAGS",
    "MAPPED_SENSES",
    "cross_check",
    "region_summary",
    "surface_alignment",
    "surface_pairs",
]

MAPPED_SENSES = ("transgression", "regression", "stillstand", "uncertain")
"""Accepted values of the mapped shoreline sense in :func:`cross_check`."""

AGREEMENT_FLAGS = ("agree", "disagree", "no_data", "map_uncertain")
"""Values of the ``agreement`` column of :func:`cross_check`."""

_REGION_COLUMNS = [
    "interval",
    "older_surface",
    "younger_surface",
    "older_age",
    "younger_age",
    "n_cores",
    "n_deepening",
    "n_shallowing",
    "n_aggrading",
    "n_mixed",
    "core_sense",
]


def surface_pairs(surfaces: Sequence[Surface]) -> list[tuple[Surface, Surface]]:
    """Consecutive surfaces by age as (older, younger), oldest pair first.

    Examples
    --------
    >>> s = [Surface("A", 10.0), Surface("B", 30.0), Surface("C", 20.0)]
    >>> [(o.name, y.name) for o, y in surface_pairs(s)]
    [('B', 'C'), ('C', 'A')]
    """
    ordered = sorted(surfaces, key=lambda s: -s.age)
    return list(zip(ordered[:-1], ordered[1:], strict=True))


def _sense(n: int, n_deep: int, n_shallow: int) -> str:
    if n > 0 and n_deep > n / 2:
        return "transgression"
    if n > 0 and n_shallow > n / 2:
        return "regression"
    return ""


def region_summary(rows: pd.DataFrame, surfaces: Sequence[Surface]) -> pd.DataFrame:
    """Trend counts per consecutive surface pair.

    Parameters
    ----------
    rows : pandas.DataFrame
        One row per core and pair with columns ``core_id``, ``older_surface``,
        ``younger_surface`` and ``trend`` (rows with trend ``""`` are not counted).
    surfaces : sequence of Surface

    Returns
    -------
    pandas.DataFrame
        Columns ``interval, older_surface, younger_surface, older_age, younger_age,
        n_cores, n_deepening, n_shallowing, n_aggrading, n_mixed, core_sense``; one row
        per pair, oldest first, including pairs no core records.

    Examples
    --------
    >>> rows = pd.DataFrame({"core_id": ["a", "b"], "older_surface": ["S1", "S1"],
    ...                      "younger_surface": ["S2", "S2"],
    ...                      "trend": ["deepening-upward", "aggrading"]})
    >>> t = region_summary(rows, [Surface("S1", 20.0), Surface("S2", 10.0)])
    >>> t[["interval", "n_cores", "n_deepening"]].values.tolist()
    [['S1-S2', 2, 1]]
    """
    out = []
    for older, younger in surface_pairs(surfaces):
        sel = (
            rows[
                (rows["older_surface"] == older.name)
                & (rows["younger_surface"] == younger.name)
                & (rows["trend"] != "")
            ]
            if len(rows)
            else rows
        )
        trends = list(sel["trend"]) if len(sel) else []
        n = len(trends)
        n_deep = trends.count("deepening-upward")
        n_shal = trends.count("shallowing-upward")
        out.append(
            {
                "interval": f"{older.name}-{younger.name}",
                "older_surface": older.name,
                "younger_surface": younger.name,
                "older_age": float(older.age),
                "younger_age": float(younger.age),
                "n_cores": n,
                "n_deepening": n_deep,
                "n_shallowing": n_shal,
                "n_aggrading": trends.count("aggrading"),
                "n_mixed": trends.count("mixed"),
                "core_sense": _sense(n, n_deep, n_shal),
            }
        )
    return pd.DataFrame(out, columns=_REGION_COLUMNS)


def cross_check(region: pd.DataFrame, mapped: Mapping[tuple[str, str], str | None]) -> pd.DataFrame:
    """Hold the cores' vertical trends against the mapped shoreline shifts.

    Parameters
    ----------
    region : pandas.DataFrame
        Per-pair counts with at least ``older_surface``, ``younger_surface``,
        ``n_cores``, ``n_deepening`` and ``n_shallowing`` (as from
        :func:`region_summary`).
    mapped : mapping of (older, younger) to str or None
        The mapped shoreline sense of each pair: one of :data:`MAPPED_SENSES`;
        None or a missing pair means no mapped shift.

    Returns
    -------
    pandas.DataFrame
        ``region``'s pair columns and counts with ``core_sense``, ``mapped_sense``
        (``""`` when none) and ``agreement`` (one of :data:`AGREEMENT_FLAGS`).

    Raises
    ------
    ValueError
        For a mapped sense outside :data:`MAPPED_SENSES`.

    Examples
    --------
    >>> region = pd.DataFrame({"older_surface": ["S1", "S2"], "younger_surface": ["S2", "S3"],
    ...                        "n_cores": [3, 0], "n_deepening": [3, 0], "n_shallowing": [0, 0]})
    >>> cross_check(region, {("S1", "S2"): "transgression"})["agreement"].tolist()
    ['agree', 'no_data']
    """
    for key, sense in mapped.items():
        if sense is not None and sense not in MAPPED_SENSES:
            raise ValueError(
                f"mapped sense of pair {key!r} is {sense!r}; allowed: {list(MAPPED_SENSES)}"
            )
    keep = [
        c
        for c in (
            "interval",
            "older_surface",
            "younger_surface",
            "n_cores",
            "n_deepening",
            "n_shallowing",
            "n_aggrading",
            "n_mixed",
        )
        if c in region.columns
    ]
    out = region[keep].copy()
    core_sense, mapped_sense, agreement = [], [], []
    for row in region.itertuples(index=False):
        cs = _sense(int(row.n_cores), int(row.n_deepening), int(row.n_shallowing))
        ms = mapped.get((row.older_surface, row.younger_surface)) or ""
        if int(row.n_cores) == 0 or not ms:
            flag = "no_data"
        elif ms == "uncertain":
            flag = "map_uncertain"
        elif (cs == "transgression" and ms == "regression") or (
            cs == "regression" and ms == "transgression"
        ):
            flag = "disagree"
        else:
            flag = "agree"
        core_sense.append(cs)
        mapped_sense.append(ms)
        agreement.append(flag)
    out["core_sense"] = core_sense
    out["mapped_sense"] = mapped_sense
    out["agreement"] = agreement
    return out.reset_index(drop=True)


def surface_alignment(
    turnarounds: pd.DataFrame,
    picks: pd.DataFrame,
    surfaces: Sequence[Surface],
    tolerance: float = 1.0,
) -> pd.DataFrame:
    """For each surface, how many of the cores that pick it have a suggested MFS / MRS there.

    Parameters
    ----------
    turnarounds : pandas.DataFrame
        Columns ``core_id, kind, depth_top, depth_base``.
    picks : pandas.DataFrame
        Columns ``core_id, surface, depth``.
    surfaces : sequence of Surface
    tolerance : float
        Depth units the turnaround span is widened by on each side.

    Returns
    -------
    pandas.DataFrame
        Columns ``surface, age, erosional, n_picked, n_mfs, n_mrs``, youngest first.

    Examples
    --------
    >>> ta = pd.DataFrame({"core_id": ["a"], "kind": ["MFS"], "depth_top": [4.0],
    ...                    "depth_base": [6.0]})
    >>> pk = pd.DataFrame({"core_id": ["a", "b"], "surface": ["M", "M"], "depth": [6.5, 3.0]})
    >>> surface_alignment(ta, pk, [Surface("M", 5.0)])[["n_picked", "n_mfs"]].values.tolist()
    [[2, 1]]
    """
    # One merge of picks with their core's turnarounds instead of a filter per pick.
    hits = {"MFS": set(), "MRS": set()}
    if len(picks) and len(turnarounds):
        m = picks.merge(turnarounds[["core_id", "kind", "depth_top", "depth_base"]], on="core_id")
        inside = (m["depth_top"] - tolerance <= m["depth"]) & (
            m["depth"] <= m["depth_base"] + tolerance
        )
        for kind in hits:
            sel = m[inside & (m["kind"] == kind)]
            hits[kind] = set(zip(sel["surface"], sel["core_id"], sel["depth"], strict=True))
    rows = []
    for s in sorted(surfaces, key=lambda s: s.age):
        sp = picks[picks["surface"] == s.name] if len(picks) else picks
        keys = (
            set(zip(sp["surface"], sp["core_id"], sp["depth"], strict=True)) if len(sp) else set()
        )
        counts = {kind: len(keys & found) for kind, found in hits.items()}
        rows.append(
            {
                "surface": s.name,
                "age": float(s.age),
                "erosional": bool(s.erosional),
                "n_picked": int(sp["core_id"].nunique()) if len(sp) else 0,
                "n_mfs": counts["MFS"],
                "n_mrs": counts["MRS"],
            }
        )
    return pd.DataFrame(rows, columns=["surface", "age", "erosional", "n_picked", "n_mfs", "n_mrs"])

"""The short slice-pair table the build prints."""

from __future__ import annotations

import math

__all__ = ["pair_table_lines"]


def _f(v, fmt="{:.1f}") -> str:
    return "-" if v is None or (isinstance(v, float) and math.isnan(v)) else fmt.format(v)


def pair_table_lines(result) -> list[str]:
    """One line per consecutive slice pair: ages, median rate, net shift, sense."""
    pairs = result.slice_pairs
    if not len(pairs):
        return ["No slice pairs (one slice only)."]
    unit = result.project.age_unit
    head = (
        f"{'older':>12} {'younger':>12} {'ages (' + unit + ')':>16} "
        f"{'median m/kyr':>13} {'net shift m':>12} {'flooded km2':>12} "
        f"{'exposed km2':>12}  sense"
    )
    lines = ["Shoreline shifts between consecutive slices (positive = landward):", head]
    for r in pairs.itertuples():
        ages = f"{r.older_age:g}-{r.younger_age:g}"
        lines.append(
            f"{r.older_slice:>12} {r.younger_slice:>12} {ages:>16} "
            f"{_f(r.median_rate_m_per_kyr):>13} {_f(r.net_shift_m, '{:.0f}'):>12} "
            f"{_f(r.flooded_km2):>12} {_f(r.exposed_km2):>12}  {r.sense or '-'}"
        )
    return lines

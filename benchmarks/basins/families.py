"""The bench's basin families: five ways a shelf can differ from paleomap's own model.

Each family is a function ``(rng, **options) -> (BasinModel, layout, cores)`` that
draws one basin of its kind; the seed only moves what a geologist would call the
accidents (where the embayments, the fault, the lobe and the shoals are, the exact
sea-level levels, the dip direction), never the kind of basin.

``planar_ramp``
    A planar ramp with belts of very unequal width (a 1.5 m coastal plain and a 2.5 m
    shoreface beside a 15.5 m offshore transition), one broad headland, uniform
    accumulation and subsidence, a smooth sea-level curve; 40 cores at random. With
    ``relief=False`` the ramp is exactly planar, and a shift is then the relative
    rise over tan(slope) (*common practice*).
``embayed_coast``
    A ria coast: sinuous drowned valleys that fade basinward, which their rivers fill
    with two to three times the sediment of the interfluves, so the embayments fade
    through time; rates falling from 0.25 m/kyr on the fluvial plain to 0.04 on the
    shelf; an asymmetric saw-tooth sea level whose quick falls cut the exposed tops
    down (erosional sequence boundaries at the lowstands); 40 cores clustered along
    lines.
``delta_lobe``
    A delta whose lobe (six times the accumulation on its axis) migrates along
    strike and then jumps (an avulsion), on a ramp subsiding faster basinward; a sea
    level that rises in steps with slow rises between and falls once; a delta plain
    that keeps pace with subsidence; surfaces with an age uncertainty; 40 cores at
    random.
``fault_step``
    A growth fault oblique to strike: a scarp of several metres whose hanging wall
    sinks faster and faster, and a basin that tilts along strike one way and then the
    other; a sea level that wanders; 15 cores (sparse).
``carbonate_ramp``
    paleomap's built-in ``carbonate_lithology`` scheme (Dunham textures, all belts
    marine, the grainstone edge tracked): a carbonate factory that produces twenty
    times faster in the shoal than in the basin and builds up to sea level, rounded
    antecedent highs, high-frequency sea-level cycles on a slow rise, exposure with
    slow karst lowering at the lowstands; 40 cores clustered along lines.

Accumulation rates never increase from one belt to the next basinward one across a
boundary that must stay sharp: were the distal belt faster than the ground sinks and
the proximal one slower, every point would be trapped at that boundary's depth (a
keep-up flat), and a flat at the tracked boundary's depth has no well-defined line.

Examples
--------
>>> sorted(FAMILIES)
['carbonate_ramp', 'delta_lobe', 'embayed_coast', 'fault_step', 'planar_ramp']
>>> model, layout, cores = FAMILIES["fault_step"](np.random.default_rng(1))
>>> layout, cores, len(model.surfaces)
('sparse', 15, 7)
"""

from __future__ import annotations

import numpy as np

from .bands import Bands
from .region import Region
from .relief import (
    FaultStep,
    Headland,
    LobeSupply,
    Mounds,
    Ramp,
    SinuousValleys,
    Subsidence,
    ValleyFill,
)
from .sealevel import SeaLevel
from .stratigraphy import BasinModel, Surface

__all__ = ["FAMILIES"]


def _wander(rng, count, *, start, step, bounds):
    """Levels that move by ``step`` (low, high) m each time, alternately up and down
    as far as ``bounds`` allow, starting at ``start``."""
    levels = [start]
    up = bool(rng.integers(2))
    for _ in range(count - 1):
        delta = rng.uniform(*step)
        nxt = levels[-1] + (delta if up else -delta)
        if not bounds[0] <= nxt <= bounds[1]:
            nxt = levels[-1] - (delta if up else -delta)
            up = not up
        levels.append(float(np.clip(nxt, *bounds)))
        up = not up
    return levels


def planar_ramp(rng, *, relief: bool = True):
    region = Region(dip_azimuth_deg=100.0 + rng.uniform(-20, 20))
    bands = Bands(
        ("alluvial_plain", "coastal_plain", "shoreface", "offshore_transition", "offshore"),
        (False, False, True, True, True),
        (-1.5, 0.0, 2.5, 18.0),
        (0.08, 0.08, 0.08, 0.08, 0.08),
    )
    ground = [Ramp(gradient_m_per_km=0.8, centre_elevation_m=rng.uniform(-1.0, 1.0))]
    if relief:
        ground.append(
            Headland(
                height_m=rng.choice([-1, 1]) * rng.uniform(2.5, 4.0),
                strike_m=rng.uniform(-8_000, 8_000),
                half_width_m=rng.uniform(5_000, 8_000),
            )
        )
    ages = [96.0, 84.0, 72.0, 60.0, 48.0, 36.0, 24.0]
    ages = [a + rng.uniform(-1.5, 1.5) for a in ages]
    levels = _wander(rng, len(ages), start=rng.uniform(-3, 3), step=(4.5, 7.5), bounds=(-8, 8))
    model = BasinModel(
        family="planar_ramp",
        seed=0,
        region=region,
        bands=bands,
        sea_level=SeaLevel(tuple(zip(ages, levels, strict=True)), shape="smooth"),
        ground=tuple(ground),
        subsidence=Subsidence(base_m_per_kyr=0.12),
        surfaces=tuple(Surface(f"S{k + 1}", round(a, 1)) for k, a in enumerate(ages)),
        start_ka=106.0,
        end_ka=18.0,
        notes={
            "gradient_m_per_km": 0.8,
            "accumulation_m_per_kyr": 0.08,
            "subsidence_m_per_kyr": 0.12,
        },
    )
    return model, "random", 40


def embayed_coast(rng):
    region = Region(dip_azimuth_deg=80.0 + rng.uniform(-20, 20))
    bands = Bands(
        ("fluvial_plain", "coastal_plain", "shoreface", "transition", "shelf_mud"),
        (False, False, True, True, True),
        (-3.0, 0.0, 5.0, 15.0),
        (0.25, 0.20, 0.20, 0.12, 0.04),
    )
    count = int(rng.integers(3, 5))
    centres = np.linspace(-12_000, 12_000, count) + rng.uniform(-1_500, 1_500, count)
    axes = tuple(
        (
            float(s),
            rng.uniform(1_500, 3_000),
            rng.uniform(12_000, 20_000),
            rng.uniform(0, 2 * np.pi),
            rng.uniform(5.0, 8.0),
            rng.uniform(1_200, 2_000),
        )
        for s in centres
    )
    valleys = SinuousValleys(axes, fade_dip_m=rng.uniform(2_000, 6_000), fade_width_m=3_000.0)
    ground = (Ramp(gradient_m_per_km=1.2), valleys)
    # slow rises, quick falls: (age, level) of mid-rise, highstand and lowstand turns
    j = rng.uniform(-1.0, 1.0, 8)
    lv = rng.uniform(-1.0, 1.0, 8)
    nodes = [
        (126.0, -3.0 + lv[0]),
        (110.0 + j[1], 4.0 + lv[1]),
        (104.0 + j[2], -4.0 + lv[2]),
        (88.0 + j[3], 4.5 + lv[3]),
        (82.0 + j[4], -3.5 + lv[4]),
        (66.0, 5.0 + lv[5]),
    ]
    sea = SeaLevel(tuple(nodes))
    mid1 = (nodes[0][0] + nodes[1][0]) / 2
    mid2 = (nodes[2][0] + nodes[3][0]) / 2
    mid3 = nodes[4][0] - 7.0
    surfaces = (
        Surface("TS1", round(mid1, 1)),
        Surface("HS1", round(nodes[1][0], 1)),
        Surface("SB1", round(nodes[2][0], 1), erosional=True),
        Surface("TS2", round(mid2, 1)),
        Surface("HS2", round(nodes[3][0], 1)),
        Surface("SB2", round(nodes[4][0], 1), erosional=True),
        Surface("TS3", round(mid3, 1)),
    )
    model = BasinModel(
        family="embayed_coast",
        seed=0,
        region=region,
        bands=bands,
        sea_level=sea,
        ground=ground,
        subsidence=Subsidence(base_m_per_kyr=0.15, basinward_m_per_kyr_per_km=0.005),
        surfaces=surfaces,
        start_ka=130.0,
        end_ka=64.0,
        supply=ValleyFill(valleys, gain=rng.uniform(1.0, 2.0)),
        erosion_m_per_kyr=0.8,
        notes={"gradient_m_per_km": 1.2},
    )
    return model, "lines", 40


def delta_lobe(rng):
    region = Region(dip_azimuth_deg=180.0 + rng.uniform(-20, 20))
    bands = Bands(
        ("delta_plain", "delta_front", "prodelta", "shelf"),
        (False, True, True, True),
        (0.0, 4.0, 14.0),
        (0.50, 0.45, 0.25, 0.04),
    )
    side = rng.choice([-1.0, 1.0])
    path = (
        (100.0, side * rng.uniform(-12_000, -8_000)),
        (70.0, side * rng.uniform(-3_000, 1_000)),
        (69.5, side * rng.uniform(7_000, 11_000)),
        (40.0, side * rng.uniform(3_000, 7_000)),
    )
    supply = LobeSupply(
        path,
        radius=((100.0, 9_000.0), (70.0, 15_000.0), (69.5, 8_000.0), (40.0, 15_000.0)),
        gain=rng.uniform(4.0, 6.0),
        apex_dip_m=-16_000.0,
        plain_gradient_m_per_km=0.5,
    )
    ground = (Ramp(gradient_m_per_km=0.8),)
    # rises in steps with stillstands between, one fall
    lv = rng.uniform(-1.0, 1.0, 8)
    nodes = (
        (100.0, -6.0 + lv[0]),
        (94.0, -1.0 + lv[1]),
        (86.0, 0.5 + lv[1]),
        (80.0, 5.0 + lv[2]),
        (72.0, 6.5 + lv[2]),
        (64.0, -1.0 + lv[3]),
        (57.0, 4.0 + lv[4]),
        (49.0, 5.5 + lv[4]),
        (43.0, 9.0 + lv[5]),
    )
    surfaces = tuple(
        Surface(f"D{k + 1}", a, age_sd_ka=0.5)
        for k, a in enumerate((94.0, 86.0, 80.0, 72.0, 64.0, 57.0, 49.0))
    )
    model = BasinModel(
        family="delta_lobe",
        seed=0,
        region=region,
        bands=bands,
        sea_level=SeaLevel(nodes),
        ground=ground,
        subsidence=Subsidence(base_m_per_kyr=0.2, basinward_m_per_kyr_per_km=0.006),
        surfaces=surfaces,
        start_ka=104.0,
        end_ka=45.0,
        supply=supply,
        plain_keeps_pace=True,
        max_step_kyr=0.1,
        notes={"gradient_m_per_km": 0.8},
    )
    return model, "random", 40


def fault_step(rng):
    region = Region(dip_azimuth_deg=90.0 + rng.uniform(-20, 20))
    bands = Bands(
        ("alluvium", "coastal_plain", "beach", "offshore_transition", "basin_mud"),
        (False, False, True, True, True),
        (-2.5, 0.0, 3.0, 12.0),
        (0.25, 0.20, 0.20, 0.12, 0.04),
    )
    fault = FaultStep(
        dip_m=rng.uniform(-3_000, 3_000),
        angle_deg=rng.choice([-1, 1]) * rng.uniform(15, 35),
        throw_m=rng.uniform(3.5, 5.5),
        width_m=300.0,
        bend_m_per_km2=rng.uniform(-8.0, 8.0),
    )
    ground = (Ramp(gradient_m_per_km=1.0), fault)
    tilt = rng.choice([-1, 1])
    subsidence = Subsidence(
        base_m_per_kyr=0.1,
        strike_tilt=(
            (100.0, tilt * rng.uniform(0.004, 0.008)),
            (30.0, -tilt * rng.uniform(0.006, 0.012)),
        ),
        fault=fault,
        hanging_wall=((100.0, 0.03), (30.0, 0.2)),
    )
    ages = [92.0, 82.0, 72.0, 62.0, 52.0, 42.0, 32.0]
    ages = [a + rng.uniform(-1.5, 1.5) for a in ages]
    levels = _wander(rng, len(ages), start=rng.uniform(-2, 2), step=(3.5, 5.5), bounds=(-5, 5))
    model = BasinModel(
        family="fault_step",
        seed=0,
        region=region,
        bands=bands,
        sea_level=SeaLevel(tuple(zip(ages, levels, strict=True))),
        ground=ground,
        subsidence=subsidence,
        surfaces=tuple(Surface(f"F{k + 1}", round(a, 1)) for k, a in enumerate(ages)),
        start_ka=100.0,
        end_ka=28.0,
        notes={"gradient_m_per_km": 1.0},
    )
    return model, "sparse", 15


def carbonate_ramp(rng):
    region = Region(dip_azimuth_deg=135.0 + rng.uniform(-20, 20))
    bands = Bands(
        ("grainstone", "packstone", "wackestone", "mudstone"),
        (True, True, True, True),
        (3.0, 10.0, 22.0),
        (0.6, 0.35, 0.12, 0.03),
        track=1,
        exposed_at_m=0.0,
        # Dunham textures: paleomap's lithology-only carbonate scheme, with its track
        builtin="carbonate_lithology",
    )
    count = int(rng.integers(4, 7))
    mounds = tuple(
        (
            rng.uniform(-14_000, 6_000),
            rng.uniform(-14_000, 14_000),
            rng.uniform(3.0, 6.0),
            rng.uniform(2_000, 4_000),
        )
        for _ in range(count)
    )
    ground = (
        Ramp(gradient_m_per_km=1.2),
        Mounds(mounds),
    )
    period = rng.uniform(22.0, 26.0)
    phase = rng.uniform(0, 2 * np.pi)
    sea = SeaLevel(((110.0, -4.0), (20.0, 6.0)), cycles=((4.0, period, phase),))
    # surfaces at the cycle's turning points: highstands and (erosional) lowstands
    a = np.arange(104.0, 24.0, -0.05)
    level = sea(a)
    turns = [
        i for i in range(1, a.size - 1) if (level[i] - level[i - 1]) * (level[i + 1] - level[i]) < 0
    ]
    surfaces = []
    for i in turns[:7]:
        low = level[i] < level[i - 1]
        name = f"{'L' if low else 'H'}{len(surfaces) + 1}"
        surfaces.append(Surface(name, round(float(a[i]), 1), erosional=bool(low)))
    model = BasinModel(
        family="carbonate_ramp",
        seed=0,
        region=region,
        bands=bands,
        sea_level=sea,
        ground=ground,
        subsidence=Subsidence(base_m_per_kyr=0.12),
        surfaces=tuple(surfaces),
        start_ka=112.0,
        end_ka=round(float(a[turns[min(6, len(turns) - 1)]]) - 4.0, 1),
        erosion_m_per_kyr=0.05,
        build_above_m=0.0,
        notes={"gradient_m_per_km": 1.2},
    )
    return model, "lines", 40


FAMILIES = {
    "planar_ramp": planar_ramp,
    "embayed_coast": embayed_coast,
    "delta_lobe": delta_lobe,
    "fault_step": fault_step,
    "carbonate_ramp": carbonate_ramp,
}
"""Family name -> function ``(rng, **options) -> (BasinModel, layout, core count)``."""

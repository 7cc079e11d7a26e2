"""Shapes of the ground, of subsidence and of sediment supply, in dip and strike.

Each shape is a small frozen dataclass called with ``(dip_m, strike_m)`` local
coordinates (see :class:`~basins.region.Region`); subsidence and supply take the age
too. A family adds shapes up: a ramp, then embayments, a fault step or mounds.

* :class:`Ramp`: the regional slope, planar or concave-up (steeper landward);
* :class:`Headland`: one broad bulge of the ground along strike;
* :class:`SinuousValleys`: drowned valleys whose axes meander down dip and fade
  basinward, the embayments of a ria coast;
* :class:`FaultStep`: a fault scarp oblique to strike, the hanging wall basinward;
* :class:`Mounds`: rounded highs (antecedent shoals of a carbonate ramp);
* :class:`Subsidence`: uniform, basinward-increasing, a strike tilt that changes
  with time, and a growth fault's hanging wall sinking faster and faster;
* :class:`ValleyFill`: the extra sediment rivers bring into their valleys;
* :class:`LobeSupply`: the extra sediment of a delta lobe whose apex migrates along
  strike, and the sloping plain it builds.

Examples
--------
>>> float(Ramp(gradient_m_per_km=2.0, centre_elevation_m=1.0)(500.0, 0.0))
0.0
>>> step = FaultStep(dip_m=0.0, angle_deg=0.0, throw_m=10.0, width_m=100.0)
>>> [round(float(v), 3) for v in step(np.array([-5000.0, 0.0, 5000.0]), 0.0)]
[-0.0, -5.0, -10.0]
>>> lobe = LobeSupply(((100.0, -5000.0), (50.0, 5000.0)), ((100.0, 8000.0),), gain=3.0,
...                   apex_dip_m=-8000.0)
>>> float(lobe(-8000.0, 0.0, 75.0)), round(float(lobe.limit_m(0.0, 0.0, 75.0)), 6)
(4.0, 0.0)
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

__all__ = [
    "FaultStep",
    "Headland",
    "LobeSupply",
    "Mounds",
    "Ramp",
    "SinuousValleys",
    "Subsidence",
    "ValleyFill",
]


def _through(nodes, age):
    """Linear interpolation through (age, value) nodes, held beyond them."""
    nodes = np.array(sorted(nodes), dtype=float)
    return np.interp(age, nodes[:, 0], nodes[:, 1])


@dataclass(frozen=True)
class Ramp:
    """The regional slope: ``centre_elevation_m`` at the centre, falling basinward.

    ``concavity`` > 0 makes the profile concave-up: the gradient is
    ``gradient_m_per_km * (1 + concavity)`` at the landward edge of a 40 km region and
    ``gradient_m_per_km * (1 - concavity)`` at its basinward edge, so equal depth bands
    make narrower belts landward than basinward.
    """

    gradient_m_per_km: float = 1.0
    centre_elevation_m: float = 0.0
    concavity: float = 0.0
    half_length_m: float = 20_000.0

    def __call__(self, dip_m, strike_m):
        dip = np.asarray(dip_m, dtype=float)
        g = self.gradient_m_per_km / 1000.0
        # z' = -g (1 - c dip / L): a parabola whose slope changes linearly down dip
        curve = g * self.concavity * dip**2 / (2.0 * self.half_length_m)
        return self.centre_elevation_m - g * dip + curve + 0.0 * np.asarray(strike_m)


@dataclass(frozen=True)
class Headland:
    """A broad Gaussian bulge of ``height_m`` centred at ``strike_m`` along strike."""

    height_m: float
    strike_m: float
    half_width_m: float

    def __call__(self, dip_m, strike_m):
        s = (np.asarray(strike_m, dtype=float) - self.strike_m) / self.half_width_m
        return self.height_m * np.exp(-0.5 * s**2) + 0.0 * np.asarray(dip_m)


@dataclass(frozen=True)
class SinuousValleys:
    """Valleys cut into the ramp, each meandering down dip, fading basinward.

    Parameters
    ----------
    axes : tuple of (strike_m, amplitude_m, wavelength_m, phase_rad, depth_m, half_width_m)
        Each valley's mean strike position, the amplitude and wavelength of its
        meander down dip, the phase, its depth and the half width of its Gaussian
        cross-section.
    fade_dip_m, fade_width_m : float
        The valleys are half as deep at ``fade_dip_m`` and die out basinward of it over
        about ``fade_width_m``.
    """

    axes: tuple
    fade_dip_m: float = 5_000.0
    fade_width_m: float = 3_000.0

    def __call__(self, dip_m, strike_m):
        dip = np.asarray(dip_m, dtype=float)
        strike = np.asarray(strike_m, dtype=float)
        fade = 1.0 / (1.0 + np.exp((dip - self.fade_dip_m) / self.fade_width_m))
        out = np.zeros(np.broadcast(dip, strike).shape)
        for s0, amplitude, wavelength, phase, depth, half_width in self.axes:
            axis = s0 + amplitude * np.sin(2 * np.pi * dip / wavelength + phase)
            out -= depth * np.exp(-0.5 * ((strike - axis) / half_width) ** 2)
        return out * fade


@dataclass(frozen=True)
class FaultStep:
    """A fault scarp of ``throw_m``: the ground basinward of the trace is lower.

    The trace passes through ``dip_m`` on the dip axis at ``angle_deg`` from strike,
    bent by ``bend_m_per_km2`` (metres of dip offset per km squared of strike); the
    scarp is a logistic step of width ``width_m``.
    """

    dip_m: float
    angle_deg: float
    throw_m: float
    width_m: float = 300.0
    bend_m_per_km2: float = 0.0

    def hanging_wall(self, dip_m, strike_m):
        """0 on the footwall, 1 on the hanging wall, a logistic step between."""
        a = math.radians(self.angle_deg)
        strike = np.asarray(strike_m, dtype=float)
        trace = self.dip_m + strike * math.tan(a) + self.bend_m_per_km2 * (strike / 1000.0) ** 2
        u = (np.asarray(dip_m, dtype=float) - trace) * math.cos(a) / self.width_m
        return 1.0 / (1.0 + np.exp(-np.clip(u, -50, 50)))

    def __call__(self, dip_m, strike_m):
        return -self.throw_m * self.hanging_wall(dip_m, strike_m)


@dataclass(frozen=True)
class Mounds:
    """Rounded highs: ``mounds`` of (dip_m, strike_m, height_m, radius_m)."""

    mounds: tuple

    def __call__(self, dip_m, strike_m):
        dip = np.asarray(dip_m, dtype=float)
        strike = np.asarray(strike_m, dtype=float)
        out = np.zeros(np.broadcast(dip, strike).shape)
        for d0, s0, height, radius in self.mounds:
            out += height * np.exp(-0.5 * ((dip - d0) ** 2 + (strike - s0) ** 2) / radius**2)
        return out


@dataclass(frozen=True)
class Subsidence:
    """Subsidence rate (m/kyr, positive down) in space and time.

    Parameters
    ----------
    base_m_per_kyr : float
        Uniform part.
    basinward_m_per_kyr_per_km : float
        Increase per km basinward of the centre (a hinge that tilts the basin).
    strike_tilt : tuple of (age_ka, m_per_kyr_per_km)
        Increase per km along strike, varying linearly through the ages given: a basin
        that tilts along strike, and changes its tilt, through time.
    fault : FaultStep or None
        A growth fault; its hanging wall sinks by ``hanging_wall`` more.
    hanging_wall : tuple of (age_ka, m_per_kyr)
        The extra subsidence of the hanging wall through time.
    """

    base_m_per_kyr: float = 0.0
    basinward_m_per_kyr_per_km: float = 0.0
    strike_tilt: tuple = ()
    fault: FaultStep | None = None
    hanging_wall: tuple = ()

    def __call__(self, dip_m, strike_m, age_ka: float):
        dip = np.asarray(dip_m, dtype=float)
        strike = np.asarray(strike_m, dtype=float)
        rate = self.base_m_per_kyr + self.basinward_m_per_kyr_per_km * dip / 1000.0
        if self.strike_tilt:
            rate = rate + float(_through(self.strike_tilt, age_ka)) * strike / 1000.0
        if self.fault is not None and self.hanging_wall:
            extra = float(_through(self.hanging_wall, age_ka))
            rate = rate + extra * self.fault.hanging_wall(dip, strike)
        return rate + 0.0 * strike


@dataclass(frozen=True)
class ValleyFill:
    """Multiplier of the accumulation rates in drowned valleys: the rivers that cut
    them bring their sediment there, so the valleys fill and the relief fades.

    ``1 + gain`` on the deepest valley floor, falling with the valley's depth.
    """

    valleys: SinuousValleys
    gain: float

    def __call__(self, dip_m, strike_m, age_ka: float):
        deepest = max(axis[4] for axis in self.valleys.axes)
        return 1.0 - self.gain * self.valleys(dip_m, strike_m) / deepest


@dataclass(frozen=True)
class LobeSupply:
    """A delta lobe: extra sediment around a migrating apex, and a sloping delta plain.

    The apex (where the river enters the basin) sits ``apex_dip_m`` down dip and moves
    along strike through ``path`` ((age_ka, strike_m), linear between; two nodes a
    hair apart make an avulsion). The lobe's radius grows through ``radius`` ((age_ka,
    metres)). Accumulation is multiplied by ``1 + gain`` at the apex, falling off as a
    Gaussian of the distance over the radius; sediment builds up to a delta plain that
    slopes away from the apex at ``plain_gradient_m_per_km`` and meets sea level at the
    lobe's radius (:meth:`limit_m`), so the lobe's shoreline is its rim where the lobe
    had sediment enough to fill the water in front of it.
    """

    path: tuple
    radius: tuple
    gain: float
    apex_dip_m: float = -15_000.0
    plain_gradient_m_per_km: float = 0.3

    def axis_m(self, age_ka: float) -> float:
        """Strike position of the apex at ``age_ka``."""
        return float(_through(self.path, age_ka))

    def _distance(self, dip_m, strike_m, age_ka):
        return np.hypot(
            np.asarray(dip_m, dtype=float) - self.apex_dip_m,
            np.asarray(strike_m, dtype=float) - self.axis_m(age_ka),
        )

    def __call__(self, dip_m, strike_m, age_ka: float):
        r = self._distance(dip_m, strike_m, age_ka) / float(_through(self.radius, age_ka))
        return 1.0 + self.gain * np.exp(-0.5 * r**2)

    def limit_m(self, dip_m, strike_m, age_ka: float):
        """Height above sea level up to which sediment builds (negative: a depth)."""
        r = self._distance(dip_m, strike_m, age_ka)
        return self.plain_gradient_m_per_km / 1000.0 * (float(_through(self.radius, age_ka)) - r)

"""Rotor geometry for the blade-element momentum solver."""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from polarsvc.aero.errors import ParameterError, show_value

FloatArray = NDArray[np.float64]


def _station_array(name: str, values: ArrayLike) -> FloatArray:
    try:
        array = np.atleast_1d(np.asarray(values, dtype=np.float64))
    except (TypeError, ValueError):
        raise ParameterError(name, "must be an array of numbers") from None
    if array.ndim != 1:
        raise ParameterError(name, f"must be one-dimensional, got shape {array.shape}")
    bad = np.flatnonzero(~np.isfinite(array))
    if bad.size:
        raise ParameterError(name, f"station {int(bad[0])} is not finite")
    return array


def _positive(name: str, value: float) -> float:
    try:
        number = float(value)
    except (TypeError, ValueError):
        raise ParameterError(name, "must be a number") from None
    if not (math.isfinite(number) and number > 0.0):
        raise ParameterError(name, f"must be positive, got {show_value(value)}")
    return number


@dataclass(frozen=True)
class RotorGeometry:
    """Blade stations and rotor dimensions.

    Parameters
    ----------
    radius_m : array_like
        Station radius r [m], strictly ascending, within ``[hub_radius_m, rotor_radius_m]``.
    chord_m : array_like
        Chord c [m] per station, positive.
    twist_deg : array_like
        Twist theta [deg] per station, positive towards feather (the angle of attack is
        ``alpha = phi - twist - pitch``).
    blade_count : int
        Number of blades B.
    rotor_radius_m : float
        Tip radius R [m].
    hub_radius_m : float
        Hub radius R_hub [m], the blade root (root moments are taken about it).

    Raises
    ------
    ParameterError
        Names the parameter and, for station arrays, the first offending station.
    """

    radius_m: FloatArray
    chord_m: FloatArray
    twist_deg: FloatArray
    blade_count: int
    rotor_radius_m: float
    hub_radius_m: float

    def __post_init__(self) -> None:
        radius = _station_array("radius_m", self.radius_m)
        chord = _station_array("chord_m", self.chord_m)
        twist = _station_array("twist_deg", self.twist_deg)
        if radius.size < 2:
            raise ParameterError("radius_m", "needs at least two stations")
        for name, array in (("chord_m", chord), ("twist_deg", twist)):
            if array.size != radius.size:
                raise ParameterError(
                    name, f"has {array.size} values, radius_m has {radius.size}"
                )
        count = self.blade_count
        if isinstance(count, bool) or not float(count).is_integer() or int(count) < 1:
            raise ParameterError("blade_count", f"must be a whole number >= 1, got {count!r}")
        tip = _positive("rotor_radius_m", self.rotor_radius_m)
        try:
            hub = float(self.hub_radius_m)
        except (TypeError, ValueError):
            raise ParameterError("hub_radius_m", "must be a number") from None
        if not (math.isfinite(hub) and 0.0 <= hub < tip):
            raise ParameterError(
                "hub_radius_m", f"must lie in [0, rotor_radius_m={tip:g}), got {show_value(hub)}"
            )
        steps = np.flatnonzero(np.diff(radius) <= 0.0)
        if steps.size:
            raise ParameterError(
                "radius_m", f"must be strictly ascending (station {int(steps[0]) + 1})"
            )
        if radius[0] <= 0.0 or radius[0] < hub:
            raise ParameterError(
                "radius_m", f"station 0 lies inside the hub radius {hub:g} m (or at the axis)"
            )
        if radius[-1] > tip:
            raise ParameterError(
                "radius_m", f"station {radius.size - 1} lies beyond the rotor radius {tip:g} m"
            )
        small = np.flatnonzero(chord <= 0.0)
        if small.size:
            raise ParameterError("chord_m", f"station {int(small[0])} is not positive")
        object.__setattr__(self, "radius_m", radius)
        object.__setattr__(self, "chord_m", chord)
        object.__setattr__(self, "twist_deg", twist)
        object.__setattr__(self, "blade_count", int(count))
        object.__setattr__(self, "rotor_radius_m", tip)
        object.__setattr__(self, "hub_radius_m", hub)

    @property
    def size(self) -> int:
        """Number of stations."""
        return int(self.radius_m.size)

    @property
    def solidity(self) -> FloatArray:
        """Local solidity sigma' = B c / (2 pi r) [-] per station."""
        return self.blade_count * self.chord_m / (2.0 * math.pi * self.radius_m)

    @property
    def swept_area_m2(self) -> float:
        """Swept area pi R^2 [m^2] (the reference area of Cp and Ct)."""
        return math.pi * self.rotor_radius_m**2

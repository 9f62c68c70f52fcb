"""Typed errors of the rotor solver (subclasses of :class:`polarsvc.aero.errors.AeroError`)."""

from __future__ import annotations

from polarsvc.aero.errors import AeroError


class ConvergenceError(AeroError):
    """The inflow-angle equation could not be solved at a station and operating point.

    Attributes
    ----------
    station, operating_point : int
        Zero-based indices of the offending station and (flattened) operating point.
    """

    def __init__(self, *, station: int, operating_point: int, message: str):
        self.station = station
        self.operating_point = operating_point
        super().__init__(f"station {station}, operating point {operating_point}: {message}")

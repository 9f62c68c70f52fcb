"""Pure section aerodynamics on numpy arrays: no I/O, no database, no HTTP."""

from polarsvc.aero.errors import (
    AeroError,
    InsufficientDataError,
    OutOfRangeError,
    ParameterError,
    PolarValidationError,
    UnknownMethodError,
)
from polarsvc.aero.polar import SURFACE_CONDITIONS, Polar, polar_from_columns

__all__ = [
    "SURFACE_CONDITIONS",
    "AeroError",
    "InsufficientDataError",
    "OutOfRangeError",
    "ParameterError",
    "Polar",
    "PolarValidationError",
    "UnknownMethodError",
    "polar_from_columns",
]

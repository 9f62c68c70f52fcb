"""Pure section aerodynamics on numpy arrays: no I/O, no database, no HTTP."""

from polarsvc.aero.blade import (
    BladeStations,
    BladeTables,
    PreparedFamily,
    build_blade_tables,
    prepare_family,
    station_reynolds,
)
from polarsvc.aero.characteristics import (
    Characteristics,
    attached_lift_line,
    characteristics,
    separation_function,
)
from polarsvc.aero.errors import (
    AeroError,
    InsufficientDataError,
    OutOfRangeError,
    ParameterError,
    PolarValidationError,
    UnknownMethodError,
)
from polarsvc.aero.extension import (
    EXTENSION_METHODS,
    centre_of_pressure_moment,
    extend_full_range,
    flat_plate,
    viterna_cd_max,
    viterna_corrigan,
)
from polarsvc.aero.interpolation import (
    THICKNESS_METHODS,
    BracketWeights,
    bracket_weights,
    interpolate_reynolds,
    interpolate_thickness,
)
from polarsvc.aero.polar import SURFACE_CONDITIONS, Polar, polar_from_columns
from polarsvc.aero.resample import resample, uniform_grid
from polarsvc.aero.rotation import (
    ROTATION_MODELS,
    augment_rotation,
    chaviaropoulos_hansen_factor,
    du_selig_factors,
    fade_weight,
    snel_factor,
)

__all__ = [
    "EXTENSION_METHODS",
    "ROTATION_MODELS",
    "SURFACE_CONDITIONS",
    "THICKNESS_METHODS",
    "AeroError",
    "BladeStations",
    "BladeTables",
    "BracketWeights",
    "Characteristics",
    "InsufficientDataError",
    "OutOfRangeError",
    "ParameterError",
    "Polar",
    "PolarValidationError",
    "PreparedFamily",
    "UnknownMethodError",
    "attached_lift_line",
    "augment_rotation",
    "bracket_weights",
    "build_blade_tables",
    "centre_of_pressure_moment",
    "characteristics",
    "chaviaropoulos_hansen_factor",
    "du_selig_factors",
    "extend_full_range",
    "fade_weight",
    "flat_plate",
    "interpolate_reynolds",
    "interpolate_thickness",
    "polar_from_columns",
    "prepare_family",
    "resample",
    "separation_function",
    "snel_factor",
    "station_reynolds",
    "uniform_grid",
    "viterna_cd_max",
    "viterna_corrigan",
]

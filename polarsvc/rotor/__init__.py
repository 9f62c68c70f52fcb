"""Steady rotor aerodynamics on numpy arrays: blade-element momentum solution, Cp surface,
power curve and annual energy. Pure functions; imports :mod:`polarsvc.aero` only.

Steady, uniform, rigid-rotor BEM is a screening check, not a load calculation
(:data:`CAUTION`); every result names its assumptions.
"""

from polarsvc.rotor.bem import (
    CAUTION,
    ISA_DENSITY_KG_M3,
    REGIONS,
    BemResult,
    PreparedRotor,
    assumptions,
    prepare,
    solve,
)
from polarsvc.rotor.energy import (
    HOURS_PER_YEAR,
    IEC_CLASS_MEAN_WIND_M_S,
    AnnualEnergy,
    ConstantWind,
    Weibull,
    annual_energy,
    iec_class_distributions,
    mean_power,
    rayleigh,
)
from polarsvc.rotor.errors import ConvergenceError
from polarsvc.rotor.geometry import RotorGeometry
from polarsvc.rotor.momentum import (
    buhl_axial_induction,
    buhl_thrust_coefficient,
    momentum_axial_induction,
    prandtl_factor,
)
from polarsvc.rotor.power import (
    OperatingStates,
    PowerCurve,
    TurbineData,
    operating_states,
    power_curve,
)
from polarsvc.rotor.roots import Roots, bracketed_roots
from polarsvc.rotor.surface import CpSurface, best_operating_point, cp_surface

__all__ = [
    "CAUTION",
    "HOURS_PER_YEAR",
    "IEC_CLASS_MEAN_WIND_M_S",
    "ISA_DENSITY_KG_M3",
    "REGIONS",
    "AnnualEnergy",
    "BemResult",
    "ConstantWind",
    "ConvergenceError",
    "CpSurface",
    "OperatingStates",
    "PowerCurve",
    "PreparedRotor",
    "Roots",
    "RotorGeometry",
    "TurbineData",
    "Weibull",
    "annual_energy",
    "assumptions",
    "best_operating_point",
    "bracketed_roots",
    "buhl_axial_induction",
    "buhl_thrust_coefficient",
    "cp_surface",
    "iec_class_distributions",
    "mean_power",
    "momentum_axial_induction",
    "operating_states",
    "power_curve",
    "prandtl_factor",
    "prepare",
    "rayleigh",
    "solve",
]

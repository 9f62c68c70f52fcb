"""Synthetic section tables for the tests (invented, not measurements).

The lift follows Kirchhoff flow with a chosen separation function, so that the separation
function is known exactly (Leishman & Beddoes 1989; Hansen, Gaunaa & Madsen 2004,
Risoe-R-1354).
"""

from __future__ import annotations

import math

import numpy as np

from polarsvc.aero import Polar

TWO_PI = 2.0 * math.pi


def separation(alpha_deg: np.ndarray, alpha0_deg: float, alpha_sep_deg: float) -> np.ndarray:
    """A logistic separation function of |alpha - alpha0| (invented for the tests)."""
    return 1.0 / (1.0 + np.exp((np.abs(alpha_deg - alpha0_deg) - alpha_sep_deg) / 2.0))


def kirchhoff_polar(
    *,
    low: float = -20.0,
    high: float = 25.0,
    step: float = 1.0,
    alpha0_deg: float = -2.0,
    slope_per_rad: float = TWO_PI,
    alpha_sep_deg: float = 13.0,
    thickness: float | None = 0.21,
    reynolds: float | None = 3e6,
    surface: str = "clean",
    with_cm: bool = True,
    cd_offset: float = 0.0,
) -> Polar:
    """A synthetic polar: cl = cl_alpha (alpha - alpha0) ((1 + sqrt f) / 2)^2."""
    alpha = np.arange(low, high + step / 2, step)
    f = separation(alpha, alpha0_deg, alpha_sep_deg)
    cl = slope_per_rad * np.radians(alpha - alpha0_deg) * ((1.0 + np.sqrt(f)) / 2.0) ** 2
    cd = 0.008 + cd_offset + 0.01 * (alpha / 10.0) ** 2 + 0.8 * (1.0 - f) * np.sin(
        np.radians(alpha - alpha0_deg)
    ) ** 2
    cm = -0.03 - 0.08 * (1.0 - f) * np.sign(alpha - alpha0_deg) if with_cm else None
    return Polar(alpha, cl, cd, cm, reynolds=reynolds, thickness=thickness, surface=surface)


def cylinder(reynolds: float | None = 3e6, surface: str = "clean", cd: float = 1.2) -> Polar:
    """A cylinder member, t/c = 1: cl = cm = 0, cd about 1.2 subcritical (Hoerner 1965,
    "Fluid-Dynamic Drag", from memory), as a full-range table."""
    alpha = np.arange(-180.0, 181.0, 10.0)
    zeros = np.zeros_like(alpha)
    return Polar(alpha, zeros, zeros + cd, zeros, reynolds=reynolds, thickness=1.0,
                 surface=surface)

"""Benchmark of the blade-set path of :mod:`polarsvc.aero`.

Builds a SYNTHETIC airfoil family "skua" (demo data, not measurements): six thicknesses
(SKUA-180 .. SKUA-400) plus the cylinder SKUA-CYL, three Reynolds numbers and two surface
conditions, and the 50-station demo blade "skerry-48" (48 m tip radius); then times
:func:`polarsvc.aero.build_blade_tables` on a 0.5 deg grid with Viterna-Corrigan extension,
Snel augmentation and Reynolds and thickness interpolation.

Synthetic section model (invented for the demo): Kirchhoff flow
``cl = cl_alpha (alpha - alpha0) ((1 + sqrt f) / 2)^2`` with a logistic separation function
``f = 1 / (1 + exp((|alpha - alpha0| - alpha_sep) / 2))`` whose separation angle falls with
thickness and rises with log10 Re; ``cd = cd0 + 0.008 (alpha/10)^2 + 0.9 (1 - f) sin^2 ...``;
``cm = -0.02 - 0.1 (1 - f)``. Measured range -20..25 deg in 1 deg steps. The cylinder is a
full-range table with cl = cm = 0 and cd = 0.5 (supercritical; Hoerner 1965, from memory).

Run: ``python benchmarks/bench_aero.py``.
"""

from __future__ import annotations

import math
import statistics
import time

import numpy as np

from polarsvc.aero import (
    BladeStations,
    Polar,
    build_blade_tables,
    prepare_family,
    station_reynolds,
)

THICKNESSES = (0.18, 0.21, 0.25, 0.30, 0.35, 0.40)
REYNOLDS = (1.5e6, 5e6, 1.5e7)
SURFACES = ("clean", "rough")
ROTOR_RADIUS_M = 48.0
WIND_SPEED_M_S = 10.0
ROTOR_SPEED_RPM = 12.0


def synthetic_member(thickness: float, reynolds: float, surface: str) -> Polar:
    """One synthetic SKUA member (demo data)."""
    alpha = np.arange(-20.0, 25.0 + 0.5, 1.0)
    rough = surface == "rough"
    alpha0 = -2.5 + 2.0 * (thickness - 0.18)
    slope = 2.0 * math.pi * (1.0 - 0.6 * (thickness - 0.18))
    alpha_sep = 14.0 - 18.0 * (thickness - 0.18) + 1.5 * math.log10(reynolds / 1e6)
    alpha_sep -= 2.5 if rough else 0.0
    x = alpha - alpha0
    f = 1.0 / (1.0 + np.exp((np.abs(x) - alpha_sep) / 2.0))
    cl = slope * np.radians(x) * ((1.0 + np.sqrt(f)) / 2.0) ** 2
    cd0 = (0.006 + 0.02 * thickness) * (1.4 if rough else 1.0) * (reynolds / 5e6) ** -0.1
    cd = cd0 + 0.008 * (alpha / 10.0) ** 2 + 0.9 * (1.0 - f) * np.sin(np.radians(x)) ** 2
    cm = -0.02 - 0.1 * (1.0 - f) * np.sign(x)
    return Polar(alpha, cl, cd, cm, reynolds=reynolds, thickness=thickness, surface=surface)


def synthetic_cylinder(reynolds: float, surface: str) -> Polar:
    """The synthetic SKUA-CYL member, a full-range table."""
    alpha = np.arange(-180.0, 181.0, 10.0)
    zeros = np.zeros_like(alpha)
    return Polar(alpha, zeros, zeros + 0.5, zeros, reynolds=reynolds, thickness=1.0,
                 surface=surface)


def synthetic_family() -> list[Polar]:
    """The synthetic SKUA family: 6 thicknesses + cylinder, 3 Re, 2 surfaces (42 polars)."""
    members = [
        synthetic_member(t, re, s) for t in THICKNESSES for re in REYNOLDS for s in SURFACES
    ]
    members += [synthetic_cylinder(re, s) for re in REYNOLDS for s in SURFACES]
    return members


def skerry_48_stations(count: int = 50) -> BladeStations:
    """The synthetic demo blade skerry-48: 50 stations, cylinder root to 18 % tip."""
    radius = np.linspace(2.4, 47.5, count)
    r_R = radius / ROTOR_RADIUS_M
    chord = np.where(r_R < 0.2, 2.6 + 5.0 * (r_R - 0.05), 3.35 - 2.6 * (r_R - 0.2))
    twist = 14.0 * (1.0 - r_R) ** 2
    thickness = np.clip(1.0 - 4.0 * (r_R - 0.05), 0.18, 1.0)
    thickness = np.where(r_R > 0.5, np.maximum(0.18, 0.30 - 0.24 * (r_R - 0.5)), thickness)
    reynolds = station_reynolds(radius, chord, WIND_SPEED_M_S, ROTOR_SPEED_RPM)
    return BladeStations(radius, chord, twist, thickness, reynolds)


def main(repeats: int = 50) -> None:
    members = synthetic_family()
    stations = skerry_48_stations()
    omega = 2.0 * math.pi * ROTOR_SPEED_RPM / 60.0
    tsr = omega * ROTOR_RADIUS_M / WIND_SPEED_M_S

    def timed(label: str, family: object) -> None:
        def run() -> object:
            return build_blade_tables(
                family,  # type: ignore[arg-type]
                stations,
                rotor_radius_m=ROTOR_RADIUS_M,
                tip_speed_ratio=tsr,
                grid_step_deg=0.5,
                rotation_model="snel",
                clamp=True,
            )

        tables = run()
        times_ms = []
        for _ in range(repeats):
            start = time.perf_counter()
            run()
            times_ms.append((time.perf_counter() - start) * 1e3)
        times_ms.sort()
        p90 = times_ms[min(len(times_ms) - 1, math.ceil(0.9 * len(times_ms)) - 1)]
        print(
            f"{label}: median {statistics.median(times_ms):.2f} ms, p90 {p90:.2f} ms "
            f"over {repeats} runs ({stations.size} stations x {tables.alpha_deg.size} angles)"
        )

    print(f"SYNTHETIC skua family ({len(members)} polars), demo blade skerry-48")
    timed("build_blade_tables from raw members (extension + resampling included)", members)
    prepared = prepare_family(members, grid_step_deg=0.5, surface="clean")
    timed("build_blade_tables from a prepared family (Re, t/c, rotation)", prepared)


if __name__ == "__main__":
    main()

"""Regenerate the synthetic demo data of polarsvc: the fictional "skua" airfoil family of the
fictional team Skerry Rotor Aero, and the fictional demo blade "skerry-48".

Run ``python seed_polars/generate.py [OUTPUT_DIR]`` (default: this folder). The output is
deterministic: the same files, byte for byte, on every run.

SYNTHETIC DEMO DATA, NOT FOR DESIGN USE. The model below makes tables that look like
measured polars; it is not fitted to any airfoil. Design use follows IEC 61400-1 and the local
codes and certification practice.

Model (demo model v1)
---------------------
For relative thickness ``t`` (fraction), chord Reynolds number ``Re`` and surface condition
(clean or rough), with ``x = (t - 0.18) / 0.22`` (0 for the thinnest member, 1 for t/c 0.40)
and ``r = log10(Re / 6e6)``:

* zero-lift angle ``alpha0 = -2.0 - 2.5 x`` [deg];
* slope efficiency ``eta = 1.0 - 0.10 x`` (times 0.97 when rough), attached lift
  ``cl_lin = 2 pi eta (alpha - alpha0)`` (alpha in rad; thin-airfoil slope 2 pi, Abbott &
  von Doenhoff 1959, "Theory of Wing Sections");
* separation onset, measured from alpha0, ``alpha_s = 17.5 - 3.0 x + 3.0 r`` [deg] on the
  positive side (minus ``1.5 + 0.5 x`` when rough) and ``0.75 alpha_s`` on the negative side;
  sharpness ``s = 1.2 + 1.4 x`` [deg] (thick sections stall more gently);
* separation function ``f = 1 / (1 + exp((|alpha - alpha0| - alpha_s) / s))``;
* lift ``cl = cl_lin ((1 + sqrt f) / 2)^2`` (Kirchhoff flow; Leishman & Beddoes 1989,
  "A semi-empirical model for dynamic stall", J. Am. Helicopter Soc. 34(3));
* minimum drag ``cd0 = (0.0040 + 0.030 t^1.5) (Re / 6e6)^-0.15`` (the exponent is near the
  turbulent skin-friction law, Schlichting, "Boundary-Layer Theory", from memory), times 1.45
  plus 0.002 when rough;
* drag ``cd = cd0 + 0.008 (cl - 0.35)^2 f + 1.8 (1 - f) sin^2(alpha - alpha0)``
  (1.8 stands near the broadside flat-plate value 2.0, Hoerner 1965, "Fluid-Dynamic Drag",
  from memory);
* moment ``cm = cm0 - 0.25 (1 - f) cn`` with ``cm0 = -0.06 - 0.04 x`` and
  ``cn = cl cos(alpha) + cd sin(alpha)``: the centre of pressure moves from the quarter chord
  towards mid chord as the flow separates (Hoerner 1965, from memory);
* measured-looking noise from a generator seeded by the file name: standard deviation 0.002
  in cl, 1 % of cd, 0.001 in cm; values rounded to 4 (cl, cm) and 5 (cd) decimals; cd is kept
  above half of cd0.

Angles: -20..-10 deg in 1 deg steps, -10..20 in 0.5 deg steps, 20..25 in 1 deg steps.

The cylinder SKUA-CYL (t/c 1.0): cl = 0, cm = 0 over -180..180 deg in 10 deg steps; cd 0.55,
0.60, 0.65 at Re 2e6, 4e6, 8e6 clean (past the drag crisis, slowly rising again in the
transcritical range: Roshko 1961, J. Fluid Mech. 10, from memory) and 1.00, 1.02, 1.04 rough
(rough cylinders keep a high drag at these Reynolds numbers: Achenbach 1971, J. Fluid Mech. 46,
from memory), with 0.5 % noise, equal at -180 and +180 deg.
"""

from __future__ import annotations

import json
import sys
import zlib
from pathlib import Path

import numpy as np

from polarsvc.aero import Polar
from polarsvc.formats import polar_to_csv

MODEL_REFERENCE = "polarsvc demo model v1 (seed_polars/generate.py)"
CONTRIBUTOR = "Skerry Rotor Aero (fictional)"
NOTES = "synthetic demo data from an analytic model, not measured; not for design use"
FAMILY = "skua"
REYNOLDS = (2e6, 4e6, 8e6)
SURFACES = ("clean", "rough")
AIRFOILS: dict[str, float] = {
    "SKUA-180": 0.18,
    "SKUA-210": 0.21,
    "SKUA-250": 0.25,
    "SKUA-300": 0.30,
    "SKUA-350": 0.35,
    "SKUA-400": 0.40,
    "SKUA-CYL": 1.00,
}
"""Members of the fictional family and their relative thickness t/c."""

CYLINDER_CD = {
    ("clean", 2e6): 0.55, ("clean", 4e6): 0.60, ("clean", 8e6): 0.65,
    ("rough", 2e6): 1.00, ("rough", 4e6): 1.02, ("rough", 8e6): 1.04,
}
"""Cylinder drag coefficient (Roshko 1961; Achenbach 1971; both from memory)."""

ALPHA_DEG = np.concatenate(
    [np.arange(-20, -10), np.arange(-20, 40) / 2.0, np.arange(20, 26)]
).astype(np.float64)
CYLINDER_ALPHA_DEG = np.arange(-180, 181, 10).astype(np.float64)


def _rng(name: str) -> np.random.Generator:
    return np.random.default_rng(zlib.crc32(name.encode()))


def airfoil_polar(
    thickness: float, reynolds: float, surface: str, alpha_deg: np.ndarray
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Noise-free cl, cd, cm of the demo model (see the module docstring)."""
    x = (thickness - 0.18) / 0.22
    log_re = np.log10(reynolds / 6e6)
    rough = surface == "rough"
    alpha0_deg = -2.0 - 2.5 * x
    eta = (1.0 - 0.10 * x) * (0.97 if rough else 1.0)
    alpha_s_deg = 17.5 - 3.0 * x + 3.0 * log_re - ((1.5 + 0.5 * x) if rough else 0.0)
    sharpness_deg = 1.2 + 1.4 * x
    relative_deg = alpha_deg - alpha0_deg
    onset_deg = np.where(relative_deg >= 0.0, alpha_s_deg, 0.75 * alpha_s_deg)
    f = 1.0 / (1.0 + np.exp((np.abs(relative_deg) - onset_deg) / sharpness_deg))
    cl_lin = 2.0 * np.pi * eta * np.radians(relative_deg)
    cl = cl_lin * ((1.0 + np.sqrt(f)) / 2.0) ** 2
    cd0 = (0.0040 + 0.030 * thickness**1.5) * (reynolds / 6e6) ** -0.15
    if rough:
        cd0 = 1.45 * cd0 + 0.002
    separated = 1.8 * (1.0 - f) * np.sin(np.radians(relative_deg)) ** 2
    cd = cd0 + 0.008 * (cl - 0.35) ** 2 * f + separated
    alpha_rad = np.radians(alpha_deg)
    cn = cl * np.cos(alpha_rad) + cd * np.sin(alpha_rad)
    cm = -0.06 - 0.04 * x - 0.25 * (1.0 - f) * cn
    return cl, cd, cm


def seed_table(name: str, reynolds: float, surface: str) -> dict[str, np.ndarray]:
    """The table written for one member, Reynolds number and surface, noise included."""
    stem = file_stem(name, reynolds, surface)
    rng = _rng(stem)
    thickness = AIRFOILS[name]
    if name == "SKUA-CYL":
        alpha = CYLINDER_ALPHA_DEG
        cd = CYLINDER_CD[(surface, reynolds)] * (1.0 + 0.005 * rng.standard_normal(alpha.size))
        cd[-1] = cd[0]
        zeros = np.zeros(alpha.size)
        return {"alpha_deg": alpha, "cl": zeros, "cd": np.round(cd, 5), "cm": zeros.copy()}
    alpha = ALPHA_DEG
    cl, cd, cm = airfoil_polar(thickness, reynolds, surface, alpha)
    cd0 = cd.min()
    cl = cl + 0.002 * rng.standard_normal(alpha.size)
    cd = np.maximum(cd * (1.0 + 0.01 * rng.standard_normal(alpha.size)), 0.5 * cd0)
    cm = cm + 0.001 * rng.standard_normal(alpha.size)
    return {
        "alpha_deg": alpha,
        "cl": np.round(cl, 4) + 0.0,
        "cd": np.round(cd, 5),
        "cm": np.round(cm, 4) + 0.0,
    }


def file_stem(name: str, reynolds: float, surface: str) -> str:
    """File name without extension, e.g. ``SKUA-210_re4e6_clean``."""
    return f"{name}_re{reynolds / 1e6:g}e6_{surface}"


def seed_csv(name: str, reynolds: float, surface: str) -> str:
    """The text of one seed file in the polarsvc table format."""
    polar = Polar(
        **seed_table(name, reynolds, surface),
        reynolds=reynolds,
        mach=0.0,
        thickness=AIRFOILS[name],
        surface=surface,
    )
    provenance = {
        "source_kind": "synthetic",
        "reference": MODEL_REFERENCE,
        "contributor": CONTRIBUTOR,
        "notes": NOTES,
    }
    text = polar_to_csv(polar, airfoil=name, provenance=provenance,
                        extra_metadata={"family": FAMILY})
    return "# SYNTHETIC DEMO DATA: fictional airfoil, not for design use\n" + text


def family_document() -> dict[str, object]:
    """The description of the fictional family (written as family.json)."""
    descriptions = {
        "SKUA-CYL": "circular root section (cylinder)",
    }
    return {
        "family": FAMILY,
        "team": CONTRIBUTOR,
        "notes": "fictional airfoil family; " + NOTES,
        "reference": MODEL_REFERENCE,
        "airfoils": [
            {
                "name": name,
                "thickness": thickness,
                "description": descriptions.get(
                    name, f"{thickness * 100:g} % thick section of the demo model"
                ),
            }
            for name, thickness in AIRFOILS.items()
        ],
    }


BLADE_RADIUS_M = 48.0
HUB_RADIUS_M = 1.6
STATION_RADIUS_M = (
    1.6, 2.4, 3.4, 4.6, 6.0, 7.6, 9.6, 12.0, 14.5, 17.0,
    19.6, 22.4, 25.4, 28.6, 32.0, 35.4, 38.8, 42.0, 44.8, 47.0,
)
THICKNESS_KNOTS = ((1.6, 1.0), (3.4, 1.0), (9.6, 0.40), (13.0, 0.35), (17.0, 0.30),
                   (22.4, 0.25), (30.0, 0.21), (36.0, 0.18), (48.0, 0.18))
"""(radius [m], t/c) knots, linear between them: cylinder root, transition, then the family."""


DEMO_TURBINE = {
    "notes": "fictional 3 MW-class machine for the demo (synthetic); not for design use",
    "rated_power_w": 3.0e6,
    "min_rotor_speed_rpm": 6.0,
    "max_rotor_speed_rpm": 16.5,
    "efficiency": 0.94,
    "cut_in_m_s": 3.0,
    "cut_out_m_s": 25.0,
    "rho_kg_m3": 1.225,
}
"""Rotor data of the demo blade's fictional machine (invented: 3 MW rated, 82 m/s tip speed
at the maximum rotor speed, drivetrain and generator efficiency 0.94)."""


def blade_document() -> dict[str, object]:
    """The fictional demo blade skerry-48 (written as skerry-48.json).

    Chord rises from the 3.5 m cylinder to 3.9 m at r/R = 0.2 and tapers as ``1/r`` to about
    1 m near the tip; twist is 14 deg at maximum chord and falls to 0 at the tip.
    """
    radius_max_chord = 0.2 * BLADE_RADIUS_M
    knots_r, knots_t = zip(*THICKNESS_KNOTS, strict=True)
    stations = []
    for radius in STATION_RADIUS_M:
        if radius <= radius_max_chord:
            share = (radius - HUB_RADIUS_M) / (radius_max_chord - HUB_RADIUS_M)
            chord = 3.5 + 0.4 * np.sin(0.5 * np.pi * share) ** 2
            twist = 14.0
        else:
            chord = 0.55 + 3.35 * radius_max_chord / radius
            share = (radius - radius_max_chord) / (BLADE_RADIUS_M - radius_max_chord)
            twist = 14.0 * (1.0 - share) ** 2
        stations.append({
            "radius_m": radius,
            "chord_m": round(float(chord), 3),
            "twist_deg": round(float(twist), 2),
            "thickness": round(float(np.interp(radius, knots_r, knots_t)), 4),
        })
    return {
        "name": "skerry-48",
        "notes": "fictional demo blade of Skerry Rotor Aero (fictional); not for design use",
        "rotor_radius_m": BLADE_RADIUS_M,
        "hub_radius_m": HUB_RADIUS_M,
        "blade_count": 3,
        "family": FAMILY,
        "surface": "clean",
        "operating_point": {"wind_speed_m_s": 10.0, "rotor_speed_rpm": 13.0},
        "turbine": DEMO_TURBINE,
        "stations": stations,
    }


def generate(output_dir: Path) -> list[Path]:
    """Write every seed file under ``output_dir``; return the paths written."""
    written = []
    polar_dir = output_dir / FAMILY
    polar_dir.mkdir(parents=True, exist_ok=True)
    for name in AIRFOILS:
        for reynolds in REYNOLDS:
            for surface in SURFACES:
                path = polar_dir / f"{file_stem(name, reynolds, surface)}.csv"
                path.write_text(seed_csv(name, reynolds, surface), encoding="utf-8")
                written.append(path)
    for filename, document in (("family.json", family_document()),
                               ("skerry-48.json", blade_document())):
        path = output_dir / filename
        path.write_text(json.dumps(document, indent=2) + "\n", encoding="utf-8")
        written.append(path)
    return written


def main(argv: list[str]) -> int:
    output_dir = Path(argv[1]) if len(argv) > 1 else Path(__file__).resolve().parent
    written = generate(output_dir)
    print(f"wrote {len(written)} files under {output_dir}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main(sys.argv))

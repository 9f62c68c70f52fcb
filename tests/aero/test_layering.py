"""The numeric core imports nothing from the service layers (architecture notes)."""

from __future__ import annotations

import subprocess
import sys

import polarsvc.aero


def test_aero_imports_no_other_layer() -> None:
    code = (
        "import sys, polarsvc.aero\n"
        "bad = [m for m in sys.modules if m.split('.')[:2] != ['polarsvc', 'aero']"
        " and m.startswith('polarsvc.')]\n"
        "banned = ('sqlalchemy', 'fastapi', 'pydantic', 'httpx')\n"
        "bad += [m for m in sys.modules if m.split('.')[0] in banned]\n"
        "print(','.join(bad))\n"
    )
    result = subprocess.run(
        [sys.executable, "-c", code], capture_output=True, text=True, check=True
    )
    assert result.stdout.strip() == ""


def test_public_names_exported() -> None:
    for name in polarsvc.aero.__all__:
        assert hasattr(polarsvc.aero, name), name
    for name in ("resample", "extend_full_range", "augment_rotation", "interpolate_reynolds",
                 "interpolate_thickness", "characteristics", "build_blade_tables",
                 "bracket_weights", "attached_lift_line", "separation_function"):
        assert name in polarsvc.aero.__all__


def test_rotor_imports_only_the_numeric_core() -> None:
    code = (
        "import sys, polarsvc.rotor\n"
        "bad = [m for m in sys.modules if m.startswith('polarsvc.')"
        " and m.split('.')[1] not in ('aero', 'rotor')]\n"
        "banned = ('sqlalchemy', 'fastapi', 'pydantic', 'httpx')\n"
        "bad += [m for m in sys.modules if m.split('.')[0] in banned]\n"
        "print(','.join(bad))\n"
    )
    result = subprocess.run(
        [sys.executable, "-c", code], capture_output=True, text=True, check=True
    )
    assert result.stdout.strip() == ""


def test_rotor_public_names() -> None:
    import polarsvc.rotor

    for name in polarsvc.rotor.__all__:
        assert hasattr(polarsvc.rotor, name), name
    for name in ("RotorGeometry", "solve", "cp_surface"):
        assert name in polarsvc.rotor.__all__

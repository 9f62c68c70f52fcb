"""Recipes: the recorded, hashable description of how a derived table is made from stored
revisions, and their execution with the numeric core.

A recipe is a plain JSON-able mapping::

    {
      "schema": "polarsvc-recipe/1",
      "kind": "resampled" | "extended" | "augmented" | "blended" | "blade-set",
      "software": {"name": "polarsvc", "version": "<version>"},
      "inputs": {"revisions": ["<sha256>", ...], "blade": "<sha256>" | null},
      "params": {...}            # every parameter of every step, defaults written out
    }

A ``rotor`` recipe adds ``inputs.blade_set``, the recipe hash of the blade set whose
tables it uses, and holds ``params = {"blade_set": <that recipe's params>, "rotor":
<rotor params>}`` (:func:`rotor_recipe`).

Its hash (:func:`polarsvc.hashing.recipe_hash`) keys the derived-table cache, and the
recipe stored beside a derived table is enough to recompute it (verification). Execution is
pure: revisions and blade definitions are supplied by loader callables; nothing here touches
storage. The parameter builders (:func:`extension_params`, :func:`rotation_params`, ...) are
the one place where defaults are written out, for the API, the command line and the pages,
and where every numeric parameter is canonicalised to its documented precision
(:data:`PARAMETER_PRECISION`) before it enters a recipe: requests that differ below that
precision are one recipe, one hash and one cached table.

Steps per kind (each step is one function of :mod:`polarsvc.aero`):

- ``resampled``: resample the stored table onto the grid (within its own angle range).
- ``extended``: extend_full_range, then resample onto the grid.
- ``augmented``: extend_full_range then augment_rotation (or the reverse, as the rotation
  parameter ``order`` says), then resample onto the grid.
- ``blended``: the family pipeline of :func:`polarsvc.aero.build_blade_tables` at a single
  section without rotation (extend each member, resample, log-Re then thickness
  interpolation).
- ``blade-set``: :func:`polarsvc.aero.build_blade_tables` over the stored blade's stations,
  with station Reynolds numbers from the operating point
  (:func:`polarsvc.aero.station_reynolds`); the broadside drag from the blade's own aspect
  ratio unless the extension parameters give one (:func:`blade_set_params`); the result holds
  the dynamic-stall arrays ``f_separation`` and ``cl_fs`` beside cl, cd, cm
  (:func:`dynamic_stall_columns`) and their per-station values in the station reports.
- ``rotor``: the blade set named by the recipe, then
  :func:`polarsvc.performance.compute_performance` (steady BEM, Cp surface, power curve,
  annual energy). Its result is a set of named arrays without an angle column.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from polarsvc import __version__, aero, performance
from polarsvc.aero.blade import ISA_DENSITY_KG_M3, ISA_VISCOSITY_PA_S
from polarsvc.aero.characteristics import LIFT_LINE_HALF_WINDOW_DEG
from polarsvc.aero.errors import ParameterError, UnknownMethodError
from polarsvc.aero.extension import (
    DEFAULT_EXTENSION_STEP_DEG,
    DEFAULT_TRAILING_EDGE_DRAG,
    DEFAULT_TRAILING_EDGE_LIFT_FACTOR,
)
from polarsvc.aero.rotation import (
    DEFAULT_FADE_END_OFFSET_DEG,
    DEFAULT_FADE_START_OFFSET_DEG,
    DEFAULT_ROTATION_ORDER,
)
from polarsvc.hashing import recipe_hash as compute_recipe_hash

RECIPE_SCHEMA = "polarsvc-recipe/1"
RECIPE_KINDS = ("resampled", "extended", "augmented", "blended", "blade-set", "rotor")

DEFAULT_STEP_DEG = 0.5
"""Default angle step of served tables [deg] (721 angles over -180..180)."""
MAX_FAMILY_STEP_DEG = LIFT_LINE_HALF_WINDOW_DEG
"""Coarsest grid of a blade set or blend [deg]: a window of +-5 deg then always holds two
angles."""


def check_family_step(step_deg: float, what: str) -> None:
    """Refuse a grid too coarse for the attached-flow lift line fitted on a prepared family
    (blade sets and blends).

    Raises
    ------
    ParameterError
        Naming ``step_deg``.
    """
    if float(step_deg) > MAX_FAMILY_STEP_DEG:
        raise ParameterError(
            "step_deg",
            f"{what} needs step_deg <= {MAX_FAMILY_STEP_DEG:g} deg, got {float(step_deg):g}: "
            f"the attached-flow lift line is fitted to the angles within "
            f"+-{LIFT_LINE_HALF_WINDOW_DEG:g} deg of the zero-lift angle and needs at least "
            "two of them",
        )

GRID_STEPS_DEG: tuple[float, ...] = tuple(
    k / 1000 for k in range(20, 10_001) if 360_000 % k == 0
)
"""Angle steps a served table may use [deg]: every step from 0.02 to 10 deg (at most three
decimals) that divides -180..180 into whole steps, as the grid requires (blade sets and
blends: up to :data:`MAX_FAMILY_STEP_DEG`)."""


def grid_step(step_deg: float) -> float:
    """The angle step of a served table, canonicalised and checked against
    :data:`GRID_STEPS_DEG`.

    Raises
    ------
    ParameterError
        Naming ``step_deg``.
    """
    value = canonical_parameter("step_deg", step_deg)
    if value not in GRID_STEPS_DEG:
        raise ParameterError(
            "step_deg",
            f"{value:g} deg does not divide -180..180 deg into whole steps between 0.02 and "
            "10 deg with at most three decimals (e.g. 0.1, 0.25, 0.5, 1, 2.5, 5)",
        )
    return value

DYNAMIC_STALL_COLUMNS = ("f_separation", "cl_fs")
"""Stations x angles arrays of the dynamic-stall inputs served with every blade set."""

BROADSIDE_DRAG_DEFINITION = (
    "cd_max = 1.11 + 0.018 AR (Viterna & Corrigan 1982), AR = (R - r_hub)^2 / planform area "
    "(trapezoidal rule over the stations)"
)

@dataclass(frozen=True)
class Precision:
    """How finely a numeric recipe parameter is kept.

    ``significant`` keeps that many significant digits (strictly positive quantities: a
    positive value never rounds to zero); ``decimals`` keeps that many digits after the point
    (quantities that may be zero or negative). Rounding goes through the shortest decimal
    text of the binary value (Python's ``format``), so it is the same on every machine.
    """

    significant: int | None = None
    decimals: int | None = None
    why: str = ""

    def apply(self, value: float) -> float:
        if self.significant is not None:
            rounded = float(f"{value:.{self.significant - 1}e}")
        else:
            rounded = float(f"{value:.{self.decimals}f}")
        if not math.isfinite(rounded):  # rounding up past the largest float: keep the value
            rounded = value
        return rounded + 0.0  # -0.0 becomes 0.0


_ANGLE = Precision(decimals=3, why="0.001 deg: far below the 0.1 deg resolution of tunnel "
                   "balances and the 0.5 deg served grid (common practice, no source)")
_COEFFICIENT = Precision(decimals=4, why="1e-4: one drag count, the resolution quoted for "
                         "section coefficients (common practice, no source)")
_RATIO = Precision(significant=5, why="5 significant digits: 1e-5 relative, below any "
                   "geometric or operating tolerance of a rotor (common practice, no source)")

PARAMETER_PRECISION: dict[str, Precision] = {
    # grid and full-range extension
    "step_deg": Precision(significant=5, why="grid step; 5 significant digits"),
    "aspect_ratio": _RATIO,
    "cd_max": Precision(significant=4, why="drag at 90 deg, 4 significant digits (1e-3 "
                        "at cd_max ~ 1.2-2; the published estimates differ by 0.1; common "
                        "practice, no source)"),
    "alpha_stall_pos_deg": _ANGLE,
    "alpha_stall_neg_deg": _ANGLE,
    "trailing_edge_lift_factor": _COEFFICIENT,
    # rotational augmentation
    "r_over_R": _RATIO,
    "chord_over_r": _RATIO,
    "tip_speed_ratio": _RATIO,
    "twist_deg": _ANGLE,
    "cl_alpha_per_rad": _RATIO,
    "fade_start_deg": _ANGLE,
    "fade_end_deg": _ANGLE,
    "fade_start_offset_deg": _ANGLE,
    "fade_end_offset_deg": _ANGLE,
    # family blend and blade set
    "thickness": Precision(significant=4, why="t/c to 4 significant digits (1e-4 chord at "
                           "t/c 0.2; common practice, no source)"),
    "reynolds": Precision(significant=4, why="4 significant digits: 0.1 % of Re, far below "
                          "the Re dependence of section data (common practice, no source)"),
    "wind_speed_m_s": _RATIO,
    "rotor_speed_rpm": _RATIO,
    "rho_kg_m3": _RATIO,
    "mu_pa_s": _RATIO,
}
"""The precision each numeric recipe parameter is kept to before a recipe is hashed (the one
place it is written down; DEVELOPERS.md points here). Values that round to the same number
are the same request; the recipe records, and the table is computed from, the rounded value."""


def canonical_parameter(name: str, value: float) -> float:
    """``value`` rounded to the precision of parameter ``name`` (see
    :data:`PARAMETER_PRECISION`).

    Raises
    ------
    ParameterError
        If the value is not a finite number.
    """
    try:
        number = float(value)
    except (TypeError, ValueError):
        raise ParameterError(name, f"must be a number, got {value!r}") from None
    if not math.isfinite(number):
        raise ParameterError(name, f"must be finite, got {value!r}")
    return PARAMETER_PRECISION[name].apply(number)


@dataclass(frozen=True)
class DerivedResult:
    """A computed table: angles [deg], named coefficient arrays (1-D, or stations x angles for
    a blade set) and what the steps reported (join angles, clamps, station conditions).
    A rotor result has no angle column (``alpha_deg`` is None) and named arrays of any
    shapes."""

    alpha_deg: np.ndarray | None
    columns: dict[str, np.ndarray]
    reports: dict[str, Any] = field(default_factory=dict)


def software_stamp() -> dict[str, str]:
    """The software identity recorded in every recipe."""
    return {"name": "polarsvc", "version": __version__}


def _optional_float(name: str, value: Any) -> float | None:
    return None if value is None else canonical_parameter(name, value)


def _float(name: str, value: Any) -> float:
    return canonical_parameter(name, value)


def extension_params(
    *,
    method: str = "viterna",
    aspect_ratio: float | None = None,
    cd_max: float | None = None,
    alpha_stall_pos_deg: float | None = None,
    alpha_stall_neg_deg: float | None = None,
    trailing_edge_lift_factor: float = DEFAULT_TRAILING_EDGE_LIFT_FACTOR,
    step_deg: float = DEFAULT_EXTENSION_STEP_DEG,
    trailing_edge_drag: str = DEFAULT_TRAILING_EDGE_DRAG,
) -> dict[str, Any]:
    """Keywords of :func:`polarsvc.aero.extend_full_range`, defaults written out."""
    if method not in aero.EXTENSION_METHODS:
        raise UnknownMethodError("method", method, aero.EXTENSION_METHODS)
    if trailing_edge_drag not in aero.TRAILING_EDGE_DRAG_RULES:
        raise UnknownMethodError(
            "trailing_edge_drag", trailing_edge_drag, aero.TRAILING_EDGE_DRAG_RULES
        )
    return {
        "method": method,
        "aspect_ratio": _optional_float("aspect_ratio", aspect_ratio),
        "cd_max": _optional_float("cd_max", cd_max),
        "alpha_stall_pos_deg": _optional_float("alpha_stall_pos_deg", alpha_stall_pos_deg),
        "alpha_stall_neg_deg": _optional_float("alpha_stall_neg_deg", alpha_stall_neg_deg),
        "trailing_edge_lift_factor": _float(
            "trailing_edge_lift_factor", trailing_edge_lift_factor
        ),
        "step_deg": _float("step_deg", step_deg),
        "trailing_edge_drag": trailing_edge_drag,
    }


def rotation_params(
    *,
    model: str = "snel",
    r_over_R: float | None = None,
    chord_over_r: float | None = None,
    tip_speed_ratio: float | None = None,
    twist_deg: float = 0.0,
    cl_alpha_per_rad: float | None = None,
    fade_start_deg: float | None = None,
    fade_end_deg: float | None = None,
    fade_start_offset_deg: float = DEFAULT_FADE_START_OFFSET_DEG,
    fade_end_offset_deg: float = DEFAULT_FADE_END_OFFSET_DEG,
    negative_side: bool = False,
    order: str = DEFAULT_ROTATION_ORDER,
    station: bool = True,
) -> dict[str, Any]:
    """Keywords of :func:`polarsvc.aero.augment_rotation`, defaults written out, plus the
    ``order`` relative to the full-range extension
    (:data:`polarsvc.aero.DEFAULT_ROTATION_ORDER` says why extend-then-augment is the
    default).

    The fade is tied to each section's stall angle by the offsets unless ``fade_start_deg``
    or ``fade_end_deg`` give absolute angles. With ``station=False`` (blade sets) the
    station quantities come from the blade and only the model settings are kept.
    """
    if model not in aero.ROTATION_MODELS:
        raise UnknownMethodError("model", model, aero.ROTATION_MODELS)
    if order not in aero.ROTATION_ORDERS:
        raise UnknownMethodError("order", order, aero.ROTATION_ORDERS)
    params: dict[str, Any] = {
        "model": model,
        "cl_alpha_per_rad": _optional_float("cl_alpha_per_rad", cl_alpha_per_rad),
        "fade_start_deg": _optional_float("fade_start_deg", fade_start_deg),
        "fade_end_deg": _optional_float("fade_end_deg", fade_end_deg),
        "fade_start_offset_deg": _float("fade_start_offset_deg", fade_start_offset_deg),
        "fade_end_offset_deg": _float("fade_end_offset_deg", fade_end_offset_deg),
        "negative_side": bool(negative_side),
        "order": order,
    }
    if station:
        if r_over_R is None or chord_over_r is None:
            missing = "r_over_R" if r_over_R is None else "chord_over_r"
            raise ParameterError(missing, "is required for rotational augmentation")
        params.update(
            r_over_R=_float("r_over_R", r_over_R),
            chord_over_r=_float("chord_over_r", chord_over_r),
            tip_speed_ratio=_optional_float("tip_speed_ratio", tip_speed_ratio),
            twist_deg=_float("twist_deg", twist_deg),
        )
    return params


def make_recipe(
    kind: str,
    *,
    revisions: Sequence[str],
    params: Mapping[str, Any],
    blade: str | None = None,
    blade_set: str | None = None,
) -> dict[str, Any]:
    """Assemble a recipe (see module docstring); ``revisions`` keep their given order;
    ``blade_set`` (rotor recipes) is the recipe hash of the blade set used."""
    if kind not in RECIPE_KINDS:
        raise UnknownMethodError("kind", kind, RECIPE_KINDS)
    inputs: dict[str, Any] = {"revisions": list(revisions), "blade": blade}
    if blade_set is not None:
        inputs["blade_set"] = blade_set
    return {
        "schema": RECIPE_SCHEMA,
        "kind": kind,
        "software": software_stamp(),
        "inputs": inputs,
        "params": dict(params),
    }


def rotor_recipe(blade_set_recipe: Mapping[str, Any], rotor: Mapping[str, Any]) -> dict[str, Any]:
    """The rotor recipe on a blade-set recipe: same revisions and blade, the blade set's
    recipe hash in ``inputs.blade_set``, both parameter sets."""
    if blade_set_recipe.get("kind") != "blade-set":
        raise ParameterError("blade_set_recipe", "must be a blade-set recipe")
    return make_recipe(
        "rotor",
        revisions=blade_set_recipe["inputs"]["revisions"],
        params={"blade_set": dict(blade_set_recipe["params"]), "rotor": dict(rotor)},
        blade=blade_set_recipe["inputs"]["blade"],
        blade_set=compute_recipe_hash(blade_set_recipe),
    )


def blade_set_recipe_of(recipe: Mapping[str, Any]) -> dict[str, Any]:
    """The blade-set recipe a rotor recipe names, rebuilt from its inputs and parameters
    (its hash is checked against ``inputs.blade_set``)."""
    rebuilt = {
        "schema": recipe["schema"],
        "kind": "blade-set",
        "software": dict(recipe["software"]),
        "inputs": {"revisions": list(recipe["inputs"]["revisions"]),
                   "blade": recipe["inputs"]["blade"]},
        "params": dict(recipe["params"]["blade_set"]),
    }
    if compute_recipe_hash(rebuilt) != recipe["inputs"].get("blade_set"):
        raise ParameterError(
            "inputs", "the blade-set recipe hash does not match the recipe's blade-set inputs"
        )
    return rebuilt


def _single_table(polar: aero.Polar, params: Mapping[str, Any], kind: str) -> aero.Polar:
    rotation = dict(params["rotation"]) if kind == "augmented" else {}
    order = rotation.pop("order", DEFAULT_ROTATION_ORDER)
    if kind == "augmented" and order == "augment-then-extend":
        polar = aero.augment_rotation(polar, rotation.pop("model"), **rotation)
    if kind in ("extended", "augmented"):
        extension = dict(params["extension"])
        method = extension.pop("method")
        polar = aero.extend_full_range(polar, method, **extension)
    if kind == "augmented" and order == "extend-then-augment":
        polar = aero.augment_rotation(polar, rotation.pop("model"), **rotation)
    step = params.get("step_deg")
    if step is not None:
        grid = aero.uniform_grid(float(step))
        inside = grid[(grid >= polar.alpha_deg[0]) & (grid <= polar.alpha_deg[-1])]
        if inside.size < 2:
            raise ParameterError(
                "step_deg",
                f"the grid of {float(step):g} deg holds {inside.size} angle(s) within the "
                f"table's {polar.alpha_deg[0]:g}..{polar.alpha_deg[-1]:g} deg; a table needs "
                "at least 2: choose a finer step",
            )
        polar = aero.resample(polar, alpha_deg=inside)
    return polar


def _result_from_polar(polar: aero.Polar) -> DerivedResult:
    columns = {"cl": np.asarray(polar.cl), "cd": np.asarray(polar.cd)}
    if polar.cm is not None:
        columns["cm"] = np.asarray(polar.cm)
    return DerivedResult(
        alpha_deg=np.asarray(polar.alpha_deg),
        columns=columns,
        reports={"conditions": polar.conditions(), "steps": [dict(s) for s in polar.history]},
    )


def _tables_result(tables: aero.BladeTables, reports: dict[str, Any]) -> DerivedResult:
    columns = {"cl": tables.cl, "cd": tables.cd}
    if tables.cm is not None:
        columns["cm"] = tables.cm
    return DerivedResult(alpha_deg=tables.alpha_deg, columns=columns, reports=reports)


FamilyCache = Callable[[str, Callable[[], "aero.PreparedFamily"]], "aero.PreparedFamily"]
"""``cache(key, make)``: the prepared family under ``key``, made by ``make()`` when absent."""


def _prepare_keywords(params: Mapping[str, Any]) -> dict[str, Any]:
    extension = dict(params["extension"])
    return {
        "grid_step_deg": float(params["step_deg"]),
        "surface": params["surface"],
        "extension_method": extension["method"],
        "aspect_ratio": extension["aspect_ratio"],
        "cd_max": extension["cd_max"],
        "trailing_edge_lift_factor": extension["trailing_edge_lift_factor"],
        "extension_step_deg": extension["step_deg"],
        "trailing_edge_drag": extension["trailing_edge_drag"],
    }


def prepared_family(
    recipe: Mapping[str, Any],
    load_revision: Callable[[str], aero.Polar],
    family_cache: FamilyCache | None = None,
    airfoils: Mapping[str, str] | None = None,
) -> aero.PreparedFamily:
    """The recipe's family members extended and resampled once
    (:func:`polarsvc.aero.prepare_family`), through ``family_cache`` when given: the same
    members and extension settings serve every blade and blend. ``airfoils`` (airfoil name
    by revision hash) groups the members by airfoil."""
    hashes = list(recipe["inputs"]["revisions"])
    keywords = _prepare_keywords(recipe["params"])
    if airfoils is not None:
        keywords["airfoils"] = [airfoils[h] for h in hashes]

    def make() -> aero.PreparedFamily:
        return aero.prepare_family([load_revision(h) for h in hashes], **keywords)

    if family_cache is None:
        return make()
    return family_cache(compute_recipe_hash({"revisions": hashes, **keywords}), make)


def blend_family(family: aero.PreparedFamily, params: Mapping[str, Any]) -> DerivedResult:
    """A family's full-range table at one thickness and Reynolds number (no rotation)."""
    stations = aero.BladeStations(
        radius_m=[1.0], chord_m=[1.0], twist_deg=[0.0],
        thickness=[float(params["thickness"])], reynolds=[float(params["reynolds"])],
    )
    tables = aero.build_blade_tables(
        family, stations, rotor_radius_m=1.0, rotation_model=None,
        thickness_method=params["thickness_method"], clamp=bool(params["clamp"]),
        dynamic_stall=False,
    )
    report = {
        key: value
        for key, value in tables.stations[0].items()
        if key not in ("station", "radius_m")
    }
    flat = aero.BladeTables(
        tables.alpha_deg, tables.cl[0], tables.cd[0],
        None if tables.cm is None else tables.cm[0], tables.stations, tables.recipe,
    )
    return _tables_result(flat, {"section": report})


def blade_stations(blade: Mapping[str, Any], params: Mapping[str, Any]) -> aero.BladeStations:
    """Station arrays of a blade definition, with Reynolds numbers from the operating point."""
    stations = blade["stations"]
    radius = np.array([s["radius_m"] for s in stations], dtype=np.float64)
    chord = np.array([s["chord_m"] for s in stations], dtype=np.float64)
    operating = params["operating_point"]
    air = params["air"]
    reynolds = aero.station_reynolds(
        radius, chord, operating["wind_speed_m_s"], operating["rotor_speed_rpm"],
        rho_kg_m3=air["rho_kg_m3"], mu_pa_s=air["mu_pa_s"],
    )
    return aero.BladeStations(
        radius_m=radius,
        chord_m=chord,
        twist_deg=np.array([s["twist_deg"] for s in stations], dtype=np.float64),
        thickness=np.array([s["thickness"] for s in stations], dtype=np.float64),
        reynolds=reynolds,
    )


def blade_tip_speed_ratio(blade: Mapping[str, Any], params: Mapping[str, Any]) -> float:
    """Omega R / V of the operating point [-]."""
    operating = params["operating_point"]
    omega = 2.0 * math.pi * float(operating["rotor_speed_rpm"]) / 60.0
    return omega * float(blade["rotor_radius_m"]) / float(operating["wind_speed_m_s"])


def blade_set_params(
    blade: Mapping[str, Any],
    *,
    surface: str | None = None,
    thickness_method: str = "linear",
    clamp: bool = False,
    extension: Mapping[str, Any] | None = None,
    rotation: Mapping[str, Any] | None = None,
    step_deg: float = DEFAULT_STEP_DEG,
    wind_speed_m_s: float | None = None,
    rotor_speed_rpm: float | None = None,
    rho_kg_m3: float = ISA_DENSITY_KG_M3,
    mu_pa_s: float = ISA_VISCOSITY_PA_S,
) -> dict[str, Any]:
    """Parameters of a blade-set recipe; the blade's own surface and operating point are
    the defaults. ``rotation=None`` means the default model (Snel); pass
    ``{"model": "none"}`` for none.

    Broadside drag: unless ``extension`` gives ``aspect_ratio`` or ``cd_max``, the blade's
    own aspect ratio (:func:`polarsvc.aero.blade_aspect_ratio`) sets cd_max; the recipe
    records it under ``extension.aspect_ratio`` and ``broadside_drag`` (source, definition,
    value)."""
    operating = dict(blade.get("operating_point") or {})
    if wind_speed_m_s is not None:
        operating["wind_speed_m_s"] = wind_speed_m_s
    if rotor_speed_rpm is not None:
        operating["rotor_speed_rpm"] = rotor_speed_rpm
    for key in ("wind_speed_m_s", "rotor_speed_rpm"):
        if key not in operating:
            raise ParameterError(key, "is needed: the blade definition has no operating point")
    check_family_step(step_deg, "a blade set")
    if rotation is not None and rotation.get("model") == "none":
        rotation_block = None
    else:
        rotation_block = rotation_params(**dict(rotation or {}), station=False)
    extension_block = extension_params(**dict(extension or {}))
    broadside: dict[str, Any] = {"source": "extension parameters"}
    if extension_block.get("aspect_ratio") is None and extension_block.get("cd_max") is None:
        stations = blade["stations"]
        ratio = aero.blade_aspect_ratio(  # from the stored blade: not a request value
            [s["radius_m"] for s in stations], [s["chord_m"] for s in stations],
            float(blade["rotor_radius_m"]), blade.get("hub_radius_m"),
        )
        extension_block["aspect_ratio"] = ratio
        broadside = {
            "source": "blade",
            "definition": BROADSIDE_DRAG_DEFINITION,
            "aspect_ratio": ratio,
            "cd_max": aero.viterna_cd_max(ratio),
        }
    return {
        "surface": surface or blade.get("surface", "clean"),
        "thickness_method": thickness_method,
        "clamp": bool(clamp),
        "extension": extension_block,
        "broadside_drag": broadside,
        "rotation": rotation_block,
        "step_deg": grid_step(step_deg),
        "operating_point": {
            "wind_speed_m_s": _float("wind_speed_m_s", operating["wind_speed_m_s"]),
            "rotor_speed_rpm": _float("rotor_speed_rpm", operating["rotor_speed_rpm"]),
        },
        "air": {
            "rho_kg_m3": _float("rho_kg_m3", rho_kg_m3),
            "mu_pa_s": _float("mu_pa_s", mu_pa_s),
        },
    }


def build_blade_set(
    family: Sequence[aero.Polar] | aero.PreparedFamily,
    blade: Mapping[str, Any],
    params: Mapping[str, Any],
) -> DerivedResult:
    """Station tables of a blade definition (see :func:`blade_set_params`)."""
    stations = blade_stations(blade, params)
    rotation = params.get("rotation")
    rotation_keywords: dict[str, Any] = {"rotation_model": None}
    if rotation is not None:
        rotation_keywords = {
            "rotation_model": rotation["model"],
            "cl_alpha_per_rad": rotation["cl_alpha_per_rad"],
            "fade": aero.FadeSettings(
                start_deg=rotation["fade_start_deg"],
                end_deg=rotation["fade_end_deg"],
                start_offset_deg=rotation["fade_start_offset_deg"],
                end_offset_deg=rotation["fade_end_offset_deg"],
                negative_side=rotation["negative_side"],
            ),
            "rotation_order": rotation["order"],
        }
    if not isinstance(family, aero.PreparedFamily):
        family = aero.prepare_family(family, **_prepare_keywords(params))
    tables = aero.build_blade_tables(
        family,
        stations,
        rotor_radius_m=float(blade["rotor_radius_m"]),
        tip_speed_ratio=blade_tip_speed_ratio(blade, params),
        thickness_method=params["thickness_method"],
        clamp=bool(params["clamp"]),
        **rotation_keywords,
    )
    station_reports = []
    for definition, report in zip(blade["stations"], tables.stations, strict=True):
        station_reports.append(
            {
                **report,
                "chord_m": float(definition["chord_m"]),
                "twist_deg": float(definition["twist_deg"]),
                "r_over_R": float(definition["radius_m"]) / float(blade["rotor_radius_m"]),
                "chord_over_r": float(definition["chord_m"]) / float(definition["radius_m"]),
            }
        )
    result = _tables_result(
        tables,
        {"stations": station_reports, "tip_speed_ratio": blade_tip_speed_ratio(blade, params)},
    )
    result.columns.update(dynamic_stall_columns(tables))
    return result


def dynamic_stall_columns(tables: aero.BladeTables) -> dict[str, np.ndarray]:
    """The dynamic-stall arrays served with a blade set, stations x angles, by name
    (:data:`DYNAMIC_STALL_COLUMNS`): the Kirchhoff separation function and the fully separated
    lift of every station's served table. The one place that builds them; every format
    writes them as further coefficient columns, and the per-station values (alpha0, lift
    slope, stall onset) are in the station reports under ``dynamic_stall``."""
    inputs = tables.dynamic_stall
    if inputs is None:
        return {}
    return dict(zip(DYNAMIC_STALL_COLUMNS, (inputs.f_separation, inputs.cl_fs), strict=True))


def execute_recipe(
    recipe: Mapping[str, Any],
    *,
    load_revision: Callable[[str], aero.Polar],
    load_blade: Callable[[str], Mapping[str, Any]] | None = None,
    family_cache: FamilyCache | None = None,
    airfoils: Mapping[str, str] | None = None,
    load_derived: Callable[[str], DerivedResult] | None = None,
) -> DerivedResult:
    """Compute the table a recipe describes.

    Parameters
    ----------
    recipe : mapping
        A recipe as made by :func:`make_recipe` (or read back from storage).
    load_revision : callable
        Returns the stored :class:`polarsvc.aero.Polar` for a revision hash.
    load_blade : callable, optional
        Returns the stored blade definition mapping for a blade hash (blade sets only).
    family_cache : callable, optional
        Reuses prepared families across recipes (see :func:`prepared_family`); without it
        everything is computed afresh (as verification does).
    airfoils : mapping, optional
        Airfoil name by revision hash: family members are then grouped by airfoil (each
        airfoil's Reynolds interpolation uses its own tables) and errors name the airfoil.
    load_derived : callable, optional
        Returns a derived table already at hand by recipe hash (the blade set of a rotor
        recipe); without it the blade set is computed from its recipe.
    """
    if recipe.get("schema") != RECIPE_SCHEMA:
        raise ParameterError("schema", f"unknown recipe schema {recipe.get('schema')!r}")
    kind = recipe.get("kind")
    if kind not in RECIPE_KINDS:
        raise UnknownMethodError("kind", kind, RECIPE_KINDS)
    params = recipe["params"]
    hashes = recipe["inputs"]["revisions"]
    if kind in ("resampled", "extended", "augmented"):
        if len(hashes) != 1:
            raise ParameterError("inputs", f"a {kind} table takes one revision, got {len(hashes)}")
        return _result_from_polar(_single_table(load_revision(hashes[0]), params, kind))
    if kind == "rotor":
        if load_blade is None:
            raise ParameterError("load_blade", "a rotor recipe needs a blade loader")
        tables_recipe = blade_set_recipe_of(recipe)
        if load_derived is not None:
            tables = load_derived(recipe["inputs"]["blade_set"])
        else:
            tables = execute_recipe(tables_recipe, load_revision=load_revision,
                                    load_blade=load_blade, family_cache=family_cache,
                                    airfoils=airfoils)
        blade = load_blade(recipe["inputs"]["blade"])
        assert tables.alpha_deg is not None
        arrays, reports = performance.compute_performance(
            tables.alpha_deg, tables.columns["cl"], tables.columns["cd"], blade,
            params["rotor"],
            prepared_reynolds=blade_stations(blade, tables_recipe["params"]).reynolds,
        )
        return DerivedResult(alpha_deg=None, columns=arrays, reports=reports)
    family = prepared_family(recipe, load_revision, family_cache, airfoils)
    if kind == "blended":
        return blend_family(family, params)
    if load_blade is None:
        raise ParameterError("load_blade", "a blade-set recipe needs a blade loader")
    return build_blade_set(family, load_blade(recipe["inputs"]["blade"]), params)


def blend_params(
    *,
    thickness: float,
    reynolds: float,
    surface: str = "clean",
    thickness_method: str = "linear",
    clamp: bool = False,
    extension: Mapping[str, Any] | None = None,
    step_deg: float = DEFAULT_STEP_DEG,
) -> dict[str, Any]:
    """Parameters of a family-blend recipe, defaults written out."""
    if thickness_method not in aero.THICKNESS_METHODS:
        raise UnknownMethodError("thickness_method", thickness_method, aero.THICKNESS_METHODS)
    check_family_step(step_deg, "a blend")
    return {
        "thickness": _float("thickness", thickness),
        "reynolds": _float("reynolds", reynolds),
        "surface": surface,
        "thickness_method": thickness_method,
        "clamp": bool(clamp),
        "extension": extension_params(**dict(extension or {})),
        "step_deg": grid_step(step_deg),
    }


def revision_table_params(
    kind: str,
    *,
    step_deg: float = DEFAULT_STEP_DEG,
    extension: Mapping[str, Any] | None = None,
    rotation: Mapping[str, Any] | None = None,
) -> dict[str, Any]:
    """Parameters of a table derived from one revision (``resampled``, ``extended`` or
    ``augmented``), canonicalised; ``rotation`` holds the keywords of
    :func:`rotation_params` (station quantities included) and is required for
    ``augmented``."""
    if kind not in ("resampled", "extended", "augmented"):
        raise UnknownMethodError("kind", kind, ("resampled", "extended", "augmented"))
    params: dict[str, Any] = {}
    if kind != "resampled":
        params["extension"] = extension_params(**dict(extension or {}))
    if kind == "augmented":
        if rotation is None:
            raise ParameterError("rotation", "is required for an augmented table")
        params["rotation"] = rotation_params(**dict(rotation))
    params["step_deg"] = grid_step(step_deg)
    return params


def dynamic_stall_comments(stations: Sequence[Mapping[str, Any]] | None) -> dict[str, str]:
    """One ``key: value`` comment per blade station for text forms (CSV) of a blade set: its
    radius and dynamic-stall values (zero-lift angle, attached lift slope, stall onsets),
    keyed ``dynamic_stall_station_<index>``; the arrays are columns."""
    comments = {}
    for report in stations or []:
        values = report.get("dynamic_stall")
        if values is None:
            continue
        text = " ".join(f"{key}={value}" for key, value in values.items())
        comments[f"dynamic_stall_station_{report['station']}"] = (
            f"radius_m={report['radius_m']} {text}"
        )
    return comments

"""Section tables for every station of a blade, vectorised over stations and angles.

Pipeline of :func:`build_blade_tables`:

Steps 1-3 (:func:`prepare_family`, reusable across blades):

1. keep the family members of the requested surface condition;
2. extend each member once to -180..180 deg (:func:`~polarsvc.aero.extension.extend_full_range`);
3. resample each once onto the common uniform grid (:func:`~polarsvc.aero.resample.resample`);
Steps 4-6 (:func:`build_blade_tables`):

4. per thickness member: the log10 Re weights of every station
   (:func:`~polarsvc.aero.interpolation.bracket_weights`, as a weight matrix);
5. thickness: linear -- each station's two thickness neighbours times their two Reynolds
   neighbours give four weighted member tables, summed by the combination kernel of
   :func:`~polarsvc.aero.interpolation.interpolate_reynolds` and
   :func:`~polarsvc.aero.interpolation.interpolate_thickness` (steps 4-5 at once);
   PCHIP -- Reynolds interpolation per thickness, then the PCHIP kernel of
   :func:`~polarsvc.aero.interpolation.interpolate_thickness` over all stations;
6. rotational augmentation of every station at once (the kernel of
   :func:`~polarsvc.aero.rotation.augment_rotation`), by default on the full-range tables
   (``rotation_order="extend-then-augment"``, reasons at
   :data:`~polarsvc.aero.rotation.DEFAULT_ROTATION_ORDER`); with
   ``"augment-then-extend"`` each station's table within its measured range (the angles
   measured in every member it draws on) is augmented, then extended and resampled again;
7. the dynamic-stall inputs of every station, from the table served
   (:func:`~polarsvc.aero.characteristics.dynamic_stall_inputs`).

Steps 4-6 run as numpy operations over (stations x angles); the only Python loop is over the
few thickness members. Each step uses the same kernel as the scalar function of the same
name, so the tables equal the station-by-station chain of scalar calls.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

from polarsvc.aero.characteristics import (
    DynamicStallInputs,
    _dynamic_stall_arrays,
    _lift_line_arrays,
    measured_range,
)
from polarsvc.aero.errors import (
    InsufficientDataError,
    OutOfRangeError,
    ParameterError,
    UnknownMethodError,
    show_value,
)
from polarsvc.aero.extension import DEFAULT_TRAILING_EDGE_DRAG, extend_full_range
from polarsvc.aero.interpolation import (
    THICKNESS_METHODS,
    _combine,
    _pairs,
    _pchip_blend,
    bracket_weights,
    from_log10,
)
from polarsvc.aero.polar import Polar
from polarsvc.aero.resample import resample, uniform_grid
from polarsvc.aero.rotation import (
    DEFAULT_ROTATION_ORDER,
    ROTATION_MODELS,
    ROTATION_ORDERS,
    FadeSettings,
    _augment_arrays,
    _model_factors,
    _override_slope,
    _station_weight,
    augment_rotation,
    augmentation_flags,
)

FloatArray = NDArray[np.float64]
IntArray = NDArray[np.intp]

ISA_DENSITY_KG_M3 = 1.225
ISA_VISCOSITY_PA_S = 1.789e-5
"""ISA sea level, ISO 2533:1975 (from memory)."""


def station_reynolds(
    radius_m: ArrayLike,
    chord_m: ArrayLike,
    wind_speed_m_s: float,
    rotor_speed_rpm: float,
    rho_kg_m3: float = ISA_DENSITY_KG_M3,
    mu_pa_s: float = ISA_VISCOSITY_PA_S,
) -> FloatArray:
    """Chord Reynolds number at blade stations without induction.

    ``Re = rho W c / mu`` with ``W = sqrt(U^2 + (Omega r)^2)``, ``Omega = 2 pi rpm / 60``.

    Parameters
    ----------
    radius_m, chord_m : array_like
        Station radius and chord [m].
    wind_speed_m_s : float
        Free-stream wind speed U [m/s].
    rotor_speed_rpm : float
        Rotor speed [rpm].
    rho_kg_m3, mu_pa_s : float
        Air density [kg/m^3] and dynamic viscosity [Pa s]; ISA sea level (ISO 2533, from
        memory) by default.
    """
    radius = np.asarray(radius_m, dtype=np.float64)
    chord = np.asarray(chord_m, dtype=np.float64)
    for name, value in (("rho_kg_m3", rho_kg_m3), ("mu_pa_s", mu_pa_s)):
        if not (math.isfinite(value) and value > 0.0):
            raise ParameterError(name, f"must be positive, got {show_value(value)}")
    if not np.all(np.isfinite(chord) & (chord > 0.0)):
        raise ParameterError("chord_m", "must be positive")
    if not np.all(np.isfinite(radius) & (radius >= 0.0)):
        raise ParameterError("radius_m", "must be non-negative")
    omega = 2.0 * math.pi * float(rotor_speed_rpm) / 60.0
    speed = np.sqrt(float(wind_speed_m_s) ** 2 + (omega * radius) ** 2)
    return rho_kg_m3 * speed * chord / mu_pa_s


@dataclass(frozen=True)
class BladeStations:
    """Blade stations: radius [m], chord [m], twist [deg], t/c [-] and chord Reynolds number
    [-], each an array of one length."""

    radius_m: FloatArray
    chord_m: FloatArray
    twist_deg: FloatArray
    thickness: FloatArray
    reynolds: FloatArray

    def __post_init__(self) -> None:
        names = ("radius_m", "chord_m", "twist_deg", "thickness", "reynolds")
        arrays = {n: np.atleast_1d(np.asarray(getattr(self, n), dtype=np.float64)) for n in names}
        size = arrays["radius_m"].size
        for name, array in arrays.items():
            if array.ndim != 1 or array.size != size:
                raise ParameterError(name, f"must have one value per station ({size})")
            if not np.all(np.isfinite(array)):
                raise ParameterError(name, "must be finite")
            object.__setattr__(self, name, array)
        for name in ("radius_m", "chord_m", "reynolds", "thickness"):
            if np.any(arrays[name] <= 0.0):
                raise ParameterError(name, "must be positive")

    @property
    def size(self) -> int:
        """Number of stations."""
        return int(self.radius_m.size)


DYNAMIC_STALL_SCALARS = ("alpha0_deg", "cl_alpha_per_rad", "stall_onset_deg",
                         "stall_onset_neg_deg")
"""Per-station values of :class:`~polarsvc.aero.characteristics.DynamicStallInputs` that go
into the station reports (the arrays f and cl_fs are stations x angles)."""


@dataclass(frozen=True)
class BladeTables:
    """Tables at every station: ``cl``, ``cd`` and ``cm`` (or ``None``) of shape
    ``(n_stations, n_angles)`` on ``alpha_deg`` [deg]; ``stations`` holds one report per
    station (used thickness and Reynolds numbers, clamps, weights, rotation factors; mapping
    keys are member values as text, so reports serialise to JSON); ``recipe`` the settings."""

    alpha_deg: FloatArray
    cl: FloatArray
    cd: FloatArray
    cm: FloatArray | None
    stations: tuple[dict[str, Any], ...]
    recipe: dict[str, Any] = field(default_factory=dict)
    dynamic_stall: DynamicStallInputs | None = None


def _as_stations(stations: BladeStations | Mapping[str, ArrayLike] | Any) -> BladeStations:
    if isinstance(stations, BladeStations):
        return stations
    names = ("radius_m", "chord_m", "twist_deg", "thickness", "reynolds")
    if isinstance(stations, Mapping):
        missing = [n for n in names if n not in stations]
        if missing:
            raise ParameterError("stations", f"missing {', '.join(missing)}")
        return BladeStations(**{n: stations[n] for n in names})
    return BladeStations(**{n: getattr(stations, n) for n in names})


@dataclass(frozen=True)
class PreparedFamily:
    """Family members of one surface condition, extended to -180..180 deg and resampled onto
    one grid (steps 1-3 of the pipeline), ready for any number of blades.

    ``tables`` ``(m, n_columns, n_angles)`` holds the members ordered by thickness, then
    Reynolds number; ``groups`` holds per thickness in ``thicknesses`` (increasing) the
    increasing Reynolds numbers and the slice of ``tables`` of its members: one group per
    airfoil, whose Reynolds interpolation uses that airfoil's own tables only. ``labels``
    names each group in errors and reports (e.g. ``"airfoil 'SKUA-250' (t/c 0.25)"``).
    ``measured_deg`` ``(m, 2)`` holds the measured angle range of each member.
    """

    alpha_deg: FloatArray
    thicknesses: FloatArray
    groups: tuple[tuple[FloatArray, slice], ...]
    tables: FloatArray
    columns: tuple[str, ...]
    recipe: dict[str, Any]
    measured_deg: FloatArray
    labels: tuple[str, ...] = ()

    def label(self, group: int) -> str:
        """The name of a thickness group in messages."""
        if group < len(self.labels):
            return self.labels[group]
        return f"the member at t/c {float(self.thicknesses[group]):g}"


def prepare_family(
    members: Sequence[Polar],
    *,
    grid_step_deg: float = 0.5,
    surface: str = "clean",
    extension_method: str = "viterna",
    aspect_ratio: float | None = None,
    cd_max: float | None = None,
    trailing_edge_lift_factor: float = 0.7,
    extension_step_deg: float = 1.0,
    trailing_edge_drag: str = DEFAULT_TRAILING_EDGE_DRAG,
    airfoils: Sequence[str] | None = None,
) -> PreparedFamily:
    """Steps 1-3 of the pipeline: filter by surface condition, extend each member once
    (:func:`~polarsvc.aero.extension.extend_full_range`, same keywords) and resample each
    once onto the uniform grid of ``grid_step_deg`` [deg] over -180..180.

    ``airfoils`` (one name per member, optional) groups the members by airfoil for the
    Reynolds interpolation and names them in errors; without it members are grouped by
    thickness.

    Raises
    ------
    InsufficientDataError
        No member of the surface condition.
    ParameterError
        A member without thickness or Reynolds number; two members at the same pair; two
        airfoils of the same thickness.
    """
    if airfoils is not None and len(airfoils) != len(members):
        raise ParameterError("airfoils", "must name each member")
    names = list(airfoils) if airfoils is not None else [None] * len(members)
    chosen_names = [n for p, n in zip(members, names, strict=True) if p.surface == surface]
    chosen = [p for p in members if p.surface == surface]
    if not chosen:
        raise InsufficientDataError(f"no family member has surface condition {surface!r}")
    for index, p in enumerate(chosen):
        if p.thickness is None or p.reynolds is None:
            who = f"airfoil {chosen_names[index]!r}" if chosen_names[index] else f"member {index}"
            raise ParameterError("members", f"{who} lacks thickness or Reynolds number")
    grid = uniform_grid(grid_step_deg)
    tables = [
        resample(
            extend_full_range(
                p,
                extension_method,
                aspect_ratio=aspect_ratio,
                cd_max=cd_max,
                trailing_edge_lift_factor=trailing_edge_lift_factor,
                step_deg=extension_step_deg,
                trailing_edge_drag=trailing_edge_drag,
            ),
            alpha_deg=grid,
        )
        for p in chosen
    ]
    columns = ("cl", "cd", "cm") if all(t.cm is not None for t in tables) else ("cl", "cd")
    group_keys: dict[Any, float] = {}
    for table, name in zip(tables, chosen_names, strict=True):
        key = name if name is not None else float(table.thickness or 0.0)
        if group_keys.setdefault(key, float(table.thickness or 0.0)) != table.thickness:
            raise ParameterError("members", f"airfoil {name!r} has tables at two thicknesses")
    by_thickness: dict[float, Any] = {}
    for key, thickness in group_keys.items():
        if thickness in by_thickness:
            raise ParameterError(
                "members",
                f"airfoils {by_thickness[thickness]!r} and {key!r} share t/c {thickness:g}; "
                "retire one of them from blends or move it to another family",
            )
        by_thickness[thickness] = key
    thicknesses = sorted(by_thickness)
    groups = []
    labels = []
    ordered: list[Polar] = []
    for thickness in thicknesses:
        key = by_thickness[thickness]
        group = sorted(
            (t for t, n in zip(tables, chosen_names, strict=True)
             if (n if n is not None else float(t.thickness or 0.0)) == key),
            key=lambda t: float(t.reynolds or 0),
        )
        label = (f"airfoil {key!r} (t/c {thickness:g})" if isinstance(key, str)
                 else f"the member at t/c {thickness:g}")
        keys = np.array([t.reynolds for t in group], dtype=np.float64)
        if np.unique(keys).size != keys.size:
            raise ParameterError("members", f"two tables of {label} share a Reynolds number")
        groups.append((keys, slice(len(ordered), len(ordered) + len(group))))
        labels.append(label)
        ordered.extend(group)
    stack = np.asarray([[getattr(t, c) for c in columns] for t in ordered], dtype=np.float64)
    measured = np.asarray([measured_range(t) for t in ordered], dtype=np.float64)
    recipe = {
        "grid_step_deg": float(grid_step_deg),
        "surface": surface,
        "extension_method": extension_method,
        "aspect_ratio": aspect_ratio,
        "cd_max": cd_max,
        "trailing_edge_lift_factor": float(trailing_edge_lift_factor),
        "extension_step_deg": float(extension_step_deg),
        "trailing_edge_drag": trailing_edge_drag,
        "members": len(chosen),
    }
    return PreparedFamily(
        grid, np.asarray(thicknesses), tuple(groups), stack, columns, recipe, measured,
        tuple(labels),
    )


def build_blade_tables(
    members: Sequence[Polar] | PreparedFamily,
    stations: BladeStations | Mapping[str, ArrayLike],
    *,
    rotor_radius_m: float,
    tip_speed_ratio: float | None = None,
    grid_step_deg: float = 0.5,
    surface: str = "clean",
    extension_method: str = "viterna",
    aspect_ratio: float | None = None,
    cd_max: float | None = None,
    trailing_edge_lift_factor: float = 0.7,
    extension_step_deg: float = 1.0,
    trailing_edge_drag: str = DEFAULT_TRAILING_EDGE_DRAG,
    rotation_model: str | None = "snel",
    cl_alpha_per_rad: float | None = None,
    fade: FadeSettings | None = None,
    rotation_order: str = DEFAULT_ROTATION_ORDER,
    thickness_method: str = "linear",
    clamp: bool = False,
    dynamic_stall: bool = True,
) -> BladeTables:
    """Full-range, rotationally augmented, interpolated tables at every blade station.

    Parameters
    ----------
    members : sequence of Polar or PreparedFamily
        The family: polars at several thicknesses, Reynolds numbers and surface conditions;
        or the result of :func:`prepare_family` (then the extension and grid keywords are
        those it was prepared with and the ones given here are ignored).
    stations : BladeStations or mapping
        ``radius_m``, ``chord_m``, ``twist_deg``, ``thickness``, ``reynolds`` per station.
    rotor_radius_m : float
        Tip radius R [m] (for r/R).
    tip_speed_ratio : float, optional
        ``Omega R / V`` [-] (du-selig).
    grid_step_deg : float
        Step of the common angle grid [deg] over -180..180.
    surface : str
        Surface condition of the members used.
    extension_method, aspect_ratio, cd_max, trailing_edge_lift_factor, extension_step_deg,
    trailing_edge_drag
        Passed to :func:`~polarsvc.aero.extension.extend_full_range` (``step_deg``).
    rotation_model : str or None
        One of :data:`~polarsvc.aero.rotation.ROTATION_MODELS`, or ``None`` for none.
    cl_alpha_per_rad : float, optional
        As in :func:`~polarsvc.aero.rotation.augment_rotation`.
    fade : FadeSettings, optional
        Fade of the augmentation (default: tied to each station's stall angle, positive side).
    rotation_order : {"extend-then-augment", "augment-then-extend"}
        See :data:`~polarsvc.aero.rotation.DEFAULT_ROTATION_ORDER`.
    thickness_method : {"linear", "pchip"}
    clamp : bool
        Clamp stations outside the family's Reynolds or thickness range (recorded per station).
    dynamic_stall : bool
        Compute the dynamic-stall inputs of every station (step 7).

    Returns
    -------
    BladeTables

    Notes
    -----
    The pipeline is set out in the module docstring. References of each step are in the
    functions named there.
    """
    blade = _as_stations(stations)
    if not (math.isfinite(rotor_radius_m) and rotor_radius_m > 0.0):
        raise ParameterError(
            "rotor_radius_m", f"must be positive, got {show_value(rotor_radius_m)}"
        )
    if thickness_method not in THICKNESS_METHODS:
        raise UnknownMethodError("thickness_method", thickness_method, THICKNESS_METHODS)
    if rotation_model is not None and rotation_model not in ROTATION_MODELS:
        raise UnknownMethodError("rotation_model", rotation_model, ROTATION_MODELS)
    family = members if isinstance(members, PreparedFamily) else prepare_family(
        members,
        grid_step_deg=grid_step_deg,
        surface=surface,
        extension_method=extension_method,
        aspect_ratio=aspect_ratio,
        cd_max=cd_max,
        trailing_edge_lift_factor=trailing_edge_lift_factor,
        extension_step_deg=extension_step_deg,
        trailing_edge_drag=trailing_edge_drag,
    )
    grid = family.alpha_deg
    log_re = np.log10(blade.reynolds)
    values = family.thicknesses
    t_weights = bracket_weights(values, blade.thickness, clamp=clamp, parameter="thickness")
    pchip = thickness_method == "pchip" and values.size > 1
    bracketing = _bracketing(t_weights, values.size, blade.size)
    reynolds_reports = []
    re_pairs = []
    for group, (thickness, (keys, rows)) in enumerate(zip(values, family.groups, strict=True)):
        # every station's weights are computed (clamped); only the stations this member
        # brackets in thickness must lie within its Reynolds range
        weights = bracket_weights(
            np.log10(keys), log_re, clamp=True, parameter="reynolds", shown_as=from_log10
        )
        outside = weights.clamped & bracketing[group]
        if outside.any() and not clamp:
            station = int(np.flatnonzero(outside)[0])
            raise OutOfRangeError(
                "reynolds", float(blade.reynolds[station]), float(keys[0]), float(keys[-1]),
                subject=family.label(group),
            )
        used = bracketing[group] | pchip  # PCHIP draws on every member
        index, weight = _pairs(weights)
        re_pairs.append((index + rows.start, weight))  # indices into family.tables
        reynolds_reports.append(
            (float(thickness), keys, weights, used, weights.clamped & bracketing[group])
        )
    if pchip:
        per_thickness = np.stack(
            [_combine(family.tables, index, weight) for index, weight in re_pairs]
        )
        table = _pchip_blend(values, per_thickness, t_weights.used)
        contributors = list(re_pairs)  # PCHIP draws on every thickness
    else:
        # thickness neighbours x their Reynolds neighbours: four terms per station
        t_index, t_weight = _pairs(t_weights)
        re_index = np.stack([pair[0] for pair in re_pairs])  # (groups, stations, 2)
        re_weight = np.stack([pair[1] for pair in re_pairs])
        stations_axis = np.arange(blade.size)
        index = np.concatenate(
            [re_index[t_index[:, j], stations_axis] for j in range(2)], axis=1
        )
        weight = np.concatenate(
            [t_weight[:, [j]] * re_weight[t_index[:, j], stations_axis] for j in range(2)],
            axis=1,
        )
        table = _combine(family.tables, index, weight)
        contributors = [(index, weight)]
    cl, cd = table[:, 0], table[:, 1]
    cm = table[:, 2] if "cm" in family.columns else None
    measured = _station_measured(family, contributors)
    r_over_R = blade.radius_m / rotor_radius_m
    chord_over_r = blade.chord_m / blade.radius_m
    fade = fade or FadeSettings()
    rotation: dict[str, Any] = {}
    if rotation_model is not None:
        if rotation_order not in ROTATION_ORDERS:
            raise UnknownMethodError("rotation_order", rotation_order, ROTATION_ORDERS)
        f_cl, g_cd = _model_factors(
            rotation_model, chord_over_r, r_over_R, tip_speed_ratio, blade.twist_deg
        )
        if rotation_order == "extend-then-augment":
            slope, alpha0 = _lift_line_arrays(grid, cl)
            slope = _override_slope(slope, cl_alpha_per_rad)
            weight, fade_report = _station_weight(
                grid, cl, alpha0, measured[:, 0], measured[:, 1], fade
            )
            cl, cd = _augment_arrays(grid, cl, cd, f_cl, g_cd, slope, alpha0, weight)
            rotation = {
                "cl_alpha_per_rad": np.degrees(slope),
                "alpha0_deg": alpha0,
                **fade_report,
            }
        else:
            cl, cd, cm, rotation = _augment_then_extend(
                family, grid, cl, cd, cm, measured, rotation_model,
                r_over_R=r_over_R, chord_over_r=chord_over_r,
                tip_speed_ratio=tip_speed_ratio, twist_deg=blade.twist_deg,
                cl_alpha_per_rad=cl_alpha_per_rad, fade=fade,
            )
        rotation = {"lift_factor": f_cl, "drag_factor": g_cd, **rotation}
        rotation["flags"] = augmentation_flags(
            rotation_model, chord_over_r, r_over_R, tip_speed_ratio, blade.twist_deg
        )
    stall_inputs = None
    if dynamic_stall:
        slope_served, alpha0_served = _lift_line_arrays(grid, cl)
        stall_inputs = _dynamic_stall_arrays(grid, cl, slope_served, alpha0_served)
    reports = _station_reports(
        blade, reynolds_reports, values, t_weights, rotation, measured, stall_inputs
    )
    recipe = {
        **family.recipe,
        "rotation_model": rotation_model,
        "thickness_method": thickness_method,
        "clamp": clamp,
        "rotor_radius_m": float(rotor_radius_m),
        "tip_speed_ratio": tip_speed_ratio,
        "rotation_order": rotation_order,
        "fade": {
            "start_deg": fade.start_deg,
            "end_deg": fade.end_deg,
            "start_offset_deg": float(fade.start_offset_deg),
            "end_offset_deg": float(fade.end_offset_deg),
            "negative_side": bool(fade.negative_side),
        },
    }
    return BladeTables(grid, cl, cd, cm, reports, recipe, stall_inputs)


def _station_measured(
    family: PreparedFamily, contributors: list[tuple[IntArray, FloatArray]]
) -> FloatArray:
    """Measured angle range ``(ns, 2)`` of every station: the angles measured in every
    member it draws on (non-zero weight)."""
    low = np.full(contributors[0][0].shape[0], -np.inf)
    high = np.full_like(low, np.inf)
    for index, weight in contributors:
        used = weight > 0.0
        low = np.maximum(low, np.max(np.where(used, family.measured_deg[index, 0], -np.inf),
                                     axis=1))
        high = np.minimum(high, np.min(np.where(used, family.measured_deg[index, 1], np.inf),
                                       axis=1))
    return np.stack([low, high], axis=1)


def _augment_then_extend(
    family: PreparedFamily,
    grid: FloatArray,
    cl: FloatArray,
    cd: FloatArray,
    cm: FloatArray | None,
    measured: FloatArray,
    model: str,
    *,
    r_over_R: FloatArray,
    chord_over_r: FloatArray,
    tip_speed_ratio: float | None,
    twist_deg: FloatArray,
    cl_alpha_per_rad: float | None,
    fade: FadeSettings,
) -> tuple[FloatArray, FloatArray, FloatArray | None, dict[str, Any]]:
    """Augment each station's table within its measured range, then extend it to the full
    range with the family's extension settings and resample it onto ``grid`` (one station at
    a time: the scalar functions)."""
    settings = family.recipe
    out_cl, out_cd = np.empty_like(cl), np.empty_like(cd)
    out_cm = None if cm is None else np.empty_like(cm)
    report: dict[str, list[float]] = {}
    for s in range(cl.shape[0]):
        inside = (grid >= measured[s, 0]) & (grid <= measured[s, 1])
        section = Polar(
            grid[inside], cl[s, inside], cd[s, inside],
            None if cm is None else cm[s, inside], assume_degrees=True,
        )
        augmented = augment_rotation(
            section, model, r_over_R=float(r_over_R[s]), chord_over_r=float(chord_over_r[s]),
            tip_speed_ratio=tip_speed_ratio, twist_deg=float(twist_deg[s]),
            cl_alpha_per_rad=cl_alpha_per_rad, fade_start_deg=fade.start_deg,
            fade_end_deg=fade.end_deg, fade_start_offset_deg=fade.start_offset_deg,
            fade_end_offset_deg=fade.end_offset_deg, negative_side=fade.negative_side,
        )
        full = resample(
            extend_full_range(
                augmented, settings["extension_method"],
                aspect_ratio=settings["aspect_ratio"], cd_max=settings["cd_max"],
                trailing_edge_lift_factor=settings["trailing_edge_lift_factor"],
                step_deg=settings["extension_step_deg"],
                trailing_edge_drag=settings["trailing_edge_drag"],
            ),
            alpha_deg=grid,
        )
        out_cl[s], out_cd[s] = full.cl, full.cd
        if out_cm is not None and full.cm is not None:
            out_cm[s] = full.cm
        step = augmented.history[-1]
        for key in ("cl_alpha_per_rad", "alpha0_deg", "stall_deg", "fade_start_deg",
                    "fade_end_deg", "stall_neg_deg", "fade_neg_start_deg", "fade_neg_end_deg"):
            if key in step:
                report.setdefault(key, []).append(step[key])
    return out_cl, out_cd, out_cm, {k: np.asarray(v) for k, v in report.items()}


def _bracketing(t_weights: Any, groups: int, stations: int) -> NDArray[np.bool_]:
    """``(groups, stations)``: whether each thickness group carries a non-zero weight at
    each station."""
    uses = np.zeros((groups, stations), dtype=bool)
    columns = np.arange(stations)
    uses[t_weights.lower, columns] |= t_weights.weight_lower > 0.0
    uses[t_weights.upper, columns] |= t_weights.weight_upper > 0.0
    return uses


def _station_reports(
    blade: BladeStations,
    reynolds_reports: list[tuple[float, FloatArray, Any, Any, Any]],
    thicknesses: FloatArray,
    t_weights: Any,
    rotation: dict[str, Any],
    measured: FloatArray,
    stall_inputs: DynamicStallInputs | None,
) -> tuple[dict[str, Any], ...]:
    count = blade.size
    measured_list = measured.tolist()
    stall_scalars = {}
    if stall_inputs is not None:
        stall_scalars = {
            key: [None if math.isnan(v) else v for v in getattr(stall_inputs, key).tolist()]
            for key in DYNAMIC_STALL_SCALARS
        }
    t_used = t_weights.used.tolist()
    t_clamped = t_weights.clamped.tolist()
    lower = t_weights.lower.tolist()
    upper = t_weights.upper.tolist()
    w_lower = t_weights.weight_lower.tolist()
    w_upper = t_weights.weight_upper.tolist()
    per_member = [
        (
            thickness,
            np.where(w.clamped, np.clip(blade.reynolds, keys[0], keys[-1]), blade.reynolds)
            .tolist(),
            clamped.tolist(),
            used.tolist(),
        )
        for thickness, keys, w, used, clamped in reynolds_reports
    ]
    re_pairs = [
        (
            [str(k) for k in keys.tolist()],
            w.lower.tolist(),
            w.upper.tolist(),
            w.weight_lower.tolist(),
            w.weight_upper.tolist(),
        )
        for _, keys, w, _, _ in reynolds_reports
    ]
    flags = rotation.get("flags")
    rot = {k: v.tolist() for k, v in rotation.items() if k != "flags"}
    reports = []
    for s in range(count):
        thickness_weights = {}
        reynolds_weights = {}
        for g, weight in ((lower[s], w_lower[s]), (upper[s], w_upper[s])):
            if weight > 0.0:
                name = str(thicknesses[g].item())
                thickness_weights[name] = weight
                keys, re_lo, re_hi, re_wl, re_wu = re_pairs[g]
                reynolds_weights[name] = {
                    keys[i]: w for i, w in ((re_lo[s], re_wl[s]), (re_hi[s], re_wu[s])) if w > 0
                }
        report: dict[str, Any] = {
            "station": s,
            "radius_m": blade.radius_m[s].item(),
            "thickness_requested": blade.thickness[s].item(),
            "thickness_used": t_used[s],
            "thickness_clamped": t_clamped[s],
            "thickness_weights": thickness_weights,
            "reynolds_requested": blade.reynolds[s].item(),
            "reynolds_used": {
                str(t): used[s] for t, used, _, member_used in per_member if member_used[s]
            },
            "reynolds_weights": reynolds_weights,
            "reynolds_clamped": any(clamped[s] for _, _, clamped, _ in per_member),
        }
        report["measured_range_deg"] = measured_list[s]
        if rot:
            report["rotation"] = {k: v[s] for k, v in rot.items()}
            if flags is not None:
                report["rotation"].update(flags[s])
        if stall_scalars:
            report["dynamic_stall"] = {k: v[s] for k, v in stall_scalars.items()}
        reports.append(report)
    return tuple(reports)


def blade_aspect_ratio(
    radius_m: ArrayLike,
    chord_m: ArrayLike,
    rotor_radius_m: float,
    hub_radius_m: float | None = None,
) -> float:
    """Aspect ratio of a blade planform, span squared over planform area.

    ``AR = (R - r_root)^2 / A`` with ``r_root`` the hub radius (the innermost station when
    not given) and ``A = int c dr`` by the trapezoidal rule over the stations (the usual wing
    definition, span^2 / area; common practice, no source). This is the aspect ratio of the
    Viterna-Corrigan broadside drag ``cd_max = 1.11 + 0.018 AR`` (Viterna & Corrigan 1982,
    NASA CP-2230) when a blade set takes it from its blade.

    Raises
    ------
    ParameterError
        Fewer than two stations, radii not increasing, or a non-positive chord or span.
    """
    radius = np.asarray(radius_m, dtype=np.float64)
    chord = np.asarray(chord_m, dtype=np.float64)
    if radius.ndim != 1 or radius.size < 2 or radius.shape != chord.shape:
        raise ParameterError("stations", "at least two stations with radius and chord")
    if np.any(np.diff(radius) <= 0.0):
        raise ParameterError("radius_m", "must increase from station to station")
    if np.any(~np.isfinite(chord) | (chord <= 0.0)):
        raise ParameterError("chord_m", "must be positive")
    root = float(radius[0] if hub_radius_m is None else hub_radius_m)
    span = float(rotor_radius_m) - root
    if not (math.isfinite(span) and span > 0.0):
        raise ParameterError("rotor_radius_m", f"must exceed the root radius {root:g} m")
    area = float(np.sum(0.5 * (chord[1:] + chord[:-1]) * np.diff(radius)))
    return span * span / area

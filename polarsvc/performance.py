"""Rotor performance of a blade set: recipe parameters, pure execution and comparison.

A rotor result is a derived object like a table: its recipe (kind ``rotor``) names the
blade-set recipe whose station tables it used (``inputs.blade_set``, a recipe hash) with
that recipe's parameters, the stored revisions and the blade definition, plus the rotor
parameters written out here (defaults included). Execution is pure: the station tables come
in as arrays; :mod:`polarsvc.rotor` does the numbers.

The result is a set of named float64 arrays (:data:`RESULT_ARRAYS` describes them), hashed
with :func:`polarsvc.hashing.result_content_hash`, and reports (labels, assumptions,
caution) that follow from the recipe.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np

from polarsvc import rotor
from polarsvc.aero.blade import ISA_DENSITY_KG_M3, ISA_VISCOSITY_PA_S
from polarsvc.aero.errors import ParameterError, UnknownMethodError

ROTOR_CAUTION = rotor.CAUTION

GRID_DEFAULTS = {
    "tip_speed_ratios": {"start": 1.0, "stop": 15.0, "step": 0.5},
    "pitches_deg": {"start": -5.0, "stop": 30.0, "step": 5.0},
}
"""Cp surface grid; its maximum, refined between the grid points, gives the best tip speed
ratio and the fine pitch."""

DEFAULT_WIND_STEP_M_S = 0.5

CONTROL_MODES = (
    rotor.power.MODE_MIN_SPEED,
    rotor.power.MODE_OPTIMUM,
    rotor.power.MODE_MAX_SPEED,
    rotor.power.MODE_RATED,
)
"""Codes 0..3 of the ``control_mode`` array."""

STATION_ARRAYS = (
    "axial_induction", "tangential_induction", "inflow_angle_deg", "alpha_deg", "cl", "cd",
    "normal_force_n_per_m", "tangential_force_n_per_m",
)

RESULT_ARRAYS = {
    "tip_speed_ratio": "tip speed ratio axis of the Cp surface [-]",
    "pitch_deg": "pitch axis of the Cp surface [deg]",
    "cp": "power coefficient, tip speed ratios x pitches [-]",
    "ct": "thrust coefficient, tip speed ratios x pitches [-]",
    "optimum": "best tip speed ratio [-], fine pitch [deg], maximum Cp [-]",
    "cp_lambda": "power coefficient along tip_speed_ratio at the fine pitch [-]",
    "ct_lambda": "thrust coefficient along tip_speed_ratio at the fine pitch [-]",
    "wind_speed_m_s": "wind speeds of the power curve, cut-in to cut-out [m/s]",
    "rotor_speed_rpm": "rotor speed [rpm]",
    "curve_tip_speed_ratio": "tip speed ratio [-]",
    "curve_pitch_deg": "pitch [deg]",
    "control_mode": "0 minimum speed, 1 optimum tip speed ratio, 2 maximum speed, "
                    "3 pitch holds rated power",
    "power_w": "electrical power [W]",
    "aero_power_w": "aerodynamic power [W]",
    "curve_cp": "power coefficient [-]",
    "curve_ct": "thrust coefficient [-]",
    "thrust_n": "rotor thrust [N]",
    "torque_n_m": "aerodynamic rotor torque [N m]",
    "root_flap_moment_n_m": "out-of-plane (flapwise) root moment of one blade [N m]",
    "root_edge_moment_n_m": "in-plane (edgewise) root moment of one blade, aerodynamic [N m]",
    "rated_wind_speed_m_s": "rated wind speed [m/s] (NaN if rated power is never reached)",
    "radius_m": "station radius [m]",
    "axial_induction": "axial induction per wind speed and station [-]",
    "tangential_induction": "tangential induction per wind speed and station [-]",
    "inflow_angle_deg": "inflow angle per wind speed and station [deg]",
    "alpha_deg": "angle of attack per wind speed and station [deg]",
    "cl": "lift coefficient used per wind speed and station [-]",
    "cd": "drag coefficient used per wind speed and station [-]",
    "normal_force_n_per_m": "normal force per unit length per wind speed and station [N/m]",
    "tangential_force_n_per_m": "tangential force per unit length per wind speed and "
                                "station [N/m]",
    "reynolds_prepared": "chord Reynolds number each station's table was prepared for [-] "
                         "(NaN where not known)",
    "reynolds_min": "lowest chord Reynolds number W c / nu met per station over the power "
                    "curve [-]",
    "reynolds_max": "highest chord Reynolds number W c / nu met per station over the power "
                    "curve [-]",
    "annual_energy_wh": "annual energy per wind distribution (8766 h) [Wh]",
    "mean_power_w": "mean electrical power per wind distribution [W]",
    "capacity_factor": "capacity factor per wind distribution [-]",
}


KINEMATIC_VISCOSITY_M2_S = ISA_VISCOSITY_PA_S / ISA_DENSITY_KG_M3
"""Kinematic viscosity of air at ISA sea level [m^2/s], mu / rho = 1.789e-5 / 1.225 =
1.4604e-5, from the same air properties the blade-set tables are prepared with
(:data:`polarsvc.aero.blade.ISA_VISCOSITY_PA_S`, :data:`~polarsvc.aero.blade.ISA_DENSITY_KG_M3`),
so the Reynolds numbers met and those prepared for are compared on one footing (the U.S.
Standard Atmosphere 1976 sea-level row gives 1.4607e-5 m^2/s; from memory)."""

REYNOLDS_FACTOR_LIMIT = 2.0
"""A station is listed in the warnings when the Reynolds numbers met over the power curve
reach beyond twice, or below half, the Reynolds number its table was prepared for (common
practice, no source: section data are usually taken as valid within about a factor of two
in Re away from transition-sensitive conditions)."""


def reynolds_met(
    wind_speed_m_s: np.ndarray,
    tip_speed_ratio: np.ndarray,
    radius_m: np.ndarray,
    rotor_radius_m: float,
    chord_m: np.ndarray,
    axial_induction: np.ndarray,
    tangential_induction: np.ndarray,
    kinematic_viscosity_m2_s: float = KINEMATIC_VISCOSITY_M2_S,
) -> np.ndarray:
    """Chord Reynolds number ``W c / nu`` per wind speed and station, with the relative
    speed of the BEM solution ``W = U sqrt((1 - a)^2 + (lambda r / R (1 + a'))^2)`` (Burton
    et al. 2011, Wind Energy Handbook, sec. 3.5). Shapes: speeds ``(m,)``, stations
    ``(n,)``, inductions ``(m, n)``."""
    speed = np.asarray(wind_speed_m_s, dtype=np.float64)[:, None]
    local = np.asarray(tip_speed_ratio, dtype=np.float64)[:, None] * (
        np.asarray(radius_m, dtype=np.float64) / float(rotor_radius_m)
    )
    relative = speed * np.sqrt((1.0 - axial_induction) ** 2
                               + (local * (1.0 + tangential_induction)) ** 2)
    return relative * np.asarray(chord_m, dtype=np.float64) / kinematic_viscosity_m2_s


def reynolds_report(
    radius_m: np.ndarray, prepared: np.ndarray, low: np.ndarray, high: np.ndarray
) -> dict[str, Any]:
    """What the result says about the station Reynolds numbers: viscosity and its source,
    the factor, and every station whose range met leaves [prepared / 2, 2 x prepared]."""
    outside = []
    for station, (r, re0, re_low, re_high) in enumerate(
        zip(radius_m, prepared, low, high, strict=True)
    ):
        if not math.isfinite(float(re0)):
            continue
        if re_high > REYNOLDS_FACTOR_LIMIT * re0 or re_low < re0 / REYNOLDS_FACTOR_LIMIT:
            outside.append({
                "station": station, "radius_m": float(r), "prepared": float(re0),
                "min": float(re_low), "max": float(re_high),
            })
    return {
        "definition": "W c / nu per station at every wind speed of the power curve, "
                      "W = U sqrt((1 - a)^2 + (lambda r / R (1 + a'))^2) of the BEM solution",
        "kinematic_viscosity_m2_s": KINEMATIC_VISCOSITY_M2_S,
        "viscosity_source": "ISA sea level, U.S. Standard Atmosphere 1976 table "
                            "(1.4607e-5 m^2/s, rounded)",
        "factor_limit": REYNOLDS_FACTOR_LIMIT,
        "factor_limit_source": "common practice, no source",
        "stations_outside": outside,
    }


def reynolds_warnings(report: Mapping[str, Any]) -> list[str]:
    """One sentence per station of ``report["stations_outside"]``."""
    return [
        f"station {s['station']} (r = {s['radius_m']:g} m): Reynolds numbers "
        f"{s['min']:.3g}..{s['max']:.3g} over the power curve against {s['prepared']:.3g} "
        f"its table was prepared for (beyond a factor of {report['factor_limit']:g}); the "
        "table is used as prepared"
        for s in report["stations_outside"]
    ]


def _grid_block(name: str, block: Mapping[str, Any] | None) -> dict[str, float]:
    merged = {**GRID_DEFAULTS[name], **dict(block or {})}
    try:
        start, stop, step = (float(merged[k]) for k in ("start", "stop", "step"))
    except (TypeError, ValueError, KeyError):
        raise ParameterError(name, "needs numbers start, stop and step") from None
    if not all(math.isfinite(v) for v in (start, stop, step)) or step <= 0 or stop < start:
        raise ParameterError(name, "needs finite start <= stop and a positive step")
    if (stop - start) / step > 400:
        raise ParameterError(name, "has more than 400 points")
    return {"start": start, "stop": stop, "step": step}


def grid_values(block: Mapping[str, float]) -> np.ndarray:
    """The points of a ``{"start", "stop", "step"}`` grid (both ends included)."""
    count = round((block["stop"] - block["start"]) / block["step"])
    return np.linspace(block["start"], block["start"] + count * block["step"], count + 1)


def turbine_data(
    blade: Mapping[str, Any], overrides: Mapping[str, Any] | None = None
) -> dict[str, float]:
    """The turbine data of a blade definition (its ``turbine`` block) with the given
    overrides, validated, defaults written out."""
    merged = {**dict(blade.get("turbine") or {}),
              **{k: v for k, v in dict(overrides or {}).items() if v is not None}}
    return rotor.TurbineData.from_mapping(merged).as_dict()


def rotor_params(
    blade: Mapping[str, Any],
    *,
    turbine: Mapping[str, Any] | None = None,
    tip_loss: bool = True,
    hub_loss: bool = True,
    tangential_induction: bool = True,
    high_thrust: bool = True,
    tip_speed_ratios: Mapping[str, Any] | None = None,
    pitches_deg: Mapping[str, Any] | None = None,
    wind_step_m_s: float = DEFAULT_WIND_STEP_M_S,
    extra_wind_speeds_m_s: Sequence[float] = (),
    weibull: Sequence[Sequence[float]] = (),
) -> dict[str, Any]:
    """Rotor parameters of a rotor recipe, defaults written out.

    ``turbine`` overrides fields of the blade's ``turbine`` block (rated power, rotor speed
    limits, efficiency, cut-in and cut-out, air density). ``extra_wind_speeds_m_s`` adds
    speeds to the power curve (e.g. where spanwise loads are wanted); ``weibull`` adds
    (k, A [m/s]) distributions to the IEC class Rayleigh distributions.
    """
    step = float(wind_step_m_s)
    if not (math.isfinite(step) and 0.05 <= step <= 5.0):
        raise ParameterError("wind_step_m_s", "must lie in [0.05, 5] m/s")
    extra = sorted({float(u) for u in extra_wind_speeds_m_s})
    if any(not (math.isfinite(u) and u > 0) for u in extra):
        raise ParameterError("extra_wind_speeds_m_s", "must be positive")
    distributions = []
    for index, pair in enumerate(weibull):
        if len(pair) != 2:
            raise ParameterError("weibull", f"entry {index} needs (k, A)")
        rotor.Weibull(float(pair[0]), float(pair[1]))  # validates
        distributions.append([float(pair[0]), float(pair[1])])
    return {
        "tip_loss": bool(tip_loss),
        "hub_loss": bool(hub_loss),
        "tangential_induction": bool(tangential_induction),
        "high_thrust": bool(high_thrust),
        "turbine": turbine_data(blade, turbine),
        "tip_speed_ratios": _grid_block("tip_speed_ratios", tip_speed_ratios),
        "pitches_deg": _grid_block("pitches_deg", pitches_deg),
        "wind_step_m_s": step,
        "extra_wind_speeds_m_s": extra,
        "weibull": distributions,
        "iec_classes": list(rotor.IEC_CLASS_MEAN_WIND_M_S),
    }


def geometry(blade: Mapping[str, Any]) -> rotor.RotorGeometry:
    """The rotor geometry of a blade definition."""
    stations = blade["stations"]
    return rotor.RotorGeometry(
        radius_m=[s["radius_m"] for s in stations],
        chord_m=[s["chord_m"] for s in stations],
        twist_deg=[s["twist_deg"] for s in stations],
        blade_count=int(blade.get("blade_count", 3)),
        rotor_radius_m=float(blade["rotor_radius_m"]),
        hub_radius_m=float(blade.get("hub_radius_m", 0.0)),
    )


def distributions(params: Mapping[str, Any]) -> list[rotor.Weibull]:
    """The wind distributions of a rotor recipe: IEC classes first, then the Weibulls."""
    chosen = [
        rotor.rayleigh(rotor.IEC_CLASS_MEAN_WIND_M_S[name],
                       f"IEC class {name}: Rayleigh, mean "
                       f"{rotor.IEC_CLASS_MEAN_WIND_M_S[name]:g} m/s")
        for name in params["iec_classes"]
    ]
    chosen += [rotor.Weibull(k, a) for k, a in params["weibull"]]
    return chosen


def _solve_options(params: Mapping[str, Any]) -> dict[str, bool]:
    return {k: bool(params[k])
            for k in ("tip_loss", "hub_loss", "tangential_induction", "high_thrust")}


def compute_performance(
    alpha_deg: np.ndarray,
    cl: np.ndarray,
    cd: np.ndarray,
    blade: Mapping[str, Any],
    params: Mapping[str, Any],
    prepared_reynolds: Sequence[float] | np.ndarray | None = None,
) -> tuple[dict[str, np.ndarray], dict[str, Any]]:
    """Cp surface, Cp(lambda), power curve, spanwise solution at every curve speed and
    annual energy of a blade with its station tables (``cl``, ``cd``: stations x angles),
    and the station Reynolds numbers met over the power curve against
    ``prepared_reynolds``, the ones the tables were prepared for (the tables are used as
    they are at every wind speed; stations beyond :data:`REYNOLDS_FACTOR_LIMIT` are listed
    in the warnings and assumptions).

    Returns the named arrays (:data:`RESULT_ARRAYS`, in that order) and the reports.
    """
    g = geometry(blade)
    options = _solve_options(params)
    turbine = rotor.TurbineData.from_mapping(params["turbine"])
    tsr = grid_values(params["tip_speed_ratios"])
    prepared = rotor.prepare(g, alpha_deg, cl, cd, **options)
    surface = rotor.cp_surface(g, alpha_deg, cl, cd, tsr, grid_values(params["pitches_deg"]),
                               rotor=prepared)
    best_tsr, fine_pitch = surface.best_tip_speed_ratio, surface.best_pitch_deg
    step = params["wind_step_m_s"]
    count = round((turbine.cut_out_m_s - turbine.cut_in_m_s) / step)
    speeds = np.append(
        np.minimum(turbine.cut_in_m_s + step * np.arange(count + 1), turbine.cut_out_m_s),
        params["extra_wind_speeds_m_s"],
    )
    speeds = np.unique(np.append(speeds, turbine.cut_out_m_s))
    speeds = speeds[(speeds >= turbine.cut_in_m_s) & (speeds <= turbine.cut_out_m_s)]
    states = rotor.operating_states(
        g, alpha_deg, cl, cd, turbine, speeds, best_tip_speed_ratio=best_tsr,
        fine_pitch_deg=fine_pitch, fine_pitch_tip_speed_ratio=tsr, rotor=prepared,
    )
    rated = states.rated_wind_speed_m_s
    speeds = states.wind_speed_m_s
    bem = states.bem
    winds = distributions(params)
    energies = [
        rotor.annual_energy(speeds, states.electrical_power_w, d,
                            rated_power_w=turbine.rated_power_w)
        for d in winds
    ]
    met = reynolds_met(speeds, states.tip_speed_ratio, g.radius_m, g.rotor_radius_m,
                       g.chord_m, bem.axial_induction, bem.tangential_induction)
    prepared_re = (np.full(g.size, np.nan) if prepared_reynolds is None
                   else np.asarray(prepared_reynolds, dtype=np.float64))
    if prepared_re.shape != (g.size,):
        raise ParameterError("prepared_reynolds", f"needs one value per station ({g.size})")
    reynolds = reynolds_report(g.radius_m, prepared_re, met.min(axis=0), met.max(axis=0))
    arrays: dict[str, np.ndarray] = {
        "tip_speed_ratio": surface.tip_speed_ratio,
        "pitch_deg": surface.pitch_deg,
        "cp": surface.cp,
        "ct": surface.ct,
        "optimum": np.array([best_tsr, fine_pitch, surface.cp_max]),
        "cp_lambda": states.fine_pitch_cp,
        "ct_lambda": states.fine_pitch_ct,
        "wind_speed_m_s": speeds,
        "rotor_speed_rpm": states.rotor_speed_rpm,
        "curve_tip_speed_ratio": states.tip_speed_ratio,
        "curve_pitch_deg": states.pitch_deg,
        "control_mode": np.array([CONTROL_MODES.index(m) for m in states.mode], dtype=float),
        "power_w": states.electrical_power_w,
        "aero_power_w": states.aero_power_w,
        "curve_cp": bem.cp,
        "curve_ct": bem.ct,
        "thrust_n": states.thrust_n,
        "torque_n_m": states.torque_n_m,
        "root_flap_moment_n_m": bem.root_flap_moment,
        "root_edge_moment_n_m": bem.root_edge_moment,
        "rated_wind_speed_m_s": np.array([np.nan if rated is None else rated]),
        "radius_m": g.radius_m,
        **{name: getattr(bem, name) for name in STATION_ARRAYS},
        "reynolds_prepared": prepared_re,
        "reynolds_min": met.min(axis=0),
        "reynolds_max": met.max(axis=0),
        "annual_energy_wh": np.array([e.energy_wh for e in energies]),
        "mean_power_w": np.array([e.mean_power_w for e in energies]),
        "capacity_factor": np.array([e.capacity_factor for e in energies], dtype=float),
    }
    arrays = {name: np.asarray(arrays[name], dtype=np.float64) for name in RESULT_ARRAYS}
    reports = {
        "distributions": [d.label for d in winds],
        "control_modes": list(CONTROL_MODES),
        "assumptions": [*bem.assumptions, *reynolds_warnings(reynolds)],
        "warnings": reynolds_warnings(reynolds),
        "reynolds": reynolds,
        "max_abs_residual": states.max_abs_residual,
        "angle_outside_table": bool(bem.outside_table.any()),
        "integration": "trapezoid rule over the stations, first to last station",
        "moments": "about the hub radius, one blade, rotor-plane axes, aerodynamic only",
        "hours_per_year": rotor.HOURS_PER_YEAR,
        "arrays": RESULT_ARRAYS,
    }
    return arrays, reports


CURVE_COLUMNS = (
    "wind_speed_m_s", "rotor_speed_rpm", "curve_tip_speed_ratio", "curve_pitch_deg",
    "control_mode", "power_w", "aero_power_w", "curve_cp", "curve_ct", "thrust_n",
    "torque_n_m", "root_flap_moment_n_m", "root_edge_moment_n_m",
)

TABLE_PARTS = ("curve", "cp", "cp_lambda", "stations", "energy", "optimum", "reynolds")
"""Parts of a rotor result as flat tables (the CSV form, and the binary and JSON forms when
a part is asked for): the power curve (one row per wind speed), the Cp surface (long: one
row per tip speed ratio and pitch), Cp along the tip speed ratio at the fine pitch, the
spanwise solution (long: one row per wind speed and station), the annual energy (one row
per wind distribution, in the order of the ``distributions`` report), the optimum (one
row: best tip speed ratio, fine pitch, maximum Cp, rated wind speed) and the station
Reynolds numbers (one row per station: prepared, lowest and highest met)."""

DEFAULT_CSV_PART = "curve"
"""The part a CSV answer carries when none is named."""


def table_part(arrays: Mapping[str, np.ndarray], part: str) -> dict[str, np.ndarray]:
    """One part of a rotor result as one-dimensional columns of one length."""
    if part == "curve":
        return {name: arrays[name] for name in CURVE_COLUMNS}
    if part == "cp":
        tsr, pitch = np.meshgrid(arrays["tip_speed_ratio"], arrays["pitch_deg"], indexing="ij")
        return {"tip_speed_ratio": tsr.ravel(), "pitch_deg": pitch.ravel(),
                "cp": arrays["cp"].ravel(), "ct": arrays["ct"].ravel()}
    if part == "cp_lambda":
        return {"tip_speed_ratio": arrays["tip_speed_ratio"], "cp": arrays["cp_lambda"],
                "ct": arrays["ct_lambda"]}
    if part == "stations":
        speed, radius = np.meshgrid(arrays["wind_speed_m_s"], arrays["radius_m"],
                                    indexing="ij")
        return {"wind_speed_m_s": speed.ravel(), "radius_m": radius.ravel(),
                **{name: arrays[name].ravel() for name in STATION_ARRAYS}}
    if part == "energy":
        count = arrays["annual_energy_wh"].size
        return {"distribution": np.arange(count, dtype=float),
                "annual_energy_wh": arrays["annual_energy_wh"],
                "mean_power_w": arrays["mean_power_w"],
                "capacity_factor": arrays["capacity_factor"]}
    if part == "optimum":
        optimum = arrays["optimum"]
        return {"best_tip_speed_ratio": optimum[0:1], "fine_pitch_deg": optimum[1:2],
                "cp_max": optimum[2:3],
                "rated_wind_speed_m_s": arrays["rated_wind_speed_m_s"]}
    if part == "reynolds":
        return {"radius_m": arrays["radius_m"],
                "reynolds_prepared": arrays["reynolds_prepared"],
                "reynolds_min": arrays["reynolds_min"],
                "reynolds_max": arrays["reynolds_max"]}
    raise UnknownMethodError("part", part, TABLE_PARTS)


COMPARISON_PARTS = ("curve", "cp_lambda", "energy", "rated")
"""Parts of a comparison as flat tables: the power curves (one row per wind speed), Cp
along the tip speed ratio, the annual energy (one row per wind distribution present in
both, in the order of the ``distributions`` metadata) and each result at its own rated
wind speed (one row; NaN where rated power is never reached)."""

COMPARISON_ARRAY_BLOCKS = ("cp_lambda", "power_curve", "annual_energy", "at_rated_wind_speed",
                           "rated")
RATED_QUANTITIES = ("wind_speed_m_s", "thrust_n", "root_flap_moment_n_m",
                    "root_edge_moment_n_m")


def _column(values: Any) -> np.ndarray:
    return np.array([np.nan if v is None else v for v in values], dtype=np.float64)


def comparison_part(comparison: Mapping[str, Any], part: str) -> dict[str, np.ndarray]:
    """One part of a comparison (:func:`compare_results`) as one-dimensional columns of one
    length (None written as NaN)."""
    if part == "curve":
        block = comparison["power_curve"]
        return {name: _column(block[name])
                for name in ("wind_speed_m_s", "a_w", "b_w", "delta_w", "delta_percent")}
    if part == "cp_lambda":
        block = comparison["cp_lambda"]
        return {name: _column(block[name]) for name in ("tip_speed_ratio", "a", "b", "delta")}
    if part == "energy":
        rows = comparison["annual_energy"]
        names = ("a_mwh", "b_mwh", "delta_mwh", "delta_percent", "a_capacity_factor",
                 "b_capacity_factor")
        return {"distribution": np.arange(len(rows), dtype=np.float64),
                **{name: _column([row[name] for row in rows]) for name in names}}
    if part == "rated":
        columns = {}
        for side in ("a", "b"):
            values = comparison["rated"][side]
            for name in RATED_QUANTITIES:
                columns[f"{side}_{name}"] = _column([None if values is None else values[name]])
        return columns
    raise UnknownMethodError("part", part, COMPARISON_PARTS)


def comparison_meta(comparison: Mapping[str, Any], part: str | None) -> dict[str, Any]:
    """What a comparison says beside its arrays (identities, recipe differences, optimum,
    cautions), the part and the wind distributions named by the energy rows."""
    meta = {key: value for key, value in comparison.items()
            if key not in COMPARISON_ARRAY_BLOCKS}
    meta["distributions"] = [row["distribution"] for row in comparison["annual_energy"]]
    if part is not None:
        meta["part"] = part
    return meta


def comparison_arrays(comparison: Mapping[str, Any]) -> dict[str, np.ndarray]:
    """Every part of a comparison, columns named ``<part>.<column>``."""
    return {f"{part}.{name}": values
            for part in COMPARISON_PARTS
            for name, values in comparison_part(comparison, part).items()}


def station_solution_at(
    arrays: Mapping[str, np.ndarray], wind_speed_m_s: float
) -> tuple[int, dict[str, np.ndarray]]:
    """The spanwise solution at the curve's wind speed nearest to ``wind_speed_m_s``:
    (row index, arrays per station)."""
    row = int(np.argmin(np.abs(arrays["wind_speed_m_s"] - float(wind_speed_m_s))))
    return row, {name: arrays[name][row] for name in STATION_ARRAYS}


def _at(speed: np.ndarray, values: np.ndarray, where: float) -> float:
    return float(np.interp(where, speed, values))


def _flatten(value: Any, prefix: str = "") -> dict[str, Any]:
    if isinstance(value, Mapping):
        flat: dict[str, Any] = {}
        for key in sorted(value):
            flat.update(_flatten(value[key], f"{prefix}.{key}" if prefix else str(key)))
        return flat
    return {prefix: value}


def recipe_differences(
    recipe_a: Mapping[str, Any], recipe_b: Mapping[str, Any],
    inputs_a: Sequence[Mapping[str, Any]], inputs_b: Sequence[Mapping[str, Any]],
) -> dict[str, Any]:
    """What differs between two rotor recipes: parameters (dotted paths), software, blade
    definition revision and the stored revisions used (with their conditions)."""
    params_a = _flatten(recipe_a.get("params", {}))
    params_b = _flatten(recipe_b.get("params", {}))
    changed = [
        {"parameter": key, "a": params_a.get(key), "b": params_b.get(key)}
        for key in sorted(set(params_a) | set(params_b))
        if params_a.get(key) != params_b.get(key)
    ]
    by_a = {i["revision"]: i for i in inputs_a}
    by_b = {i["revision"]: i for i in inputs_b}
    review_changes = [
        {"revision": h, "a": by_a[h].get("review_state"), "b": by_b[h].get("review_state")}
        for h in sorted(set(by_a) & set(by_b))
        if by_a[h].get("review_state") != by_b[h].get("review_state")
    ]
    return {
        "parameters": changed,
        "software": None if recipe_a.get("software") == recipe_b.get("software") else {
            "a": recipe_a.get("software"), "b": recipe_b.get("software")},
        "blade": None if recipe_a["inputs"].get("blade") == recipe_b["inputs"].get("blade")
        else {"a": recipe_a["inputs"].get("blade"), "b": recipe_b["inputs"].get("blade")},
        "revisions_only_in_a": [by_a[h] for h in by_a if h not in by_b],
        "revisions_only_in_b": [by_b[h] for h in by_b if h not in by_a],
        "review_state_changes": review_changes,
        "same_blade_set": recipe_a["inputs"].get("blade_set")
        == recipe_b["inputs"].get("blade_set"),
    }


def compare_results(
    a: Mapping[str, np.ndarray], b: Mapping[str, np.ndarray],
    labels_a: Sequence[str], labels_b: Sequence[str],
) -> dict[str, Any]:
    """Differences b - a of two rotor results: Cp along the tip speed ratio (at each one's
    fine pitch, on a's axis), the power curve (on the wind speeds of both within both
    ranges, linear between curve points), annual energy per distribution present in both
    (MWh and %), and thrust and root moments at rated wind speed (each result at its own
    rated wind speed)."""
    tsr = a["tip_speed_ratio"]
    cp_b = np.interp(tsr, b["tip_speed_ratio"], b["cp_lambda"], left=np.nan, right=np.nan)
    speed_a, speed_b = a["wind_speed_m_s"], b["wind_speed_m_s"]
    low, high = max(speed_a[0], speed_b[0]), min(speed_a[-1], speed_b[-1])
    speeds = np.union1d(speed_a, speed_b)
    speeds = speeds[(speeds >= low) & (speeds <= high)]
    power_a = np.interp(speeds, speed_a, a["power_w"])
    power_b = np.interp(speeds, speed_b, b["power_w"])
    with np.errstate(divide="ignore", invalid="ignore"):
        power_percent = np.where(power_a > 0, 100.0 * (power_b - power_a) / power_a, np.nan)
    energy = []
    for i, label in enumerate(labels_a):
        if label not in labels_b:
            continue
        j = list(labels_b).index(label)
        ea, eb = float(a["annual_energy_wh"][i]), float(b["annual_energy_wh"][j])
        energy.append({
            "distribution": label,
            "a_mwh": ea / 1e6, "b_mwh": eb / 1e6, "delta_mwh": (eb - ea) / 1e6,
            "delta_percent": 100.0 * (eb - ea) / ea if ea > 0 else None,
            "a_capacity_factor": float(a["capacity_factor"][i]),
            "b_capacity_factor": float(b["capacity_factor"][j]),
        })
    rated = {}
    for name, result in (("a", a), ("b", b)):
        speed = float(result["rated_wind_speed_m_s"][0])
        if not math.isfinite(speed):
            rated[name] = None
            continue
        u = result["wind_speed_m_s"]
        rated[name] = {
            "wind_speed_m_s": speed,
            "thrust_n": _at(u, result["thrust_n"], speed),
            "root_flap_moment_n_m": _at(u, result["root_flap_moment_n_m"], speed),
            "root_edge_moment_n_m": _at(u, result["root_edge_moment_n_m"], speed),
        }
    at_rated = None
    if rated["a"] is not None and rated["b"] is not None:
        at_rated = {
            key: {"a": rated["a"][key], "b": rated["b"][key],
                  "delta": rated["b"][key] - rated["a"][key],
                  "delta_percent": 100.0 * (rated["b"][key] - rated["a"][key])
                  / rated["a"][key] if rated["a"][key] else None}
            for key in rated["a"]
        }
    return {
        "sense": "b minus a",
        "optimum": {"a": a["optimum"].tolist(), "b": b["optimum"].tolist(),
                    "fields": ["tip_speed_ratio", "fine_pitch_deg", "cp_max"]},
        "cp_lambda": {"tip_speed_ratio": tsr, "a": a["cp_lambda"], "b": cp_b,
                      "delta": cp_b - a["cp_lambda"]},
        "power_curve": {"wind_speed_m_s": speeds, "a_w": power_a, "b_w": power_b,
                        "delta_w": power_b - power_a, "delta_percent": power_percent},
        "annual_energy": energy,
        "at_rated_wind_speed": at_rated,
        "rated": rated,
    }

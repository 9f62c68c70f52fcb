"""Power curve of a variable-speed, pitch-regulated rotor from the steady BEM solution.

Control (common practice for variable-speed pitch-regulated machines; Burton et al. 2011,
Wind Energy Handbook, sec. 8.3; Manwell et al. 2009, sec. 8.2):

1. below rated, the rotor runs at the tip speed ratio and pitch of the Cp maximum
   (:func:`polarsvc.rotor.cp_surface`), its speed clipped to the minimum and maximum rotor
   speed (so at low wind it runs at minimum speed, at higher wind at constant maximum speed);
2. where that would give more than the rated power, the pitch is raised (towards feather)
   until the electrical power equals the rated power; the pitch is solved for, per wind
   speed, by the array root finder of :mod:`polarsvc.rotor.roots`;
3. no power below cut-in or above cut-out.

Electrical power = drivetrain-generator efficiency x aerodynamic power
``Cp 1/2 rho U^3 pi R^2``. The rated wind speed is solved for and added to the curve.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

from polarsvc.aero.errors import ParameterError, show_value
from polarsvc.rotor.bem import ISA_DENSITY_KG_M3, BemResult, solve
from polarsvc.rotor.geometry import RotorGeometry
from polarsvc.rotor.roots import bracketed_roots
from polarsvc.rotor.surface import DEFAULT_TIP_SPEED_RATIOS, cp_surface

FloatArray = NDArray[np.float64]

DEFAULT_WIND_STEP_M_S = 0.5
OPTIMUM_PITCHES_DEG = np.linspace(-5.0, 10.0, 16)
"""Pitch grid searched for the Cp maximum (fine pitch) [deg]."""
FEATHER_PITCH_DEG = 90.0
POWER_TOLERANCE = 1e-9
"""Relative tolerance of the rated-power match above rated (the pitch solve)."""

MIN_RATED_POWER_W = 1.0
"""Smallest rated power accepted [W] (common practice, no source: no turbine is rated below a
watt); below it the power scale, wind power over rated power, overflows."""

MODE_MIN_SPEED = "minimum rotor speed"
MODE_OPTIMUM = "optimum tip speed ratio"
MODE_MAX_SPEED = "maximum rotor speed"
MODE_RATED = "pitch holds rated power"


def _number(name: str, value: Any, *, low: float = 0.0, inclusive: bool = False) -> float:
    try:
        number = float(value)
    except (TypeError, ValueError):
        raise ParameterError(name, "must be a number") from None
    ok = number >= low if inclusive else number > low
    if not (math.isfinite(number) and ok):
        relation = ">=" if inclusive else ">"
        raise ParameterError(name, f"must be {relation} {low:g}, got {show_value(value)}")
    return number


@dataclass(frozen=True)
class TurbineData:
    """What the power curve needs beyond the blade.

    Parameters
    ----------
    rated_power_w : float
        Rated electrical power [W], at least :data:`MIN_RATED_POWER_W`.
    min_rotor_speed_rpm, max_rotor_speed_rpm : float
        Rotor speed limits [rpm].
    efficiency : float
        Drivetrain and generator efficiency [-], electrical over aerodynamic power.
    cut_in_m_s, cut_out_m_s : float
        Wind speeds [m/s] between which the turbine produces.
    rho_kg_m3 : float
        Air density [kg/m^3]; ISA sea level (1.225, ISO 2533, from memory) by default.
    """

    rated_power_w: float
    min_rotor_speed_rpm: float
    max_rotor_speed_rpm: float
    efficiency: float
    cut_in_m_s: float
    cut_out_m_s: float
    rho_kg_m3: float = ISA_DENSITY_KG_M3

    def __post_init__(self) -> None:
        for name in ("max_rotor_speed_rpm", "efficiency", "cut_in_m_s", "cut_out_m_s",
                     "rho_kg_m3"):
            object.__setattr__(self, name, _number(name, getattr(self, name)))
        object.__setattr__(
            self, "rated_power_w",
            _number("rated_power_w", self.rated_power_w, low=MIN_RATED_POWER_W, inclusive=True),
        )
        object.__setattr__(
            self, "min_rotor_speed_rpm",
            _number("min_rotor_speed_rpm", self.min_rotor_speed_rpm, inclusive=True),
        )
        if self.efficiency > 1.0:
            raise ParameterError("efficiency", f"must lie in (0, 1], got {self.efficiency:g}")
        if self.min_rotor_speed_rpm > self.max_rotor_speed_rpm:
            raise ParameterError("min_rotor_speed_rpm", "must not exceed max_rotor_speed_rpm")
        if self.cut_in_m_s >= self.cut_out_m_s:
            raise ParameterError("cut_in_m_s", "must be below cut_out_m_s")

    @classmethod
    def from_mapping(cls, data: Any) -> TurbineData:
        """From a mapping with the field names (other keys, such as ``notes``, are
        ignored); ``rho_kg_m3`` may be absent (ISA sea level)."""
        names = ("rated_power_w", "min_rotor_speed_rpm", "max_rotor_speed_rpm", "efficiency",
                 "cut_in_m_s", "cut_out_m_s")
        missing = [n for n in names if data.get(n) is None]
        if missing:
            raise ParameterError(missing[0], "is needed for a power curve (turbine data)")
        values = {n: data[n] for n in names}
        if data.get("rho_kg_m3") is not None:
            values["rho_kg_m3"] = data["rho_kg_m3"]
        return cls(**values)

    def as_dict(self) -> dict[str, float]:
        return {
            "rated_power_w": self.rated_power_w,
            "min_rotor_speed_rpm": self.min_rotor_speed_rpm,
            "max_rotor_speed_rpm": self.max_rotor_speed_rpm,
            "efficiency": self.efficiency,
            "cut_in_m_s": self.cut_in_m_s,
            "cut_out_m_s": self.cut_out_m_s,
            "rho_kg_m3": self.rho_kg_m3,
        }


@dataclass(frozen=True)
class OperatingStates:
    """Control settings and BEM solution at each wind speed (shape ``(speeds,)``; the
    ``bem`` result holds the per-station arrays in N/m and N m)."""

    wind_speed_m_s: FloatArray
    rotor_speed_rpm: FloatArray
    tip_speed_ratio: FloatArray
    pitch_deg: FloatArray
    mode: tuple[str, ...]
    aero_power_w: FloatArray
    electrical_power_w: FloatArray
    thrust_n: FloatArray
    torque_n_m: FloatArray
    bem: BemResult


@dataclass(frozen=True)
class PowerCurve:
    """Power curve (arrays over ``wind_speed_m_s``, cut-in to cut-out, the rated wind
    speed included) with the optimum it was built on."""

    states: OperatingStates
    rated_wind_speed_m_s: float | None
    best_tip_speed_ratio: float
    fine_pitch_deg: float
    cp_max: float
    turbine: TurbineData
    options: dict[str, Any] = field(default_factory=dict)

    @property
    def wind_speed_m_s(self) -> FloatArray:
        return self.states.wind_speed_m_s

    @property
    def electrical_power_w(self) -> FloatArray:
        return self.states.electrical_power_w


def _rpm_to_rad_s(rpm: FloatArray | float) -> FloatArray:
    return np.asarray(rpm, dtype=np.float64) * (2.0 * math.pi / 60.0)


def _wind_power(turbine: TurbineData, geometry: RotorGeometry, speed: FloatArray) -> FloatArray:
    return 0.5 * turbine.rho_kg_m3 * geometry.swept_area_m2 * speed**3


def _speed_schedule(
    geometry: RotorGeometry, turbine: TurbineData, speed: FloatArray, best_tsr: float
) -> tuple[FloatArray, FloatArray, list[str]]:
    R = geometry.rotor_radius_m
    wanted = best_tsr * speed / R
    low = _rpm_to_rad_s(turbine.min_rotor_speed_rpm)
    high = _rpm_to_rad_s(turbine.max_rotor_speed_rpm)
    omega = np.clip(wanted, low, high)
    modes = [
        MODE_MIN_SPEED if w < low else MODE_MAX_SPEED if w > high else MODE_OPTIMUM
        for w in wanted
    ]
    return omega, omega * R / speed, modes


def operating_states(
    geometry: RotorGeometry,
    alpha_deg: ArrayLike,
    cl: ArrayLike,
    cd: ArrayLike,
    turbine: TurbineData,
    wind_speed_m_s: ArrayLike,
    *,
    best_tip_speed_ratio: float,
    fine_pitch_deg: float,
    rated_wind_speed_m_s: float | None,
    **options: Any,
) -> OperatingStates:
    """Control settings and BEM solution at the given wind speeds (module docstring);
    above ``rated_wind_speed_m_s`` (see :func:`rated_wind_speed`) the pitch holds rated
    power."""
    speed = np.atleast_1d(np.asarray(wind_speed_m_s, dtype=np.float64))
    if speed.ndim != 1 or not np.all(np.isfinite(speed) & (speed > 0.0)):
        raise ParameterError("wind_speed_m_s", "must be positive wind speeds")
    omega, tsr, modes = _speed_schedule(geometry, turbine, speed, best_tip_speed_ratio)
    pitch = np.full(speed.size, float(fine_pitch_deg))
    wind_power = _wind_power(turbine, geometry, speed)
    scale = turbine.efficiency * wind_power / turbine.rated_power_w

    result = solve(geometry, alpha_deg, cl, cd, tsr, pitch, **options)
    above = scale * result.cp > 1.0 + POWER_TOLERANCE
    if rated_wind_speed_m_s is not None:
        above |= speed > rated_wind_speed_m_s
    above_index = np.flatnonzero(above)
    if above_index.size:
        pitch[above_index] = _pitch_for_rated_power(
            geometry, alpha_deg, cl, cd, tsr[above_index], scale[above_index],
            float(fine_pitch_deg), speed[above_index], options,
        )
        for i in above_index:
            modes[i] = MODE_RATED
    result = solve(geometry, alpha_deg, cl, cd, tsr, pitch, wind_speed_m_s=speed,
                   rho_kg_m3=turbine.rho_kg_m3, **options)
    aero = result.cp * wind_power
    return OperatingStates(
        wind_speed_m_s=speed,
        rotor_speed_rpm=omega * 60.0 / (2.0 * math.pi),
        tip_speed_ratio=tsr,
        pitch_deg=pitch,
        mode=tuple(modes),
        aero_power_w=aero,
        electrical_power_w=turbine.efficiency * aero,
        thrust_n=result.ct * 0.5 * turbine.rho_kg_m3 * speed**2 * geometry.swept_area_m2,
        torque_n_m=aero / omega,
        bem=result,
    )


PITCH_SCAN_COARSE_STEP_DEG = 6.0
PITCH_SCAN_COARSE_SPAN_DEG = 48.0
PITCH_SCAN_STEP_DEG = 1.5


def _falling_crossings(
    geometry: RotorGeometry, alpha_deg: ArrayLike, cl: ArrayLike, cd: ArrayLike,
    tsr: FloatArray, scale: FloatArray, grid: FloatArray, options: dict[str, Any],
) -> tuple[FloatArray, NDArray[np.bool_]]:
    T, P = np.meshgrid(tsr, grid, indexing="ij")
    excess = scale[:, None] * solve(geometry, alpha_deg, cl, cd, T, P, **options).cp - 1.0
    return excess, (excess[:, :-1] > 0.0) & (excess[:, 1:] <= 0.0)


def _pitch_for_rated_power(
    geometry: RotorGeometry,
    alpha_deg: ArrayLike,
    cl: ArrayLike,
    cd: ArrayLike,
    tsr: FloatArray,
    scale: FloatArray,
    fine_pitch: float,
    speed: FloatArray,
    options: dict[str, Any],
) -> FloatArray:
    """Pitch towards feather that gives rated power: the first pitch above the fine pitch
    where the power falls through rated (a stalled rotor first gains power when pitched,
    so the fine pitch itself may lie below rated). Scan in 6 deg steps to 48 deg above the
    fine pitch (one vectorised solve); where that finds no falling crossing, in 1.5 deg
    steps up to feather; then the array root finder within the bracketing step."""
    coarse = fine_pitch + np.arange(0.0, PITCH_SCAN_COARSE_SPAN_DEG + 1e-9,
                                    PITCH_SCAN_COARSE_STEP_DEG)
    excess, falling = _falling_crossings(geometry, alpha_deg, cl, cd, tsr, scale, coarse,
                                         options)
    found = falling.any(axis=1)
    k = np.argmax(falling, axis=1)
    lower = coarse[k]
    upper = coarse[np.minimum(k + 1, coarse.size - 1)]
    rows = np.arange(tsr.size)
    f_lower = excess[rows, k]
    f_upper = excess[rows, np.minimum(k + 1, coarse.size - 1)]
    if not np.all(found):
        rest = np.flatnonzero(~found)
        fine = np.append(np.arange(fine_pitch, FEATHER_PITCH_DEG, PITCH_SCAN_STEP_DEG),
                         FEATHER_PITCH_DEG)
        more, falling_more = _falling_crossings(
            geometry, alpha_deg, cl, cd, tsr[rest], scale[rest], fine, options
        )
        hit = falling_more.any(axis=1)
        if not np.all(hit):
            bad = float(speed[rest[int(np.argmin(hit))]])
            raise ParameterError(
                "rated_power_w",
                f"is not reached at {bad:g} m/s at any pitch between {fine_pitch:g} and "
                f"{FEATHER_PITCH_DEG:g} deg",
            )
        j = np.argmax(falling_more, axis=1)
        local = np.arange(rest.size)
        lower[rest], upper[rest] = fine[j], fine[j + 1]
        f_lower[rest], f_upper[rest] = more[local, j], more[local, j + 1]

    def function(beta: FloatArray, index: np.ndarray) -> FloatArray:
        cp = solve(geometry, alpha_deg, cl, cd, tsr[index], beta, **options).cp
        return scale[index] * cp - 1.0

    roots = bracketed_roots(function, lower, upper, f_lower, f_upper, f_tol=POWER_TOLERANCE)
    return roots.x


def rated_wind_speed(
    geometry: RotorGeometry,
    alpha_deg: ArrayLike,
    cl: ArrayLike,
    cd: ArrayLike,
    turbine: TurbineData,
    best_tsr: float,
    fine_pitch: float,
    options: dict[str, Any],
) -> float | None:
    """Lowest wind speed [m/s] where the speed schedule at fine pitch reaches rated power
    (scan in 0.5 m/s steps from cut-in, then the root finder), or None if it never does."""
    scan = np.arange(turbine.cut_in_m_s, turbine.cut_out_m_s - 1e-9, 0.5)
    scan = np.append(scan, turbine.cut_out_m_s)

    def excess(speed: FloatArray) -> FloatArray:
        _, tsr, _ = _speed_schedule(geometry, turbine, speed, best_tsr)
        cp = solve(geometry, alpha_deg, cl, cd, tsr, fine_pitch, **options).cp
        return turbine.efficiency * cp * _wind_power(turbine, geometry, speed) / (
            turbine.rated_power_w
        ) - 1.0

    values = excess(scan)
    crossing = np.flatnonzero(values >= 0.0)
    if crossing.size == 0:
        return None
    j = int(crossing[0])
    if j == 0:
        return float(scan[0])
    roots = bracketed_roots(
        lambda x, _index: excess(x), scan[j - 1: j], scan[j: j + 1], values[j - 1: j],
        values[j: j + 1], f_tol=1e-12,
    )
    return float(roots.x[0])


def power_curve(
    geometry: RotorGeometry,
    alpha_deg: ArrayLike,
    cl: ArrayLike,
    cd: ArrayLike,
    turbine: TurbineData,
    *,
    wind_speed_m_s: ArrayLike | None = None,
    tip_speed_ratio: ArrayLike = DEFAULT_TIP_SPEED_RATIOS,
    pitch_deg: ArrayLike = OPTIMUM_PITCHES_DEG,
    **options: Any,
) -> PowerCurve:
    """Power curve from cut-in to cut-out (see module docstring).

    Parameters
    ----------
    geometry, alpha_deg, cl, cd
        As for :func:`polarsvc.rotor.solve`.
    turbine : TurbineData
    wind_speed_m_s : array_like, optional
        Wind speeds [m/s] of the curve; default cut-in to cut-out in 0.5 m/s steps. The
        rated wind speed is added; speeds outside cut-in..cut-out are dropped.
    tip_speed_ratio, pitch_deg : array_like
        Grid searched for the Cp maximum (:func:`polarsvc.rotor.cp_surface`); a single
        pitch fixes the fine pitch.
    **options
        Switches of :func:`polarsvc.rotor.solve`.
    """
    surface = cp_surface(geometry, alpha_deg, cl, cd, tip_speed_ratio, pitch_deg, **options)
    best_tsr, fine_pitch = surface.best_tip_speed_ratio, surface.best_pitch_deg
    if wind_speed_m_s is None:
        count = round((turbine.cut_out_m_s - turbine.cut_in_m_s) / DEFAULT_WIND_STEP_M_S)
        speeds = np.linspace(turbine.cut_in_m_s, turbine.cut_out_m_s, count + 1)
    else:
        speeds = np.atleast_1d(np.asarray(wind_speed_m_s, dtype=np.float64))
        if speeds.ndim != 1 or not np.all(np.isfinite(speeds)):
            raise ParameterError("wind_speed_m_s", "must be a 1-D array of finite speeds")
    speeds = speeds[(speeds >= turbine.cut_in_m_s) & (speeds <= turbine.cut_out_m_s)]
    rated = rated_wind_speed(geometry, alpha_deg, cl, cd, turbine, best_tsr, fine_pitch,
                             dict(options))
    if rated is not None:
        speeds = np.append(speeds, rated)
    speeds = np.unique(speeds)
    if speeds.size < 2:
        raise ParameterError("wind_speed_m_s", "needs at least two speeds within cut-in..cut-out")
    states = operating_states(geometry, alpha_deg, cl, cd, turbine, speeds,
                              best_tip_speed_ratio=best_tsr, fine_pitch_deg=fine_pitch,
                              rated_wind_speed_m_s=rated, **options)
    return PowerCurve(states, rated, best_tsr, fine_pitch, surface.cp_max, turbine,
                      dict(states.bem.options))

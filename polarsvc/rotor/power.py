"""Power curve of a variable-speed, pitch-regulated rotor from the steady BEM solution.

Control (common practice for variable-speed pitch-regulated machines; Burton et al. 2011,
Wind Energy Handbook, sec. 8.3; Manwell et al. 2009, sec. 8.2):

1. below rated, the rotor runs at the tip speed ratio and pitch of the Cp maximum
   (:func:`polarsvc.rotor.cp_surface`), its speed clipped to the minimum and maximum rotor
   speed (so at low wind it runs at minimum speed, at higher wind at constant maximum speed);
2. where that would give more than the rated power, the pitch is raised (towards feather)
   until the electrical power equals the rated power; the pitch at every such wind speed
   and the rated wind speed are solved for together by the array root finder of
   :mod:`polarsvc.rotor.roots` (each of its steps one BEM solve of all of them);
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
from polarsvc.rotor.bem import ISA_DENSITY_KG_M3, BemResult, PreparedRotor, prepare
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
    ``bem`` result holds the per-station arrays in N/m and N m), the rated wind speed
    (None if rated power is never reached; it is one of the speeds otherwise) and Cp, Ct
    at the fine pitch along ``fine_pitch_tip_speed_ratio`` (empty unless asked for)."""

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
    rated_wind_speed_m_s: float | None = None
    fine_pitch_tip_speed_ratio: FloatArray = field(default_factory=lambda: np.zeros(0))
    fine_pitch_cp: FloatArray = field(default_factory=lambda: np.zeros(0))
    fine_pitch_ct: FloatArray = field(default_factory=lambda: np.zeros(0))
    max_abs_residual: float = 0.0


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


RATED_SCAN_STEP_M_S = 0.5
"""Steps of the scan for the rated wind speed (cut-in to cut-out, the curve's speeds
added) before the root finder."""
RATED_TOLERANCE = 1e-12
"""Relative tolerance of the power match at the rated wind speed."""

PITCH_SCAN_STAGES_DEG = ((6.0, 12.0), (18.0, 24.0), (30.0, 36.0, 42.0, 48.0))
"""Pitches above the fine pitch [deg] scanned for the falling crossing of rated power, in
stages: a stage is solved only for the wind speeds not yet bracketed by the ones before."""
PITCH_SCAN_STEP_DEG = 1.5


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
    fine_pitch_tip_speed_ratio: ArrayLike = (),
    rotor: PreparedRotor | None = None,
    **options: Any,
) -> OperatingStates:
    """Control settings and BEM solution at the given wind speeds and at the rated wind
    speed (module docstring), which is found here: the lowest wind speed where the speed
    schedule at fine pitch reaches rated power (scan of cut-in..cut-out in 0.5 m/s steps
    with the given speeds, then the root finder). Above it the pitch holds rated power.

    Work is batched: one solve at fine pitch for the scan, the given speeds and
    ``fine_pitch_tip_speed_ratio`` (Cp along the tip speed ratio, returned as
    ``fine_pitch_cp``); a staged pitch scan for the speeds above rated; one array root
    finder for the rated wind speed and every pitch together; one final solve.
    ``rotor`` is a prepared rotor (:func:`polarsvc.rotor.bem.prepare`) of the same geometry,
    tables and switches, else one is made from ``options``."""
    speed = np.atleast_1d(np.asarray(wind_speed_m_s, dtype=np.float64))
    if speed.ndim != 1 or not np.all(np.isfinite(speed) & (speed > 0.0)):
        raise ParameterError("wind_speed_m_s", "must be positive wind speeds")
    prepared = rotor if rotor is not None else prepare(geometry, alpha_deg, cl, cd, **options)
    fine = float(fine_pitch_deg)
    best = float(best_tip_speed_ratio)
    extra = np.atleast_1d(np.asarray(fine_pitch_tip_speed_ratio, dtype=np.float64))

    scan = np.append(
        np.arange(turbine.cut_in_m_s, turbine.cut_out_m_s - 1e-9, RATED_SCAN_STEP_M_S),
        turbine.cut_out_m_s,
    )
    grid = np.unique(np.concatenate([scan, speed]))
    _, grid_tsr, _ = _speed_schedule(geometry, turbine, grid, best)
    cp_all, ct_all, residual = prepared.coefficients(np.concatenate([grid_tsr, extra]), fine)
    grid_excess = _scale(turbine, geometry, grid) * cp_all[:grid.size] - 1.0

    # rated wind speed: bracket between consecutive grid speeds within cut-in..cut-out
    within = np.flatnonzero((grid >= turbine.cut_in_m_s) & (grid <= turbine.cut_out_m_s))
    reached = within[grid_excess[within] >= 0.0]
    rated_bracket: tuple[int, int] | None = None
    rated: float | None = None
    if reached.size:
        j = int(np.searchsorted(within, reached[0]))
        if j == 0:
            rated = float(grid[within[0]])
        else:
            rated_bracket = (int(within[j - 1]), int(within[j]))
        first_above = float(grid[reached[0]])
    excess = grid_excess[np.searchsorted(grid, speed)]
    above = excess > POWER_TOLERANCE
    if reached.size:
        above |= (speed > first_above) | ((speed == first_above) & (excess > 0.0))
    above_index = np.flatnonzero(above)

    omega, tsr, modes = _speed_schedule(geometry, turbine, speed, best)
    scale = _scale(turbine, geometry, speed)
    lower, upper, f_lower, f_upper = _pitch_brackets(
        prepared, tsr[above_index], scale[above_index], excess[above_index], fine,
        speed[above_index],
    )
    tolerance = np.full(above_index.size, POWER_TOLERANCE)
    if rated_bracket is not None:
        lo, hi = rated_bracket
        lower = np.append(lower, grid[lo])
        upper = np.append(upper, grid[hi])
        f_lower = np.append(f_lower, grid_excess[lo])
        f_upper = np.append(f_upper, grid_excess[hi])
        tolerance = np.append(tolerance, RATED_TOLERANCE)
    count = above_index.size
    fixed_tsr = tsr[above_index]
    fixed_scale = scale[above_index]

    def function(x: FloatArray, index: NDArray[np.intp]) -> FloatArray:
        # elements 0..count-1: pitch of a wind speed above rated; element count: the
        # rated wind speed at fine pitch
        is_rated = index == count
        pitches = np.where(is_rated, fine, x)
        ratios = np.empty(x.size)
        factors = np.empty(x.size)
        pitch_rows = index[~is_rated]
        ratios[~is_rated] = fixed_tsr[pitch_rows]
        factors[~is_rated] = fixed_scale[pitch_rows]
        if is_rated.any():
            u = x[is_rated]
            _, ratios[is_rated], _ = _speed_schedule(geometry, turbine, u, best)
            factors[is_rated] = _scale(turbine, geometry, u)
        cp, _, _ = prepared.coefficients(ratios, pitches)
        return factors * cp - 1.0

    pitch = np.full(speed.size, fine)
    if lower.size:
        roots = bracketed_roots(function, lower, upper, f_lower, f_upper, f_tol=tolerance)
        pitch[above_index] = roots.x[:count]
        if rated_bracket is not None:
            rated = float(roots.x[count])
    if rated is not None and not np.any(speed == rated):
        # the rated wind speed joins the curve, at fine pitch
        where = int(np.searchsorted(speed, rated)) if np.all(np.diff(speed) > 0) else speed.size
        speed = np.insert(speed, where, rated)
        pitch = np.insert(pitch, where, fine)
        above = np.insert(above, where, False)
        omega, tsr, modes = _speed_schedule(geometry, turbine, speed, best)
    modes = [MODE_RATED if pitched else mode for pitched, mode in zip(above, modes, strict=True)]
    wind_power = _wind_power(turbine, geometry, speed)
    result = prepared.solve(tsr, pitch, wind_speed_m_s=speed, rho_kg_m3=turbine.rho_kg_m3)
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
        rated_wind_speed_m_s=rated,
        fine_pitch_tip_speed_ratio=extra,
        fine_pitch_cp=cp_all[grid.size:],
        fine_pitch_ct=ct_all[grid.size:],
        max_abs_residual=max(residual, result.max_abs_residual),
    )


def _scale(turbine: TurbineData, geometry: RotorGeometry, speed: FloatArray) -> FloatArray:
    """Electrical power per unit Cp over the rated power."""
    return turbine.efficiency * _wind_power(turbine, geometry, speed) / turbine.rated_power_w


def _pitch_brackets(
    rotor: PreparedRotor,
    tsr: FloatArray,
    scale: FloatArray,
    excess_fine: FloatArray,
    fine_pitch: float,
    speed: FloatArray,
) -> tuple[FloatArray, FloatArray, FloatArray, FloatArray]:
    """Brackets of the pitch towards feather that gives rated power: the first pitch above
    the fine pitch where the power falls through rated (a stalled rotor first gains power
    when pitched, so the fine pitch itself may lie below rated). Scan in 6 deg steps to
    48 deg above the fine pitch, in stages (:data:`PITCH_SCAN_STAGES_DEG`); where that
    finds no falling crossing, in 1.5 deg steps up to feather."""
    count = tsr.size
    lower, upper = np.zeros(count), np.zeros(count)
    f_lower, f_upper = np.zeros(count), np.zeros(count)
    last_pitch = np.full(count, fine_pitch)
    last_value = np.array(excess_fine, dtype=np.float64)
    rest = np.arange(count)

    def scan(rows: NDArray[np.intp], pitches: FloatArray) -> NDArray[np.intp]:
        T, P = np.meshgrid(tsr[rows], pitches, indexing="ij")
        cp, _, _ = rotor.coefficients(T, P)
        values = np.column_stack([last_value[rows], scale[rows, None] * cp - 1.0])
        angles = np.concatenate([[0.0], pitches])
        falling = (values[:, :-1] > 0.0) & (values[:, 1:] <= 0.0)
        found = falling.any(axis=1)
        k = np.argmax(falling, axis=1)
        hit = rows[found]
        kf = k[found]
        start = np.where(kf == 0, last_pitch[hit], angles[kf])
        lower[hit], upper[hit] = start, angles[kf + 1]
        f_lower[hit] = values[found, kf]
        f_upper[hit] = values[found, kf + 1]
        last_pitch[rows] = pitches[-1]
        last_value[rows] = values[:, -1]
        return rows[~found]

    for stage in PITCH_SCAN_STAGES_DEG:
        if rest.size == 0:
            break
        rest = scan(rest, fine_pitch + np.asarray(stage))
    if rest.size:
        # no falling crossing in the coarse steps: again from the fine pitch in 1.5 deg
        # steps up to feather
        last_pitch[rest] = fine_pitch
        last_value[rest] = excess_fine[rest]
        steps = np.append(np.arange(fine_pitch + PITCH_SCAN_STEP_DEG, FEATHER_PITCH_DEG,
                                    PITCH_SCAN_STEP_DEG), FEATHER_PITCH_DEG)
        rest = scan(rest, steps)
        if rest.size:
            raise ParameterError(
                "rated_power_w",
                f"is not reached at {float(speed[rest[0]]):g} m/s at any pitch between "
                f"{fine_pitch:g} and {FEATHER_PITCH_DEG:g} deg",
            )
    return lower, upper, f_lower, f_upper


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
    prepared = prepare(geometry, alpha_deg, cl, cd, **options)
    surface = cp_surface(geometry, alpha_deg, cl, cd, tip_speed_ratio, pitch_deg,
                         rotor=prepared)
    best_tsr, fine_pitch = surface.best_tip_speed_ratio, surface.best_pitch_deg
    if wind_speed_m_s is None:
        count = round((turbine.cut_out_m_s - turbine.cut_in_m_s) / DEFAULT_WIND_STEP_M_S)
        speeds = np.linspace(turbine.cut_in_m_s, turbine.cut_out_m_s, count + 1)
    else:
        speeds = np.atleast_1d(np.asarray(wind_speed_m_s, dtype=np.float64))
        if speeds.ndim != 1 or not np.all(np.isfinite(speeds)):
            raise ParameterError("wind_speed_m_s", "must be a 1-D array of finite speeds")
    speeds = np.unique(
        speeds[(speeds >= turbine.cut_in_m_s) & (speeds <= turbine.cut_out_m_s)]
    )
    if speeds.size == 0:
        raise ParameterError("wind_speed_m_s", "needs at least two speeds within cut-in..cut-out")
    states = operating_states(geometry, alpha_deg, cl, cd, turbine, speeds,
                              best_tip_speed_ratio=best_tsr, fine_pitch_deg=fine_pitch,
                              rotor=prepared)
    if states.wind_speed_m_s.size < 2:
        raise ParameterError("wind_speed_m_s", "needs at least two speeds within cut-in..cut-out")
    return PowerCurve(states, states.rated_wind_speed_m_s, best_tsr, fine_pitch,
                      surface.cp_max, turbine, dict(states.bem.options))

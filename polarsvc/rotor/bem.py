"""Steady blade-element momentum (BEM) solution of a rotor, vectorised over blade stations
and operating points.

Per station and operating point one equation in the inflow angle phi is solved (Ning 2014,
eq. 21-23, with the propeller-brake form of eq. 24)::

    R(phi) = sin(phi) / (1 - a(phi)) - cos(phi) (1 - k'(phi)) / lambda_r      phi > 0
    R(phi) = sin(phi) (1 - k(phi))    - cos(phi) (1 - k'(phi)) / lambda_r      phi < 0

    k  = sigma' cn / (4 F sin^2 phi),   k' = sigma' ct / (4 F sin phi cos phi)
    cn = cl cos phi + cd sin phi,       ct = cl sin phi - cd cos phi
    sigma' = B c / (2 pi r),            lambda_r = lambda r / R
    a = k / (1 + k) (momentum), Buhl's relation for k > 2/3, a = k / (k - 1) for phi < 0;
    a' = k' / (1 - k')

with the angle of attack ``alpha = phi - twist - pitch`` looked up (linearly) in the
station's table. The root is bracketed as Ning prescribes -- (0, pi/2] first, then the
propeller-brake region (-pi/4, 0), then (pi/2, pi) -- and found by the array root finder
of :mod:`polarsvc.rotor.roots`, so the solution cannot fail to converge; the residual at
the returned angle is reported per station.

Forces, coefficients and moments (Burton et al. 2011, ch. 3; Manwell et al. 2009, ch. 3)::

    W^2 = U^2 ((1 - a)^2 + (lambda_r (1 + a'))^2)
    normal force per unit length     F_N = 1/2 rho W^2 c cn
    tangential force per unit length F_T = 1/2 rho W^2 c ct
    Ct = B int F_N dr / (1/2 rho U^2 pi R^2),  Cq = B int r F_T dr / (1/2 rho U^2 pi R^3),
    Cp = lambda Cq

and the blade-root moments about the hub radius ``M = int F (r - R_hub) dr`` (one blade,
out of plane from F_N -- "flapwise" -- and in plane from F_T -- "edgewise", both in
rotor-plane axes, aerodynamic part only). Every integral runs from the first to the last
station by the trapezoid rule; nothing is extrapolated to the hub or the tip.

References
----------
.. [1] Ning, S. A. (2014). "A simple solution method for the blade element momentum
   equations with guaranteed convergence". Wind Energy 17(9), 1327-1345.
.. [2] Buhl, M. L. (2005). "A new empirical relationship between thrust coefficient and
   induction factor for the turbulent windmill state". NREL/TP-500-36834.
.. [3] Glauert, H. (1935). "Airplane propellers", in Durand (ed.), Aerodynamic Theory IV.
.. [4] Burton, T., Jenkins, N., Sharpe, D., Bossanyi, E. (2011). Wind Energy Handbook,
   2nd ed., Wiley, ch. 3.
.. [5] Manwell, J. F., McGowan, J. G., Rogers, A. L. (2009). Wind Energy Explained,
   2nd ed., Wiley, ch. 3.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

from polarsvc.aero.errors import ParameterError, show_value
from polarsvc.rotor.errors import ConvergenceError
from polarsvc.rotor.geometry import RotorGeometry
from polarsvc.rotor.momentum import (
    BUHL_SWITCH_K,
    buhl_axial_induction,
    momentum_axial_induction,
    prandtl_factor,
)
from polarsvc.rotor.roots import bracketed_roots

FloatArray = NDArray[np.float64]

ISA_DENSITY_KG_M3 = 1.225
"""ISA sea-level air density, ISO 2533:1975 (from memory)."""

RESIDUAL_TOLERANCE = 1e-12
"""The root finder stops an element at ``|R(phi)| <= 1e-12`` (or a bracket a few units
in the last place wide)."""

BRACKET_EPSILON_RAD = 1e-6
"""Distance of the bracket ends from phi = 0 and pi [rad] (Ning 2014 uses a small epsilon)."""

REGION_WINDMILL = 1
REGION_PROPELLER_BRAKE = 2
REGION_BEYOND_90 = 3
REGION_REVERSE = 4
REGION_UNLOADED = 0
REGIONS = {
    REGION_UNLOADED: "station at a radius where the Prandtl loss factor is zero: no load",
    REGION_WINDMILL: "windmill and turbulent-wake states, 0 < phi <= 90 deg",
    REGION_PROPELLER_BRAKE: "propeller brake, -45 < phi < 0 deg",
    REGION_BEYOND_90: "90 < phi < 180 deg",
    REGION_REVERSE: "-180 < phi < -45 deg",
}

SCAN_POINTS = 64
"""Points per region of the fallback scan for a sign change (see :func:`solve`)."""


def _narrow_windmill_brackets(
    f: Any,
    chosen: NDArray[np.intp],
    lambda_r: FloatArray,
    lower: FloatArray,
    upper: FloatArray,
    f_lower: FloatArray,
    f_upper: FloatArray,
    known: tuple[FloatArray, FloatArray] | None = None,
) -> None:
    """Split the bracket (0, pi/2] at the inflow angle without induction, atan(1/lambda_r),
    and at half of it, and keep the first part with a sign change (in place). The root of
    a loaded windmill lies mostly between the two, so the root finder starts from a bracket
    a fraction of the width (fewer iterations); any part with a sign change holds a root
    of Ning's residual in (0, pi/2]. ``known``: the residual at the two points already
    evaluated for ``chosen``."""
    if chosen.size == 0:
        return
    free = np.arctan(1.0 / lambda_r[chosen])
    points = [np.maximum(0.5 * free, lower[chosen]), np.maximum(free, lower[chosen])]
    values = list(known) if known is not None else [f(points[0], chosen),
                                                   f(points[1], chosen)]
    ends = [lower[chosen], points[0], points[1], upper[chosen]]
    f_ends = [f_lower[chosen], values[0], values[1], f_upper[chosen]]
    done = np.zeros(chosen.size, dtype=bool)
    for j in range(3):
        change = ~done & (f_ends[j] * f_ends[j + 1] <= 0.0) & (ends[j] < ends[j + 1])
        pick = chosen[change]
        lower[pick], upper[pick] = ends[j][change], ends[j + 1][change]
        f_lower[pick], f_upper[pick] = f_ends[j][change], f_ends[j + 1][change]
        done |= change


def _scan_brackets(
    f: Any,
    elements: NDArray[np.intp],
    lower: FloatArray,
    upper: FloatArray,
    f_lower: FloatArray,
    f_upper: FloatArray,
    region: NDArray[np.int8],
    rows: NDArray[np.intp],
    ops: NDArray[np.intp],
) -> None:
    """Fallback where none of Ning's three brackets shows a sign change (two roots inside
    one of them, possible for tables far from Ning's assumptions): scan each region in
    Ning's order, then -180..-45 deg, and take the first sign change. The residual is
    continuous inside each region, so a sign change between two scan points brackets a
    root. Fills the bracket arrays in place."""
    eps = BRACKET_EPSILON_RAD
    spans = (
        (REGION_WINDMILL, eps, 0.5 * math.pi),
        (REGION_PROPELLER_BRAKE, -0.25 * math.pi, -eps),
        (REGION_BEYOND_90, 0.5 * math.pi, math.pi - eps),
        (REGION_REVERSE, -math.pi + eps, -0.25 * math.pi),
    )
    left = elements
    for code, start, stop in spans:
        if left.size == 0:
            return
        grid = np.linspace(start, stop, SCAN_POINTS)
        values = f(np.tile(grid, left.size), np.repeat(left, grid.size))
        values = values.reshape(left.size, grid.size)
        change = (values[:, :-1] * values[:, 1:]) <= 0.0
        found = change.any(axis=1)
        first = np.argmax(change, axis=1)
        hit = left[found]
        j = first[found]
        lower[hit], upper[hit] = grid[j], grid[j + 1]
        f_lower[hit], f_upper[hit] = values[found, j], values[found, j + 1]
        region[hit] = code
        left = left[~found]
    if left.size:
        bad = int(left[0])
        raise ConvergenceError(
            station=int(rows[bad]), operating_point=int(ops[bad]),
            message="the inflow-angle residual changes sign nowhere in -180..180 deg",
        )

CAUTION = (
    "Steady, uniform, rigid-rotor blade-element momentum results are a screening check, "
    "not a load calculation: no turbulence, shear, yaw, dynamic inflow, dynamic stall, "
    "blade or tower flexibility, gravity or inertial loads. Design loads and energy yield "
    "follow IEC 61400-1 and certification practice, with validated models and data, under "
    "the judgement of a licensed engineer."
)


def assumptions(
    *, tip_loss: bool, hub_loss: bool, tangential_induction: bool, high_thrust: bool
) -> list[str]:
    """The modelling assumptions of a solution, as sentences (recorded with every result)."""
    return [
        "steady, uniform, axial inflow: no yaw, tilt, shear, turbulence or tower shadow",
        "rigid rotor: no blade or tower deflection, no cone or prebend",
        "blade-element momentum theory with independent annuli (Ning 2014 residual)",
        "Prandtl tip loss " + ("on" if tip_loss else "off")
        + ", hub loss " + ("on" if hub_loss else "off"),
        "high-thrust correction: "
        + ("Buhl 2005 (NREL/TP-500-36834) above a = 0.4" if high_thrust else "none"),
        "tangential induction " + ("included" if tangential_induction else "neglected (a' = 0)"),
        "section tables as given for every operating point (their Reynolds numbers and "
        "rotational augmentation are those they were prepared for)",
        "integrals over the stations by the trapezoid rule, first to last station, "
        "no extrapolation to hub or tip",
        "root moments about the hub radius in rotor-plane axes (out-of-plane 'flapwise', "
        "in-plane 'edgewise'), aerodynamic loads only",
    ]


@dataclass(frozen=True)
class BemResult:
    """Solution at every operating point and station.

    Per operating point (shape of the broadcast ``tip_speed_ratio`` and ``pitch_deg``):
    ``tip_speed_ratio``, ``pitch_deg``, ``cp``, ``ct``, ``cq`` [-], ``root_flap_moment`` and
    ``root_edge_moment`` (one blade, about the hub radius).

    Per operating point and station, shape ``(operating points, stations)`` (operating
    points flattened in C order): ``axial_induction``, ``tangential_induction`` [-],
    ``inflow_angle_deg``, ``alpha_deg`` [deg], ``cl``, ``cd`` [-], ``loss_factor`` [-]
    (Prandtl F), ``normal_force_n_per_m``, ``tangential_force_n_per_m``, ``residual``
    (Ning's R at the returned angle), ``region`` (see :data:`REGIONS`), ``iterations``,
    ``outside_table`` (angle of attack beyond a table that does not span 360 deg; the
    end value was used).

    ``force_basis`` says what the dimensional arrays are: ``"N/m"`` and ``"N m"`` when a wind
    speed was given, else ``"per unit dynamic pressure"`` (forces in m = (N/m)/Pa, moments in
    m^3 = (N m)/Pa, with q = 1/2 rho U^2 of the free stream). ``moment_unit`` likewise.
    """

    tip_speed_ratio: FloatArray
    pitch_deg: FloatArray
    cp: FloatArray
    ct: FloatArray
    cq: FloatArray
    root_flap_moment: FloatArray
    root_edge_moment: FloatArray
    axial_induction: FloatArray
    tangential_induction: FloatArray
    inflow_angle_deg: FloatArray
    alpha_deg: FloatArray
    cl: FloatArray
    cd: FloatArray
    loss_factor: FloatArray
    normal_force_n_per_m: FloatArray
    tangential_force_n_per_m: FloatArray
    residual: FloatArray
    region: NDArray[np.int8]
    iterations: NDArray[np.int64]
    outside_table: NDArray[np.bool_]
    force_basis: str
    moment_unit: str
    radius_m: FloatArray
    options: dict[str, Any] = field(default_factory=dict)
    assumptions: tuple[str, ...] = ()
    caution: str = CAUTION

    @property
    def max_abs_residual(self) -> float:
        """Largest |R(phi)| over all stations and operating points."""
        return float(np.max(np.abs(self.residual))) if self.residual.size else 0.0


@dataclass(frozen=True)
class _Tables:
    grid: FloatArray
    cl: FloatArray  # flattened (stations * angles)
    cd: FloatArray
    size: int
    periodic: bool
    step: float | None
    source: tuple[Any, Any, Any] = ((), (), ())

    def lookup(
        self, alpha_deg: FloatArray, row: NDArray[np.intp]
    ) -> tuple[FloatArray, FloatArray, NDArray[np.bool_]]:
        """Linear interpolation at ``alpha_deg``; ``row`` is each element's offset
        (station index x number of angles) into the flattened tables."""
        grid = self.grid
        first, last = grid[0], grid[-1]
        if self.periodic:
            x = np.mod(alpha_deg - first, 360.0) + first
            outside = np.zeros(x.shape, dtype=bool)
        else:
            outside = (alpha_deg < first) | (alpha_deg > last)
            x = np.minimum(np.maximum(alpha_deg, first), last)
        if self.step is not None:
            i = np.floor((x - first) / self.step).astype(np.intp)
        else:
            i = np.searchsorted(grid, x, side="right") - 1
        np.minimum(np.maximum(i, 0, out=i), self.size - 2, out=i)
        t = (x - grid[i]) / (grid[i + 1] - grid[i])
        flat = row + i
        cl0 = self.cl[flat]
        cd0 = self.cd[flat]
        cl = cl0 + t * (self.cl[flat + 1] - cl0)
        cd = cd0 + t * (self.cd[flat + 1] - cd0)
        return cl, cd, outside


def _tables(alpha_deg: ArrayLike, cl: ArrayLike, cd: ArrayLike, stations: int) -> _Tables:
    grid = np.asarray(alpha_deg, dtype=np.float64)
    if grid.ndim != 1 or grid.size < 2:
        raise ParameterError("alpha_deg", "must be a 1-D grid of at least two angles")
    if not np.all(np.isfinite(grid)) or np.any(np.diff(grid) <= 0.0):
        raise ParameterError("alpha_deg", "must be finite and strictly ascending")
    arrays = []
    for name, values in (("cl", cl), ("cd", cd)):
        array = np.asarray(values, dtype=np.float64)
        if array.ndim == 1:
            array = np.broadcast_to(array, (stations, array.size))
        if array.shape != (stations, grid.size):
            raise ParameterError(
                name,
                f"must have shape (stations, angles) = ({stations}, {grid.size}), "
                f"got {array.shape}",
            )
        if not np.isfinite(array).all():
            bad = np.argwhere(~np.isfinite(array))
            raise ParameterError(
                name, f"station {int(bad[0][0])}, angle {grid[bad[0][1]]:g} deg is not finite"
            )
        arrays.append(np.ascontiguousarray(array).ravel())
    spacing = np.diff(grid)
    uniform = bool(spacing.max() - spacing.min() <= 1e-12 * max(1.0, abs(spacing[0])))
    periodic = bool(grid[-1] - grid[0] >= 360.0 - 1e-9)
    return _Tables(
        grid, arrays[0], arrays[1], grid.size, periodic, float(spacing[0]) if uniform else None,
        (alpha_deg, cl, cd),
    )


@dataclass(frozen=True)
class _Elements:
    """Flat per-element constants (element = operating point x loaded station)."""

    lambda_r: FloatArray
    theta_rad: FloatArray
    sigma: FloatArray
    tip: FloatArray | None
    hub: FloatArray | None
    row: NDArray[np.intp]
    offset: NDArray[np.intp]
    high_thrust: bool
    tangential: bool


def _state(
    phi: FloatArray, e: _Elements, index: NDArray[np.intp] | None, tables: _Tables,
    *, full: bool = True,
) -> dict[str, FloatArray]:
    """Everything at inflow angle ``phi`` for the elements ``index`` (None: all); with
    ``full=False`` only the residual (what the root finder needs)."""
    def take(values: Any) -> Any:
        return values if index is None else values[index]

    s = np.sin(phi)
    c = np.cos(phi)
    lam = take(e.lambda_r)
    alpha_deg = np.degrees(phi - take(e.theta_rad))
    cl, cd, outside = tables.lookup(alpha_deg, take(e.offset))
    cn = cl * c + cd * s
    ct = cl * s - cd * c
    abs_s = np.abs(s)
    F: Any = 1.0
    if e.tip is not None:
        F = prandtl_factor(take(e.tip) / abs_s)
    if e.hub is not None:
        F = F * prandtl_factor(take(e.hub) / abs_s)
    if not isinstance(F, np.ndarray):
        F = np.ones_like(phi)
    sigma = take(e.sigma)
    k = sigma * cn / (4.0 * F * s * s)
    kp_cos = sigma * ct / (4.0 * F * s) if e.tangential else np.zeros_like(phi)
    windmill = phi > 0.0
    # Ning's axial term: s (1 + k) with momentum theory, s / (1 - a) with Buhl's relation
    # (k > 2/3), s (1 - k) in the propeller brake (phi < 0)
    axial_term = s * np.where(windmill, 1.0 + k, 1.0 - k)
    high = windmill & (k > BUHL_SWITCH_K) if e.high_thrust else None
    if high is not None and high.any():
        a_high = buhl_axial_induction(k[high], F[high])
        axial_term[high] = s[high] / (1.0 - a_high)
    residual = axial_term - (c - kp_cos) / lam
    if not full:
        return {"residual": residual}
    a = np.where(windmill, momentum_axial_induction(k, F, high_thrust=e.high_thrust),
                 k / (k - 1.0))
    return {
        "residual": residual, "s": s, "c": c, "k": k, "kp_cos": kp_cos, "a": a, "F": F,
        "cl": cl, "cd": cd, "cn": cn, "ct": ct, "alpha_deg": alpha_deg, "outside": outside,
        "lambda_r": lam,
    }


def _residual(
    phi: FloatArray, e: _Elements, index: NDArray[np.intp] | None, tables: _Tables
) -> FloatArray:
    return _state(phi, e, index, tables, full=False)["residual"]


def _broadcast_operating(
    tip_speed_ratio: ArrayLike, pitch_deg: ArrayLike
) -> tuple[FloatArray, FloatArray]:
    try:
        tsr = np.asarray(tip_speed_ratio, dtype=np.float64)
        pitch = np.asarray(pitch_deg, dtype=np.float64)
        tsr, pitch = np.broadcast_arrays(tsr, pitch)
    except (TypeError, ValueError):
        raise ParameterError(
            "tip_speed_ratio", "and pitch_deg must be numbers or arrays of one shape"
        ) from None
    bad = np.flatnonzero(~(np.isfinite(tsr.ravel()) & (tsr.ravel() > 0.0)))
    if bad.size:
        raise ParameterError(
            "tip_speed_ratio",
            f"operating point {int(bad[0])}: must be positive, got "
            f"{show_value(tsr.ravel()[bad[0]])}",
        )
    bad = np.flatnonzero(~np.isfinite(pitch.ravel()))
    if bad.size:
        raise ParameterError("pitch_deg", f"operating point {int(bad[0])} is not finite")
    return np.array(tsr), np.array(pitch)


def _trapezoid(values: FloatArray, x: FloatArray) -> FloatArray:
    """Trapezoid rule along the last axis."""
    return 0.5 * np.sum((values[..., 1:] + values[..., :-1]) * np.diff(x), axis=-1)


def solve(
    geometry: RotorGeometry,
    alpha_deg: ArrayLike,
    cl: ArrayLike,
    cd: ArrayLike,
    tip_speed_ratio: ArrayLike,
    pitch_deg: ArrayLike = 0.0,
    *,
    tip_loss: bool = True,
    hub_loss: bool = True,
    tangential_induction: bool = True,
    high_thrust: bool = True,
    wind_speed_m_s: ArrayLike | None = None,
    rho_kg_m3: float = ISA_DENSITY_KG_M3,
) -> BemResult:
    """Steady BEM solution at every station and operating point (see module docstring).

    Parameters
    ----------
    geometry : RotorGeometry
        Stations, blade count, tip and hub radius.
    alpha_deg : array_like
        Common angle-of-attack grid [deg] of the tables, ascending. A grid spanning 360 deg
        is treated as periodic; otherwise angles beyond it take the end values (flagged in
        ``outside_table``).
    cl, cd : array_like
        Lift and drag coefficients [-], shape ``(stations, angles)`` (or ``(angles,)`` for
        one table used at every station).
    tip_speed_ratio : float or array_like
        ``lambda = Omega R / U`` [-] per operating point.
    pitch_deg : float or array_like
        Blade pitch [deg] per operating point (broadcast with ``tip_speed_ratio``), positive
        towards feather.
    tip_loss, hub_loss : bool
        Prandtl tip and hub loss factors (Glauert 1935).
    tangential_induction : bool
        With ``False`` the tangential induction is neglected (a' = 0).
    high_thrust : bool
        Buhl's (2005) high-thrust relation above a = 0.4; with ``False`` momentum theory
        throughout.
    wind_speed_m_s : float or array_like, optional
        Free-stream speed U [m/s] per operating point; with it forces are in N/m and
        moments in N m, without it they are per unit dynamic pressure (see
        :class:`BemResult`).
    rho_kg_m3 : float
        Air density [kg/m^3] (only used with ``wind_speed_m_s``); ISA sea level by default.

    Returns
    -------
    BemResult

    Raises
    ------
    ParameterError
        Bad geometry, tables or operating points (names the parameter and the station or
        operating point).
    ConvergenceError
        No bracket with a sign change was found (not expected for finite tables: Ning 2014
        shows one of the three brackets always holds a root).

    References
    ----------
    See the module docstring (Ning 2014; Buhl 2005; Glauert 1935; Burton et al. 2011;
    Manwell et al. 2009).
    """
    return prepare(
        geometry, alpha_deg, cl, cd, tip_loss=tip_loss, hub_loss=hub_loss,
        tangential_induction=tangential_induction, high_thrust=high_thrust,
    ).solve(tip_speed_ratio, pitch_deg, wind_speed_m_s=wind_speed_m_s, rho_kg_m3=rho_kg_m3)


def prepare(
    geometry: RotorGeometry,
    alpha_deg: ArrayLike,
    cl: ArrayLike,
    cd: ArrayLike,
    *,
    tip_loss: bool = True,
    hub_loss: bool = True,
    tangential_induction: bool = True,
    high_thrust: bool = True,
) -> PreparedRotor:
    """A rotor with its station tables checked and laid out once for many solutions
    (:meth:`PreparedRotor.solve`, :meth:`PreparedRotor.coefficients`); the parameters are
    those of :func:`solve`."""
    if not isinstance(geometry, RotorGeometry):
        raise ParameterError("geometry", "must be a RotorGeometry")
    tables = _tables(alpha_deg, cl, cd, geometry.size)
    return PreparedRotor(geometry, tables, {
        "tip_loss": bool(tip_loss),
        "hub_loss": bool(hub_loss),
        "tangential_induction": bool(tangential_induction),
        "high_thrust": bool(high_thrust),
    })


@dataclass(frozen=True)
class _Solution:
    tsr: FloatArray
    pitch: FloatArray
    theta: FloatArray
    lambda_r: FloatArray
    unloaded: NDArray[np.bool_]
    rows: NDArray[np.intp]
    ops: NDArray[np.intp]
    region: NDArray[np.int8]
    roots: Any
    state: dict[str, FloatArray]


@dataclass(frozen=True)
class PreparedRotor:
    """Geometry, prepared station tables and solver switches (made by :func:`prepare`)."""

    geometry: RotorGeometry
    tables: _Tables
    options: dict[str, bool]

    @property
    def inputs(self) -> tuple[Any, Any, Any]:
        """The tables as given: ``(alpha_deg, cl, cd)``."""
        return self.tables.source

    def solve(
        self,
        tip_speed_ratio: ArrayLike,
        pitch_deg: ArrayLike = 0.0,
        *,
        wind_speed_m_s: ArrayLike | None = None,
        rho_kg_m3: float = ISA_DENSITY_KG_M3,
    ) -> BemResult:
        """As :func:`solve` with this rotor's geometry, tables and switches."""
        with np.errstate(divide="ignore", over="ignore", invalid="ignore"):
            solution = self._solve(tip_speed_ratio, pitch_deg)
        return _assemble(self, solution, wind_speed_m_s, rho_kg_m3)

    def coefficients(
        self, tip_speed_ratio: ArrayLike, pitch_deg: ArrayLike = 0.0
    ) -> tuple[FloatArray, FloatArray, float]:
        """``(cp, ct, max_abs_residual)`` of :meth:`solve` alone (the same numbers, without
        the per-station arrays), ``cp`` and ``ct`` shaped like the broadcast operating
        points."""
        with np.errstate(divide="ignore", over="ignore", invalid="ignore"):
            solution = self._solve(tip_speed_ratio, pitch_deg)
            cp, ct, _, _ = _rotor_integrals(self, solution)
        shape = solution.tsr.shape
        residual = solution.roots.f
        worst = float(np.max(np.abs(residual))) if residual.size else 0.0
        return cp.reshape(shape), ct.reshape(shape), worst

    def _solve(self, tip_speed_ratio: ArrayLike, pitch_deg: ArrayLike) -> _Solution:
        geometry, tables, options = self.geometry, self.tables, self.options
        tip_loss, hub_loss = options["tip_loss"], options["hub_loss"]
        n = geometry.size
        tsr, pitch = _broadcast_operating(tip_speed_ratio, pitch_deg)
        m = tsr.size
        r = geometry.radius_m
        R = geometry.rotor_radius_m
        R_hub = geometry.hub_radius_m
        B = geometry.blade_count
        tip_coeff = B / 2.0 * (R - r) / r if tip_loss else None
        hub_coeff = B / 2.0 * (r - R_hub) / R_hub if (hub_loss and R_hub > 0.0) else None
        unloaded = np.zeros(n, dtype=bool)
        if tip_coeff is not None:
            unloaded |= tip_coeff <= 0.0
        if hub_coeff is not None:
            unloaded |= hub_coeff <= 0.0
        loaded = np.flatnonzero(~unloaded)

        lambda_r = (tsr.reshape(m, 1) * (r / R)).reshape(m, n)
        theta = np.radians(geometry.twist_deg + pitch.reshape(m, 1))
        rows = np.tile(loaded, m)
        ops = np.repeat(np.arange(m), loaded.size)
        elements = _Elements(
            lambda_r=lambda_r[ops, rows],
            theta_rad=theta[ops, rows],
            sigma=geometry.solidity[rows],
            tip=None if tip_coeff is None else tip_coeff[rows],
            hub=None if hub_coeff is None else hub_coeff[rows],
            row=rows.astype(np.intp),
            offset=rows.astype(np.intp) * tables.size,
            high_thrust=options["high_thrust"],
            tangential=options["tangential_induction"],
        )
        count = rows.size

        def f(phi: FloatArray, index: NDArray[np.intp] | None) -> FloatArray:
            return _residual(phi, elements, index, tables)

        eps = BRACKET_EPSILON_RAD
        half_pi = 0.5 * math.pi
        lower = np.full(count, eps)
        upper = np.full(count, half_pi)
        # Ning's bracket ends and the two points splitting the windmill bracket (see
        # _narrow_windmill_brackets), evaluated in one call
        free = np.arctan(1.0 / elements.lambda_r)
        start = f(np.concatenate([lower, upper, np.maximum(0.5 * free, eps),
                                  np.maximum(free, eps)]),
                  np.tile(np.arange(count), 4)).reshape(4, count)
        f_lower, f_upper = start[0].copy(), start[1].copy()
        region = np.full(count, REGION_WINDMILL, dtype=np.int8)
        missing = np.flatnonzero(f_lower * f_upper > 0.0)
        if missing.size:
            f_brake_lo = f(np.full(missing.size, -0.25 * math.pi), missing)
            f_brake_hi = f(np.full(missing.size, -eps), missing)
            brake = (f_brake_lo < 0.0) & (f_brake_hi > 0.0)
            chosen = missing[brake]
            lower[chosen], upper[chosen] = -0.25 * math.pi, -eps
            f_lower[chosen], f_upper[chosen] = f_brake_lo[brake], f_brake_hi[brake]
            region[chosen] = REGION_PROPELLER_BRAKE
            rest = missing[~brake]
            if rest.size:
                f_far = f(np.full(rest.size, math.pi - eps), rest)
                f_mid = f_upper[rest]
                lower[rest], upper[rest] = half_pi, math.pi - eps
                f_lower[rest], f_upper[rest] = f_mid, f_far
                region[rest] = REGION_BEYOND_90
                unbracketed = rest[f_mid * f_far > 0.0]
                if unbracketed.size:
                    _scan_brackets(f, unbracketed, lower, upper, f_lower, f_upper, region,
                                   rows, ops)
        windmill = np.flatnonzero(region == REGION_WINDMILL)
        _narrow_windmill_brackets(f, windmill, elements.lambda_r, lower, upper, f_lower,
                                  f_upper, (start[2][windmill], start[3][windmill]))
        roots = bracketed_roots(f, lower, upper, f_lower, f_upper, f_tol=RESIDUAL_TOLERANCE)
        if not np.all(roots.converged):
            bad = int(np.flatnonzero(~roots.converged)[0])
            raise ConvergenceError(
                station=int(rows[bad]), operating_point=int(ops[bad]),
                message="the root finder reached its iteration limit",
            )
        state = _state(roots.x, elements, None, tables)
        return _Solution(tsr, pitch, theta, lambda_r, unloaded, rows, ops, region, roots, state)


def _rotor_integrals(
    rotor: PreparedRotor, sol: _Solution
) -> tuple[FloatArray, FloatArray, FloatArray, FloatArray]:
    """Cp, Ct, and the normal and tangential forces per unit dynamic pressure (m, n)."""
    g = rotor.geometry
    state = sol.state
    m, n = sol.tsr.size, g.size
    s, c = state["s"], state["c"]
    kp = np.zeros(s.size)
    nonzero = c != 0.0
    kp[nonzero] = state["kp_cos"][nonzero] / c[nonzero]
    a_t = kp / (1.0 - kp)
    w_axial = (1.0 - state["a"]) / s
    w_tangential = state["lambda_r"] * (1.0 + a_t) / c
    w2 = np.where(np.abs(s) >= np.abs(c), w_axial, w_tangential) ** 2
    chord = g.chord_m[sol.rows]
    normal = np.zeros((m, n))
    tangential = np.zeros((m, n))
    normal[sol.ops, sol.rows] = chord * state["cn"] * w2
    tangential[sol.ops, sol.rows] = chord * state["ct"] * w2
    r = g.radius_m
    area = g.swept_area_m2
    ct_rotor = g.blade_count * _trapezoid(normal, r) / area
    cq_rotor = g.blade_count * _trapezoid(tangential * r, r) / (area * g.rotor_radius_m)
    state["a_t"] = a_t
    state["cq_rotor"] = cq_rotor
    return sol.tsr.ravel() * cq_rotor, ct_rotor, normal, tangential


def _assemble(
    rotor: PreparedRotor, sol: _Solution, wind_speed_m_s: ArrayLike | None, rho_kg_m3: float
) -> BemResult:
    """The full :class:`BemResult` of a solution."""
    g, tables, state = rotor.geometry, rotor.tables, sol.state
    tsr, pitch, theta, ops, rows = sol.tsr, sol.pitch, sol.theta, sol.ops, sol.rows
    shape = tsr.shape
    m, n = tsr.size, g.size
    r = g.radius_m
    with np.errstate(divide="ignore", over="ignore", invalid="ignore"):
        cp_rotor, ct_rotor, normal, tangential = _rotor_integrals(rotor, sol)
    cq_rotor = state["cq_rotor"]

    def full(values: FloatArray, fill: float | bool | int = 0.0, dtype: Any = np.float64):
        out = np.full((m, n), fill, dtype=dtype)
        out[ops, rows] = values
        return out

    phi_free = np.arctan2(1.0, sol.lambda_r)  # no induction, for unloaded stations
    inflow = np.where(sol.unloaded, phi_free, 0.0)
    inflow[ops, rows] = sol.roots.x
    alpha_free = np.degrees(inflow - theta)
    cl_free, cd_free, outside_free = tables.lookup(
        alpha_free.ravel(), np.tile(np.arange(n) * tables.size, m)
    )
    cl_all = cl_free.reshape(m, n)
    cd_all = cd_free.reshape(m, n)
    cl_all[ops, rows] = state["cl"]
    cd_all[ops, rows] = state["cd"]
    if wind_speed_m_s is not None:
        try:
            speed = np.broadcast_to(np.asarray(wind_speed_m_s, dtype=np.float64), shape)
        except ValueError:
            raise ParameterError(
                "wind_speed_m_s", f"must be a number or an array of shape {shape}"
            ) from None
        if not np.all(np.isfinite(speed) & (speed > 0.0)):
            raise ParameterError("wind_speed_m_s", "must be positive")
        rho = float(rho_kg_m3)
        if not (math.isfinite(rho) and rho > 0.0):
            raise ParameterError("rho_kg_m3", f"must be positive, got {show_value(rho_kg_m3)}")
        q = (0.5 * rho * speed**2).reshape(m, 1)
        normal = normal * q
        tangential = tangential * q
        force_basis, moment_unit = "N/m", "N m"
    else:
        force_basis, moment_unit = "per unit dynamic pressure", "per unit dynamic pressure"

    arm = r - g.hub_radius_m
    flap = _trapezoid(normal * arm, r)
    edge = _trapezoid(tangential * arm, r)
    options = dict(rotor.options)
    outside = outside_free.reshape(m, n).copy()
    outside[ops, rows] = state["outside"]
    return BemResult(
        tip_speed_ratio=tsr,
        pitch_deg=pitch,
        cp=cp_rotor.reshape(shape),
        ct=ct_rotor.reshape(shape),
        cq=cq_rotor.reshape(shape),
        root_flap_moment=flap.reshape(shape),
        root_edge_moment=edge.reshape(shape),
        axial_induction=full(state["a"]),
        tangential_induction=full(state["a_t"]),
        inflow_angle_deg=np.degrees(inflow),
        alpha_deg=np.degrees(inflow - theta),
        cl=cl_all,
        cd=cd_all,
        loss_factor=full(state["F"]),
        normal_force_n_per_m=normal,
        tangential_force_n_per_m=tangential,
        residual=full(sol.roots.f),
        region=full(sol.region, REGION_UNLOADED, np.int8),
        iterations=full(sol.roots.iterations, 0, np.int64),
        outside_table=outside,
        force_basis=force_basis,
        moment_unit=moment_unit,
        radius_m=r.copy(),
        options=options,
        assumptions=tuple(assumptions(**options)),
    )

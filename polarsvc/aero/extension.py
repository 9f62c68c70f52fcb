"""Extension of a section table to the full range of angle of attack, -180..180 deg.

Construction (angles in deg; ``a_lo..a_hi`` is the measured range):

1. **Inner curve** ``C`` on -90..90 deg. Inside the data: the data (linear interpolation).
   From the data's upper end to 90 deg: the high-angle model (Viterna-Corrigan from the
   positive stall point, or the flat-plate normal-force model) plus the offset that makes it
   meet the last measured value, the offset decaying linearly to zero at 90 deg; likewise
   from the lower end to -90 deg with the model anchored at the negative stall point.
   Hence ``cl(+-90) = 0`` and ``cd(+-90) = cd_max`` for Viterna-Corrigan.
2. **Trailing edge first**, ``|alpha| > 90``: the inner lift curve mirrored about +-90 deg,
   ``cl(alpha) = -k C_cl(180 - alpha)`` for alpha > 90 and ``cl(alpha) = -k C_cl(-180 -
   alpha)`` for alpha < -90, with ``k`` = ``trailing_edge_lift_factor`` (0.7, common practice,
   no single source). Drag by the reverse-flow rule ``cd = cd_max sin^2 a + cd_rev cos^2 a``
   (``cd_rev`` = :data:`REVERSE_FLOW_CD`, at least cd(0); common practice, no source): with
   the sharp trailing edge leading the flow separates at once, so the drag at 180 deg is not
   the leading-edge drag bucket. ``trailing_edge_drag="mirror"`` keeps the mirrored inner
   drag curve, ``cd(alpha) = C_cd(180 - alpha)`` (cd(180) = cd(0)). Both sides meet at +-180
   with ``cl = -k cl(0)``: the table is periodic and continuous through 180 deg.
3. A table that already reaches beyond +-90 deg gets, outside its data, the offset that makes
   the curve meet its end values, decaying linearly along the circle to zero at the nearer of
   +-90 deg not covered by data; the drag offset also returns to zero at 180 deg (when the
   data do not reach it), so the reverse-flow drag there is kept and a drag offset carried
   round the back cannot take the drag below zero. Where a large offset would still carry the
   extension drag below the smallest measured drag, it is held there, and the history lists
   those angles under ``drag_floor`` (common practice, no source: drag never falls below
   its measured minimum).
4. **Pitching moment** (when the table has one): centre-of-pressure rule
   ``cm = -cn (x_cp - 1/4)`` with ``cn = cl cos a + cd sin a`` and ``x_cp = 1/2 - cos(a) / 4``
   (0.25 c attached, 0.5 c broadside, 0.75 c trailing edge first; Hoerner 1965, "Fluid-Dynamic
   Drag", from memory), plus the offset that meets the measured cm at each end of the
   data, decaying linearly to zero at +-90 deg.

Measured rows are never altered: the output holds every input row unchanged plus the
extension rows, which lie on the multiples of ``step_deg`` (default 1 deg) outside the data
range, with both -180 and 180 always included.

A cylinder (thickness 1) has no stall: its end values are joined around the circle by
linear interpolation (method ``"cylinder"`` in the history).
"""

from __future__ import annotations

import functools
import math
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

from polarsvc.aero.characteristics import _stall_angle_arrays
from polarsvc.aero.errors import (
    InsufficientDataError,
    ParameterError,
    UnknownMethodError,
    show_value,
)
from polarsvc.aero.polar import Polar
from polarsvc.aero.resample import aligned_grid

FloatArray = NDArray[np.float64]

EXTENSION_METHODS: tuple[str, ...] = ("viterna", "flat-plate")
"""Valid names of the high-angle model."""

VITERNA_CD_MAX_BASE = 1.11
VITERNA_CD_MAX_PER_ASPECT_RATIO = 0.018
VITERNA_ASPECT_RATIO_CAP = 50.0
"""cd_max = 1.11 + 0.018 AR, AR capped at 50 (Viterna & Corrigan 1982, NASA CP-2230)."""

DEFAULT_ASPECT_RATIO = VITERNA_ASPECT_RATIO_CAP
"""Without aspect_ratio or cd_max the section is taken as two-dimensional: AR at the cap, so
cd_max = 2.01, close to the broadside flat plate's 2.0 (Hoerner 1965, from memory)."""

FLAT_PLATE_A = 0.56
FLAT_PLATE_B = 0.44
"""cn = cd90 sin a / (0.56 + 0.44 sin a), attributed to Lindenburg (ECN, about 2000; from
memory)."""

DEFAULT_TRAILING_EDGE_LIFT_FACTOR = 0.7
DEFAULT_EXTENSION_STEP_DEG = 1.0

TRAILING_EDGE_DRAG_RULES: tuple[str, ...] = ("reverse-flow", "mirror")
"""Drag with the trailing edge first (|alpha| > 90 deg): ``"reverse-flow"`` (default),
``cd = cd_max sin^2 a + cd_reverse cos^2 a``; ``"mirror"``, the inner drag curve mirrored
about +-90 deg (so cd(180) = cd(0), the leading-edge drag bucket)."""

DEFAULT_TRAILING_EDGE_DRAG = "reverse-flow"

REVERSE_FLOW_CD = 0.05
"""Drag coefficient at 180 deg of the reverse-flow rule: the sharp trailing edge leads, the
flow separates from it at once and the section drags like a thick plate edge-on, several times
the drag bucket (common practice, no source; symmetric sections tested through 180 deg show
cd(180) of a few hundredths, Sheldahl & Klimas 1981, SAND80-2114, from memory). Never below
the section's own cd(0)."""

CYLINDER_THICKNESS = 1.0

RIGHT_ANGLES_DEG = (90.0, -90.0)
"""Where the offsets of a table reaching past one of +-90 deg return to zero (step 3)."""

EXTENSION_MARGIN = 1e-6
"""Extension rows closer than this fraction of the step to a data end are left out."""


def viterna_cd_max(aspect_ratio: float) -> float:
    """Maximum drag coefficient of the Viterna-Corrigan model.

    Parameters
    ----------
    aspect_ratio : float
        Blade aspect ratio [-], positive; capped at 50.

    Returns
    -------
    float
        ``1.11 + 0.018 min(AR, 50)`` (Viterna & Corrigan 1982, "Fixed pitch rotor performance
        of large horizontal axis wind turbines", NASA CP-2230).
    """
    value = float(aspect_ratio)
    if not (math.isfinite(value) and value > 0.0):
        raise ParameterError("aspect_ratio", f"must be positive, got {show_value(value)}")
    capped = min(value, VITERNA_ASPECT_RATIO_CAP)
    return VITERNA_CD_MAX_BASE + VITERNA_CD_MAX_PER_ASPECT_RATIO * capped


def viterna_corrigan(
    alpha_deg: ArrayLike,
    alpha_stall_deg: float,
    cl_stall: float,
    cd_stall: float,
    cd_max: float,
) -> tuple[FloatArray, FloatArray]:
    """Viterna-Corrigan post-stall lift and drag between the stall angle and 90 deg.

    Parameters
    ----------
    alpha_deg : array_like
        Angles [deg] in (0, 90].
    alpha_stall_deg : float
        Stall angle [deg] in (0, 90).
    cl_stall, cd_stall : float
        Lift and drag coefficient at the stall angle [-].
    cd_max : float
        Drag coefficient at 90 deg [-].

    Returns
    -------
    cl, cd : ndarray

    Notes
    -----
    ``cd = B1 sin^2 a + B2 cos a``, ``B1 = cd_max``,
    ``B2 = (cd_s - cd_max sin^2 a_s) / cos a_s``;
    ``cl = A1 sin 2a + A2 cos^2 a / sin a``, ``A1 = B1 / 2``,
    ``A2 = (cl_s - cd_max sin a_s cos a_s) sin a_s / cos^2 a_s``
    (Viterna & Corrigan 1982, NASA CP-2230). The curves pass through the stall point and give
    ``cl(90) = 0``, ``cd(90) = cd_max``.
    """
    if not (0.0 < alpha_stall_deg < 90.0):
        raise ParameterError(
            "alpha_stall_deg", f"must lie in (0, 90) deg, got {show_value(alpha_stall_deg)}"
        )
    a = np.radians(np.asarray(alpha_deg, dtype=np.float64))
    s = math.radians(alpha_stall_deg)
    b1 = cd_max
    b2 = (cd_stall - cd_max * math.sin(s) ** 2) / math.cos(s)
    a1 = b1 / 2.0
    a2 = (cl_stall - cd_max * math.sin(s) * math.cos(s)) * math.sin(s) / math.cos(s) ** 2
    sin_a = np.sin(a)
    cl = a1 * np.sin(2.0 * a) + a2 * np.cos(a) ** 2 / sin_a
    cd = b1 * sin_a**2 + b2 * np.cos(a)
    return cl, cd


def flat_plate(alpha_deg: ArrayLike, cd90: float) -> tuple[FloatArray, FloatArray]:
    """Flat-plate lift and drag from the normal-force model, for ``|alpha| <= 90`` deg.

    Parameters
    ----------
    alpha_deg : array_like
        Angles [deg].
    cd90 : float
        Normal-force (= drag) coefficient broadside, at 90 deg [-]; about 2.0 for large
        aspect ratio (Hoerner 1965, "Fluid-Dynamic Drag", from memory).

    Returns
    -------
    cl, cd : ndarray
        ``cl = cn cos a``, ``cd = cn sin a`` with
        ``cn = cd90 sin a / (0.56 + 0.44 |sin a|)`` (Lindenburg, ECN, about 2000; from
        memory); ``cn(90) = cd90``.
    """
    a = np.radians(np.asarray(alpha_deg, dtype=np.float64))
    sin_a = np.sin(a)
    cn = cd90 * sin_a / (FLAT_PLATE_A + FLAT_PLATE_B * np.abs(sin_a))
    return cn * np.cos(a), cn * sin_a


def centre_of_pressure_moment(
    alpha_deg: ArrayLike, cl: ArrayLike, cd: ArrayLike
) -> FloatArray:
    """Quarter-chord pitching moment of the centre-of-pressure rule.

    ``cm = -cn (x_cp - 0.25)``, ``cn = cl cos a + cd sin a``, ``x_cp = 0.5 - 0.25 cos a``: the
    centre of pressure moves from 0.25 c (attached) to 0.5 c broadside (flat plate; Hoerner
    1965, "Fluid-Dynamic Drag", from memory) and to 0.75 c with the trailing edge first.
    """
    wrapped = np.asarray(alpha_deg, dtype=np.float64)
    wrapped = np.where(wrapped <= -180.0, wrapped + 360.0, wrapped)  # -180 and 180 alike
    a = np.radians(wrapped)
    cn = np.asarray(cl) * np.cos(a) + np.asarray(cd) * np.sin(a)
    return -cn * 0.25 * (1.0 - np.cos(a))


def _stall_angles(
    alpha: FloatArray,
    cl: FloatArray,
    positive: float | None,
    negative: float | None,
) -> tuple[float, float]:
    """Positive stall at the global cl maximum over (0, 30] deg, negative stall at the global
    cl minimum over [-30, 0) deg (:func:`~polarsvc.aero.characteristics._stall_angle_arrays`),
    unless given."""
    a_lo, a_hi = float(alpha[0]), float(alpha[-1])
    if positive is None:
        positive = float(_stall_angle_arrays(alpha, cl[None, :], a_lo, a_hi)[0])
    else:
        positive = float(positive)
        if not (0.0 < positive <= min(a_hi, 89.0)):
            raise ParameterError(
                "alpha_stall_pos_deg",
                f"must lie in (0, {min(a_hi, 89.0):g}] deg (within the data), "
                f"got {show_value(positive)}",
            )
    if negative is None:
        negative = float(
            _stall_angle_arrays(alpha, cl[None, :], a_lo, a_hi, positive=False)[0]
        )
    else:
        negative = float(negative)
        if not (max(a_lo, -89.0) <= negative < 0.0):
            raise ParameterError(
                "alpha_stall_neg_deg",
                f"must lie in [{max(a_lo, -89.0):g}, 0) deg (within the data), "
                f"got {show_value(negative)}",
            )
    return positive, negative


class _InnerCurve:
    """Continuous lift and drag on -90..90 deg: data inside, offset models outside."""

    def __init__(
        self,
        alpha: FloatArray,
        cl: FloatArray,
        cd: FloatArray,
        method: str,
        cd_max: float,
        stall_pos: float,
        stall_neg: float,
    ) -> None:
        self.alpha, self.cl, self.cd = alpha, cl, cd
        self.method, self.cd_max = method, cd_max
        self.a_lo, self.a_hi = float(alpha[0]), float(alpha[-1])
        self.stall_pos = (
            stall_pos,
            float(np.interp(stall_pos, alpha, cl)),
            float(np.interp(stall_pos, alpha, cd)),
        )
        self.stall_neg = (
            stall_neg,
            float(np.interp(stall_neg, alpha, cl)),
            float(np.interp(stall_neg, alpha, cd)),
        )

    def _model(self, x: FloatArray, *, positive: bool) -> tuple[FloatArray, FloatArray]:
        if self.method == "flat-plate":
            return flat_plate(x, self.cd_max)
        if positive:
            a_s, cl_s, cd_s = self.stall_pos
            return viterna_corrigan(x, a_s, cl_s, cd_s, self.cd_max)
        a_s, cl_s, cd_s = self.stall_neg
        m_cl, m_cd = viterna_corrigan(-x, -a_s, -cl_s, cd_s, self.cd_max)
        return -m_cl, m_cd

    def __call__(self, x: FloatArray) -> tuple[FloatArray, FloatArray]:
        cl = np.interp(x, self.alpha, self.cl)
        cd = np.interp(x, self.alpha, self.cd)
        # the model is evaluated at the data end (first element) and at the angles beyond;
        # the offset at the end decays linearly to zero at +-90 deg
        high = x > self.a_hi
        if high.any():
            xh = x[high]
            m_cl, m_cd = self._model(np.concatenate([[self.a_hi], xh]), positive=True)
            decay = (90.0 - xh) / (90.0 - self.a_hi)
            cl[high] = m_cl[1:] + (self.cl[-1] - m_cl[0]) * decay
            cd[high] = m_cd[1:] + (self.cd[-1] - m_cd[0]) * decay
        low = x < self.a_lo
        if low.any():
            xl = x[low]
            m_cl, m_cd = self._model(np.concatenate([[self.a_lo], xl]), positive=False)
            decay = (xl + 90.0) / (self.a_lo + 90.0)
            cl[low] = m_cl[1:] + (self.cl[0] - m_cl[0]) * decay
            cd[low] = m_cd[1:] + (self.cd[0] - m_cd[0]) * decay
        return cl, cd


def _full_circle(
    inner: _InnerCurve, alpha: FloatArray, k: float, drag_rule: str
) -> tuple[FloatArray, FloatArray]:
    """The continuous, periodic model on -180..180 deg (inner curve, mirrored lift and the
    trailing-edge-first drag of ``drag_rule``)."""
    x = np.where(alpha > 90.0, 180.0 - alpha, np.where(alpha < -90.0, -180.0 - alpha, alpha))
    cl, cd = inner(x)
    mirrored = np.abs(alpha) > 90.0
    if drag_rule == "reverse-flow":
        cd_zero = float(inner(np.zeros(1))[1][0])
        cd_reverse = max(REVERSE_FLOW_CD, cd_zero)
        a = np.radians(alpha)
        cd = np.where(
            mirrored, inner.cd_max * np.sin(a) ** 2 + cd_reverse * np.cos(a) ** 2, cd
        )
    return np.where(mirrored, -k * cl, cl), cd


def _covered(angle: float, a_lo: float, a_hi: float) -> bool:
    """Whether the data range holds ``angle`` (or the same direction 360 deg away)."""
    return any(a_lo <= angle + turn <= a_hi for turn in (-360.0, 0.0, 360.0))


def _arc_offset(
    ext_alpha: FloatArray,
    a_lo: float,
    a_hi: float,
    offset_hi: float,
    offset_lo: float,
    *,
    zero_at_deg: tuple[float, ...],
) -> FloatArray:
    """Offset along the circle outside the data: ``offset_hi`` at the upper data end,
    ``offset_lo`` at the lower one, linear in between, through zero at each angle of
    ``zero_at_deg`` that lies outside the data."""
    length = 360.0 - (a_hi - a_lo)
    s = np.mod(ext_alpha - a_hi, 360.0)
    knots = [(0.0, offset_hi), (length, offset_lo)]
    knots += [
        (float(np.mod(angle - a_hi, 360.0)), 0.0)
        for angle in zero_at_deg
        if not _covered(angle, a_lo, a_hi)
    ]
    knots.sort()
    return np.interp(s, [k[0] for k in knots], [k[1] for k in knots])


def _join_neighbours(
    alpha: FloatArray, ext_alpha: FloatArray
) -> tuple[int, float, int, float]:
    """Index and distance [deg] of the extension row next to the upper and to the lower data
    end, along the circle."""
    a_lo, a_hi = float(alpha[0]), float(alpha[-1])
    gap_hi = np.mod(ext_alpha - a_hi, 360.0)
    gap_lo = np.mod(a_lo - ext_alpha, 360.0)
    # a row at the same angle as a data end across +-180 is that end, not its neighbour
    gap_hi = np.where(gap_hi > EXTENSION_MARGIN, gap_hi, np.inf)
    gap_lo = np.where(gap_lo > EXTENSION_MARGIN, gap_lo, np.inf)
    first, last = int(np.argmin(gap_hi)), int(np.argmin(gap_lo))
    return first, float(gap_hi[first]), last, float(gap_lo[last])


def _slope_jumps(
    alpha: FloatArray,
    values: FloatArray,
    ext_values: FloatArray,
    neighbours: tuple[int, float, int, float],
) -> tuple[float, float]:
    """Slope jumps [1/deg] (extension side minus data side) at the upper and lower join."""
    first, gap_first, last, gap_last = neighbours
    ext_hi = (ext_values[first] - values[-1]) / gap_first
    ext_lo = (values[0] - ext_values[last]) / gap_last
    data_hi = (values[-1] - values[-2]) / (alpha[-1] - alpha[-2])
    data_lo = (values[1] - values[0]) / (alpha[1] - alpha[0])
    return float(ext_hi - data_hi), float(ext_lo - data_lo)


@functools.lru_cache(maxsize=64)
def _circle_grid(step_deg: float) -> FloatArray:
    """Multiples of ``step_deg`` over -180..180 with both ends (read-only, cached)."""
    grid = np.union1d(aligned_grid(step_deg, -180.0, 180.0), [-180.0, 180.0])
    grid.flags.writeable = False
    return grid


def _extension_angles(step_deg: float, a_lo: float, a_hi: float) -> FloatArray:
    grid = _circle_grid(float(step_deg))
    margin = EXTENSION_MARGIN * step_deg
    return grid[(grid < a_lo - margin) | (grid > a_hi + margin)]


def _resolve_cd_max(aspect_ratio: float | None, cd_max: float | None) -> float:
    if aspect_ratio is not None and cd_max is not None:
        raise ParameterError("cd_max", "give either aspect_ratio or cd_max, not both")
    if cd_max is not None:
        value = float(cd_max)
        if not (math.isfinite(value) and 0.0 < value <= 3.0):
            raise ParameterError("cd_max", f"must lie in (0, 3], got {show_value(value)}")
        return value
    return viterna_cd_max(DEFAULT_ASPECT_RATIO if aspect_ratio is None else aspect_ratio)


def extend_full_range(
    polar: Polar,
    method: str = "viterna",
    *,
    aspect_ratio: float | None = None,
    cd_max: float | None = None,
    alpha_stall_pos_deg: float | None = None,
    alpha_stall_neg_deg: float | None = None,
    trailing_edge_lift_factor: float = DEFAULT_TRAILING_EDGE_LIFT_FACTOR,
    step_deg: float = DEFAULT_EXTENSION_STEP_DEG,
    trailing_edge_drag: str = DEFAULT_TRAILING_EDGE_DRAG,
) -> Polar:
    """Extend a section polar to -180..180 deg.

    Parameters
    ----------
    polar : Polar
        Measured or computed table spanning 0 deg (some negative and some positive angles).
    method : {"viterna", "flat-plate"}
        High-angle model between the data and +-90 deg: Viterna-Corrigan (Viterna & Corrigan
        1982, "Fixed pitch rotor performance of large horizontal axis wind turbines", NASA
        CP-2230) anchored at the stall points, or the flat-plate normal-force model
        ``cn = cd_max sin a / (0.56 + 0.44 sin a)`` (Lindenburg, ECN, about 2000; from memory).
    aspect_ratio : float, optional
        Blade aspect ratio [-] giving ``cd_max = 1.11 + 0.018 min(AR, 50)``.
    cd_max : float, optional
        Drag coefficient at 90 deg [-], instead of ``aspect_ratio``. Neither given: AR = 50,
        ``cd_max = 2.01`` (:data:`DEFAULT_ASPECT_RATIO`).
    alpha_stall_pos_deg, alpha_stall_neg_deg : float, optional
        Stall angles [deg] anchoring the Viterna-Corrigan curves; by default the angle of the
        global cl maximum in (0, 30] deg and of the global cl minimum in [-30, 0) deg.
    trailing_edge_lift_factor : float
        Scale ``k`` in [0, 1] of the mirrored lift with the trailing edge first.
    step_deg : float
        Step [deg] of the extension rows (multiples of it outside the data).
    trailing_edge_drag : {"reverse-flow", "mirror"}
        Drag with the trailing edge first (:data:`TRAILING_EDGE_DRAG_RULES`): by default
        ``cd = cd_max sin^2 a + cd_rev cos^2 a`` with ``cd_rev = max(0.05, cd(0))``
        (:data:`REVERSE_FLOW_CD`), continuous with cd_max at +-90 deg and level at 180 deg;
        ``"mirror"`` keeps the inner drag curve mirrored about +-90 deg (cd(180) = cd(0)).

    Returns
    -------
    Polar
        Every input row unchanged plus the extension rows. The history step
        ``"extend_full_range"`` records the method, cd_max, the stall angles and, under
        ``"joins"``, each join angle (data end) with the slope jumps ``d(coef)/d(alpha)``
        [1/deg] (extension side minus data side) of cl, cd and cm.

    Raises
    ------
    UnknownMethodError
        ``method`` not valid.
    ParameterError
        Bad cd_max, aspect ratio, stall angle, factor or step.
    InsufficientDataError
        The table does not span 0 deg.

    Notes
    -----
    The construction is set out in the module docstring (:mod:`polarsvc.aero.extension`).
    A table already covering -180..180 comes back unchanged (history says so).
    """
    if method not in EXTENSION_METHODS:
        raise UnknownMethodError("method", method, EXTENSION_METHODS)
    if trailing_edge_drag not in TRAILING_EDGE_DRAG_RULES:
        raise UnknownMethodError(
            "trailing_edge_drag", trailing_edge_drag, TRAILING_EDGE_DRAG_RULES
        )
    k = float(trailing_edge_lift_factor)
    if not (math.isfinite(k) and 0.0 <= k <= 1.0):
        raise ParameterError(
            "trailing_edge_lift_factor", f"must lie in [0, 1], got {show_value(k)}"
        )
    cd_max_value = _resolve_cd_max(aspect_ratio, cd_max)
    alpha, cl, cd, cm = polar.alpha_deg, polar.cl, polar.cd, polar.cm
    if polar.covers_full_range:
        return polar.with_table(
            alpha, cl, cd, cm,
            step={"step": "extend_full_range", "unchanged": True, "joins": [],
                  "reason": "the table already covers -180..180 deg"},
        )
    a_lo, a_hi = float(alpha[0]), float(alpha[-1])
    ext_alpha = _extension_angles(step_deg, a_lo, a_hi)
    cylinder = polar.thickness == CYLINDER_THICKNESS
    report: dict[str, Any] = {
        "step": "extend_full_range",
        "step_deg": float(step_deg),
        "measured_range_deg": [a_lo, a_hi],
    }
    if cylinder:
        ext_cl = _arc_offset(ext_alpha, a_lo, a_hi, cl[-1], cl[0], zero_at_deg=())
        ext_cd = _arc_offset(ext_alpha, a_lo, a_hi, cd[-1], cd[0], zero_at_deg=())
        ext_cm = None
        if cm is not None:
            ext_cm = _arc_offset(
                ext_alpha, a_lo, a_hi, cm[-1], cm[0], zero_at_deg=()
            )
        report.update(method="cylinder", requested_method=method)
    else:
        if not (a_lo < 0.0 < a_hi):
            raise InsufficientDataError(
                f"the table spans {a_lo:g}..{a_hi:g} deg; the extension needs data on both "
                "sides of 0 deg"
            )
        stall_pos, stall_neg = _stall_angles(alpha, cl, alpha_stall_pos_deg, alpha_stall_neg_deg)
        inner = _InnerCurve(alpha, cl, cd, method, cd_max_value, stall_pos, stall_neg)
        both_cl, both_cd = _full_circle(
            inner, np.concatenate([ext_alpha, [a_lo, a_hi]]), k, trailing_edge_drag
        )
        model_cl, end_cl = both_cl[:-2], both_cl[-2:]
        model_cd, end_cd = both_cd[:-2], both_cd[-2:]
        ext_cl = model_cl + _arc_offset(
            ext_alpha, a_lo, a_hi, cl[-1] - end_cl[1], cl[0] - end_cl[0],
            zero_at_deg=RIGHT_ANGLES_DEG,
        )
        ext_cd = model_cd + _arc_offset(
            ext_alpha, a_lo, a_hi, cd[-1] - end_cd[1], cd[0] - end_cd[0],
            zero_at_deg=(*RIGHT_ANGLES_DEG, 180.0),
        )
        floor = float(cd.min())
        floored = ext_cd < floor
        if floored.any():
            ext_cd = np.where(floored, floor, ext_cd)
            report["drag_floor"] = {"cd": floor, "angles_deg": ext_alpha[floored].tolist()}
        ext_cm = None
        if cm is not None:
            both_cm = centre_of_pressure_moment(
                np.concatenate([ext_alpha, [a_lo, a_hi]]),
                np.concatenate([ext_cl, [cl[0], cl[-1]]]),
                np.concatenate([ext_cd, [cd[0], cd[-1]]]),
            )
            end_cm = both_cm[-2:]
            ext_cm = both_cm[:-2] + _arc_offset(
                ext_alpha, a_lo, a_hi, cm[-1] - end_cm[1], cm[0] - end_cm[0],
                zero_at_deg=RIGHT_ANGLES_DEG,
            )
        report.update(
            method=method,
            cd_max=cd_max_value,
            aspect_ratio=None if aspect_ratio is None else float(aspect_ratio),
            trailing_edge_lift_factor=k,
            trailing_edge_drag=trailing_edge_drag,
            stall_angles_deg={"positive": stall_pos, "negative": stall_neg},
        )
    neighbours = _join_neighbours(alpha, ext_alpha)
    jumps = {
        "cl": _slope_jumps(alpha, cl, ext_cl, neighbours),
        "cd": _slope_jumps(alpha, cd, ext_cd, neighbours),
    }
    if cm is not None and ext_cm is not None:
        jumps["cm"] = _slope_jumps(alpha, cm, ext_cm, neighbours)
    report["joins"] = [
        {
            "side": side,
            "angle_deg": angle,
            **{f"{name}_slope_jump_per_deg": pair[index] for name, pair in jumps.items()},
        }
        for index, (side, angle) in enumerate((("positive", a_hi), ("negative", a_lo)))
    ]
    out_alpha = np.concatenate([alpha, ext_alpha])
    out_cl = np.concatenate([cl, ext_cl])
    out_cd = np.concatenate([cd, ext_cd])
    out_cm = None if cm is None or ext_cm is None else np.concatenate([cm, ext_cm])
    return polar.with_table(out_alpha, out_cl, out_cd, out_cm, step=report)

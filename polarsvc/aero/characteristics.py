"""Characteristic values of a section polar, its stall angles, and the dynamic-stall inputs
(Kirchhoff separation function, fully separated lift, stall onset).

The attached-flow lift line ``cl_lin = cl_alpha (alpha - alpha0)`` is fitted here, once, by
:func:`attached_lift_line` (array kernel :func:`_lift_line_arrays`); the rotational
augmentation reuses the same kernel, and the stall-angle kernel :func:`_stall_angle_arrays`
serves the full-range extension and the augmentation fade alike.

Which rows are measured: a table's history records the measured angle range when a step
added rows outside it (the full-range extension records ``measured_range_deg``);
:func:`measured_range` reads it back, and the characteristic values use those rows only.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from polarsvc.aero.errors import InsufficientDataError
from polarsvc.aero.polar import Polar

FloatArray = NDArray[np.float64]

LIFT_LINE_HALF_WINDOW_DEG = 5.0
"""Half width [deg] of the least-squares window around alpha0 used to fit the attached-flow
lift line (common practice, no source: the linear range of rotor sections spans at least
alpha0 +- 5 deg)."""

ZERO_LIFT_SEARCH_DEG = (-20.0, 20.0)
"""Angles [deg] searched for the zero-lift crossing (keeps the crossings near +-90 and 180 of a
full-range table out)."""

LIFT_LINE_ITERATIONS = 3
"""Refits of the window around the newly fitted alpha0."""

MIN_LIFT_SLOPE_PER_DEG = 1e-9
"""Below this fitted slope [1/deg] a table is taken to carry no lift (a cylinder): the line is
cl_lin = 0 with alpha0 = 0."""

CL_MAX_WINDOW_DEG = (-10.0, 35.0)
"""Angles [deg] searched for the global lift maximum (common practice, no source)."""

CL_MIN_WINDOW_DEG = (-35.0, 10.0)
"""Angles [deg] searched for the global lift minimum (common practice, no source)."""

ATTACHED_WINDOW_DEG = (-30.0, 30.0)
"""Angles [deg] searched for the minimum drag and the best lift-to-drag ratio."""

FULLY_ATTACHED_TOLERANCE = 1e-9
"""Where 1 - f is smaller than this, the fully separated lift is taken as cl_lin / 2."""

STALL_SEARCH_DEG = 30.0
"""Stall angles are searched within +-30 deg of zero, which keeps the flat-plate lift peak near
45 deg out of the search (common practice, no source)."""

STALL_ONSET_SEPARATION = 0.7
"""Stall onset: the first angle beyond the attached range where the separation point f falls
to 0.7 (the break point alpha_1 of the exponential f fit of Leishman & Beddoes 1989, J. Am.
Helicopter Soc. 34(3); from memory)."""


@dataclass(frozen=True)
class Characteristics:
    """Characteristic values of a section polar (angles in deg, coefficients dimensionless).

    ``cm0`` is the pitching-moment coefficient at zero lift, ``None`` without a cm column.
    """

    alpha0_deg: float
    cl_alpha_per_rad: float
    cl_alpha_per_deg: float
    cl_max: float
    alpha_cl_max_deg: float
    cl_min: float
    alpha_cl_min_deg: float
    cd_min: float
    alpha_cd_min_deg: float
    ld_max: float
    alpha_ld_max_deg: float
    cm0: float | None


def _zero_lift_estimate(alpha_deg: FloatArray, cl: FloatArray) -> FloatArray:
    """First estimate of alpha0 per row: the zero crossing of cl nearest 0 deg within
    :data:`ZERO_LIFT_SEARCH_DEG`, else the angle of the smallest |cl| there."""
    low, high = ZERO_LIFT_SEARCH_DEG
    inside = (alpha_deg >= low) & (alpha_deg <= high)
    a_left, a_right = alpha_deg[:-1], alpha_deg[1:]
    c_left, c_right = cl[:, :-1], cl[:, 1:]
    pair_inside = inside[:-1] & inside[1:]
    crosses = (c_left * c_right <= 0.0) & (c_left != c_right) & pair_inside
    with np.errstate(divide="ignore", invalid="ignore"):
        a_cross = a_left - c_left * (a_right - a_left) / (c_right - c_left)
    distance = np.where(crosses, np.abs(a_cross), np.inf)
    best = np.argmin(distance, axis=1)
    rows = np.arange(cl.shape[0])
    found = np.isfinite(distance[rows, best])
    abs_cl = np.where(inside, np.abs(cl), np.inf)
    fallback = alpha_deg[np.argmin(abs_cl, axis=1)]
    return np.where(found, a_cross[rows, best], fallback)


def _lift_line_arrays(alpha_deg: FloatArray, cl: FloatArray) -> tuple[FloatArray, FloatArray]:
    """Attached-flow lift line of every row of ``cl`` (shape ``(k, na)``) on the common
    angles ``alpha_deg`` (``(na,)``): returns ``(slope [1/deg], alpha0 [deg])``, each ``(k,)``.

    Least squares of cl against alpha over ``|alpha - alpha0| <= 5 deg``, refitted
    :data:`LIFT_LINE_ITERATIONS` times around the new alpha0. The single implementation of the
    fit, shared by :func:`attached_lift_line` and :mod:`polarsvc.aero.rotation`.
    """
    alpha_deg = np.asarray(alpha_deg, dtype=np.float64)
    cl = np.atleast_2d(np.asarray(cl, dtype=np.float64))
    low, high = ZERO_LIFT_SEARCH_DEG
    reach = LIFT_LINE_HALF_WINDOW_DEG
    columns = (alpha_deg >= low - reach) & (alpha_deg <= high + reach)
    alpha_deg, cl = alpha_deg[columns], cl[:, columns]
    if alpha_deg.size < 2:
        raise InsufficientDataError(
            f"fewer than 2 angles within {low - reach:g}..{high + reach:g} deg: cannot fit the "
            "attached-flow lift line"
        )
    alpha0 = _zero_lift_estimate(alpha_deg, cl)
    slope = np.zeros(cl.shape[0])
    liftless = np.all(cl == 0.0, axis=1)
    for _ in range(LIFT_LINE_ITERATIONS):
        x = alpha_deg[None, :] - alpha0[:, None]
        weight = (np.abs(x) <= LIFT_LINE_HALF_WINDOW_DEG).astype(np.float64)
        count = weight.sum(axis=1)
        if np.any((count < 2) & ~liftless):
            raise InsufficientDataError(
                "fewer than 2 points within +-5 deg of the zero-lift angle: cannot fit the "
                "attached-flow lift line"
            )
        sx = (weight * x).sum(axis=1)
        sy = (weight * cl).sum(axis=1)
        sxx = (weight * x * x).sum(axis=1)
        sxy = (weight * x * cl).sum(axis=1)
        denominator = count * sxx - sx * sx
        with np.errstate(divide="ignore", invalid="ignore"):
            fitted = (denominator > 0.0) & ~liftless
            slope = np.where(fitted, (count * sxy - sx * sy) / denominator, 0.0)
            intercept = np.where(count > 0, (sy - slope * sx) / count, 0.0)
            shift = np.where(slope > MIN_LIFT_SLOPE_PER_DEG, -intercept / slope, 0.0)
        alpha0 = np.clip(alpha0 + shift, low, high)
    no_lift = ~(slope > MIN_LIFT_SLOPE_PER_DEG)
    slope = np.where(no_lift, 0.0, slope)
    alpha0 = np.where(no_lift, 0.0, alpha0)
    return slope, alpha0


def attached_lift_line(polar: Polar) -> tuple[float, float]:
    """Fit the attached-flow lift line ``cl_lin = cl_alpha (alpha - alpha0)``.

    Parameters
    ----------
    polar : Polar
        Any section table spanning its zero-lift angle.

    Returns
    -------
    cl_alpha_per_rad : float
        Lift-curve slope [1/rad]; thin-airfoil theory gives 2 pi (Abbott & von Doenhoff 1959,
        "Theory of Wing Sections", ch. 4; from memory).
    alpha0_deg : float
        Zero-lift angle of attack [deg].

    Notes
    -----
    The zero crossing of cl nearest 0 deg within -20..20 deg seeds alpha0; a straight line is
    then fitted by least squares over the points with ``|alpha - alpha0| <= 5 deg`` and alpha0
    re-centred on it (three times; alpha0 kept within -20..20 deg). Noise in the data
    averages out in the fit; local maxima past stall lie outside the window. A table without
    lift (a cylinder) gives ``(0.0, 0.0)``.

    Raises
    ------
    InsufficientDataError
        Fewer than two points in the fit window.
    """
    slope, alpha0 = _lift_line_arrays(polar.alpha_deg, polar.cl[None, :])
    return float(np.degrees(slope[0])), float(alpha0[0])


def _window_mask(alpha_deg: FloatArray, window: tuple[float, float]) -> FloatArray:
    mask = (alpha_deg >= window[0]) & (alpha_deg <= window[1])
    return mask if mask.any() else np.ones_like(alpha_deg, dtype=bool)


def measured_range(polar: Polar) -> tuple[float, float]:
    """The measured angle range [deg] of a table: the range recorded by the first history
    step that added rows outside the data (``measured_range_deg``), else the table's own.

    Rows inside this range are the measured rows (or, after resampling, interpolated between
    measured rows); rows outside come from a model."""
    for step in polar.history:
        recorded = step.get("measured_range_deg")
        if recorded is not None:
            return float(recorded[0]), float(recorded[1])
    return float(polar.alpha_deg[0]), float(polar.alpha_deg[-1])


def _measured_rows(polar: Polar) -> Polar:
    low, high = measured_range(polar)
    keep = (polar.alpha_deg >= low) & (polar.alpha_deg <= high)
    if keep.all():
        return polar
    cm = None if polar.cm is None else polar.cm[keep]
    return Polar(polar.alpha_deg[keep], polar.cl[keep], polar.cd[keep], cm,
                 assume_degrees=True)


def characteristics(polar: Polar) -> Characteristics:
    """Characteristic values of a section polar, over its measured rows only.

    Parameters
    ----------
    polar : Polar

    Returns
    -------
    Characteristics

    Notes
    -----
    - alpha0 and cl_alpha: :func:`attached_lift_line`.
    - cl_max: the global maximum of cl over -10..35 deg (the whole table if it has no point
      there), so secondary local maxima and post-stall noise do not shift it; cl_min likewise
      the global minimum over -35..10 deg.
    - cd_min and (L/D)max: over -30..30 deg; (L/D)max is the largest cl/cd there.
    - cm0: cm at alpha0 by linear interpolation.
    All on the table's own points (no smoothing), restricted to the measured rows
    (:func:`measured_range`): the lift hump of a post-stall model near 45 deg is no cl_max.
    Definitions: Abbott & von Doenhoff (1959), "Theory of Wing Sections" (from memory).
    """
    polar = _measured_rows(polar)
    alpha = polar.alpha_deg
    cl_alpha_per_rad, alpha0 = attached_lift_line(polar)
    high = _window_mask(alpha, CL_MAX_WINDOW_DEG)
    i_max = np.flatnonzero(high)[np.argmax(polar.cl[high])]
    low = _window_mask(alpha, CL_MIN_WINDOW_DEG)
    i_min = np.flatnonzero(low)[np.argmin(polar.cl[low])]
    mid = _window_mask(alpha, ATTACHED_WINDOW_DEG)
    mid_index = np.flatnonzero(mid)
    i_cd = mid_index[np.argmin(polar.cd[mid])]
    i_ld = mid_index[np.argmax(polar.cl[mid] / polar.cd[mid])]
    cm0 = None if polar.cm is None else float(np.interp(alpha0, alpha, polar.cm))
    return Characteristics(
        alpha0_deg=alpha0,
        cl_alpha_per_rad=cl_alpha_per_rad,
        cl_alpha_per_deg=float(np.radians(cl_alpha_per_rad)),
        cl_max=float(polar.cl[i_max]),
        alpha_cl_max_deg=float(alpha[i_max]),
        cl_min=float(polar.cl[i_min]),
        alpha_cl_min_deg=float(alpha[i_min]),
        cd_min=float(polar.cd[i_cd]),
        alpha_cd_min_deg=float(alpha[i_cd]),
        ld_max=float(polar.cl[i_ld] / polar.cd[i_ld]),
        alpha_ld_max_deg=float(alpha[i_ld]),
        cm0=cm0,
    )


def _stall_angle_arrays(
    alpha_deg: FloatArray,
    cl: FloatArray,
    low_deg: ArrayLike,
    high_deg: ArrayLike,
    *,
    positive: bool = True,
) -> FloatArray:
    """Stall angle [deg] of every row of ``cl`` (``(k, na)``) on ``alpha_deg`` (``(na,)``):
    the angle of the global cl maximum over (0, 30] deg (``positive``), or of the global cl
    minimum over [-30, 0), among the angles within each row's measured range
    ``low_deg..high_deg`` (``(k,)`` or scalars). Where no measured angle lies in the search
    window, the whole measured side (angles > 0, or < 0) is searched; where none lies there
    either, the measured end on that side is returned. The single implementation shared by
    the full-range extension (its anchor points) and the augmentation fade."""
    alpha_deg = np.asarray(alpha_deg, dtype=np.float64)
    cl = np.atleast_2d(np.asarray(cl, dtype=np.float64))
    rows = cl.shape[0]
    low = np.broadcast_to(np.asarray(low_deg, dtype=np.float64), (rows,))
    high = np.broadcast_to(np.asarray(high_deg, dtype=np.float64), (rows,))
    measured = (alpha_deg[None, :] >= low[:, None]) & (alpha_deg[None, :] <= high[:, None])
    if positive:
        side = measured & (alpha_deg[None, :] > 0.0)
        window = side & (alpha_deg[None, :] <= STALL_SEARCH_DEG)
        signed = cl
        fallback = high
    else:
        side = measured & (alpha_deg[None, :] < 0.0)
        window = side & (alpha_deg[None, :] >= -STALL_SEARCH_DEG)
        signed = -cl
        fallback = low
    use = np.where(window.any(axis=1)[:, None], window, side)
    best = np.argmax(np.where(use, signed, -np.inf), axis=1)
    return np.where(use.any(axis=1), alpha_deg[best], fallback)


def _attached_hold(alpha_deg: FloatArray, f: FloatArray, alpha0: FloatArray,
                   onset_pos: FloatArray, onset_neg: FloatArray) -> FloatArray:
    """Mask of the attached range of every row: from the last angle before the negative
    stall onset where the flow is attached (f = 1) to the last such angle before the positive
    onset; the fit window of the lift line (alpha0 +- 5 deg) always included."""
    at_one = f >= 1.0 - FULLY_ATTACHED_TOLERANCE
    x = alpha_deg[None, :]
    before_pos = at_one & (x >= alpha0[:, None]) & (x < onset_pos[:, None])
    before_neg = at_one & (x <= alpha0[:, None]) & (x > onset_neg[:, None])
    upper = np.max(np.where(before_pos, x, -np.inf), axis=1)
    lower = np.min(np.where(before_neg, x, np.inf), axis=1)
    upper = np.maximum(upper, alpha0 + LIFT_LINE_HALF_WINDOW_DEG)
    lower = np.minimum(lower, alpha0 - LIFT_LINE_HALF_WINDOW_DEG)
    return (x >= lower[:, None]) & (x <= upper[:, None])


@dataclass(frozen=True)
class DynamicStallInputs:
    """What a dynamic-stall model of the Beddoes-Leishman family needs from a static table,
    per row (station): ``alpha0_deg``, ``cl_alpha_per_rad`` and the stall-onset angles
    ``stall_onset_deg`` / ``stall_onset_neg_deg`` ``(k,)``; the separation function
    ``f_separation`` and the fully separated lift ``cl_fs`` ``(k, na)`` over the table's
    angles."""

    alpha0_deg: FloatArray
    cl_alpha_per_rad: FloatArray
    stall_onset_deg: FloatArray
    stall_onset_neg_deg: FloatArray
    f_separation: FloatArray
    cl_fs: FloatArray


def _dynamic_stall_arrays(
    alpha_deg: FloatArray,
    cl: FloatArray,
    slope_per_deg: FloatArray,
    alpha0_deg: FloatArray,
    *,
    hold_attached: bool = True,
) -> DynamicStallInputs:
    """The kernel of :func:`dynamic_stall_inputs` on rows ``cl`` ``(k, na)``, with the lift
    line given per row (slope [1/deg], alpha0 [deg])."""
    alpha_deg = np.asarray(alpha_deg, dtype=np.float64)
    cl = np.atleast_2d(np.asarray(cl, dtype=np.float64))
    slope = np.asarray(slope_per_deg, dtype=np.float64)
    alpha0 = np.asarray(alpha0_deg, dtype=np.float64)
    x = alpha_deg[None, :]
    cl_lin = slope[:, None] * (x - alpha0[:, None])
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = np.where(cl_lin != 0.0, cl / cl_lin, 1.0)
    root = np.sqrt(np.clip(ratio, 0.0, 1.0))
    f = np.where(root >= 0.5, (2.0 * root - 1.0) ** 2, 0.0)
    separated = f <= STALL_ONSET_SEPARATION
    reach = LIFT_LINE_HALF_WINDOW_DEG
    above = separated & (x > alpha0[:, None] + reach)
    below = separated & (x < alpha0[:, None] - reach)
    onset_pos = np.min(np.where(above, x, np.inf), axis=1)
    onset_neg = np.max(np.where(below, x, -np.inf), axis=1)
    onset_pos = np.where(np.isfinite(onset_pos), onset_pos, alpha_deg[-1])
    onset_neg = np.where(np.isfinite(onset_neg), onset_neg, alpha_deg[0])
    if hold_attached:
        f = np.where(_attached_hold(alpha_deg, f, alpha0, onset_pos, onset_neg), 1.0, f)
    no_line = slope <= 0.0
    f = np.where(no_line[:, None], 0.0, f)
    attached = (1.0 - f) < FULLY_ATTACHED_TOLERANCE
    with np.errstate(divide="ignore", invalid="ignore"):
        cl_fs = np.where(attached, cl_lin / 2.0, (cl - cl_lin * f) / (1.0 - f))
    return DynamicStallInputs(
        alpha0_deg=alpha0,
        cl_alpha_per_rad=np.degrees(slope),
        stall_onset_deg=np.where(no_line, np.nan, onset_pos),
        stall_onset_neg_deg=np.where(no_line, np.nan, onset_neg),
        f_separation=f,
        cl_fs=cl_fs,
    )


def dynamic_stall_inputs(
    alpha_deg: ArrayLike,
    cl: ArrayLike,
    *,
    hold_attached: bool = True,
) -> DynamicStallInputs:
    """Static inputs of a dynamic-stall model for one table or many (rows of ``cl``).

    Parameters
    ----------
    alpha_deg : array_like
        Angles [deg], increasing, ``(na,)``; the full range -180..180 for a served table.
    cl : array_like
        Lift coefficient ``(na,)`` or ``(k, na)`` (one row per blade station).
    hold_attached : bool
        Hold f at 1 over the attached range (default), so noise in measured lift near the
        line does not make f dip below 1 where the flow is attached.

    Returns
    -------
    DynamicStallInputs
        Zero-lift angle and attached lift slope (:func:`attached_lift_line`), separation
        function f, fully separated lift cl_fs, and the stall-onset angles on both sides.

    Notes
    -----
    Kirchhoff flow ``cl = cl_lin ((1 + sqrt f) / 2)^2`` (Leishman & Beddoes 1989, J. Am.
    Helicopter Soc. 34(3); from memory) inverted as ``f = (2 sqrt(cl / cl_lin) - 1)^2`` with
    ``cl / cl_lin`` clipped to [0, 1] and ``f = 0`` where ``sqrt(cl / cl_lin) < 1/2``;
    ``cl_fs = (cl - cl_lin f) / (1 - f)``, and ``cl_lin / 2`` where f = 1 (Hansen, Gaunaa &
    Madsen 2004, "A Beddoes-Leishman type dynamic stall model in state-space and indicial
    formulations", Risoe-R-1354; from memory).

    The stall onset on the positive side is the first angle beyond the lift line's fit window
    (alpha0 + 5 deg, where the flow is attached by construction and ``cl / cl_lin`` is
    ill-conditioned next to alpha0) where f <= 0.7 (:data:`STALL_ONSET_SEPARATION`); on the
    negative side likewise below alpha0 - 5 deg. The attached range, where f is held at 1,
    is the fit window extended on each side to the outermost angle short of the onset at
    which the lift reaches the line (f = 1). A table without
    lift (a cylinder) has f = 0 everywhere, cl_fs = cl and no onset (NaN).
    """
    alpha = np.asarray(alpha_deg, dtype=np.float64)
    rows = np.atleast_2d(np.asarray(cl, dtype=np.float64))
    slope, alpha0 = _lift_line_arrays(alpha, rows)
    return _dynamic_stall_arrays(alpha, rows, slope, alpha0, hold_attached=hold_attached)


def separation_function(
    polar: Polar,
    *,
    cl_alpha_per_rad: float | None = None,
    alpha0_deg: float | None = None,
    hold_attached: bool = False,
) -> tuple[FloatArray, FloatArray]:
    """Kirchhoff separation function and fully separated lift over the polar's angles.

    Parameters
    ----------
    polar : Polar
    cl_alpha_per_rad : float, optional
        Attached-flow lift slope [1/rad]; fitted by :func:`attached_lift_line` when omitted.
    alpha0_deg : float, optional
        Zero-lift angle [deg]; fitted when omitted.
    hold_attached : bool
        Hold f at 1 over the attached range (as :func:`dynamic_stall_inputs` does).

    Returns
    -------
    f : ndarray
        Separation point position [-], 1 attached, 0 fully separated.
    cl_fs : ndarray
        Fully separated lift coefficient [-].

    Notes
    -----
    The formulas and sources are those of :func:`dynamic_stall_inputs` (one kernel). Where
    cl_lin is zero (at alpha0) the flow counts as attached (f = 1).
    """
    fit_slope, fit_alpha0 = attached_lift_line(polar)
    slope = fit_slope if cl_alpha_per_rad is None else float(cl_alpha_per_rad)
    alpha0 = fit_alpha0 if alpha0_deg is None else float(alpha0_deg)
    found = _dynamic_stall_arrays(
        polar.alpha_deg, polar.cl[None, :], np.array([np.radians(slope)]), np.array([alpha0]),
        hold_attached=hold_attached,
    )
    return found.f_separation[0], found.cl_fs[0]

"""Characteristic values of a section polar and the Kirchhoff separation function.

The attached-flow lift line ``cl_lin = cl_alpha (alpha - alpha0)`` is fitted here, once, by
:func:`attached_lift_line` (array kernel :func:`_lift_line_arrays`); the rotational
augmentation reuses the same kernel.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

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


def characteristics(polar: Polar) -> Characteristics:
    """Characteristic values of a section polar.

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
    All on the table's own points (no smoothing). Definitions: Abbott & von Doenhoff (1959),
    "Theory of Wing Sections" (from memory).
    """
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


def separation_function(
    polar: Polar,
    *,
    cl_alpha_per_rad: float | None = None,
    alpha0_deg: float | None = None,
) -> tuple[FloatArray, FloatArray]:
    """Kirchhoff separation function and fully separated lift over the polar's angles.

    Parameters
    ----------
    polar : Polar
    cl_alpha_per_rad : float, optional
        Attached-flow lift slope [1/rad]; fitted by :func:`attached_lift_line` when omitted.
    alpha0_deg : float, optional
        Zero-lift angle [deg]; fitted when omitted.

    Returns
    -------
    f : ndarray
        Separation point position [-], 1 attached, 0 fully separated.
    cl_fs : ndarray
        Fully separated lift coefficient [-].

    Notes
    -----
    Kirchhoff flow, ``cl = cl_lin ((1 + sqrt f) / 2)^2`` (Leishman & Beddoes 1989, "A
    semi-empirical model for dynamic stall", J. Am. Helicopter Soc. 34(3); from memory), inverted as
    ``f = (2 sqrt(cl / cl_lin) - 1)^2`` with ``cl / cl_lin`` clipped to [0, 1] and ``f = 0``
    where ``sqrt(cl / cl_lin) < 1/2``; the fully separated lift
    ``cl_fs = (cl - cl_lin f) / (1 - f)``, and ``cl_lin / 2`` where ``1 - f < 1e-9``
    (Hansen, Gaunaa & Madsen 2004, "A Beddoes-Leishman type dynamic stall model in
    state-space and indicial formulations", Risoe-R-1354; from memory, equation numbers not
    quoted). Where cl_lin is zero (at alpha0) the flow counts as attached (f = 1).
    """
    fit_slope, fit_alpha0 = attached_lift_line(polar)
    slope = fit_slope if cl_alpha_per_rad is None else float(cl_alpha_per_rad)
    alpha0 = fit_alpha0 if alpha0_deg is None else float(alpha0_deg)
    cl = polar.cl
    cl_lin = slope * np.radians(polar.alpha_deg - alpha0)
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = np.where(cl_lin != 0.0, cl / cl_lin, 1.0)
    root = np.sqrt(np.clip(ratio, 0.0, 1.0))
    f = np.where(root >= 0.5, (2.0 * root - 1.0) ** 2, 0.0)
    attached = (1.0 - f) < FULLY_ATTACHED_TOLERANCE
    with np.errstate(divide="ignore", invalid="ignore"):
        cl_fs = np.where(attached, cl_lin / 2.0, (cl - cl_lin * f) / (1.0 - f))
    return f, cl_fs

"""Rotational augmentation (stall delay) of section tables near the blade root.

All three models share one form (array kernel :func:`_augment_arrays`)::

    cl_3d = cl + w(alpha) F_cl (cl_lin - cl)        where the 2D lift falls short of cl_lin
    cd_3d = cd + w(alpha) G_cd max(cd - cd0, 0)

with the lift factor ``F_cl`` of the model clipped to [0, 1] and the signed drag factor
``G_cd``: 0 for Snel (drag unchanged), ``-f_cd`` with ``f_cd`` clipped to [0, 1] for Du-Selig
(drag reduced), ``+F`` with ``F`` clipped to [0, 1] for Chaviaropoulos-Hansen (the same form
as the lift). So the lift moves towards the attached-flow line ``cl_lin`` but never past it,
a factor that the formula makes negative (small c/r) gives no change, and the correction is
zero where the 2D lift already reaches the line (``(cl_lin - cl) sign(cl_lin) <= 0``:
attached flow, or data above the line). ``cd0`` is the drag at
the zero-lift angle. ``w`` is the fade-out weight: 1 for ``|alpha| <= fade_start_deg``,
falling linearly to 0 at ``fade_end_deg`` (at most 90 deg), 0 beyond (common practice, no
source). The pitching moment is not changed.
"""

from __future__ import annotations

import math

import numpy as np
from numpy.typing import ArrayLike, NDArray

from polarsvc.aero.characteristics import _lift_line_arrays
from polarsvc.aero.errors import ParameterError, UnknownMethodError, show_value
from polarsvc.aero.polar import Polar

FloatArray = NDArray[np.float64]

ROTATION_MODELS: tuple[str, ...] = ("snel", "du-selig", "chaviaropoulos-hansen")
"""Valid model names."""

SNEL_COEFFICIENT = 3.0
"""Snel, Houwink & Bosschers (1994), ECN-C--93-052: 3 (c/r)^2."""

DU_SELIG_A = 1.0
DU_SELIG_B = 1.0
DU_SELIG_D = 1.0
DU_SELIG_SLOPE_RATIO = 1.6 / 0.1267
"""Du & Selig (1998), AIAA-98-0021, with a = b = d = 1 (from memory)."""

CH_A = 2.2
CH_H = 1.0
CH_N = 4.0
"""Chaviaropoulos & Hansen (2000), J. Fluids Eng. 122: a = 2.2, h = 1, n = 4 (from memory)."""


def _positive_array(value: ArrayLike, parameter: str, *, upper: float | None = None) -> FloatArray:
    try:
        array = np.asarray(value, dtype=np.float64)
    except (TypeError, ValueError):
        raise ParameterError(parameter, "must be a number or an array of numbers") from None
    bad = ~np.isfinite(array) | (array <= 0.0)
    if upper is not None:
        bad |= array > upper
    if np.any(bad):
        first = float(array.ravel()[np.flatnonzero(bad.ravel())[0]])
        limit = f"(0, {upper:g}]" if upper is not None else "(0, inf)"
        raise ParameterError(parameter, f"must lie in {limit}, got {show_value(first)}")
    return array


def snel_factor(chord_over_r: ArrayLike) -> FloatArray:
    """Lift factor of Snel's model, ``3 (c/r)^2``.

    Parameters
    ----------
    chord_over_r : array_like
        Local chord over local radius [-], positive (vectorised over stations).

    References
    ----------
    Snel, H., Houwink, R. & Bosschers, J. (1994), "Sectional prediction of lift coefficients
    on rotating wind turbine blades in stall", ECN-C--93-052 (title from memory).
    """
    c_r = _positive_array(chord_over_r, "chord_over_r")
    return SNEL_COEFFICIENT * c_r**2


def _check_tip_speed_ratio(tip_speed_ratio: ArrayLike | None) -> FloatArray:
    if tip_speed_ratio is None:
        raise ParameterError("tip_speed_ratio", "is required by the du-selig model")
    return _positive_array(tip_speed_ratio, "tip_speed_ratio")


def du_selig_factors(
    chord_over_r: ArrayLike, r_over_R: ArrayLike, tip_speed_ratio: ArrayLike
) -> tuple[FloatArray, FloatArray]:
    """Lift and drag factors of the Du-Selig model.

    Parameters
    ----------
    chord_over_r : array_like
        Local chord over local radius [-], positive.
    r_over_R : array_like
        Local radius over tip radius [-], in (0, 1].
    tip_speed_ratio : array_like
        ``Omega R / V`` [-], positive.

    Returns
    -------
    f_cl, f_cd : ndarray
        ``f = 1/(2 pi) [1.6 (c/r) / 0.1267 (a - (c/r)^e) / (b + (c/r)^e) - 1]`` with
        ``e = d R / (Lambda r)`` for lift and ``e = d R / (2 Lambda r)`` for drag, a = b = d = 1,
        ``Lambda = Omega R / sqrt(V^2 + (Omega R)^2) = tsr / sqrt(1 + tsr^2)``. Raw values
        (not clipped; the augmentation clips).

    References
    ----------
    Du, Z. & Selig, M. S. (1998), "A 3-D stall-delay model for horizontal axis wind turbine
    performance prediction", AIAA-98-0021 (from memory).
    """
    c_r = _positive_array(chord_over_r, "chord_over_r")
    r_R = _positive_array(r_over_R, "r_over_R", upper=1.0)
    tsr = _check_tip_speed_ratio(tip_speed_ratio)
    lam = tsr / np.sqrt(1.0 + tsr**2)
    exponent_cl = DU_SELIG_D / (lam * r_R)
    exponent_cd = DU_SELIG_D / (2.0 * lam * r_R)

    def factor(exponent: FloatArray) -> FloatArray:
        power = c_r**exponent
        ratio = (DU_SELIG_A - power) / (DU_SELIG_B + power)
        return (DU_SELIG_SLOPE_RATIO * c_r * ratio - 1.0) / (2.0 * math.pi)

    return factor(exponent_cl), factor(exponent_cd)


def chaviaropoulos_hansen_factor(chord_over_r: ArrayLike, twist_deg: ArrayLike) -> FloatArray:
    """Factor of the Chaviaropoulos-Hansen model, ``a (c/r)^h cos^n(theta)``, for lift and drag.

    Parameters
    ----------
    chord_over_r : array_like
        Local chord over local radius [-], positive.
    twist_deg : array_like
        Local twist [deg].

    References
    ----------
    Chaviaropoulos, P. K. & Hansen, M. O. L. (2000), "Investigating three-dimensional and
    rotational effects on wind turbine blades by means of a quasi-3D Navier-Stokes solver",
    J. Fluids Eng. 122; a = 2.2, h = 1, n = 4 (from memory).
    """
    c_r = _positive_array(chord_over_r, "chord_over_r")
    twist = np.asarray(twist_deg, dtype=np.float64)
    if not np.all(np.isfinite(twist)):
        raise ParameterError("twist_deg", "must be finite")
    return CH_A * c_r**CH_H * np.cos(np.radians(twist)) ** CH_N


def _model_factors(
    model: str,
    chord_over_r: ArrayLike,
    r_over_R: ArrayLike,
    tip_speed_ratio: ArrayLike | None,
    twist_deg: ArrayLike,
) -> tuple[FloatArray, FloatArray]:
    """Lift factor and signed drag factor of a model as applied (clipped; module docstring),
    per station."""
    c_r = _positive_array(chord_over_r, "chord_over_r")
    r_R = _positive_array(r_over_R, "r_over_R", upper=1.0)
    c_r, r_R = np.broadcast_arrays(np.atleast_1d(c_r), np.atleast_1d(r_R))
    if model == "snel":
        f_cl = np.clip(snel_factor(c_r), 0.0, 1.0)
        return f_cl, np.zeros_like(f_cl)
    if model == "du-selig":
        f_cl, f_cd = du_selig_factors(c_r, r_R, _check_tip_speed_ratio(tip_speed_ratio))
        return np.clip(f_cl, 0.0, 1.0), -np.clip(f_cd, 0.0, 1.0)
    if model == "chaviaropoulos-hansen":
        f = np.broadcast_to(chaviaropoulos_hansen_factor(c_r, twist_deg), c_r.shape)
        f = np.clip(f, 0.0, 1.0)
        return f, f
    raise UnknownMethodError("model", model, ROTATION_MODELS)


def _check_fade(fade_start_deg: float, fade_end_deg: float) -> tuple[float, float]:
    start, end = float(fade_start_deg), float(fade_end_deg)
    if not (math.isfinite(start) and start >= 0.0):
        raise ParameterError("fade_start_deg", f"must be >= 0 deg, got {show_value(start)}")
    if not (math.isfinite(end) and start < end <= 90.0):
        raise ParameterError(
            "fade_end_deg",
            f"must lie in (fade_start_deg, 90] deg, got {show_value(end)}",
        )
    return start, end


def fade_weight(alpha_deg: ArrayLike, fade_start_deg: float, fade_end_deg: float) -> FloatArray:
    """Fade-out weight of the augmentation: 1 for ``|alpha| <= fade_start_deg``, linear to 0
    at ``fade_end_deg``, 0 beyond (common practice, no source)."""
    start, end = _check_fade(fade_start_deg, fade_end_deg)
    magnitude = np.abs(np.asarray(alpha_deg, dtype=np.float64))
    return np.clip((end - magnitude) / (end - start), 0.0, 1.0)


def _augment_arrays(
    alpha_deg: FloatArray,
    cl: FloatArray,
    cd: FloatArray,
    f_cl: FloatArray,
    g_cd: FloatArray,
    slope_per_deg: FloatArray,
    alpha0_deg: FloatArray,
    weight: FloatArray,
) -> tuple[FloatArray, FloatArray]:
    """The augmentation kernel on stations x angles.

    ``alpha_deg`` ``(na,)``; ``cl``, ``cd`` ``(ns, na)``; ``f_cl``, ``g_cd``, ``slope_per_deg``,
    ``alpha0_deg`` ``(ns,)``; ``weight`` ``(na,)``; factors as applied (clipped). Used by
    :func:`augment_rotation` and the blade path alike.
    """
    f = f_cl[:, None]
    g = g_cd[:, None]
    cl_lin = slope_per_deg[:, None] * (alpha_deg[None, :] - alpha0_deg[:, None])
    deficit = cl_lin - cl
    short = deficit * np.sign(cl_lin) > 0.0
    cl_3d = cl + np.where(short, weight[None, :] * f * deficit, 0.0)
    index = np.clip(np.searchsorted(alpha_deg, alpha0_deg) - 1, 0, alpha_deg.size - 2)
    left = alpha_deg[index]
    share = (alpha0_deg - left) / (alpha_deg[index + 1] - left)
    rows = np.arange(cd.shape[0])
    cd0 = cd[rows, index] * (1.0 - share) + cd[rows, index + 1] * share
    excess = np.maximum(cd - cd0[:, None], 0.0)
    cd_3d = cd + weight[None, :] * g * excess
    return cl_3d, cd_3d


def augment_rotation(
    polar: Polar,
    model: str = "snel",
    *,
    r_over_R: float,
    chord_over_r: float,
    tip_speed_ratio: float | None = None,
    twist_deg: float = 0.0,
    cl_alpha_per_rad: float | None = None,
    fade_start_deg: float = 30.0,
    fade_end_deg: float = 50.0,
) -> Polar:
    """Correct a 2D polar for rotational effects (stall delay) at one blade station.

    Parameters
    ----------
    polar : Polar
        2D section table (usually already extended to the full range).
    model : {"snel", "du-selig", "chaviaropoulos-hansen"}
        Snel, Houwink & Bosschers (1994), ECN-C--93-052 (lift only); Du & Selig (1998),
        AIAA-98-0021 (lift and drag); Chaviaropoulos & Hansen (2000), J. Fluids Eng. 122
        (lift and drag). Every model takes the same keywords and ignores the ones it does not
        use.
    r_over_R : float
        Local radius over tip radius [-], in (0, 1].
    chord_over_r : float
        Local chord over local radius [-], positive.
    tip_speed_ratio : float, optional
        ``Omega R / V`` [-]; required by du-selig.
    twist_deg : float
        Local twist [deg] (chaviaropoulos-hansen).
    cl_alpha_per_rad : float, optional
        Attached-flow lift slope [1/rad]; fitted from the data when omitted
        (:func:`polarsvc.aero.characteristics.attached_lift_line`; alpha0 is always fitted).
    fade_start_deg, fade_end_deg : float
        The correction is full for ``|alpha| <= fade_start_deg`` and falls linearly to zero
        at ``fade_end_deg`` (at most 90 deg).

    Returns
    -------
    Polar
        The corrected table (same angles, cm unchanged), history step ``"augment_rotation"``
        with the model, factors and lift line.

    Raises
    ------
    UnknownMethodError, ParameterError

    Notes
    -----
    The common form, the clipping and the fade are set out in the module docstring.
    """
    if model not in ROTATION_MODELS:
        raise UnknownMethodError("model", model, ROTATION_MODELS)
    weight = fade_weight(polar.alpha_deg, fade_start_deg, fade_end_deg)
    f_cl, g_cd = _model_factors(model, chord_over_r, r_over_R, tip_speed_ratio, twist_deg)
    slope, alpha0 = _lift_line_arrays(polar.alpha_deg, polar.cl[None, :])
    slope = _override_slope(slope, cl_alpha_per_rad)
    cl_3d, cd_3d = _augment_arrays(
        polar.alpha_deg, polar.cl[None, :], polar.cd[None, :], f_cl, g_cd, slope, alpha0, weight
    )
    step = {
        "step": "augment_rotation",
        "model": model,
        "r_over_R": float(r_over_R),
        "chord_over_r": float(chord_over_r),
        "tip_speed_ratio": None if tip_speed_ratio is None else float(tip_speed_ratio),
        "twist_deg": float(twist_deg),
        "lift_factor": float(f_cl[0]),
        "drag_factor": float(g_cd[0]),
        "cl_alpha_per_rad": float(np.degrees(slope[0])),
        "alpha0_deg": float(alpha0[0]),
        "fade_deg": [float(fade_start_deg), float(fade_end_deg)],
    }
    return polar.with_table(polar.alpha_deg, cl_3d[0], cd_3d[0], polar.cm, step=step)


def _override_slope(slope_per_deg: FloatArray, cl_alpha_per_rad: float | None) -> FloatArray:
    if cl_alpha_per_rad is None:
        return slope_per_deg
    value = float(cl_alpha_per_rad)
    if not (math.isfinite(value) and value > 0.0):
        raise ParameterError(
            "cl_alpha_per_rad", f"must be a positive number, got {show_value(value)}"
        )
    return np.full_like(slope_per_deg, math.radians(value))

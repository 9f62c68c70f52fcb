"""Rotational augmentation (stall delay) of section tables near the blade root.

All three models share one form (array kernel :func:`_augment_arrays`)::

    cl_3d = cl + w(alpha) F_cl (cl_lin - cl)        where the 2D lift falls short of cl_lin
    cd_3d = cd + w(alpha) G_cd max(cd - cd0, 0)

with the lift factor ``F_cl`` of the model clipped to [0, 1] and the signed drag factor
``G_cd``: 0 for Snel (drag unchanged), ``-f_cd`` with ``f_cd`` clipped to [0, 1] for Du-Selig
(drag reduced), ``+F`` with ``F`` clipped to [0, 1] for Chaviaropoulos-Hansen (the same form
as the lift). So the lift moves towards the attached-flow line ``cl_lin`` but never past it,
a factor that the formula makes negative (small c/r) gives no change, and the correction is
zero where the 2D lift already reaches the line (attached flow, or data above the line).
``cd0`` is the drag at the zero-lift angle. The pitching moment is not changed. Every clipped
factor and every c/r outside the model's calibration range (:data:`CALIBRATION_CHORD_OVER_R`)
is reported (:func:`augmentation_flags`).

The weight ``w`` (:func:`fade_weight`, per station):

- **Positive-stall side only** by default: ``w = 0`` below the zero-lift angle alpha0, where
  the models were never calibrated (they were fitted to positive-angle stall, common practice,
  no source). ``negative_side=True`` applies the mirrored fade below alpha0 too, tied to the
  negative stall angle.
- **Tied to the section's own stall angle** ``alpha_s`` (the global cl maximum over (0, 30]
  deg within the measured rows, :func:`~polarsvc.aero.characteristics._stall_angle_arrays`,
  the same angle that anchors the full-range extension): full up to ``alpha_s +
  fade_start_offset_deg`` (default -5 deg), zero from ``alpha_s + fade_end_offset_deg``
  (default +25 deg), never past 90 deg. Either end can be given as an absolute angle instead.
- **Smooth**: between the two ends ``w = 1 - 3 s^2 + 2 s^3`` with ``s`` the position within
  the fade (the cubic Hermite step, zero slope at both ends; common practice, no source). A
  linear fade has slope corners at its knots; past stall the gap ``cl_lin - cl`` grows by
  about 0.1/deg, so a linear knot becomes a corner of the lift curve and pins the lift
  maximum on it. With zero slope at the knots the augmented maximum falls inside the fade and
  the increment's slope is continuous wherever the 2D table's is.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

from polarsvc.aero.characteristics import (
    _lift_line_arrays,
    _stall_angle_arrays,
    measured_range,
)
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

DEFAULT_FADE_START_OFFSET_DEG = -5.0
DEFAULT_FADE_END_OFFSET_DEG = 25.0
"""The fade runs from 5 deg before the stall angle to 25 deg past it (common practice, no
source: the measured stall delay on rotating blades extends some 10-20 deg past the 2D stall
angle; the width keeps the increment's curvature below 0.04/deg^2 on the demo blade, so its
slope changes by less than 0.02/deg per 0.5 deg step)."""

ROTATION_ORDERS: tuple[str, ...] = ("extend-then-augment", "augment-then-extend")
"""Where the augmentation sits relative to the full-range extension (see
:data:`DEFAULT_ROTATION_ORDER`)."""

DEFAULT_ROTATION_ORDER = "extend-then-augment"
"""Default order: extend the 2D table to -180..180 deg, then augment it.

Why not the other order, common in practice (augment the measured range, then extend from
the augmented table)? With a fade that ends well inside the +-90 deg range, augmenting the
full-range table makes the increment exactly ``w F (cl_lin - cl_2d)``: it is zero at and
beyond the fade end, so cl and cd at +-90 deg and on the trailing-edge-first side equal the
2D table's, and its slope is continuous wherever the 2D table's is. Extending an augmented
table instead re-anchors the post-stall model at the augmented stall point and carries the
augmented end value towards 90 deg with the extension's linear offset decay: the served
increment then depends on where the measurements happen to end, changes the +-90 deg region
only through that decay, and has a corner at the data end wherever the fade has not finished
inside the data. ``"augment-then-extend"`` remains available."""

CALIBRATION_CHORD_OVER_R: dict[str, tuple[float, float, str]] = {
    "snel": (
        0.0, 0.4,
        "Snel, Houwink & Bosschers (1994), ECN-C--93-052: fitted to the inboard sections of "
        "the rotors of the time, c/r up to about 0.4 (from memory, indicative)",
    ),
    "du-selig": (
        0.0, 0.4,
        "Du & Selig (1998), AIAA-98-0021: compared with rotating-blade measurements at c/r up "
        "to about 0.4 (from memory, indicative)",
    ),
    "chaviaropoulos-hansen": (
        0.0, 0.3,
        "Chaviaropoulos & Hansen (2000), J. Fluids Eng. 122: quasi-3D computations at c/r up "
        "to about 0.3 (from memory, indicative)",
    ),
}
"""c/r range on which each model was calibrated: ``(low, high, source)``. A station outside
it is reported (the correction is still applied, clipped)."""


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


def _raw_factors(
    model: str,
    chord_over_r: ArrayLike,
    r_over_R: ArrayLike,
    tip_speed_ratio: ArrayLike | None,
    twist_deg: ArrayLike,
) -> tuple[FloatArray, FloatArray | None]:
    """Lift factor and drag factor of a model as the formula gives them (not clipped), per
    station; the drag factor is None for Snel (drag unchanged)."""
    c_r = _positive_array(chord_over_r, "chord_over_r")
    r_R = _positive_array(r_over_R, "r_over_R", upper=1.0)
    c_r, r_R = np.broadcast_arrays(np.atleast_1d(c_r), np.atleast_1d(r_R))
    if model == "snel":
        return snel_factor(c_r), None
    if model == "du-selig":
        return du_selig_factors(c_r, r_R, _check_tip_speed_ratio(tip_speed_ratio))
    if model == "chaviaropoulos-hansen":
        f = np.broadcast_to(chaviaropoulos_hansen_factor(c_r, twist_deg), c_r.shape)
        return f, f
    raise UnknownMethodError("model", model, ROTATION_MODELS)


def _model_factors(
    model: str,
    chord_over_r: ArrayLike,
    r_over_R: ArrayLike,
    tip_speed_ratio: ArrayLike | None,
    twist_deg: ArrayLike,
) -> tuple[FloatArray, FloatArray]:
    """Lift factor and signed drag factor of a model as applied (clipped; module docstring),
    per station."""
    raw_cl, raw_cd = _raw_factors(model, chord_over_r, r_over_R, tip_speed_ratio, twist_deg)
    f_cl = np.clip(raw_cl, 0.0, 1.0)
    if raw_cd is None:
        return f_cl, np.zeros_like(f_cl)
    g_cd = np.clip(raw_cd, 0.0, 1.0)
    return f_cl, (-g_cd if model == "du-selig" else g_cd)


def augmentation_flags(
    model: str,
    chord_over_r: ArrayLike,
    r_over_R: ArrayLike,
    tip_speed_ratio: ArrayLike | None,
    twist_deg: ArrayLike,
) -> list[dict[str, Any]]:
    """Per station, what the station report must show about the model's validity: every
    factor the clipping to [0, 1] changed (name, raw value, value applied) and whether c/r
    lies outside the model's calibration range (:data:`CALIBRATION_CHORD_OVER_R`, with its
    source)."""
    raw_cl, raw_cd = _raw_factors(model, chord_over_r, r_over_R, tip_speed_ratio, twist_deg)
    c_r = np.broadcast_to(np.atleast_1d(np.asarray(chord_over_r, dtype=np.float64)),
                          raw_cl.shape)
    low, high, source = CALIBRATION_CHORD_OVER_R[model]
    flags = []
    for s in range(raw_cl.size):
        clipped = []
        for name, raw in (("lift_factor", raw_cl), ("drag_factor", raw_cd)):
            if raw is None:
                continue
            value = float(raw[s])
            applied = min(max(value, 0.0), 1.0)
            if applied != value:
                clipped.append({"factor": name, "raw": value, "applied": applied})
        outside = not (low <= float(c_r[s]) <= high)
        flags.append({
            "clipped_factors": clipped,
            "chord_over_r_outside_calibration": outside,
            "calibration_chord_over_r": {"low": low, "high": high, "source": source},
        })
    return flags


def fade_weight(alpha_deg: ArrayLike, fade_start_deg: ArrayLike,
                fade_end_deg: ArrayLike) -> FloatArray:
    """Smooth fade-out: 1 up to ``fade_start_deg``, ``1 - 3 s^2 + 2 s^3`` with
    ``s = (alpha - start) / (end - start)`` between, 0 from ``fade_end_deg`` (the cubic
    Hermite step: continuous, with continuous slope; common practice, no source).

    Starts and ends may be arrays ``(k,)`` (one per station): the result is then ``(k, na)``.
    """
    alpha = np.asarray(alpha_deg, dtype=np.float64)
    start = np.asarray(fade_start_deg, dtype=np.float64)
    end = np.asarray(fade_end_deg, dtype=np.float64)
    if np.any(~np.isfinite(start)):
        raise ParameterError("fade_start_deg", "must be finite")
    if np.any(~np.isfinite(end) | (end <= start) | (end > 90.0)):
        bad = float(np.broadcast_to(end, np.broadcast(start, end).shape).ravel()[0])
        raise ParameterError(
            "fade_end_deg", f"must lie in (fade_start_deg, 90] deg, got {show_value(bad)}"
        )
    if start.ndim:
        alpha = alpha[None, :]
        start, end = start[:, None], end[:, None]
    s = np.clip((alpha - start) / (end - start), 0.0, 1.0)
    return 1.0 - s * s * (3.0 - 2.0 * s)


def _resolve_fade(
    stall_deg: FloatArray,
    start_deg: float | None,
    end_deg: float | None,
    start_offset_deg: float,
    end_offset_deg: float,
    *,
    sign: float = 1.0,
) -> tuple[FloatArray, FloatArray]:
    """Fade start and end per station [deg], as signed angles on the side of ``sign``:
    the absolute angles when given (mirrored for the negative side; an end beyond 90 deg
    is refused), else the stall angle plus the offsets, the end capped at 90 deg."""
    for name, value in (("fade_start_offset_deg", start_offset_deg),
                        ("fade_end_offset_deg", end_offset_deg)):
        if not math.isfinite(float(value)):
            raise ParameterError(name, f"must be finite, got {show_value(float(value))}")
    if end_deg is not None and not abs(float(end_deg)) <= 90.0:
        raise ParameterError(
            "fade_end_deg", f"must lie within 90 deg, got {show_value(float(end_deg))}"
        )
    magnitude = np.abs(stall_deg)
    start = magnitude + float(start_offset_deg) if start_deg is None else np.full_like(
        magnitude, abs(float(start_deg)))
    end = magnitude + float(end_offset_deg) if end_deg is None else np.full_like(
        magnitude, abs(float(end_deg)))
    end = np.minimum(end, 90.0)
    if np.any(~(end > start)):
        raise ParameterError(
            "fade_end_deg",
            f"the fade must end after it starts and by 90 deg; got start "
            f"{show_value(float(np.max(start)))} and end {show_value(float(np.min(end)))} deg",
        )
    return sign * start, sign * end


@dataclass(frozen=True)
class FadeSettings:
    """How the augmentation is weighted (module docstring): absolute fade angles [deg] (None:
    tied to the stall angle by the offsets), the offsets [deg] from the stall angle, and
    whether the negative side (below alpha0) is corrected too."""

    start_deg: float | None = None
    end_deg: float | None = None
    start_offset_deg: float = DEFAULT_FADE_START_OFFSET_DEG
    end_offset_deg: float = DEFAULT_FADE_END_OFFSET_DEG
    negative_side: bool = False


def _station_weight(
    alpha_deg: FloatArray,
    cl: FloatArray,
    alpha0_deg: FloatArray,
    measured_low: ArrayLike,
    measured_high: ArrayLike,
    fade: FadeSettings,
) -> tuple[FloatArray, dict[str, FloatArray]]:
    """Weight ``(ns, na)`` of every station and the resolved fade angles (report)."""
    stall = _stall_angle_arrays(alpha_deg, cl, measured_low, measured_high)
    start, end = _resolve_fade(stall, fade.start_deg, fade.end_deg,
                               fade.start_offset_deg, fade.end_offset_deg)
    weight = fade_weight(alpha_deg, start, end)
    above = alpha_deg[None, :] >= alpha0_deg[:, None]
    report = {"stall_deg": stall, "fade_start_deg": start, "fade_end_deg": end}
    if fade.negative_side:
        stall_neg = _stall_angle_arrays(
            alpha_deg, cl, measured_low, measured_high, positive=False
        )
        n_start, n_end = _resolve_fade(stall_neg, fade.start_deg, fade.end_deg,
                                       fade.start_offset_deg, fade.end_offset_deg, sign=-1.0)
        negative = fade_weight(-alpha_deg, -n_start, -n_end)
        weight = np.where(above, weight, negative)
        report.update(stall_neg_deg=stall_neg, fade_neg_start_deg=n_start,
                      fade_neg_end_deg=n_end)
    else:
        weight = np.where(above, weight, 0.0)
    return weight, report


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

    ``alpha_deg`` ``(na,)``; ``cl``, ``cd`` and ``weight`` ``(ns, na)``; ``f_cl``, ``g_cd``,
    ``slope_per_deg``, ``alpha0_deg`` ``(ns,)``; factors as applied (clipped). Used by
    :func:`augment_rotation` and the blade path alike.
    """
    f = f_cl[:, None]
    g = g_cd[:, None]
    cl_lin = slope_per_deg[:, None] * (alpha_deg[None, :] - alpha0_deg[:, None])
    deficit = cl_lin - cl
    short = deficit * np.sign(cl_lin) > 0.0
    cl_3d = cl + np.where(short, weight * f * deficit, 0.0)
    index = np.clip(np.searchsorted(alpha_deg, alpha0_deg) - 1, 0, alpha_deg.size - 2)
    left = alpha_deg[index]
    share = (alpha0_deg - left) / (alpha_deg[index + 1] - left)
    rows = np.arange(cd.shape[0])
    cd0 = cd[rows, index] * (1.0 - share) + cd[rows, index + 1] * share
    excess = np.maximum(cd - cd0[:, None], 0.0)
    cd_3d = cd + weight * g * excess
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
    fade_start_deg: float | None = None,
    fade_end_deg: float | None = None,
    fade_start_offset_deg: float = DEFAULT_FADE_START_OFFSET_DEG,
    fade_end_offset_deg: float = DEFAULT_FADE_END_OFFSET_DEG,
    negative_side: bool = False,
) -> Polar:
    """Correct a 2D polar for rotational effects (stall delay) at one blade station.

    Parameters
    ----------
    polar : Polar
        2D section table: measured, or already extended to the full range (its measured
        range is read from the history, :func:`~polarsvc.aero.characteristics.measured_range`).
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
    fade_start_deg, fade_end_deg : float, optional
        Absolute fade angles [deg]; by default tied to the section's stall angle.
    fade_start_offset_deg, fade_end_offset_deg : float
        Fade start and end relative to the stall angle [deg] (defaults +0 and +25 deg).
    negative_side : bool
        Also correct below the zero-lift angle (mirrored fade from the negative stall angle).

    Returns
    -------
    Polar
        The corrected table (same angles, cm unchanged), history step ``"augment_rotation"``
        with the model, factors, lift line, stall angle, fade angles and validity flags.

    Raises
    ------
    UnknownMethodError, ParameterError

    Notes
    -----
    The common form, the clipping and the fade are set out in the module docstring.
    """
    if model not in ROTATION_MODELS:
        raise UnknownMethodError("model", model, ROTATION_MODELS)
    f_cl, g_cd = _model_factors(model, chord_over_r, r_over_R, tip_speed_ratio, twist_deg)
    flags = augmentation_flags(model, chord_over_r, r_over_R, tip_speed_ratio, twist_deg)[0]
    slope, alpha0 = _lift_line_arrays(polar.alpha_deg, polar.cl[None, :])
    slope = _override_slope(slope, cl_alpha_per_rad)
    low, high = measured_range(polar)
    fade = FadeSettings(fade_start_deg, fade_end_deg, fade_start_offset_deg,
                        fade_end_offset_deg, bool(negative_side))
    weight, fade_report = _station_weight(
        polar.alpha_deg, polar.cl[None, :], alpha0, low, high, fade
    )
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
        **{key: float(value[0]) for key, value in fade_report.items()},
        "negative_side": bool(negative_side),
        **flags,
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

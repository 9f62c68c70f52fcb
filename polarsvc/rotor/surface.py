"""Power coefficient over a grid of tip speed ratio and pitch, and its maximum."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

from polarsvc.aero.errors import ParameterError
from polarsvc.rotor.bem import solve
from polarsvc.rotor.geometry import RotorGeometry

FloatArray = NDArray[np.float64]

DEFAULT_TIP_SPEED_RATIOS = np.linspace(1.0, 15.0, 57)
"""1 to 15 in steps of 0.25."""

DEFAULT_PITCHES_DEG = np.linspace(-5.0, 40.0, 46)
"""-5 to 40 deg in steps of 1 deg."""

ZOOM_POINTS = 5
ZOOM_STEPS = 6


@dataclass(frozen=True)
class CpSurface:
    """``cp`` and ``ct`` of shape ``(tip speed ratios, pitches)`` on the given axes, and the
    maximum: ``best_tip_speed_ratio``, ``best_pitch_deg``, ``cp_max`` (refined between the grid
    points, within the grid's bounds; the grid maximum is ``cp.max()``)."""

    tip_speed_ratio: FloatArray
    pitch_deg: FloatArray
    cp: FloatArray
    ct: FloatArray
    best_tip_speed_ratio: float
    best_pitch_deg: float
    cp_max: float
    options: dict[str, Any]


def _axis(name: str, values: ArrayLike) -> FloatArray:
    axis = np.atleast_1d(np.asarray(values, dtype=np.float64))
    if axis.ndim != 1 or axis.size < 1 or not np.all(np.isfinite(axis)):
        raise ParameterError(name, "must be a 1-D array of finite numbers")
    if axis.size > 1 and np.any(np.diff(axis) <= 0.0):
        raise ParameterError(name, "must be strictly ascending")
    return axis


def best_operating_point(
    geometry: RotorGeometry,
    alpha_deg: ArrayLike,
    cl: ArrayLike,
    cd: ArrayLike,
    tip_speed_ratio: FloatArray,
    pitch_deg: FloatArray,
    cp: FloatArray,
    **options: Any,
) -> tuple[float, float, float]:
    """Refine the grid maximum of ``cp`` by successive zooms: a 5 x 5 grid spanning the
    neighbouring grid cells, solved at once, then again around its maximum with half the
    span (6 times, a 64th of a grid cell at the end); bounded by the outer grid. Returns
    (tip speed ratio, pitch, Cp)."""
    i, j = np.unravel_index(int(np.argmax(cp)), cp.shape)
    best = (float(tip_speed_ratio[i]), float(pitch_deg[j]), float(cp[i, j]))

    def cell(axis: FloatArray, k: int) -> float:
        if axis.size == 1:
            return 0.0
        return float(np.max(np.diff(axis)[max(k - 1, 0): k + 1]))

    half = [cell(tip_speed_ratio, int(i)), cell(pitch_deg, int(j))]
    for _ in range(ZOOM_STEPS):
        lam = np.clip(
            np.linspace(best[0] - half[0], best[0] + half[0], ZOOM_POINTS),
            tip_speed_ratio[0], tip_speed_ratio[-1],
        )
        beta = np.clip(
            np.linspace(best[1] - half[1], best[1] + half[1], ZOOM_POINTS),
            pitch_deg[0], pitch_deg[-1],
        )
        L, P = np.meshgrid(np.unique(lam), np.unique(beta), indexing="ij")
        local = solve(geometry, alpha_deg, cl, cd, L, P, **options).cp
        k = int(np.argmax(local))
        if local.flat[k] > best[2]:
            best = (float(L.flat[k]), float(P.flat[k]), float(local.flat[k]))
        half = [h / 2.0 for h in half]
    return best


def cp_surface(
    geometry: RotorGeometry,
    alpha_deg: ArrayLike,
    cl: ArrayLike,
    cd: ArrayLike,
    tip_speed_ratio: ArrayLike = DEFAULT_TIP_SPEED_RATIOS,
    pitch_deg: ArrayLike = DEFAULT_PITCHES_DEG,
    *,
    refine: bool = True,
    **options: Any,
) -> CpSurface:
    """Cp and Ct of :func:`polarsvc.rotor.solve` at every (tip speed ratio, pitch) of the
    grid (one vectorised solve), and the maximum of Cp.

    Parameters
    ----------
    geometry, alpha_deg, cl, cd
        As for :func:`polarsvc.rotor.solve`.
    tip_speed_ratio : array_like
        Ascending tip speed ratios [-]; default 1..15 step 0.25.
    pitch_deg : array_like
        Ascending pitch angles [deg]; default -5..40 step 1.
    refine : bool
        Refine the maximum between grid points (:func:`best_operating_point`).
    **options
        ``tip_loss``, ``hub_loss``, ``tangential_induction``, ``high_thrust`` of
        :func:`polarsvc.rotor.solve`.
    """
    tsr = _axis("tip_speed_ratio", tip_speed_ratio)
    pitch = _axis("pitch_deg", pitch_deg)
    L, P = np.meshgrid(tsr, pitch, indexing="ij")
    result = solve(geometry, alpha_deg, cl, cd, L, P, **options)
    if refine:
        best = best_operating_point(geometry, alpha_deg, cl, cd, tsr, pitch, result.cp,
                                    **options)
    else:
        i, j = np.unravel_index(int(np.argmax(result.cp)), result.cp.shape)
        best = (float(tsr[i]), float(pitch[j]), float(result.cp[i, j]))
    return CpSurface(tsr, pitch, result.cp, result.ct, best[0], best[1], best[2],
                     dict(result.options))

"""Power coefficient over a grid of tip speed ratio and pitch, and its maximum."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

from polarsvc.aero.errors import ParameterError
from polarsvc.rotor.bem import PreparedRotor, prepare
from polarsvc.rotor.geometry import RotorGeometry

FloatArray = NDArray[np.float64]

DEFAULT_TIP_SPEED_RATIOS = np.linspace(1.0, 15.0, 57)
"""1 to 15 in steps of 0.25."""

DEFAULT_PITCHES_DEG = np.linspace(-5.0, 40.0, 46)
"""-5 to 40 deg in steps of 1 deg."""

ZOOM_POINTS = 9
"""Points per axis of each local grid (spacing a quarter of its half-width)."""
ZOOM_FIRST_SPAN_CELLS = 2.0
"""Half-width of the first local grid, in grid cells around the grid maximum."""
ZOOM_RESOLUTION = 1.0 / 512.0
"""The search stops when the local spacing is below this fraction of a grid cell."""
ZOOM_MAX_STEPS = 24
"""Bound on the local grids solved (each one array solve)."""


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
    """Refine the grid maximum of ``cp`` by a search on local grids: a 9 x 9 grid spanning
    two grid cells either side of the grid maximum is solved at once. Where its best point
    lies inside it and Cp is concave there, the next grid is centred on the vertex of the
    quadratic through the best point's 3 x 3 neighbourhood (central differences) with an
    eighth of the span.
    Otherwise, along an axis where the best point lies inside, the span shrinks to a
    quarter around it; along an axis where it lies on the edge (the maximum lies further
    out, as on a ridge oblique to the axes) the grid moves there with the same span. It
    stops when the spacing is a 512th of a grid cell along both axes (or after 24 grids);
    every grid is bounded by the outer grid. The result is the best point solved.
    Returns (tip speed ratio, pitch, Cp). ``options`` are the
    switches of :func:`polarsvc.rotor.solve`, or ``rotor=`` a
    :class:`polarsvc.rotor.bem.PreparedRotor` made from the same geometry and tables."""
    prepared = options.pop("rotor", None)
    if not isinstance(prepared, PreparedRotor):
        prepared = prepare(geometry, alpha_deg, cl, cd, **options)
    i, j = np.unravel_index(int(np.argmax(cp)), cp.shape)
    best = (float(tip_speed_ratio[i]), float(pitch_deg[j]), float(cp[i, j]))

    def cell(axis: FloatArray, k: int) -> float:
        if axis.size == 1:
            return 0.0
        return float(np.max(np.diff(axis)[max(k - 1, 0): k + 1]))

    axes = (tip_speed_ratio, pitch_deg)
    cells = [cell(tip_speed_ratio, int(i)), cell(pitch_deg, int(j))]
    finest = [h * ZOOM_RESOLUTION * (ZOOM_POINTS - 1) / 2.0 for h in cells]
    half = [ZOOM_FIRST_SPAN_CELLS * h for h in cells]
    best_at: tuple[float, float] | None = None
    for _ in range(ZOOM_MAX_STEPS):
        middle = best_at if best_at is not None else best[:2]
        points = [
            np.unique(np.clip(np.linspace(middle[a] - half[a], middle[a] + half[a],
                                          ZOOM_POINTS), axes[a][0], axes[a][-1]))
            for a in (0, 1)
        ]
        L, P = np.meshgrid(points[0], points[1], indexing="ij")
        local, _, _ = prepared.coefficients(L, P)
        k = int(np.argmax(local))
        if local.flat[k] > best[2]:
            best = (float(L.flat[k]), float(P.flat[k]), float(local.flat[k]))
        if half[0] <= finest[0] and half[1] <= finest[1]:
            break
        index = np.unravel_index(k, local.shape)
        centre = _quadratic_vertex(local, points, index)
        if centre is not None:
            # best point inside the grid and Cp concave there: the next grid is centred on
            # the vertex of the local quadratic, with an eighth of the span
            best_at = centre
            half = [max(h / 8.0, f) for h, f in zip(half, finest, strict=True)]
            continue
        best_at = None
        for a in (0, 1):
            position = points[a][index[a]]
            on_edge = (index[a] in (0, points[a].size - 1)
                      and axes[a][0] < position < axes[a][-1])
            if not on_edge or half[a] <= finest[a]:
                half[a] = max(half[a] * 2.0 / (ZOOM_POINTS - 1), finest[a])
    return best


def _quadratic_vertex(
    values: FloatArray, points: list[FloatArray], index: tuple[Any, ...]
) -> tuple[float, float] | None:
    """Vertex of the quadratic through the 3 x 3 neighbourhood of ``index`` (central
    differences), moved at most one spacing along each axis; None where ``index`` is on the
    grid's edge, the spacing is uneven or the quadratic is not concave."""
    i, j = int(index[0]), int(index[1])
    x, y = points
    if not (0 < i < x.size - 1 and 0 < j < y.size - 1):
        return None
    hx, hy = x[i + 1] - x[i], y[j + 1] - y[j]
    if abs((x[i] - x[i - 1]) - hx) > 1e-9 * hx or abs((y[j] - y[j - 1]) - hy) > 1e-9 * hy:
        return None
    f = values[i - 1: i + 2, j - 1: j + 2]
    gx = (f[2, 1] - f[0, 1]) / (2.0 * hx)
    gy = (f[1, 2] - f[1, 0]) / (2.0 * hy)
    hxx = (f[2, 1] - 2.0 * f[1, 1] + f[0, 1]) / hx**2
    hyy = (f[1, 2] - 2.0 * f[1, 1] + f[1, 0]) / hy**2
    hxy = (f[2, 2] - f[2, 0] - f[0, 2] + f[0, 0]) / (4.0 * hx * hy)
    det = hxx * hyy - hxy * hxy
    if not (hxx < 0.0 and det > 0.0):
        return None
    dx = -(hyy * gx - hxy * gy) / det
    dy = -(hxx * gy - hxy * gx) / det
    return (float(x[i] + np.clip(dx, -hx, hx)), float(y[j] + np.clip(dy, -hy, hy)))


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
        :func:`polarsvc.rotor.solve`; or ``rotor=`` a prepared rotor
        (:func:`polarsvc.rotor.bem.prepare`) of the same geometry and tables.
    """
    tsr = _axis("tip_speed_ratio", tip_speed_ratio)
    pitch = _axis("pitch_deg", pitch_deg)
    L, P = np.meshgrid(tsr, pitch, indexing="ij")
    prepared = options.pop("rotor", None)
    if not isinstance(prepared, PreparedRotor):
        prepared = prepare(geometry, alpha_deg, cl, cd, **options)
    cp, ct, _ = prepared.coefficients(L, P)
    if refine:
        best = best_operating_point(geometry, alpha_deg, cl, cd, tsr, pitch, cp,
                                    rotor=prepared)
    else:
        i, j = np.unravel_index(int(np.argmax(cp)), cp.shape)
        best = (float(tsr[i]), float(pitch[j]), float(cp[i, j]))
    return CpSurface(tsr, pitch, cp, ct, best[0], best[1], best[2], dict(prepared.options))

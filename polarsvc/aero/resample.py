"""Resampling a section table onto a uniform or explicit angle grid (linear interpolation)."""

from __future__ import annotations

import math

import numpy as np
from numpy.typing import ArrayLike, NDArray

from polarsvc.aero.errors import InsufficientDataError, ParameterError, show_value
from polarsvc.aero.polar import Polar

FloatArray = NDArray[np.float64]

GRID_TOLERANCE = 1e-9
"""Relative tolerance when deciding whether a span is a whole number of steps."""


def _check_step(step_deg: float, parameter: str = "step_deg") -> float:
    try:
        step = float(step_deg)
    except (TypeError, ValueError):
        raise ParameterError(parameter, "must be a number") from None
    if not (math.isfinite(step) and 0.0 < step <= 90.0):
        raise ParameterError(parameter, f"must lie in (0, 90] deg, got {show_value(step)}")
    return step


def uniform_grid(step_deg: float, start: float = -180.0, stop: float = 180.0) -> FloatArray:
    """Angles [deg] from ``start`` to ``stop`` inclusive in steps of ``step_deg``.

    Parameters
    ----------
    step_deg : float
        Step [deg]; ``stop - start`` must be a whole number of steps (721 points for 0.5 deg
        over -180..180).
    start, stop : float
        End angles [deg].

    Raises
    ------
    ParameterError
        A non-positive step, or a span that is not a whole number of steps.
    """
    step = _check_step(step_deg)
    if not (math.isfinite(start) and math.isfinite(stop) and stop > start):
        raise ParameterError("stop", "must be finite and greater than start")
    count = (stop - start) / step
    whole = round(count)
    if abs(count - whole) > GRID_TOLERANCE * max(1.0, count):
        raise ParameterError(
            "step_deg", f"{step:g} deg does not divide the span {start:g}..{stop:g} deg"
        )
    return np.linspace(start, stop, whole + 1)


def aligned_grid(step_deg: float, low: float, high: float) -> FloatArray:
    """The multiples of ``step_deg`` [deg] that lie within ``low..high`` [deg]."""
    step = _check_step(step_deg)
    first = math.ceil(low / step - GRID_TOLERANCE)
    last = math.floor(high / step + GRID_TOLERANCE)
    grid = np.arange(first, last + 1, dtype=np.float64) * step
    return np.clip(grid, low, high)


def resample(
    polar: Polar, *, step_deg: float | None = None, alpha_deg: ArrayLike | None = None
) -> Polar:
    """Resample a polar by linear interpolation.

    Parameters
    ----------
    polar : Polar
    step_deg : float, optional
        Uniform step [deg]: the new angles are the multiples of the step within the data's
        range (the end angles are kept only when they fall on a multiple).
    alpha_deg : array_like, optional
        Explicit new angles [deg], all within the data's range.

    Returns
    -------
    Polar
        The resampled table, with a ``"resample"`` history step.

    Raises
    ------
    ParameterError
        Neither or both of ``step_deg`` and ``alpha_deg``; a bad step; explicit angles outside
        the data's range.
    InsufficientDataError
        Fewer than two grid angles fall within the data's range.

    Notes
    -----
    Linear interpolation (``numpy.interp``) in each coefficient; common practice, no source.
    """
    if (step_deg is None) == (alpha_deg is None):
        raise ParameterError("step_deg", "give exactly one of step_deg and alpha_deg")
    low, high = float(polar.alpha_deg[0]), float(polar.alpha_deg[-1])
    if step_deg is not None:
        grid = aligned_grid(step_deg, low, high)
        if grid.size < 2:
            raise InsufficientDataError(
                f"fewer than 2 multiples of {float(step_deg):g} deg lie within "
                f"{low:g}..{high:g} deg"
            )
        step = {"step": "resample", "step_deg": float(step_deg), "rows": int(grid.size)}
    else:
        grid = np.asarray(alpha_deg, dtype=np.float64).ravel()
        if grid.size < 2 or not np.all(np.isfinite(grid)):
            raise ParameterError("alpha_deg", "needs at least 2 finite angles")
        outside = np.flatnonzero((grid < low) | (grid > high))
        if outside.size:
            raise ParameterError(
                "alpha_deg",
                f"angle {grid[outside[0]]:g} deg (position {int(outside[0])}) lies outside "
                f"the data range {low:g}..{high:g} deg",
            )
        step = {"step": "resample", "explicit": True, "rows": int(grid.size)}
    table = interpolate_columns(polar, grid)
    return polar.with_table(grid, *table, step=step)


def interpolate_columns(
    polar: Polar, alpha_deg: FloatArray
) -> tuple[FloatArray, FloatArray, FloatArray | None]:
    """cl, cd and cm (or ``None``) of ``polar`` at ``alpha_deg`` [deg] by linear
    interpolation; angles must lie within the data's range."""
    cl = np.interp(alpha_deg, polar.alpha_deg, polar.cl)
    cd = np.interp(alpha_deg, polar.alpha_deg, polar.cd)
    cm = None if polar.cm is None else np.interp(alpha_deg, polar.alpha_deg, polar.cm)
    return cl, cd, cm

"""A bracketing root finder working on whole arrays of independent scalar equations.

Each element has its own bracket ``[lower, upper]`` with a sign change; every iteration
evaluates the function once for all still-active elements (one numpy call), so thousands
of blade stations and operating points are solved together instead of one at a time.

Method: regula falsi with the Anderson-Bjoerck modification (Anderson & Bjoerck 1973,
"A new high order method of regula falsi type for computing a root of an equation",
BIT 13, 253-264), which keeps the superlinear convergence of the secant step while the
root stays bracketed. Safeguards: a step that leaves the bracket's interior, or an element
that has taken more than ``bisect_after`` steps, falls back to bisection; so every element
converges, at worst at the rate of bisection.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

FloatArray = NDArray[np.float64]

Function = Callable[[FloatArray, NDArray[np.intp]], FloatArray]
"""``f(x, index)``: values at ``x`` for the elements ``index`` (same length)."""


@dataclass(frozen=True)
class Roots:
    """Roots found: ``x`` the abscissa with the smaller ``|f|`` of the final bracket,
    ``f`` its function value, ``iterations`` per element, ``converged`` per element."""

    x: FloatArray
    f: FloatArray
    iterations: NDArray[np.int64]
    converged: NDArray[np.bool_]


def bracketed_roots(
    function: Function,
    lower: FloatArray,
    upper: FloatArray,
    f_lower: FloatArray,
    f_upper: FloatArray,
    *,
    f_tol: float | FloatArray = 1e-13,
    x_tol: float = 4e-16,
    max_iterations: int = 200,
    bisect_after: int = 60,
) -> Roots:
    """Solve ``f_i(x) = 0`` for every element i within its bracket.

    Parameters
    ----------
    function : callable
        ``function(x, index)`` returns f at ``x`` for the elements ``index``.
    lower, upper : ndarray
        Bracket ends per element.
    f_lower, f_upper : ndarray
        Function values at the ends; ``f_lower * f_upper <= 0`` is required (checked).
    f_tol : float or ndarray
        An element stops when ``|f| <= f_tol`` (one value, or one per element).
    x_tol : float
        ... or when its bracket is narrower than ``x_tol * max(1, |x|)`` (a few units in
        the last place).
    max_iterations, bisect_after : int
        Hard limit; after ``bisect_after`` steps an element bisects only.

    Returns
    -------
    Roots
    """
    a = np.array(lower, dtype=np.float64)
    b = np.array(upper, dtype=np.float64)
    fa = np.array(f_lower, dtype=np.float64)
    fb = np.array(f_upper, dtype=np.float64)
    if np.any(fa * fb > 0.0) or not (np.all(np.isfinite(fa)) and np.all(np.isfinite(fb))):
        raise ValueError("every element needs a finite bracket with a sign change")
    count = a.size
    tolerance = np.broadcast_to(np.asarray(f_tol, dtype=np.float64), (count,))
    iterations = np.zeros(count, dtype=np.int64)
    # the bracket end with the smaller |f| is the current best estimate
    best_x = np.where(np.abs(fa) <= np.abs(fb), a, b)
    best_f = np.where(np.abs(fa) <= np.abs(fb), fa, fb)
    done = (np.abs(best_f) <= tolerance) | (np.abs(b - a) <= x_tol * np.maximum(1.0, np.abs(a)))
    active = np.flatnonzero(~done)
    # the active elements' state, kept compact (gathered once, written back when they stop)
    A, B, FA, FB = a[active], b[active], fa[active], fb[active]
    X, FX, TOL = best_x[active], best_f[active], tolerance[active]
    steps = 0
    with np.errstate(divide="ignore", invalid="ignore"):
        for steps in range(1, max_iterations + 1):
            if active.size == 0:
                break
            c = B - FB * (B - A) / (FB - FA)
            bisect = ~((c > np.minimum(A, B)) & (c < np.maximum(A, B)))  # also NaN
            if steps > bisect_after:
                bisect[:] = True
            c = np.where(bisect, 0.5 * (A + B), c)
            fc = function(c, active)
            opposite = np.sign(fc) != np.sign(FB)
            # Anderson-Bjoerck: when the same end is kept, scale its value down
            m = 1.0 - fc / FB
            m = np.where(np.isfinite(m) & (m > 0.0), m, 0.5)
            A = np.where(opposite, B, A)
            FA = np.where(opposite, FB, np.where(bisect, FA, FA * m))
            B, FB = c, fc
            better = np.abs(fc) <= np.abs(FX)
            X = np.where(better, c, X)
            FX = np.where(better, fc, FX)
            finished = (np.abs(fc) <= TOL) | (fc == 0.0) | (
                np.abs(c - A) <= x_tol * np.maximum(1.0, np.abs(c))
            )
            if finished.any():
                stop = active[finished]
                best_x[stop], best_f[stop] = X[finished], FX[finished]
                iterations[stop] = steps
                keep = ~finished
                active = active[keep]
                A, B, FA, FB = A[keep], B[keep], FA[keep], FB[keep]
                X, FX, TOL = X[keep], FX[keep], TOL[keep]
    converged = np.ones(count, dtype=bool)
    if active.size:
        best_x[active], best_f[active] = X, FX
        iterations[active] = steps
        converged[active] = False
    return Roots(best_x, best_f, iterations, converged)

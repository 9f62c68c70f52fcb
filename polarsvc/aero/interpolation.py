"""Interpolation between polars of one airfoil family: in Reynolds number and in thickness.

Array kernels (shared with :mod:`polarsvc.aero.blade`):

- :func:`bracket_weights` -- neighbours and linear weights of targets among sorted values;
- :func:`_combine` -- the weighted sum of gathered member tables (:func:`_blend` for one
  parameter; the blade path folds Reynolds-number and thickness weights into four terms);
- :func:`_pchip_blend` -- shape-preserving cubic across the family.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy.interpolate import PchipInterpolator

from polarsvc.aero.errors import (
    InsufficientDataError,
    OutOfRangeError,
    ParameterError,
    UnknownMethodError,
    show_value,
)
from polarsvc.aero.polar import Polar

FloatArray = NDArray[np.float64]
IntArray = NDArray[np.intp]

THICKNESS_METHODS: tuple[str, ...] = ("linear", "pchip")


@dataclass(frozen=True)
class BracketWeights:
    """Neighbours and weights of targets among sorted values.

    ``value = weight_lower * values[lower] + weight_upper * values[upper]``; the weights lie
    in [0, 1] and sum to 1; ``used`` is the (possibly clamped) target, ``clamped`` says where
    it was clamped.
    """

    lower: IntArray
    upper: IntArray
    weight_lower: FloatArray
    weight_upper: FloatArray
    used: FloatArray
    clamped: NDArray[np.bool_]


def from_log10(value: float) -> float:
    """``10**value``: a log10 Reynolds number shown as the Reynolds number."""
    return float(10.0**value)


def bracket_weights(
    values: ArrayLike,
    target: ArrayLike,
    *,
    clamp: bool = False,
    parameter: str = "value",
    shown_as: Callable[[float], float] = float,
) -> BracketWeights:
    """Neighbours and linear weights of ``target`` among strictly increasing ``values``.

    Parameters
    ----------
    values : array_like
        Strictly increasing member values (e.g. log10 Re or t/c), at least one.
    target : array_like
        Target value(s), vectorised.
    clamp : bool
        Outside the values: clamp to the nearest end (recorded) instead of refusing.
    parameter : str
        Name used in errors.
    shown_as : callable
        Maps a value to the quantity named in errors (``lambda v: 10**v`` for log10 Re).

    Returns
    -------
    BracketWeights
        A target equal to a member gets that member with weight exactly 1.

    Raises
    ------
    OutOfRangeError
        A target outside the values and ``clamp`` false.
    ParameterError
        A non-finite target.
    """
    xs = np.asarray(values, dtype=np.float64)
    t = np.atleast_1d(np.asarray(target, dtype=np.float64))
    if not np.all(np.isfinite(t)):
        raise ParameterError(parameter, "must be finite")
    low, high = float(xs[0]), float(xs[-1])
    outside = (t < low) | (t > high)
    if outside.any() and not clamp:
        first = float(t[np.flatnonzero(outside)[0]])
        raise OutOfRangeError(parameter, shown_as(first), shown_as(low), shown_as(high))
    used = np.clip(t, low, high)
    if xs.size == 1:
        zeros = np.zeros(t.shape, dtype=np.intp)
        return BracketWeights(zeros, zeros, np.ones(t.shape), np.zeros(t.shape), used, outside)
    upper = np.clip(np.searchsorted(xs, used, side="right"), 1, xs.size - 1)
    lower = upper - 1
    weight_upper = (used - xs[lower]) / (xs[upper] - xs[lower])
    weight_upper = np.clip(weight_upper, 0.0, 1.0)
    return BracketWeights(lower, upper, 1.0 - weight_upper, weight_upper, used, outside)


def _combine(tables: FloatArray, index: IntArray, weight: FloatArray) -> FloatArray:
    """Weighted sums of member tables, the one kernel of every linear interpolation
    (Reynolds number, thickness, and both at once on a blade).

    ``tables`` ``(m, ...)``; ``index`` and ``weight`` ``(targets, k)``: target ``s`` is
    ``sum_j weight[s, j] * tables[index[s, j]]``. Gathers ``k`` tables per target (no matrix
    product, no loop over targets or angles). A target whose weights are one 1 and zeros
    returns that member exactly.
    """
    extra = (slice(None),) + (None,) * (tables.ndim - 1)
    result = weight[:, 0][extra] * tables[index[:, 0]]
    for j in range(1, index.shape[1]):
        result += weight[:, j][extra] * tables[index[:, j]]
    return result


def _pairs(weights: BracketWeights) -> tuple[IntArray, FloatArray]:
    """Neighbour indices and weights as ``(targets, 2)`` arrays for :func:`_combine`."""
    index = np.stack([weights.lower, weights.upper], axis=1)
    weight = np.stack([weights.weight_lower, weights.weight_upper], axis=1)
    return index, weight


def _blend(stack: FloatArray, weights: BracketWeights) -> FloatArray:
    """Linear interpolation between neighbours: ``stack`` ``(m, ...)`` of member tables,
    returns ``(targets, ...)``."""
    return _combine(stack, *_pairs(weights))


def _pchip_blend(values: FloatArray, stack: FloatArray, targets: FloatArray) -> FloatArray:
    """PCHIP across members (``scipy.interpolate.PchipInterpolator``; Fritsch & Carlson 1980,
    "Monotone piecewise cubic interpolation", SIAM J. Numer. Anal. 17(2)), all angles and
    coefficients at once. ``stack`` ``(m, ns, ...)``; each target ``s`` uses its own column
    ``stack[:, s]``. A target at a member returns that member exactly."""
    m, count = stack.shape[0], stack.shape[1]
    flat = stack.reshape(m, -1)
    poly = PchipInterpolator(values, flat, axis=0)
    coefficients = poly.c.reshape(4, m - 1, count, -1)
    interval = np.clip(np.searchsorted(values, targets, side="right") - 1, 0, m - 2)
    rows = np.arange(count)
    local = coefficients[:, interval, rows]  # (4, ns, rest)
    dx = (targets - values[interval])[:, None]
    result = ((local[0] * dx + local[1]) * dx + local[2]) * dx + local[3]
    member = np.searchsorted(values, targets)
    member = np.clip(member, 0, m - 1)
    exact = values[member] == targets
    member_rows = stack.reshape(m, count, -1)[member, rows]
    result = np.where(exact[:, None], member_rows, result)
    return result.reshape(count, *stack.shape[2:])


def _columns(polars: Sequence[Polar]) -> tuple[str, ...]:
    return ("cl", "cd", "cm") if all(p.cm is not None for p in polars) else ("cl", "cd")


def _common_grid(polars: Sequence[Polar]) -> FloatArray:
    """The shared angles: the members' own when identical, else the union of their angles
    within the intersection of their ranges."""
    first = polars[0].alpha_deg
    if all(np.array_equal(p.alpha_deg, first) for p in polars[1:]):
        return first
    low = max(float(p.alpha_deg[0]) for p in polars)
    high = min(float(p.alpha_deg[-1]) for p in polars)
    grid = np.unique(np.concatenate([p.alpha_deg for p in polars]))
    grid = grid[(grid >= low) & (grid <= high)]
    if grid.size < 2:
        raise InsufficientDataError("the polars share fewer than 2 angles of attack")
    return grid


def _stack(polars: Sequence[Polar], grid: FloatArray, columns: tuple[str, ...]) -> FloatArray:
    """Tables ``(m, n_columns, na)`` on ``grid``."""
    rows = []
    for p in polars:
        same = p.alpha_deg.size == grid.size and np.array_equal(p.alpha_deg, grid)
        rows.append(
            [getattr(p, c) if same else np.interp(grid, p.alpha_deg, getattr(p, c))
             for c in columns]
        )
    return np.asarray(rows, dtype=np.float64)


def _check_family(polars: Sequence[Polar], attribute: str) -> list[Polar]:
    members = list(polars)
    if not members:
        raise InsufficientDataError("no polars given")
    surfaces = {p.surface for p in members}
    if len(surfaces) > 1:
        raise ParameterError("polars", f"mix surface conditions {sorted(surfaces)}")
    for index, p in enumerate(members):
        if getattr(p, attribute) is None:
            raise ParameterError("polars", f"polar {index} has no {attribute}")
    members.sort(key=lambda p: getattr(p, attribute))
    keys = [getattr(p, attribute) for p in members]
    if len(set(keys)) != len(keys):
        raise ParameterError("polars", f"two polars share the same {attribute}")
    return members


def _result(
    members: Sequence[Polar],
    grid: FloatArray,
    table: FloatArray,
    columns: tuple[str, ...],
    step: dict[str, Any],
    conditions: dict[str, Any],
) -> Polar:
    cm = table[2] if "cm" in columns else None
    return members[0].with_table(grid, table[0], table[1], cm, step=step, **conditions)


def interpolate_reynolds(
    polars: Sequence[Polar], reynolds: float, *, clamp: bool = False
) -> Polar:
    """Interpolate polars of one airfoil and surface condition to a Reynolds number.

    Parameters
    ----------
    polars : sequence of Polar
        Members at different Reynolds numbers (same thickness and surface condition).
    reynolds : float
        Target chord Reynolds number [-].
    clamp : bool
        Outside the members' range, use the nearest member instead of refusing; the history
        step then says ``"clamped": True`` with the requested and used values.

    Returns
    -------
    Polar
        Linear in log10(Re) between the bracketing members, on their common angles (common
        practice, no source). At a member's Reynolds number that member's table comes back
        unchanged.

    Raises
    ------
    OutOfRangeError, ParameterError, InsufficientDataError
    """
    members = _check_family(polars, "reynolds")
    thicknesses = {p.thickness for p in members}
    if len(thicknesses) > 1:
        raise ParameterError("polars", "mix thicknesses; interpolate in Reynolds per thickness")
    target = float(reynolds)
    if not (math.isfinite(target) and target > 0.0):
        raise ParameterError("reynolds", f"must be positive and finite, got {show_value(target)}")
    log_re = np.log10([p.reynolds for p in members])
    weights = bracket_weights(
        log_re, math.log10(target), clamp=clamp, parameter="reynolds", shown_as=from_log10
    )
    used = target
    if weights.clamped[0]:
        used = float(members[int(weights.lower[0] if weights.weight_lower[0] == 1.0
                                 else weights.upper[0])].reynolds)
    step: dict[str, Any] = {
        "step": "interpolate_reynolds",
        "requested": target,
        "used": used,
        "clamped": bool(weights.clamped[0]),
        "members": [p.reynolds for p in members],
        "weights": _weight_report(members, weights, "reynolds"),
    }
    exact = weights.weight_lower[0] == 1.0 or weights.weight_upper[0] == 1.0
    if exact:
        member = members[weights.lower[0] if weights.weight_lower[0] == 1.0 else weights.upper[0]]
        return member.with_table(
            member.alpha_deg, member.cl, member.cd, member.cm, step=step, reynolds=used
        )
    grid = _common_grid(members)
    columns = _columns(members)
    table = _blend(_stack(members, grid, columns), weights)[0]
    return _result(members, grid, table, columns, step, {"reynolds": used})


def _weight_report(
    members: Sequence[Polar], weights: BracketWeights, attribute: str
) -> dict[str, float]:
    """Member value (as text) -> weight, members with a non-zero weight only."""
    report: dict[str, float] = {}
    for index, weight in ((weights.lower[0], weights.weight_lower[0]),
                          (weights.upper[0], weights.weight_upper[0])):
        if weight > 0.0:
            report[str(getattr(members[int(index)], attribute))] = float(weight)
    return report


def interpolate_thickness(
    polars: Sequence[Polar],
    thickness: float,
    *,
    method: str = "linear",
    clamp: bool = False,
) -> Polar:
    """Interpolate family members to a relative thickness.

    Parameters
    ----------
    polars : sequence of Polar
        Members of one family and surface condition at different t/c (a cylinder, t/c = 1,
        is a valid member). Members on different angles are taken on the union of their
        angles within their common range.
    thickness : float
        Target t/c as a fraction.
    method : {"linear", "pchip"}
        Linear between neighbours (common practice, no source), or the shape-preserving
        piecewise cubic across the whole family (Fritsch & Carlson 1980, SIAM J. Numer. Anal.
        17(2), via ``scipy.interpolate.PchipInterpolator`` along the thickness axis).
    clamp : bool
        Outside the family's range, use the nearest member; recorded in the history.

    Returns
    -------
    Polar
        At a member's own thickness the member comes back unchanged (table-wise).

    Raises
    ------
    OutOfRangeError, ParameterError, UnknownMethodError, InsufficientDataError
    """
    if method not in THICKNESS_METHODS:
        raise UnknownMethodError("method", method, THICKNESS_METHODS)
    members = _check_family(polars, "thickness")
    target = float(thickness)
    if not math.isfinite(target):
        raise ParameterError("thickness", "must be finite")
    values = np.array([p.thickness for p in members], dtype=np.float64)
    weights = bracket_weights(values, target, clamp=clamp, parameter="thickness")
    used = float(weights.used[0])
    step: dict[str, Any] = {
        "step": "interpolate_thickness",
        "method": method,
        "requested": target,
        "used": used,
        "clamped": bool(weights.clamped[0]),
        "members": values.tolist(),
        "weights": _weight_report(members, weights, "thickness"),
    }
    grid = _common_grid(members)
    columns = _columns(members)
    stack = _stack(members, grid, columns)
    if method == "pchip" and values.size > 1:
        table = _pchip_blend(values, stack[:, None], weights.used)[0]
    else:
        table = _blend(stack, weights)[0]
    reynolds = _blend(
        np.array([p.reynolds if p.reynolds is not None else np.nan for p in members]), weights
    )[0]
    conditions = {
        "thickness": used,
        "reynolds": float(reynolds) if np.isfinite(reynolds) else None,
    }
    return _result(members, grid, table, columns, step, conditions)

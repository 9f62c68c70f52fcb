"""The section table type :class:`Polar` and its validation.

Conventions (see DEVELOPERS.md): angle of attack in degrees, coefficients dimensionless,
pitching moment about the quarter chord, nose-up positive, relative thickness as a fraction.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Mapping, Sequence
from dataclasses import InitVar, dataclass, field
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

from polarsvc.aero.errors import ParameterError, PolarValidationError, show_value

SURFACE_CONDITIONS: tuple[str, ...] = ("clean", "tripped", "rough")
"""Valid surface conditions; part of a polar's identity (common practice, no source)."""

RADIAN_SUSPICION_LIMIT_DEG = 3.5
"""Tables whose every angle lies within +-3.5 while spanning more than 1.0 look like radians."""

RADIAN_SUSPICION_SPAN = 1.0

FloatArray = NDArray[np.float64]


def _as_float_column(values: ArrayLike, name: str) -> FloatArray:
    try:
        array = np.array(values, dtype=np.float64, copy=True)
    except (TypeError, ValueError) as exc:
        raise PolarValidationError(
            f"values are not numbers ({type(exc).__name__})", field=name
        ) from None
    if array.ndim != 1:
        raise PolarValidationError(
            f"expected a one-dimensional column, got shape {array.shape}", field=name
        )
    return array


def _check_finite(array: FloatArray, name: str) -> None:
    bad = np.flatnonzero(~np.isfinite(array))
    if bad.size:
        raise PolarValidationError(
            f"value {show_value(float(array[bad[0]]))} is not finite",
            row=int(bad[0]),
            field=name,
        )


@dataclass(frozen=True, eq=False)
class Polar:
    """An immutable section polar: lift, drag and optional pitching-moment coefficients
    against angle of attack, with the conditions that identify it.

    Parameters
    ----------
    alpha_deg : array_like
        Angle of attack [deg], each within -180..180. Unsorted input is sorted.
    cl, cd : array_like
        Lift and drag coefficient [-]; ``cd`` must be strictly positive.
    cm : array_like, optional
        Pitching-moment coefficient about the quarter chord, nose-up positive [-].
    reynolds : float, optional
        Chord Reynolds number [-], positive.
    mach : float
        Mach number [-], 0 <= mach < 1.
    thickness : float, optional
        Relative thickness t/c as a fraction (0.21, not 21), 0 < t/c <= 1 (1 is a cylinder).
    surface : str
        Surface condition, one of :data:`SURFACE_CONDITIONS`.
    history : tuple of mappings
        The steps that produced this table from stored data, each a mapping with at least a
        ``"step"`` key, plus whatever that step reports (join angles, slope jumps, clamps).
    assume_degrees : bool
        Skip the check that rejects tables whose angles look like radians.

    Raises
    ------
    PolarValidationError
        On non-finite values, ``cd <= 0``, angles outside -180..180, duplicate angles with
        different values, columns of unequal length, fewer than two rows, or angles that
        look like radians. The error names the row (zero-based, as given) and field.
    ParameterError
        On invalid conditions (Reynolds, Mach, thickness, surface).

    Notes
    -----
    Rows that repeat an angle with identical values are merged (nothing is lost); rows
    that repeat an angle with different values are refused.
    """

    alpha_deg: FloatArray
    cl: FloatArray
    cd: FloatArray
    cm: FloatArray | None = None
    reynolds: float | None = None
    mach: float = 0.0
    thickness: float | None = None
    surface: str = "clean"
    history: tuple[Mapping[str, Any], ...] = field(default=())
    assume_degrees: InitVar[bool] = False

    def __post_init__(self, assume_degrees: bool) -> None:
        alpha = _as_float_column(self.alpha_deg, "alpha_deg")
        columns = {"cl": _as_float_column(self.cl, "cl"), "cd": _as_float_column(self.cd, "cd")}
        if self.cm is not None:
            columns["cm"] = _as_float_column(self.cm, "cm")
        for name, column in columns.items():
            if column.shape != alpha.shape:
                raise PolarValidationError(
                    f"has {column.size} rows but alpha_deg has {alpha.size}", field=name
                )
        if alpha.size < 2:
            raise PolarValidationError(
                f"a polar needs at least 2 rows, got {alpha.size}", field="alpha_deg"
            )
        _check_finite(alpha, "alpha_deg")
        for name, column in columns.items():
            _check_finite(column, name)
        outside = np.flatnonzero(np.abs(alpha) > 180.0)
        if outside.size:
            raise PolarValidationError(
                f"angle {alpha[outside[0]]:g} deg lies outside -180..180",
                row=int(outside[0]),
                field="alpha_deg",
            )
        nonpositive = np.flatnonzero(columns["cd"] <= 0.0)
        if nonpositive.size:
            raise PolarValidationError(
                f"drag coefficient {columns['cd'][nonpositive[0]]:g} must be positive",
                row=int(nonpositive[0]),
                field="cd",
            )
        span = float(alpha.max() - alpha.min())
        if (
            not assume_degrees
            and float(np.abs(alpha).max()) <= RADIAN_SUSPICION_LIMIT_DEG
            and span > RADIAN_SUSPICION_SPAN
        ):
            raise PolarValidationError(
                f"all angles lie within +-{RADIAN_SUSPICION_LIMIT_DEG} while spanning "
                f"{span:.2f}: they look like radians; convert to degrees "
                "(or pass assume_degrees=True if they really are degrees)",
                field="alpha_deg",
            )
        order = np.argsort(alpha, kind="stable")
        alpha_sorted = alpha[order]
        sorted_columns = {name: column[order] for name, column in columns.items()}
        repeated = np.flatnonzero(np.diff(alpha_sorted) == 0.0)
        if repeated.size:
            keep = np.ones(alpha_sorted.size, dtype=bool)
            for index in repeated:
                for name, column in sorted_columns.items():
                    if column[index] != column[index + 1]:
                        raise PolarValidationError(
                            f"angle {alpha_sorted[index]:g} deg appears twice with different "
                            f"values ({column[index]:g} and {column[index + 1]:g})",
                            row=int(order[index + 1]),
                            field=name,
                        )
                keep[index + 1] = False
            alpha_sorted = alpha_sorted[keep]
            sorted_columns = {name: column[keep] for name, column in sorted_columns.items()}
            if alpha_sorted.size < 2:
                raise PolarValidationError(
                    "a polar needs at least 2 distinct angles", field="alpha_deg"
                )
        _check_conditions(self.reynolds, self.mach, self.thickness, self.surface)
        for array in (alpha_sorted, *sorted_columns.values()):
            array.flags.writeable = False
        object.__setattr__(self, "alpha_deg", alpha_sorted)
        object.__setattr__(self, "cl", sorted_columns["cl"])
        object.__setattr__(self, "cd", sorted_columns["cd"])
        object.__setattr__(self, "cm", sorted_columns.get("cm"))
        object.__setattr__(
            self, "reynolds", None if self.reynolds is None else float(self.reynolds)
        )
        object.__setattr__(self, "mach", float(self.mach))
        object.__setattr__(
            self, "thickness", None if self.thickness is None else float(self.thickness)
        )
        object.__setattr__(self, "history", tuple(dict(step) for step in self.history))

    # -- convenience -----------------------------------------------------------------------
    @property
    def size(self) -> int:
        """Number of rows."""
        return int(self.alpha_deg.size)

    @property
    def has_cm(self) -> bool:
        """Whether the table carries a pitching-moment column."""
        return self.cm is not None

    @property
    def covers_full_range(self) -> bool:
        """Whether the table spans -180..180 deg."""
        return bool(self.alpha_deg[0] <= -180.0 and self.alpha_deg[-1] >= 180.0)

    def conditions(self) -> dict[str, Any]:
        """The identifying conditions as a plain mapping."""
        return {
            "reynolds": self.reynolds,
            "mach": self.mach,
            "thickness": self.thickness,
            "surface": self.surface,
        }

    def with_table(
        self,
        alpha_deg: ArrayLike,
        cl: ArrayLike,
        cd: ArrayLike,
        cm: ArrayLike | None,
        step: Mapping[str, Any] | None = None,
        **conditions: Any,
    ) -> Polar:
        """A new polar with another table (and optionally changed conditions), appending
        ``step`` to the history."""
        history = self.history + ((dict(step),) if step is not None else ())
        return dataclasses.replace(
            self,
            alpha_deg=alpha_deg,
            cl=cl,
            cd=cd,
            cm=cm,
            history=history,
            assume_degrees=True,
            **conditions,
        )

    def table_equal(self, other: Polar) -> bool:
        """Whether the two tables (angles and coefficients) are identical, bit for bit."""
        if self.has_cm != other.has_cm or self.size != other.size:
            return False
        pairs = [(self.alpha_deg, other.alpha_deg), (self.cl, other.cl), (self.cd, other.cd)]
        if self.cm is not None and other.cm is not None:
            pairs.append((self.cm, other.cm))
        return all(np.array_equal(a, b) for a, b in pairs)

    def __repr__(self) -> str:
        span = f"{self.alpha_deg[0]:g}..{self.alpha_deg[-1]:g} deg"
        return (
            f"Polar({self.size} rows, {span}, Re={self.reynolds}, t/c={self.thickness}, "
            f"surface={self.surface!r}, cm={'yes' if self.has_cm else 'no'})"
        )


def _check_conditions(
    reynolds: float | None, mach: float, thickness: float | None, surface: str
) -> None:
    if reynolds is not None and not (np.isfinite(reynolds) and reynolds > 0):
        raise ParameterError(
            "reynolds", f"must be a positive finite number, got {show_value(reynolds)}"
        )
    if not (np.isfinite(mach) and 0.0 <= mach < 1.0):
        raise ParameterError("mach", f"must lie in [0, 1), got {show_value(mach)}")
    if thickness is not None and not (np.isfinite(thickness) and 0.0 < thickness <= 1.0):
        hint = " (give thickness as a fraction, e.g. 0.21 for 21 %)" if thickness > 1 else ""
        raise ParameterError("thickness", f"must lie in (0, 1], got {show_value(thickness)}{hint}")
    if surface not in SURFACE_CONDITIONS:
        raise ParameterError(
            "surface", f"{surface!r} is not one of {', '.join(SURFACE_CONDITIONS)}"
        )


def polar_from_columns(
    alpha_deg: Sequence[float] | ArrayLike,
    cl: Sequence[float] | ArrayLike,
    cd: Sequence[float] | ArrayLike,
    cm: Sequence[float] | ArrayLike | None = None,
    **conditions: Any,
) -> Polar:
    """Build a :class:`Polar` from plain sequences (a convenience for scripts)."""
    return Polar(alpha_deg=alpha_deg, cl=cl, cd=cd, cm=cm, **conditions)

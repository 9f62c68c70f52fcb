"""Quality flags of a section table: plausibility checks run when a polar is stored.

Each check returns :class:`QualityFlag` objects of level ``"error"`` (the table is refused
unless a curator overrides the check, except :data:`UNOVERRIDABLE` codes, which always
refuse) or ``"warning"`` (stored with the table and shown wherever it is used).

Bounds and their sources
------------------------
Lift-curve slope (code ``lift-slope``), fitted over ``|alpha - alpha0| <= 5 deg`` by
:func:`polarsvc.aero.characteristics.attached_lift_line`:

- thin-airfoil theory gives ``2 pi`` per radian (Abbott & von Doenhoff 1959, "Theory of
  Wing Sections", sec. 4.3); thickness raises the inviscid slope and the boundary layer lowers
  it, so measured sections lie near 0.9-1.0 of ``2 pi`` when thin and drop towards 0.7 of it
  at t/c 0.30-0.40 (Abbott & von Doenhoff 1959, appendix IV data, from memory);
- warning outside :data:`SLOPE_WARNING_BAND` = 0.55..1.25 times ``2 pi`` (common practice, no
  source: margin around the range above);
- error outside :data:`SLOPE_ERROR_BAND` = 0.25..2.0 times ``2 pi`` (no attached 2D section
  comes near these values; common practice, no source), or a slope that is not positive.

Angles that look like radians (``angles-radians``, error): judged by the lift slope, not by the
span of the angles. If the slope fitted with the angles read as degrees lies above the error
band while the slope fitted with them read as radians (times 180/pi) lies inside it, the angles
are radians written under a degree header.

Lift magnitude (``cl-magnitude``): single-element 2D sections reach cl_max of about 1.2-2.0 at
rotor Reynolds numbers (Abbott & von Doenhoff 1959, appendix IV, from memory); multi-element
high-lift sections about 4-4.5 (from memory). Warning above |cl| = :data:`CL_WARNING` = 2.5,
error above :data:`CL_ERROR` = 4.5.

Drag (``cd-counts``, ``cd-magnitude``): a 2D flat plate normal to the flow has cd of about 2.0,
the largest drag of a 2D section (Hoerner 1965, "Fluid-Dynamic Drag", ch. 3, from memory); a
circular cylinder below the drag crisis about 1.2 (same source, from memory). A table whose
*smallest* cd exceeds :data:`CD_COUNTS_MIN` = 1.5 holds drag counts (1 count = 0.0001) or a
percentage, not coefficients (error); any cd above :data:`CD_ERROR` = 3.0 is an error.

Moment (``cm-magnitude``): normal-force coefficient at most about 2.0 (flat plate, above)
times the largest lever arm from the quarter chord, 0.75 chord: |cm| above
:data:`CM_ERROR` = 1.5 is an error (derived from the bounds above).

Absurd magnitudes (``absurd-magnitude``, error that no override lifts): |cl| or |cm| beyond
:data:`ABSURD_MAGNITUDE` = 1000, cd beyond :data:`ABSURD_CD` = 100 000 (drag counts of a flat
plate normal to the flow, 2.0 = 20 000 counts, stay below it, so a table in counts is named as
such). Such values are not data; passed on they overflow the extension and interpolation
arithmetic.

Spikes (``spike``, warning): a point whose distance from the straight line through its two
neighbours exceeds :data:`SPIKE_ROBUST_FACTOR` = 10 times the median such distance of the
table, and :data:`SPIKE_FLOOR` (cl 0.15, cd 0.02, cm 0.05) in absolute terms, while both
neighbours deviate the other way (an isolated outlier in the second difference; common
practice, no source).

Table size (``too-few-rows`` error below :data:`MIN_ROWS` = 5 rows, ``few-rows`` warning below
:data:`FEW_ROWS` = 10): the lift line needs two or more points within 5 deg of alpha0 and the
extension a stall on each side (common practice, no source).

Zero-lift angle (``one-sided``): a lifting section without rows on one side of its zero-lift
angle, or without data on both sides of 0 deg, cannot be extended to -180..180 deg
(:func:`polarsvc.aero.extension.extend_full_range`): error; fewer than
:data:`MIN_ROWS_PER_SIDE` = 2 rows on one side: warning.

Context of a family member (:func:`context_flags`):

- ``reynolds-missing`` (error): a family member without a Reynolds number cannot be
  interpolated to a station's Reynolds number;
- ``mach-not-stated`` (warning): the file states no Mach number; 0 (incompressible) is stored;
- ``mach-inconsistent`` (error): the Prandtl-Glauert factor ``1/sqrt(1 - M^2)`` (Glauert 1928,
  Proc. R. Soc. A 118) of this table differs by more than :data:`MACH_FACTOR_TOLERANCE` = 2 %
  from that of every other member of the family (M = 0.2 against M = 0 is 2.1 %); blending
  tables at different Mach numbers mixes compressibility effects.

Sections without lift (a cylinder: t/c at or above :data:`LIFTLESS_THICKNESS` = 0.6, or
|cl| never above :data:`LIFTLESS_CL` = 0.05) skip the lift checks.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from polarsvc.aero.characteristics import ZERO_LIFT_SEARCH_DEG, attached_lift_line
from polarsvc.aero.errors import InsufficientDataError
from polarsvc.aero.polar import Polar

LEVELS: tuple[str, ...] = ("error", "warning")

THIN_AIRFOIL_SLOPE_PER_RAD = 2.0 * math.pi
"""Thin-airfoil lift-curve slope [1/rad] (Abbott & von Doenhoff 1959, sec. 4.3)."""

SLOPE_WARNING_BAND = (0.55, 1.25)
SLOPE_ERROR_BAND = (0.25, 2.0)
CL_WARNING = 2.5
CL_ERROR = 4.5
CD_COUNTS_MIN = 1.5
CD_ERROR = 3.0
CM_ERROR = 1.5
ABSURD_MAGNITUDE = 1000.0
ABSURD_CD = 100_000.0
SPIKE_ROBUST_FACTOR = 10.0
SPIKE_FLOOR = {"cl": 0.15, "cd": 0.02, "cm": 0.05}
MIN_ROWS = 5
FEW_ROWS = 10
MIN_ROWS_PER_SIDE = 2
MACH_FACTOR_TOLERANCE = 0.02
LIFTLESS_THICKNESS = 0.6
LIFTLESS_CL = 0.05

UNOVERRIDABLE: frozenset[str] = frozenset({"absurd-magnitude"})
"""Error codes that refuse a table whatever the override."""


@dataclass(frozen=True)
class QualityFlag:
    """One finding about a table.

    ``row`` is the zero-based row of the stored (sorted) table and ``alpha_deg`` its angle,
    where the finding is about one row; ``field`` the column or condition concerned.
    """

    code: str
    level: str
    message: str
    field: str | None = None
    row: int | None = None
    alpha_deg: float | None = None
    value: float | None = None

    @property
    def overridable(self) -> bool:
        return self.level == "error" and self.code not in UNOVERRIDABLE

    def as_dict(self) -> dict[str, Any]:
        return {
            "code": self.code,
            "level": self.level,
            "message": self.message,
            "field": self.field,
            "row": self.row,
            "alpha_deg": self.alpha_deg,
            "value": self.value,
        }


def _row_flag(
    code: str, level: str, message: str, polar: Polar, field: str, row: int
) -> QualityFlag:
    column = getattr(polar, field)
    return QualityFlag(
        code, level, message, field=field, row=int(row),
        alpha_deg=float(polar.alpha_deg[row]), value=float(column[row]),
    )


def _largest(values: np.ndarray) -> int:
    return int(np.argmax(np.abs(values)))


def _magnitude_flags(polar: Polar) -> list[QualityFlag]:
    flags: list[QualityFlag] = []
    absurd: set[str] = set()
    for name in ("cl", "cd", "cm"):
        column = getattr(polar, name)
        if column is None:
            continue
        row = _largest(column)
        limit = ABSURD_CD if name == "cd" else ABSURD_MAGNITUDE
        if abs(float(column[row])) > limit:
            absurd.add(name)
            flags.append(_row_flag(
                "absurd-magnitude", "error",
                f"{name} = {float(column[row]):g} is beyond {limit:g}: not a "
                "coefficient of any section", polar, name, row,
            ))
    if "cl" not in absurd:
        row = _largest(polar.cl)
        value = abs(float(polar.cl[row]))
        if value > CL_ERROR:
            flags.append(_row_flag(
                "cl-magnitude", "error",
                f"|cl| = {value:g} exceeds {CL_ERROR:g}, beyond what a 2D section reaches",
                polar, "cl", row,
            ))
        elif value > CL_WARNING:
            flags.append(_row_flag(
                "cl-magnitude", "warning",
                f"|cl| = {value:g} exceeds {CL_WARNING:g}, above single-element 2D sections",
                polar, "cl", row,
            ))
    if "cd" not in absurd:
        low = int(np.argmin(polar.cd))
        high = int(np.argmax(polar.cd))
        if float(polar.cd[low]) > CD_COUNTS_MIN:
            flags.append(_row_flag(
                "cd-counts", "error",
                f"the smallest cd is {float(polar.cd[low]):g}: the column looks like drag "
                "counts (1 count = 0.0001) or a percentage, not coefficients",
                polar, "cd", low,
            ))
        elif float(polar.cd[high]) > CD_ERROR:
            flags.append(_row_flag(
                "cd-magnitude", "error",
                f"cd = {float(polar.cd[high]):g} exceeds {CD_ERROR:g} (a flat plate normal to "
                "the flow has about 2.0)", polar, "cd", high,
            ))
    if polar.cm is not None and "cm" not in absurd:
        row = _largest(polar.cm)
        if abs(float(polar.cm[row])) > CM_ERROR:
            flags.append(_row_flag(
                "cm-magnitude", "error",
                f"|cm| = {abs(float(polar.cm[row])):g} exceeds {CM_ERROR:g} (normal force 2.0 "
                "at 0.75 chord from the quarter chord)", polar, "cm", row,
            ))
    return flags


def _lifting(polar: Polar) -> bool:
    if polar.thickness is not None and polar.thickness >= LIFTLESS_THICKNESS:
        return False
    return bool(np.max(np.abs(polar.cl)) > LIFTLESS_CL)


def _lift_flags(polar: Polar) -> list[QualityFlag]:
    low, high = ZERO_LIFT_SEARCH_DEG
    if np.count_nonzero((polar.alpha_deg >= low) & (polar.alpha_deg <= high)) < 2:
        return [QualityFlag(
            "lift-slope", "error",
            f"fewer than 2 rows within {low:g}..{high:g} deg: no lift line can be fitted",
            field="alpha_deg"), *_side_flags(polar, 0.0)]
    try:
        slope, alpha0 = attached_lift_line(polar)
    except InsufficientDataError as exc:
        return [QualityFlag("lift-slope", "error", f"no lift line can be fitted: {exc}",
                            field="cl"), *_side_flags(polar, 0.0)]
    flags: list[QualityFlag] = []
    ratio = slope / THIN_AIRFOIL_SLOPE_PER_RAD
    warn_low, warn_high = SLOPE_WARNING_BAND
    err_low, err_high = SLOPE_ERROR_BAND
    shown = f"{slope:.3g} per rad ({ratio:.2f} x 2 pi)"
    as_radians = _slope_as_radians(polar) if ratio > err_high else None
    if as_radians is not None and err_low <= as_radians <= err_high:
        flags.append(QualityFlag(
            "angles-radians", "error",
            f"the lift slope is {shown} when the angles are read as degrees, "
            f"{as_radians:.2f} x 2 pi when read as radians: the angle column holds radians; "
            "name it 'alpha_rad' or state 'angle_unit: rad'",
            field="alpha_deg", value=slope,
        ))
    elif not slope > 0.0:
        flags.append(QualityFlag(
            "lift-slope", "error",
            "cl does not rise with the angle of attack near the zero-lift angle (is the sign "
            "of cl or of the angles reversed?)", field="cl", value=slope,
        ))
    elif not err_low <= ratio <= err_high:
        flags.append(QualityFlag(
            "lift-slope", "error",
            f"lift slope {shown} lies outside {err_low:g}..{err_high:g} x 2 pi",
            field="cl", value=slope,
        ))
    elif not warn_low <= ratio <= warn_high:
        flags.append(QualityFlag(
            "lift-slope", "warning",
            f"lift slope {shown} lies outside {warn_low:g}..{warn_high:g} x 2 pi",
            field="cl", value=slope,
        ))
    return flags + _side_flags(polar, alpha0)


def _side_flags(polar: Polar, alpha0: float) -> list[QualityFlag]:
    below = int(np.count_nonzero(polar.alpha_deg < alpha0))
    above = int(np.count_nonzero(polar.alpha_deg > alpha0))
    side = "below" if below < above else "above"
    shown = round(alpha0, 2) + 0.0  # no "-0.00" for a zero-lift angle a rounding below 0
    where = (f"{min(below, above)} rows {side} the zero-lift angle {shown:.2f} deg (table "
             f"spans {polar.alpha_deg[0]:g}..{polar.alpha_deg[-1]:g} deg)")
    if min(below, above) == 0 or not (polar.alpha_deg[0] < 0.0 < polar.alpha_deg[-1]):
        return [QualityFlag(
            "one-sided", "error",
            f"{where}: the table cannot be extended to -180..180 deg", field="alpha_deg",
        )]
    if min(below, above) < MIN_ROWS_PER_SIDE:
        return [QualityFlag(
            "one-sided", "warning", f"{where}: the negative-stall side rests on one row",
            field="alpha_deg",
        )]
    return []


def _slope_as_radians(polar: Polar) -> float | None:
    """The lift slope (as a multiple of 2 pi) of the table with its angles read as radians,
    or None when they cannot be radians (beyond +-pi) or no line can be fitted."""
    if float(np.max(np.abs(polar.alpha_deg))) > math.pi:
        return None
    converted = Polar(np.degrees(polar.alpha_deg), polar.cl, polar.cd, polar.cm,
                      thickness=polar.thickness, assume_degrees=True)
    try:
        slope, _ = attached_lift_line(converted)
    except InsufficientDataError:
        return None
    return slope / THIN_AIRFOIL_SLOPE_PER_RAD


def _spike_flags(polar: Polar) -> list[QualityFlag]:
    if polar.size < 5:
        return []
    flags: list[QualityFlag] = []
    alpha = polar.alpha_deg
    position = (alpha[1:-1] - alpha[:-2]) / (alpha[2:] - alpha[:-2])
    for name in ("cl", "cd", "cm"):
        column = getattr(polar, name)
        if column is None:
            continue
        line = column[:-2] + position * (column[2:] - column[:-2])
        residual = column[1:-1] - line
        typical = float(np.median(np.abs(residual)))
        threshold = max(SPIKE_ROBUST_FACTOR * typical, SPIKE_FLOOR[name])
        for index in np.flatnonzero(np.abs(residual) > threshold):
            row = int(index) + 1
            before = residual[index - 1] if index >= 1 else -residual[index]
            after = residual[index + 1] if index + 1 < residual.size else -residual[index]
            if before * residual[index] < 0 and after * residual[index] < 0:
                flags.append(_row_flag(
                    "spike", "warning",
                    f"{name} = {float(column[row]):g} stands {float(residual[index]):+.3g} off "
                    "the line through its neighbours (an isolated outlier)",
                    polar, name, row,
                ))
    return flags


def table_flags(polar: Polar) -> list[QualityFlag]:
    """Flags of the table alone (see the module docstring for each bound and its source)."""
    flags = _magnitude_flags(polar)
    if polar.size < MIN_ROWS:
        flags.append(QualityFlag(
            "too-few-rows", "error",
            f"{polar.size} rows; at least {MIN_ROWS} are needed to fit the lift line and "
            "extend the table", field="alpha_deg", value=float(polar.size),
        ))
        return flags
    if polar.size < FEW_ROWS:
        flags.append(QualityFlag(
            "few-rows", "warning", f"only {polar.size} rows", field="alpha_deg",
            value=float(polar.size),
        ))
    if any(f.code == "absurd-magnitude" for f in flags):
        return flags
    if _lifting(polar):
        flags.extend(_lift_flags(polar))
    flags.extend(_spike_flags(polar))
    return flags


def prandtl_glauert_factor(mach: float) -> float:
    """``1 / sqrt(1 - M^2)`` (Glauert 1928, Proc. R. Soc. A 118)."""
    return 1.0 / math.sqrt(1.0 - mach * mach)


def context_flags(
    polar: Polar,
    *,
    in_family: bool,
    mach_stated: bool = True,
    family_machs: Iterable[float] = (),
) -> list[QualityFlag]:
    """Flags of a table as a member of its family (see the module docstring).

    Parameters
    ----------
    in_family : bool
        Whether the airfoil belongs to a family (and so feeds family blends).
    mach_stated : bool
        Whether the file stated the Mach number.
    family_machs : iterable of float
        Mach numbers of the family's other stored tables.
    """
    flags: list[QualityFlag] = []
    if in_family and polar.reynolds is None:
        flags.append(QualityFlag(
            "reynolds-missing", "error",
            "no Reynolds number: a family member without one cannot be interpolated to a "
            "station's Reynolds number; state it ('# reynolds: 3e6')", field="reynolds",
        ))
    if not mach_stated:
        flags.append(QualityFlag(
            "mach-not-stated", "warning",
            "no Mach number stated; stored as 0 (incompressible)", field="mach", value=0.0,
        ))
    others = sorted({float(m) for m in family_machs})
    if in_family and others:
        factor = prandtl_glauert_factor(polar.mach)
        nearest = min(others, key=lambda m: abs(prandtl_glauert_factor(m) - factor))
        difference = abs(factor / prandtl_glauert_factor(nearest) - 1.0)
        if difference > MACH_FACTOR_TOLERANCE:
            flags.append(QualityFlag(
                "mach-inconsistent", "error",
                f"Mach {polar.mach:g} against {', '.join(f'{m:g}' for m in others)} in the "
                f"family: the compressibility factors differ by {100 * difference:.1f} % "
                f"(more than {100 * MACH_FACTOR_TOLERANCE:g} %)", field="mach",
                value=polar.mach,
            ))
    return flags


def errors_of(flags: Sequence[QualityFlag]) -> list[QualityFlag]:
    """The error-level flags."""
    return [f for f in flags if f.level == "error"]

"""Pydantic schemas of request bodies (strict numbers: ``[false]`` is not a float list).

Responses are encoded by orjson from plain structures (see polarsvc.api.responses);
their shapes are documented in the endpoint descriptions and in the README.
"""

from __future__ import annotations

import datetime as dt
from typing import Annotated, Literal

from fastapi import Path, Query
from pydantic import (
    AwareDatetime,
    BaseModel,
    ConfigDict,
    Field,
    StrictFloat,
    StrictInt,
    field_validator,
    model_validator,
)

from polarsvc import performance
from polarsvc.formats.binary import ARROW_MEDIA_TYPE, NPZ_MEDIA_TYPE
from polarsvc.names import NAME_MAX_LENGTH, NAME_PATTERN, TEXT_PATTERN
from polarsvc.rotor.power import MIN_RATED_POWER_W
from polarsvc.store.paging import DEFAULT_PAGE_SIZE, MAX_PAGE_SIZE

LimitQuery = Annotated[
    int,
    Query(ge=1, le=MAX_PAGE_SIZE, description="items per page (keyset pagination; the "
          "Link header names the next page, X-Total-Count the matching items)"),
]
AfterQuery = Annotated[
    str | None,
    Query(max_length=1000, description="cursor of the next page, as given in the Link header"),
]
PAGE_SIZE = DEFAULT_PAGE_SIZE


def number(**bounds: float) -> object:
    """A strict JSON number (float or integer, never a boolean or a string), finite, within
    ``bounds`` (gt, ge, lt, le). The bounds are set on each member of the union so the
    OpenAPI document states them (a bound on the union itself is not published as JSON
    Schema)."""
    return Annotated[
        Annotated[StrictFloat, Field(allow_inf_nan=False, **bounds)]
        | Annotated[StrictInt, Field(**bounds)],
        Field(),
    ]


Number = number()
PositiveNumber = number(gt=0)
FiniteNumber = number()

Name = Annotated[
    str,
    Field(min_length=1, max_length=NAME_MAX_LENGTH, pattern=NAME_PATTERN,
          description="a name: ASCII letters and digits, space and . _ - + ( ); first a "
          "letter or digit, no space at the end (polarsvc.names)"),
]
FreeText = Annotated[str, Field(max_length=4000, pattern=TEXT_PATTERN)]

HASH_KEY_PATTERN = r"^[0-9a-fA-F]{8,64}$"
HashKey = Annotated[
    str,
    Path(pattern=HASH_KEY_PATTERN,
         description="a full sha256 hex digest, or a unique prefix of at least 8 digits"),
]
"""A path parameter naming a stored revision or derived table by hash."""


class StrictModel(BaseModel):
    model_config = ConfigDict(extra="forbid", strict=True)


class ReviewChange(StrictModel):
    """A review decision on a polar revision."""

    state: Literal["approved", "deprecated"]
    reason: FreeText | None = None
    replaced_by: Annotated[str, Field(pattern=HASH_KEY_PATTERN)] | None = None
    replacement_reason: Annotated[str, Field(max_length=4000)] | None = Field(
        default=None,
        description="why a replacement at other conditions (airfoil, Reynolds number, Mach "
        "number, surface) is right; required in that case",
    )


Reason = Annotated[str, Field(min_length=1, max_length=4000, description="kept in the audit")]


class AirfoilMove(StrictModel):
    """Move an airfoil to another existing family (``null``: out of any family)."""

    family: Annotated[str, Field(min_length=1, max_length=200)] | None
    reason: Reason


class AirfoilRename(StrictModel):
    """Rename an airfoil; the former name stays as an alias that still resolves."""

    new_name: Annotated[str, Field(min_length=1, max_length=200)]
    reason: Reason


class AirfoilRetirement(StrictModel):
    """Retire an airfoil from family blends and blade sets, or reinstate it."""

    reason: Reason


class ProvenanceCorrection(StrictModel):
    """Corrected provenance fields (only those that change) of a revision."""

    provenance: dict[
        Literal["source_kind", "reference", "facility", "measured_on", "contributor", "notes"],
        Annotated[str, Field(max_length=4000)] | None,
    ]
    reason: Reason


class FamilyIn(StrictModel):
    """A new airfoil family."""

    name: Name
    description: FreeText = ""


class CoordinatesIn(StrictModel):
    """An outline in chord fractions, from the trailing edge round the nose and back."""

    x: Annotated[list[FiniteNumber], Field(min_length=3, max_length=2000)]
    y: Annotated[list[FiniteNumber], Field(min_length=3, max_length=2000)]


class AirfoilIn(StrictModel):
    """A new airfoil."""

    name: Name
    thickness: number(gt=0, le=1) = Field(  # type: ignore[valid-type]
        description="relative thickness t/c as a fraction (0.21, not 21)"
    )
    family: Name | None = None
    description: FreeText = ""
    coordinates: CoordinatesIn | None = None


class StationIn(StrictModel):
    """One blade station."""

    radius_m: PositiveNumber
    chord_m: PositiveNumber
    twist_deg: number(ge=-90, le=90)  # type: ignore[valid-type]
    thickness: number(gt=0, le=1) = Field(  # type: ignore[valid-type]
        description="relative thickness t/c as a fraction (0.21, not 21)"
    )


class OperatingPointIn(StrictModel):
    """Wind speed and rotor speed used for station Reynolds numbers and augmentation."""

    wind_speed_m_s: PositiveNumber
    rotor_speed_rpm: PositiveNumber


class TurbineIn(StrictModel):
    """Rotor data for power curves and annual energy (all optional here; a power curve
    needs every field but the air density, from the blade or the request)."""

    notes: Annotated[str, Field(max_length=4000)] | None = None
    rated_power_w: number(ge=MIN_RATED_POWER_W) | None = None  # type: ignore[valid-type]
    min_rotor_speed_rpm: number(ge=0) | None = None  # type: ignore[valid-type]
    max_rotor_speed_rpm: PositiveNumber | None = None
    efficiency: number(gt=0, le=1) | None = None  # type: ignore[valid-type]
    cut_in_m_s: PositiveNumber | None = None
    cut_out_m_s: number(gt=0, le=100) | None = None  # type: ignore[valid-type]
    rho_kg_m3: number(gt=0, le=5) | None = None  # type: ignore[valid-type]


class RotorOptionsIn(StrictModel):
    """Rotor settings of a performance request (defaults as the GET endpoint)."""

    tip_loss: bool = True
    hub_loss: bool = True
    tangential_induction: bool = True
    high_thrust: bool = True
    turbine: TurbineIn | None = None
    weibull: Annotated[
        list[Annotated[list[PositiveNumber], Field(min_length=2, max_length=2)]],
        Field(max_length=10, description="(k, A [m/s]) pairs"),
    ] = []
    loads_at_m_s: Annotated[list[PositiveNumber], Field(max_length=20)] = []


class BladeSetSpec(StrictModel):
    """One blade set and its rotor settings, for a comparison."""

    blade: Annotated[str, Field(min_length=1, max_length=200)] = Field(
        description="blade name (latest revision) or blade revision hash"
    )
    approved_only: bool | None = None
    surface: Literal["clean", "tripped", "rough"] | None = None
    rotation_model: Literal["snel", "du-selig", "chaviaropoulos-hansen", "none"] = "snel"
    extension_method: Literal["viterna", "flat-plate"] = "viterna"
    aspect_ratio: PositiveNumber | None = None
    cd_max: PositiveNumber | None = None
    thickness_method: Literal["linear", "pchip"] = "linear"
    clamp: bool = False
    wind_speed_m_s: number(gt=0, le=100) | None = None  # type: ignore[valid-type]
    rotor_speed_rpm: number(gt=0, le=1000) | None = None  # type: ignore[valid-type]
    rotor: RotorOptionsIn = RotorOptionsIn()


class ComparisonIn(StrictModel):
    """Two blade sets to compare (b minus a)."""

    a: BladeSetSpec
    b: BladeSetSpec


class BladeIn(BaseModel):
    """A blade definition: stations from root to tip, the family whose sections it uses."""

    model_config = ConfigDict(extra="allow", strict=True)

    name: Name
    family: Name
    rotor_radius_m: PositiveNumber
    hub_radius_m: number(ge=0) = 0.0  # type: ignore[valid-type]
    blade_count: Annotated[int, Field(ge=1, le=20)] = 3
    surface: Literal["clean", "tripped", "rough"] = "clean"
    operating_point: OperatingPointIn | None = None
    turbine: TurbineIn | None = None
    stations: Annotated[list[StationIn], Field(min_length=2, max_length=500)]

    @model_validator(mode="after")
    def stations_along_span(self) -> BladeIn:
        radii = [s.radius_m for s in self.stations]
        for index in range(1, len(radii)):
            if radii[index] <= radii[index - 1]:
                raise ValueError(
                    f"stations[{index}].radius_m: radii must increase from root to tip "
                    f"({radii[index - 1]} then {radii[index]})"
                )
        if radii[-1] > self.rotor_radius_m * (1 + 1e-9):
            raise ValueError(
                f"stations[{len(radii) - 1}].radius_m: {radii[-1]} exceeds rotor_radius_m "
                f"{self.rotor_radius_m}"
            )
        if radii[0] < self.hub_radius_m:
            raise ValueError(
                f"stations[0].radius_m: {radii[0]} lies inside hub_radius_m {self.hub_radius_m}"
            )
        return self


class TokenIn(StrictModel):
    """A new API token."""

    name: Name
    role: Literal["reader", "curator", "admin"]
    expires_at: Annotated[AwareDatetime, Field(strict=False)] | None = Field(
        default=None, description="timezone-aware expiry (ISO 8601 with a zone); none means "
        "no expiry"
    )

    @field_validator("expires_at")
    @classmethod
    def expires_within_the_calendar(cls, value: dt.datetime | None) -> dt.datetime | None:
        if value is None:
            return None
        try:
            return value.astimezone(dt.UTC)
        except OverflowError:
            raise ValueError("lies outside the years 1..9999 once converted to UTC") from None


class ErrorOut(BaseModel):
    """An error answer: ``detail`` says what is wrong; ``line``, ``field`` or ``parameter``
    name the offending place where there is one."""

    detail: object
    line: int | None = None
    field: str | None = None
    parameter: str | None = None


ERROR_RESPONSES: dict[int | str, dict[str, object]] = {
    304: {"description": "not modified (If-None-Match named the current ETag)"},
    400: {"model": ErrorOut, "description": "unknown response format"},
    401: {"model": ErrorOut, "description": "no valid token"},
    403: {"model": ErrorOut, "description": "role too weak, or server read-only"},
    404: {"model": ErrorOut, "description": "no such airfoil, family, revision, blade or table"},
    409: {"model": ErrorOut, "description": "conflict: ambiguous hash prefix, review transition"},
    422: {"model": ErrorOut, "description": "invalid input (line, field or parameter named)"},
    503: {"model": ErrorOut, "description": "the database stayed busy with other writes past "
          "its lock timeout; nothing was changed; retry after Retry-After seconds"},
}
"""Error answers every resource may give, documented once for all routers."""

TABLE_RESPONSES: dict[int | str, dict[str, object]] = {
    200: {
        "description": "the table: JSON (default), CSV (`format=csv` or `Accept: text/csv`) "
        "or a binary form: Arrow IPC stream (`format=bin` or `format=arrow`), numpy npz "
        "(`format=npz`, also where pyarrow is absent)",
        "content": {
            "application/json": {},
            "text/csv": {"schema": {"type": "string"}},
            ARROW_MEDIA_TYPE: {"schema": {"type": "string", "format": "binary"}},
            NPZ_MEDIA_TYPE: {"schema": {"type": "string", "format": "binary"}},
        },
    },
}
"""The representations of a table answer (see polarsvc.api.responses)."""

IDENTICAL_EXISTS: dict[int | str, dict[str, object]] = {
    200: {"description": "identical content was already stored; nothing was written"},
    201: {"description": "stored"},
}
"""Answers of a create endpoint that is idempotent for identical content."""


RotorPart = Literal[performance.TABLE_PARTS]  # type: ignore[valid-type]
RotorPartQuery = Annotated[
    RotorPart | None,
    Query(description=(
        "a rotor result's part as columns, in every format: curve (power curve), cp (Cp "
        "surface, long), cp_lambda, stations (spanwise, long), energy, optimum, reynolds "
        "(station Reynolds numbers). Without it JSON and the binary forms carry every "
        "array and CSV the power curve. Tables have one part: ignored for them."
    )),
]
ComparisonPart = Literal[performance.COMPARISON_PARTS]  # type: ignore[valid-type]
ComparisonPartQuery = Annotated[
    ComparisonPart | None,
    Query(description=(
        "a part of the comparison as columns: curve (power curves), cp_lambda, energy, "
        "rated. Without it JSON is the whole comparison, the binary forms carry every part "
        "(arrays named <part>.<column>) and CSV the power curves."
    )),
]


"""Polar revisions: upload, list, read, review, and tables derived from one revision."""

from __future__ import annotations

from typing import Annotated, Any, Literal

from fastapi import APIRouter, Depends, HTTPException, Query, Request
from pydantic import WithJsonSchema
from sqlalchemy import select
from sqlalchemy.orm import Session, sessionmaker
from starlette.concurrency import run_in_threadpool

from polarsvc import aero, pipeline, recipes
from polarsvc.aero.extension import EXTENSION_METHODS
from polarsvc.aero.polar import SURFACE_CONDITIONS
from polarsvc.aero.rotation import ROTATION_MODELS
from polarsvc.api.deps import Curator, Principal, Reader, ReadSession, SettingsDep
from polarsvc.api.responses import (
    FORMATS,
    choose_format,
    json_response,
    page_headers,
    page_response,
    table_response,
)
from polarsvc.api.schemas import (
    ERROR_RESPONSES,
    HASH_KEY_PATTERN,
    PAGE_SIZE,
    TABLE_RESPONSES,
    AfterQuery,
    HashKey,
    LimitQuery,
    ProvenanceCorrection,
    ReviewChange,
)
from polarsvc.api.served import cache_policy, served_response
from polarsvc.api.settings import Settings
from polarsvc.api.visibility import shown_name
from polarsvc.formats import METADATA_KEYS
from polarsvc.formats.metadata import ANGLE_UNITS
from polarsvc.ingest import UploadedFile, store_uploads
from polarsvc.provenance import SOURCE_KINDS
from polarsvc.store import curation
from polarsvc.store import derived as derived_store
from polarsvc.store import polars as polar_store
from polarsvc.store.db import session_scope
from polarsvc.store.models import REVIEW_STATES, PolarRevision

router = APIRouter(tags=["polars"], responses=ERROR_RESPONSES)

TABLE_MEDIA_TYPES = (
    "text/csv",
    "text/tab-separated-values",
    "text/plain",
    "application/json",
    "application/octet-stream",
)

# Enumerated query parameters declare their values in the OpenAPI document (Literal of the
# constants the core and the store check against).
Surface = Literal[SURFACE_CONDITIONS]  # type: ignore[valid-type]
ReviewState = Literal[REVIEW_STATES]  # type: ignore[valid-type]
SourceKind = Literal[SOURCE_KINDS]  # type: ignore[valid-type]
AngleUnit = Literal[tuple(ANGLE_UNITS)]  # type: ignore[valid-type]
ExtensionMethod = Literal[EXTENSION_METHODS]  # type: ignore[valid-type]
RotationModel = Literal[ROTATION_MODELS]  # type: ignore[valid-type]
TableFormat = Literal[FORMATS]  # type: ignore[valid-type]
TrailingEdgeDrag = Literal[aero.TRAILING_EDGE_DRAG_RULES]  # type: ignore[valid-type]
RotationOrder = Literal[aero.ROTATION_ORDERS]  # type: ignore[valid-type]

FormatQuery = Annotated[
    TableFormat | None, Query(description="json, csv or bin (else the Accept header decides)")
]
ApprovedOnlyQuery = Annotated[
    bool | None,
    Query(description="serve only approved revisions (default: the server's setting)"),
]


def revision_summary(
    revision: PolarRevision | polar_store.RevisionSummary, principal: Principal
) -> dict[str, Any]:
    """The public form of a revision without its table (from the ORM row, or from a
    listing's :class:`~polarsvc.store.polars.RevisionSummary`; ``created_by`` for admins
    only)."""
    return {
        "content_hash": revision.content_hash,
        "airfoil": revision.airfoil.name,
        "family": revision.airfoil.family.name if revision.airfoil.family else None,
        "conditions": {
            "reynolds": revision.reynolds,
            "mach": revision.mach,
            "surface": revision.surface,
            "thickness": revision.airfoil.thickness,
        },
        "rows": revision.n_rows,
        "has_cm": revision.has_cm,
        "provenance": {
            key: (value.isoformat() if hasattr(value, "isoformat") else value)
            for key, value in polar_store.revision_provenance(revision).items()
        },
        "supersedes": revision.supersedes.content_hash if revision.supersedes else None,
        "quality_flags": polar_store.revision_flags(revision),
        "quality_override": revision.quality_override,
        "review": {
            "state": revision.review_state,
            "reason": revision.review_reason,
            "replaced_by": revision.replaced_by.content_hash if revision.replaced_by else None,
        },
        "created_at": revision.created_at.isoformat(),
        "created_by": shown_name(principal, revision.created_by),
    }


def approved_only_setting(settings: Settings, explicit: bool | None) -> bool:
    """The request's approved-only choice, else the server's default."""
    return settings.approved_only if explicit is None else explicit


@router.get("/polars", summary="List revisions (one page; filters in the query)")
def list_polars(
    request: Request,
    session: ReadSession,
    principal: Reader,
    airfoil: Annotated[str | None, Query(max_length=200)] = None,
    family: Annotated[str | None, Query(max_length=200)] = None,
    surface: Surface | None = None,
    reynolds: Annotated[float | None, Query(gt=0)] = None,
    review_state: ReviewState | None = None,
    source_kind: SourceKind | None = None,
    limit: LimitQuery = PAGE_SIZE,
    after: AfterQuery = None,
):
    """Revision summaries (no tables) by airfoil name, then storage order. One page per
    request: follow the ``Link: <...>; rel="next"`` header; ``X-Total-Count`` gives the
    number of matching revisions."""
    page = polar_store.page_revisions(
        session, airfoil=airfoil, family=family, reynolds=reynolds, surface=surface,
        review_state=review_state, source_kind=source_kind, after=after, limit=limit,
    )
    return page_response(
        request, [revision_summary(r, principal) for r in page.items],
        next_cursor=page.next_cursor, total=page.total,
    )


@router.post(
    "/polars",
    status_code=201,
    summary="Upload polar files (CSV, TSV, whitespace text or JSON; body or multipart form)",
    responses={
        200: {"description": "every polar in the file was already stored (identical)"},
        201: {"description": "at least one new revision was stored"},
        413: {"description": "the body exceeds the upload size limit"},
        415: {"description": "the content type is not a table"},
        422: {"description": "the file cannot be read; the answer names the line and field"},
    },
)
async def upload_polar(
    request: Request,
    settings: SettingsDep,
    principal: Curator,
    airfoil: Annotated[str | None, Query(max_length=200)] = None,
    family: Annotated[str | None, Query(max_length=200)] = None,
    thickness: Annotated[str | None, Query(max_length=32)] = None,
    reynolds: Annotated[str | None, Query(max_length=32)] = None,
    mach: Annotated[str | None, Query(max_length=32)] = None,
    surface: Surface | None = None,
    source_kind: SourceKind | None = None,
    reference: Annotated[str | None, Query(max_length=2000)] = None,
    facility: Annotated[str | None, Query(max_length=2000)] = None,
    measured_on: Annotated[str | None, Query(max_length=32)] = None,
    contributor: Annotated[str | None, Query(max_length=2000)] = None,
    notes: Annotated[str | None, Query(max_length=4000)] = None,
    angle_unit: AngleUnit | None = None,
    supersedes: Annotated[str | None, Query(pattern=HASH_KEY_PATTERN)] = None,
    filename: Annotated[str | None, Query(max_length=300)] = None,
    override_quality: Annotated[
        str | None,
        Query(max_length=2000, description="store despite error-level quality flags; the "
              "reason is kept with the revision and in the audit trail"),
    ] = None,
):
    """The body is the file itself, or a multipart form (``curl -F file=@a.csv -F
    file=@b.csv``) holding one or more files; text fields of the form fill metadata like
    the query parameters. Query parameters fill metadata the file does not give.
    All files are stored, or nothing; an error names the file, line and field. Every polar
    gets quality flags; error-level flags refuse the file with 422 naming line and field
    unless ``override_quality`` gives a reason (absurd magnitudes are refused whatever the
    override)."""
    content_type = (request.headers.get("content-type") or "").split(";")[0].strip().lower()
    if content_type and content_type not in (*TABLE_MEDIA_TYPES, MULTIPART):
        raise HTTPException(
            status_code=415,
            detail=f"content type {content_type!r} is not a table; "
            f"use one of {', '.join(TABLE_MEDIA_TYPES)}, or {MULTIPART} with file parts",
        )
    declared = request.headers.get("content-length")
    if declared and declared.isdigit() and int(declared) > settings.max_upload_bytes:
        raise HTTPException(
            status_code=413,
            detail=f"body of {declared} bytes exceeds the limit of {settings.max_upload_bytes}",
        )
    defaults = {
        key: value
        for key, value in {
            "airfoil": airfoil, "family": family, "thickness": thickness,
            "reynolds": reynolds, "mach": mach, "surface": surface,
            "source_kind": source_kind, "reference": reference, "facility": facility,
            "measured_on": measured_on, "contributor": contributor, "notes": notes,
            "angle_unit": angle_unit,
        }.items()
        if value is not None
    }
    if content_type == MULTIPART:
        files, fields = await _form_files(request, settings.max_upload_bytes)
        defaults.update({k: v for k, v in fields.items() if k in METADATA_KEYS})
        override_quality = fields.get("override_quality", override_quality)
    else:
        body = bytearray()
        async for chunk in request.stream():
            body.extend(chunk)
            if len(body) > settings.max_upload_bytes:
                raise HTTPException(
                    status_code=413,
                    detail=f"body exceeds the limit of {settings.max_upload_bytes} bytes",
                )
        files = [UploadedFile(filename, bytes(body), content_type or None)]
    # parsing, hashing and the database work run in a worker thread: the event loop stays
    # free for other requests while large files are stored
    outcomes = await run_in_threadpool(
        store_uploads, request.app.state.session_factory, files,
        actor=principal.actor(), defaults=defaults, max_bytes=settings.max_upload_bytes,
        supersedes=supersedes, override_quality=override_quality,
    )
    created = any(o.created for o in outcomes)
    return json_response(
        {"stored": [o.as_dict() for o in outcomes]}, status_code=201 if created else 200
    )


MULTIPART = "multipart/form-data"
MAX_FORM_FILES = 100


async def _form_files(
    request: Request, max_bytes: int
) -> tuple[list[UploadedFile], dict[str, str]]:
    """The file parts of a multipart form (any field name; several files allowed) and its
    text fields."""
    form = await request.form(max_files=MAX_FORM_FILES, max_fields=100)
    files: list[UploadedFile] = []
    fields: dict[str, str] = {}
    total = 0
    for key, value in form.multi_items():
        if isinstance(value, str):
            fields[key] = value
            continue
        data = await value.read()
        total += len(data)
        if total > max_bytes:
            raise HTTPException(
                status_code=413, detail=f"files exceed the limit of {max_bytes} bytes"
            )
        part_type = (value.content_type or "").split(";")[0].strip().lower() or None
        if part_type not in (None, *TABLE_MEDIA_TYPES):
            raise HTTPException(
                status_code=415,
                detail=f"part {value.filename or key!r}: content type {part_type!r} is not a "
                f"table; use one of {', '.join(TABLE_MEDIA_TYPES)}",
            )
        files.append(UploadedFile(value.filename or key, data, part_type))
    await form.close()
    if not files:
        raise HTTPException(
            status_code=422, detail="the form holds no file part (curl -F file=@polar.csv)"
        )
    return files, fields


@router.get("/polars/{content_hash}", summary="A revision: metadata, provenance and table")
def get_polar(content_hash: HashKey, session: ReadSession, principal: Reader):
    revision = polar_store.get_revision(session, content_hash)
    polar = polar_store.load_polar(revision)
    table = {"alpha_deg": polar.alpha_deg, "cl": polar.cl, "cd": polar.cd}
    if polar.cm is not None:
        table["cm"] = polar.cm
    return json_response({**revision_summary(revision, principal), "table": table})


@router.get(
    "/polars/{content_hash}/table", responses=TABLE_RESPONSES,
    summary="A revision's table as stored")
async def get_polar_table(
    content_hash: HashKey, request: Request, _: Reader, format: FormatQuery = None,
):
    fmt = choose_format(request, format)
    # the identity and review state are read each time (small, indexed); the table itself
    # is immutable under its hash and comes from memory after the first request. The
    # database work is one trip to a worker thread (a small read does not pay for several)
    full_hash, airfoil_name, review_state, table = await run_in_threadpool(
        _stored_table, request.app.state.session_factory, content_hash
    )
    columns = {name: values for name, values in table.items() if name != "alpha_deg"}
    meta = {
        "kind": "stored",
        "content_hash": full_hash,
        "airfoil": airfoil_name,
        "review_state": review_state,
        "caution": pipeline.CAUTION,
    }
    return table_response(
        request, fmt=fmt, content_hash=full_hash, alpha_deg=table["alpha_deg"],
        columns=columns, meta=meta,
    )


def _stored_table(
    factory: sessionmaker[Session], key: str
) -> tuple[str, str, str, dict[str, Any]]:
    """The full hash, airfoil name, review state and decoded table of a revision: one
    indexed read on a connection, and the table from memory (a session reads it from the
    database the first time)."""
    with factory.kw["bind"].connect() as connection:
        full_hash, airfoil_name, review_state = polar_store.revision_brief(connection, key)
    table = polar_store.REVISION_TABLES.peek(full_hash)
    if table is None:
        with session_scope(factory, write=False) as session:
            table = polar_store.table_of(session, full_hash)
    return full_hash, airfoil_name, review_state, table


GridStep = Annotated[
    float,
    WithJsonSchema({"type": "number", "enum": list(recipes.GRID_STEPS_DEG)}),
    Query(description="angle step of the table [deg]; one that divides 360 deg"),
]


def extension_query(
    method: Annotated[ExtensionMethod, Query(description="full-range extension method")] = (
        "viterna"
    ),
    aspect_ratio: Annotated[
        float | None, Query(gt=0, description="blade aspect ratio for cd_max (Viterna)")
    ] = None,
    cd_max: Annotated[float | None, Query(gt=0, le=3, description="drag at 90 deg")] = None,
    alpha_stall_pos_deg: Annotated[
        float | None, Query(gt=0, lt=90, description="positive join angle (default: found)")
    ] = None,
    alpha_stall_neg_deg: Annotated[
        float | None, Query(gt=-90, lt=0, description="negative join angle (default: found)")
    ] = None,
    trailing_edge_lift_factor: Annotated[
        float, Query(ge=0, le=2, description="lift scale beyond 90 deg")
    ] = 0.7,
    trailing_edge_drag: Annotated[
        TrailingEdgeDrag,
        Query(description="drag beyond 90 deg: reverse-flow (default) or mirror (the "
                          "leading-edge drag curve mirrored, cd(180) = cd(0))"),
    ] = "reverse-flow",
) -> dict[str, Any]:
    """The full-range extension settings of a request (one set of query parameters for every
    endpoint that extends)."""
    return recipes.extension_params(
        method=method, aspect_ratio=aspect_ratio, cd_max=cd_max,
        alpha_stall_pos_deg=alpha_stall_pos_deg, alpha_stall_neg_deg=alpha_stall_neg_deg,
        trailing_edge_lift_factor=trailing_edge_lift_factor,
        trailing_edge_drag=trailing_edge_drag,
    )


ExtensionQuery = Annotated[dict[str, Any], Depends(extension_query)]


def fade_query(
    fade_start_deg: Annotated[
        float | None,
        Query(ge=-90, le=90, description="absolute fade start [deg] (default: tied to the "
                                         "section's stall angle)"),
    ] = None,
    fade_end_deg: Annotated[
        float | None,
        Query(ge=-90, le=90, description="absolute fade end [deg] (default: tied to the "
                                         "section's stall angle)"),
    ] = None,
    fade_start_offset_deg: Annotated[
        float, Query(ge=-60, le=60, description="fade start relative to the stall angle")
    ] = recipes.DEFAULT_FADE_START_OFFSET_DEG,
    fade_end_offset_deg: Annotated[
        float, Query(ge=-60, le=90, description="fade end relative to the stall angle")
    ] = recipes.DEFAULT_FADE_END_OFFSET_DEG,
    negative_side: Annotated[
        bool, Query(description="also correct below the zero-lift angle")
    ] = False,
    rotation_order: Annotated[
        RotationOrder, Query(description="extend-then-augment (default) or augment-then-extend")
    ] = recipes.DEFAULT_ROTATION_ORDER,
) -> dict[str, Any]:
    """The augmentation's fade and order settings of a request (keywords of
    :func:`polarsvc.recipes.rotation_params`)."""
    return {
        "fade_start_deg": fade_start_deg,
        "fade_end_deg": fade_end_deg,
        "fade_start_offset_deg": fade_start_offset_deg,
        "fade_end_offset_deg": fade_end_offset_deg,
        "negative_side": negative_side,
        "order": rotation_order,
    }


FadeQuery = Annotated[dict[str, Any], Depends(fade_query)]


@router.get(
    "/polars/{content_hash}/resampled", responses=TABLE_RESPONSES,
    summary="A revision resampled onto a grid")
def resampled(
    content_hash: HashKey, request: Request, settings: SettingsDep, reader: Reader,
    step_deg: GridStep = recipes.DEFAULT_STEP_DEG, format: FormatQuery = None,
    approved_only: ApprovedOnlyQuery = None,
):
    fmt = choose_format(request, format)
    served = pipeline.revision_table(
        request.app.state.session_factory, revision_key=content_hash, kind="resampled",
        params=recipes.revision_table_params("resampled", step_deg=step_deg),
        approved_only=approved_only_setting(settings, approved_only),
        policy=cache_policy(settings, reader),
    )
    return served_response(request, served, fmt)


@router.get(
    "/polars/{content_hash}/extended", responses=TABLE_RESPONSES,
    summary="A revision extended to -180..180 deg")
def extended(
    content_hash: HashKey, request: Request, settings: SettingsDep, reader: Reader,
    extension: ExtensionQuery,
    step_deg: GridStep = recipes.DEFAULT_STEP_DEG,
    format: FormatQuery = None,
    approved_only: ApprovedOnlyQuery = None,
):
    fmt = choose_format(request, format)
    params = recipes.revision_table_params("extended", extension=extension, step_deg=step_deg)
    served = pipeline.revision_table(
        request.app.state.session_factory, revision_key=content_hash, kind="extended",
        params=params, approved_only=approved_only_setting(settings, approved_only),
        policy=cache_policy(settings, reader),
    )
    return served_response(request, served, fmt)


@router.get(
    "/polars/{content_hash}/augmented",
    responses=TABLE_RESPONSES,
    summary="A revision extended to -180..180 deg and rotationally augmented",
)
def augmented(
    content_hash: HashKey, request: Request, settings: SettingsDep, reader: Reader,
    extension: ExtensionQuery, fade: FadeQuery,
    r_over_R: Annotated[float, Query(gt=0, le=1, description="station radius / tip radius")],
    chord_over_r: Annotated[float, Query(gt=0, le=10, description="chord / station radius")],
    model: Annotated[RotationModel, Query(description="rotational augmentation model")] = "snel",
    tip_speed_ratio: Annotated[float | None, Query(gt=0, le=30)] = None,
    twist_deg: Annotated[float, Query(ge=-90, le=90)] = 0.0,
    cl_alpha_per_rad: Annotated[float | None, Query(gt=0, le=10)] = None,
    step_deg: GridStep = recipes.DEFAULT_STEP_DEG,
    format: FormatQuery = None,
    approved_only: ApprovedOnlyQuery = None,
):
    fmt = choose_format(request, format)
    params = recipes.revision_table_params(
        "augmented",
        extension=extension,
        rotation={
            "model": model, "r_over_R": r_over_R, "chord_over_r": chord_over_r,
            "tip_speed_ratio": tip_speed_ratio, "twist_deg": twist_deg,
            "cl_alpha_per_rad": cl_alpha_per_rad, **fade,
        },
        step_deg=step_deg,
    )
    served = pipeline.revision_table(
        request.app.state.session_factory, revision_key=content_hash, kind="augmented",
        params=params, approved_only=approved_only_setting(settings, approved_only),
        policy=cache_policy(settings, reader),
    )
    return served_response(request, served, fmt)


@router.post("/polars/{content_hash}/review", summary="Approve or deprecate a revision")
def review_polar(content_hash: HashKey, change: ReviewChange, request: Request, principal: Curator):
    with session_scope(request.app.state.session_factory, write=True) as session:
        revision = polar_store.set_review_state(
            session, content_hash=content_hash, state=change.state, reason=change.reason,
            replaced_by_hash=change.replaced_by, replacement_reason=change.replacement_reason,
            actor=principal.actor(),
        )
        return json_response(revision_summary(revision, principal))


@router.post(
    "/polars/{content_hash}/correct",
    status_code=201,
    summary="Correct provenance fields by a new revision that supersedes this one (curator)",
)
def correct_polar(
    content_hash: str, body: ProvenanceCorrection, request: Request, principal: Curator
):
    """The table, conditions and quality flags are kept; the old revision stays stored and
    verifiable. One audit event ``polar.correct`` holds the fields before and after."""
    with session_scope(request.app.state.session_factory, write=True) as session:
        revision = curation.correct_provenance(
            session, content_hash=content_hash, changes=body.provenance, reason=body.reason,
            actor=principal.actor(),
        )
        return json_response(revision_summary(revision, principal), status_code=201)


@router.get(
    "/polars/{content_hash}/used-by",
    summary="Reverse lineage: the derived tables and blade sets computed from a revision "
    "(one page)",
)
def used_by(
    content_hash: HashKey, request: Request, session: ReadSession, _: Reader,
    limit: LimitQuery = PAGE_SIZE, after: AfterQuery = None,
):
    """The revision's full hash and one page of the cached tables computed from it, oldest
    first (``derived``). Follow the ``Link: <...>; rel="next"`` header for the next page;
    ``X-Total-Count`` gives the number of such tables."""
    revision_hash, _airfoil, _state = polar_store.revision_brief(session, content_hash)
    revision_id = session.scalar(
        select(PolarRevision.id).where(PolarRevision.content_hash == revision_hash)
    )
    page = derived_store.page_derived_using_revision(
        session, revision_id=revision_id, after=after, limit=limit
    )
    body = {
        "revision": revision_hash,
        "derived": [
            {
                "kind": use.kind,
                "recipe_hash": use.recipe_hash,
                "content_hash": use.content_hash,
                "blade": use.blade,
                "created_at": use.created_at.isoformat(),
            }
            for use in page.items
        ],
    }
    return json_response(body, headers=page_headers(request, page.next_cursor, page.total))

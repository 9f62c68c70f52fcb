"""Blade definitions, blade sets (station tables of a whole blade) and family blends."""

from __future__ import annotations

from typing import Annotated, Any

from fastapi import APIRouter, Depends, Query, Request

from polarsvc import pipeline, recipes
from polarsvc.api.deps import Curator, Principal, Reader, ReadSession, SettingsDep
from polarsvc.api.responses import choose_format, json_response, page_response
from polarsvc.api.routers.polars import (
    ApprovedOnlyQuery,
    ExtensionQuery,
    FadeQuery,
    FormatQuery,
    GridStep,
    approved_only_setting,
)
from polarsvc.api.schemas import (
    ERROR_RESPONSES,
    IDENTICAL_EXISTS,
    PAGE_SIZE,
    AfterQuery,
    BladeIn,
    LimitQuery,
)
from polarsvc.api.served import PACKAGE_FORMAT, package_response, served_response
from polarsvc.api.visibility import shown_name
from polarsvc.store import blades as blade_store
from polarsvc.store.db import session_scope
from polarsvc.store.models import BladeDefinition

router = APIRouter(tags=["blades and blends"], responses=ERROR_RESPONSES)


def blade_summary(
    blade: BladeDefinition, principal: Principal, *, with_definition: bool = False
) -> dict[str, Any]:
    """The public form of a blade revision (``created_by`` for admins only)."""
    definition = blade_store.blade_definition(blade)
    summary = {
        "name": blade.name,
        "content_hash": blade.content_hash,
        "family": definition.get("family"),
        "rotor_radius_m": definition.get("rotor_radius_m"),
        "stations": len(definition.get("stations", [])),
        "created_at": blade.created_at.isoformat(),
        "created_by": shown_name(principal, blade.created_by),
    }
    if with_definition:
        summary["definition"] = definition
    return summary


@router.get("/blades", summary="List blade definitions (every revision; one page)")
def list_blades(
    request: Request, session: ReadSession, principal: Reader,
    limit: LimitQuery = PAGE_SIZE, after: AfterQuery = None,
):
    """Blade revisions by name, then storage order. Follow the ``Link`` header for the next
    page."""
    page = blade_store.page_blades(session, after=after, limit=limit)
    return page_response(
        request, [blade_summary(b, principal) for b in page.items],
        next_cursor=page.next_cursor, total=page.total,
    )


@router.post(
    "/blades", status_code=201, responses=IDENTICAL_EXISTS,
    summary="Store a blade definition revision",
)
def add_blade(blade: BladeIn, request: Request, principal: Curator):
    definition = blade.model_dump(mode="json", exclude_none=True)
    with session_scope(request.app.state.session_factory, write=True) as session:
        row, created = blade_store.store_blade(
            session, name=blade.name, definition=definition, actor=principal.actor()
        )
        return json_response(
            {**blade_summary(row, principal), "created": created},
            status_code=201 if created else 200,
        )


@router.get("/blades/{key}", summary="A blade definition: latest revision by name, or by hash")
def get_blade(key: str, session: ReadSession, principal: Reader):
    blade = pipeline.find_blade(session, key)
    return json_response(blade_summary(blade, principal, with_definition=True))


def blade_set_query(
    extension: ExtensionQuery,
    fade: FadeQuery,
    rotation_model: Annotated[
        str, Query(description="snel, du-selig, chaviaropoulos-hansen or none")
    ] = "snel",
    surface: Annotated[str | None, Query(description="default: the blade's own")] = None,
    thickness_method: Annotated[str, Query(description="linear or pchip")] = "linear",
    clamp: bool = False,
    wind_speed_m_s: Annotated[float | None, Query(gt=0, le=100)] = None,
    rotor_speed_rpm: Annotated[float | None, Query(gt=0, le=1000)] = None,
    step_deg: GridStep = recipes.DEFAULT_STEP_DEG,
) -> dict[str, Any]:
    """How a blade set is prepared: the keywords of
    :func:`polarsvc.recipes.blade_set_params`."""
    return {
        "surface": surface,
        "thickness_method": thickness_method,
        "clamp": clamp,
        "extension": extension,
        "rotation": {"model": rotation_model, **(fade if rotation_model != "none" else {})},
        "step_deg": step_deg,
        "wind_speed_m_s": wind_speed_m_s,
        "rotor_speed_rpm": rotor_speed_rpm,
    }


BladeSetQuery = Annotated[dict[str, Any], Depends(blade_set_query)]


@router.get(
    "/blades/{key}/tables",
    summary="The full set of station tables of a blade (stations x angles)",
    description=(
        "Extends every family member to -180..180 deg (broadside drag from the blade's own "
        "aspect ratio unless aspect_ratio or cd_max is given), interpolates to each station's "
        "Reynolds number (from the operating point, no induction) and thickness, and applies "
        "rotational augmentation (positive-stall side, smooth fade tied to each station's "
        "stall angle). JSON arrays cl, cd, cm, and the dynamic-stall inputs f_separation "
        "(Kirchhoff separation function) and cl_fs (fully separated lift), have one row per "
        "station; per-station alpha0, lift slope and stall onset are in "
        "reports.stations[i].dynamic_stall. The CSV form is long (station radius, alpha_deg, "
        "coefficients). Every form states the operating point and, per station, radius, "
        "chord, twist, t/c and Reynolds number (`describes`; CSV comment lines). "
        "`format=zip` answers with the station package: one CSV per station plus "
        "manifest.json (layout in the README)."
    ),
)
def blade_tables(
    key: str, request: Request, settings: SettingsDep, _: Reader, options: BladeSetQuery,
    format: FormatQuery = None,
    approved_only: ApprovedOnlyQuery = None,
):
    fmt = PACKAGE_FORMAT if format == PACKAGE_FORMAT else choose_format(request, format)
    served = pipeline.blade_set(
        request.app.state.session_factory, blade_key=key, options=options,
        approved_only=approved_only_setting(settings, approved_only),
    )
    if fmt == PACKAGE_FORMAT:
        return package_response(request, served)
    return served_response(request, served, fmt)


@router.get(
    "/families/{name}/blend",
    summary="A family's full-range table at any thickness and Reynolds number",
)
def family_blend(
    name: str, request: Request, settings: SettingsDep, _: Reader, extension: ExtensionQuery,
    thickness: Annotated[float, Query(gt=0, le=1, description="t/c as a fraction")],
    reynolds: Annotated[float, Query(gt=0)],
    surface: str = "clean",
    thickness_method: Annotated[str, Query(description="linear or pchip")] = "linear",
    clamp: bool = False,
    step_deg: GridStep = recipes.DEFAULT_STEP_DEG,
    format: FormatQuery = None,
    approved_only: ApprovedOnlyQuery = None,
):
    fmt = choose_format(request, format)
    params = recipes.blend_params(
        thickness=thickness, reynolds=reynolds, surface=surface,
        thickness_method=thickness_method, clamp=clamp,
        extension=extension,
        step_deg=step_deg,
    )
    served = pipeline.family_blend(
        request.app.state.session_factory, family=name, params=params,
        approved_only=approved_only_setting(settings, approved_only),
    )
    return served_response(request, served, fmt)

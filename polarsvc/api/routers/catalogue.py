"""Families and airfoils."""

from __future__ import annotations

from typing import Annotated, Any

from fastapi import APIRouter, Query, Request

from polarsvc.api.deps import Curator, Reader, ReadSession
from polarsvc.api.responses import json_response, page_response
from polarsvc.api.schemas import (
    ERROR_RESPONSES,
    IDENTICAL_EXISTS,
    PAGE_SIZE,
    AfterQuery,
    AirfoilIn,
    AirfoilMove,
    AirfoilRename,
    AirfoilRetirement,
    FamilyIn,
    LimitQuery,
)
from polarsvc.store import airfoils as airfoil_store
from polarsvc.store import curation
from polarsvc.store import polars as polar_store
from polarsvc.store.db import session_scope
from polarsvc.store.models import Airfoil, Family

router = APIRouter(tags=["catalogue"], responses=ERROR_RESPONSES)


def airfoil_summary(airfoil: Airfoil, has_coordinates: bool | None = None) -> dict[str, Any]:
    """The public form of an airfoil (``has_coordinates`` when known without reading the
    outline)."""
    if has_coordinates is None:
        has_coordinates = airfoil.coordinates is not None
    return {
        "name": airfoil.name,
        "family": airfoil.family.name if airfoil.family is not None else None,
        "thickness": airfoil.thickness,
        "description": airfoil.description,
        "has_coordinates": has_coordinates,
        "created_at": airfoil.created_at.isoformat(),
        "aliases": [a.name for a in airfoil.aliases],
        "retired": airfoil.retired,
        "retired_reason": airfoil.retired_reason,
    }


def family_summary(
    family: Family, members: list[tuple[str, float]] | None = None
) -> dict[str, Any]:
    """The public form of a family with its airfoils by thickness (``members``: their
    names and thicknesses when already read, else from the ORM relation)."""
    if members is None:
        members = [(a.name, a.thickness) for a in sorted(
            family.airfoils, key=lambda a: (a.thickness, a.name))]
    return {
        "name": family.name,
        "description": family.description,
        "airfoils": [{"name": name, "thickness": thickness} for name, thickness in members],
        "created_at": family.created_at.isoformat(),
    }


@router.get("/families", summary="List families with their airfoils (one page)")
def list_families(
    request: Request, session: ReadSession, _: Reader,
    limit: LimitQuery = PAGE_SIZE, after: AfterQuery = None,
):
    """Families by name. Follow the ``Link`` header for the next page."""
    page = airfoil_store.page_families(session, after=after, limit=limit)
    members = airfoil_store.family_members(session, [f.id for f in page.items])
    return page_response(
        request, [family_summary(f, members[f.id]) for f in page.items],
        next_cursor=page.next_cursor, total=page.total,
    )


@router.post(
    "/families", status_code=201, responses=IDENTICAL_EXISTS, summary="Create a family (curator)"
)
def create_family(body: FamilyIn, request: Request, principal: Curator):
    with session_scope(request.app.state.session_factory, write=True) as session:
        family, created = airfoil_store.get_or_create_family(
            session, name=body.name, description=body.description, actor=principal.actor()
        )
        return json_response(
            {**family_summary(family), "created": created}, status_code=201 if created else 200
        )


@router.post(
    "/airfoils",
    status_code=201,
    responses=IDENTICAL_EXISTS,
    summary="Create an airfoil (curator); an identical one is returned, a different one is 409",
)
def create_airfoil(body: AirfoilIn, request: Request, principal: Curator):
    with session_scope(request.app.state.session_factory, write=True) as session:
        airfoil, created = airfoil_store.create_airfoil(
            session, name=body.name, thickness=body.thickness, family=body.family,
            description=body.description,
            coordinates=body.coordinates.model_dump() if body.coordinates else None,
            actor=principal.actor(),
        )
        return json_response(
            {**airfoil_summary(airfoil), "created": created}, status_code=201 if created else 200
        )


@router.get("/families/{name}", summary="One family")
def get_family(name: str, session: ReadSession, _: Reader):
    return json_response(family_summary(airfoil_store.get_family(session, name)))


@router.get("/airfoils", summary="List airfoils (filter by family, search in names; one page)")
def list_airfoils(
    request: Request,
    session: ReadSession,
    _: Reader,
    family: Annotated[str | None, Query(max_length=200)] = None,
    search: Annotated[str | None, Query(max_length=200)] = None,
    limit: LimitQuery = PAGE_SIZE,
    after: AfterQuery = None,
):
    """Airfoils by thickness, then name. Follow the ``Link`` header for the next page."""
    page = airfoil_store.page_airfoils(
        session, family=family, search=search, after=after, limit=limit
    )
    return page_response(
        request, [airfoil_summary(a, has) for a, has in page.items],
        next_cursor=page.next_cursor, total=page.total,
    )


@router.get("/airfoils/{name}", summary="One airfoil with its revisions")
def get_airfoil(name: str, request: Request, session: ReadSession, principal: Reader):
    airfoil = airfoil_store.get_airfoil(session, name)
    from polarsvc.api.routers.polars import revision_summary

    revisions = polar_store.list_revisions(session, airfoil=name, with_tables=False)
    return json_response(
        {
            **airfoil_summary(airfoil),
            "coordinates": airfoil_store.airfoil_coordinates(airfoil),
            "revisions": [revision_summary(r, principal) for r in revisions],
        }
    )


def _curation(request: Request, action) -> Any:
    with session_scope(request.app.state.session_factory, write=True) as session:
        return json_response(airfoil_summary(action(session)))


@router.post("/airfoils/{name}/move", summary="Move an airfoil to another family (curator)")
def move_airfoil(name: str, body: AirfoilMove, request: Request, principal: Curator):
    return _curation(request, lambda session: curation.move_airfoil(
        session, name=name, family=body.family, reason=body.reason, actor=principal.actor()))


@router.post(
    "/airfoils/{name}/rename",
    summary="Rename an airfoil; the former name stays as an alias (curator)",
)
def rename_airfoil(name: str, body: AirfoilRename, request: Request, principal: Curator):
    return _curation(request, lambda session: curation.rename_airfoil(
        session, name=name, new_name=body.new_name, reason=body.reason,
        actor=principal.actor()))


@router.post(
    "/airfoils/{name}/retire",
    summary="Retire an airfoil from family blends and blade sets (curator)",
)
def retire_airfoil(name: str, body: AirfoilRetirement, request: Request, principal: Curator):
    return _curation(request, lambda session: curation.set_retired(
        session, name=name, retired=True, reason=body.reason, actor=principal.actor()))


@router.post("/airfoils/{name}/reinstate", summary="Reinstate a retired airfoil (curator)")
def reinstate_airfoil(name: str, body: AirfoilRetirement, request: Request, principal: Curator):
    return _curation(request, lambda session: curation.set_retired(
        session, name=name, retired=False, reason=body.reason, actor=principal.actor()))

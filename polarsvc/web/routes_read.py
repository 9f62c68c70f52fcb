"""Reading pages: catalogue, airfoil, family, blade, derived-table lineage, audit trail."""

from __future__ import annotations

import json
from urllib.parse import quote, urlencode

from fastapi import APIRouter, Request
from fastapi.responses import HTMLResponse

from polarsvc import pipeline
from polarsvc.aero.polar import SURFACE_CONDITIONS
from polarsvc.api import visibility
from polarsvc.api.deps import ReadSession
from polarsvc.store import airfoils as airfoil_store
from polarsvc.store import blades as blade_store
from polarsvc.store import derived as derived_store
from polarsvc.store import polars as polar_store
from polarsvc.store.db import session_scope
from polarsvc.store.models import REVIEW_STATES, SOURCE_KINDS
from polarsvc.web import rotor_view, viewdata
from polarsvc.web.plots import PLOT_KINDS
from polarsvc.web.security import PageReader, sign_in_url
from polarsvc.web.templating import render

NOTICES = {
    "approved": "The revision is approved.",
    "deprecated": "The revision is deprecated.",
    "signed-in": "Signed in.",
}
"""Fixed confirmation texts, chosen by a query parameter (never echoed user text)."""

PLOT_TITLES = {
    "cl": "c_l against α",
    "cd": "c_d against α",
    "cm": "c_m against α",
    "cl-cd": "c_l against c_d",
}

AUDIT_PAGE_LIMIT = 500
CATALOGUE_FAMILIES = 25
"""Families listed on the catalogue page (the API pages through all of them)."""
CATALOGUE_BLADES = 200
DERIVED_SHOWN = 100
"""Derived tables listed on an airfoil's page under the selected revision (the oldest)."""


def url_name(name: str) -> str:
    """A name as one path segment."""
    return quote(name, safe="")


def _factory(request: Request):
    return request.app.state.session_factory


def _approved_only(request: Request) -> bool:
    """The server's default for serving only approved revisions (as the API's)."""
    return bool(request.app.state.settings.approved_only)


def _plot_links(base: str, kinds: tuple[str, ...], query: str, spans: tuple[str, ...]):
    links = []
    for span in spans:
        for kind in kinds:
            q = f"{query}&span={span}" if query else f"span={span}"
            links.append(
                {
                    "kind": kind,
                    "span": span,
                    "title": PLOT_TITLES[kind] + (" (−180..180°)" if span == "full" else ""),
                    "svg": f"{base}/{kind}.svg?{q}",
                    "csv": f"{base}/{kind}.csv?{q}",
                }
            )
    return links


def add_routes(router: APIRouter) -> None:
    @router.get("/", response_class=HTMLResponse, name="catalogue")
    def catalogue_page(
        request: Request,
        viewer: PageReader,
        session: ReadSession,
        q: str = "",
        family: str = "",
        surface: str = "",
        review_state: str = "",
        source_kind: str = "",
        after: str = "",
    ) -> HTMLResponse:
        filters = viewdata.CatalogueFilters(
            q=q.strip(),
            family=family,
            surface=surface if surface in SURFACE_CONDITIONS else "",
            review_state=review_state if review_state in REVIEW_STATES else "",
            source_kind=source_kind if source_kind in SOURCE_KINDS else "",
        )
        families = airfoil_store.page_families(session, limit=CATALOGUE_FAMILIES)
        member_counts = airfoil_store.family_member_counts(session)
        blades = blade_store.blade_names(session, limit=CATALOGUE_BLADES)
        page = viewdata.catalogue_rows(session, filters, after=after or None)
        next_link = None
        if page.next_cursor is not None:
            next_link = "/?" + urlencode(
                {**{k: v for k, v in filters.query().items() if v}, "after": page.next_cursor}
            )
        return render(
            request,
            "catalogue.html",
            {
                "viewer": viewer,
                "nav": "catalogue",
                "title": "Catalogue",
                "filters": filters,
                "families": families.items,
                "families_total": families.total,
                "member_counts": member_counts,
                "blades": blades,
                "rows": page.rows,
                "rows_total": page.total,
                "next_link": next_link,
                "first_page": not after,
                "filters_query": urlencode({k: v for k, v in filters.query().items() if v}),
                "surfaces": SURFACE_CONDITIONS,
                "review_states": REVIEW_STATES,
                "source_kinds": SOURCE_KINDS,
                "url_name": url_name,
            },
        )

    @router.get("/airfoils/{name}", response_class=HTMLResponse, name="airfoil")
    def airfoil_page(
        request: Request,
        name: str,
        viewer: PageReader,
        session: ReadSession,
        revision: str = "",
        notice: str = "",
    ) -> HTMLResponse:
        airfoil = airfoil_store.get_airfoil(session, name)
        revisions = polar_store.list_revisions(session, airfoil=airfoil.name, with_tables=False)
        flags = {r.id: polar_store.revision_flags(r) for r in revisions}
        selected = viewdata.choose_revision(airfoil, revisions, revision)
        inputs, problems = viewdata.parse_station_inputs(request.query_params)
        tables = plots = derived = None
        provenance: list = []
        if selected is not None:
            tables = viewdata.airfoil_tables(
                _factory(request), selected, inputs, viewer.cache_policy(request)
            )
            problems += tables.problems
            query = viewdata.station_query(inputs, selected)
            plots = _plot_links(
                f"/plots/airfoils/{url_name(name)}", PLOT_KINDS, query, ("near",)
            ) + _plot_links(f"/plots/airfoils/{url_name(name)}", ("cl", "cd"), query, ("full",))
            # a fresh transaction: the tables above may have just been cached
            with session_scope(_factory(request), write=False) as fresh:
                derived = derived_store.page_derived_using_revision(
                    fresh, revision_id=selected.id, limit=DERIVED_SHOWN
                )
            provenance = viewdata.provenance_rows(selected)
        return render(
            request,
            "airfoil.html",
            {
                "viewer": viewer,
                "nav": "catalogue",
                "title": airfoil.name,
                "airfoil": airfoil,
                "revisions": revisions,
                "flags": flags,
                "selected": selected,
                "tables": tables,
                "inputs": inputs,
                "models": viewdata.MODELS,
                "problems": problems,
                "plots": plots,
                "derived": derived,
                "provenance": provenance,
                "notice": NOTICES.get(notice),
                "sign_in_link": sign_in_url(request),
                "url_name": url_name,
            },
        )

    @router.get("/families/{name}", response_class=HTMLResponse, name="family")
    def family_page(
        request: Request,
        name: str,
        viewer: PageReader,
        session: ReadSession,
    ) -> HTMLResponse:
        family = airfoil_store.get_family(session, name)
        view = viewdata.family_view(
            session, _factory(request), family, request.query_params,
            approved_only=_approved_only(request), policy=viewer.cache_policy(request),
        )
        base = f"/plots/families/{url_name(name)}"
        query = view.query()
        return render(
            request,
            "family.html",
            {
                "viewer": viewer,
                "nav": "catalogue",
                "title": f"Family {family.name}",
                "family": family,
                "view": view,
                "surfaces": SURFACE_CONDITIONS,
                "member_plots": [
                    {
                        "title": f"Members, {PLOT_TITLES[kind]}",
                        "svg": f"{base}/members-{kind}.svg?{query}",
                        "csv": f"{base}/members-{kind}.csv?{query}",
                    }
                    for kind in ("cl", "cd", "cl-cd")
                ],
                "blend_plots": [
                    {
                        "title": f"Blended at t/c {view.thickness:g}, {PLOT_TITLES[kind]}",
                        "svg": f"{base}/blend-{kind}.svg?{query}",
                        "csv": f"{base}/blend-{kind}.csv?{query}",
                    }
                    for kind in ("cl", "cd")
                ]
                if view.blend is not None
                else [],
                "url_name": url_name,
            },
        )

    @router.get("/blades/{name}", response_class=HTMLResponse, name="blade")
    def blade_page(
        request: Request,
        name: str,
        viewer: PageReader,
        session: ReadSession,
    ) -> HTMLResponse:
        view = viewdata.blade_view(
            session, _factory(request), name, request.query_params,
            approved_only=_approved_only(request), policy=viewer.cache_policy(request),
        )
        base = f"/plots/blades/{url_name(name)}"
        query = urlencode({"clamp": "yes" if view.clamp else "no"})
        rotor = rotor_view.rotor_view(
            _factory(request), view.content_hash, request.query_params, clamp=view.clamp,
            approved_only=_approved_only(request), policy=viewer.cache_policy(request),
        )
        rotor_query = urlencode({
            "clamp": "yes" if view.clamp else "no", "compare": rotor.compare,
            **({"loads_at": f"{rotor.loads_at_m_s:g}"} if rotor.loads_at_m_s else {}),
        })
        rotor_kinds = [("cp-lambda", "Cp along the tip speed ratio"),
                       ("power", "power curve"),
                       ("loads", "spanwise loads")]
        if rotor.comparison is not None:
            rotor_kinds += [("delta-cp", "comparison: delta Cp"),
                            ("delta-power", "comparison: delta power")]
        return render(
            request,
            "blade.html",
            {
                "rotor": rotor,
                "rotor_facts": rotor.facts(),
                "rotor_choices": rotor_view.COMPARISONS,
                "rotor_plots": [
                    {"title": title, "svg": f"{base}/rotor-{kind}.svg?{rotor_query}",
                     "csv": f"{base}/rotor-{kind}.csv?{rotor_query}"}
                    for kind, title in rotor_kinds
                ] if rotor.result is not None else [],
                "viewer": viewer,
                "nav": "catalogue",
                "title": f"Blade {name}",
                "view": view,
                "planform": {"svg": f"{base}/planform.svg", "csv": f"{base}/planform.csv"},
                "station_plots": [
                    {
                        "title": f"Station tables, {PLOT_TITLES[kind]}",
                        "svg": f"{base}/stations-{kind}.svg?{query}&span={span}",
                        "csv": f"{base}/stations-{kind}.csv?{query}&span={span}",
                    }
                    for kind, span in (("cl", "near"), ("cd", "near"), ("cl", "full"))
                ]
                if view.tables is not None
                else [],
                "augmentation_plots": [
                    {
                        "title": f"Before and after augmentation, {PLOT_TITLES[kind]}",
                        "svg": f"{base}/augmentation-{kind}.svg?{query}&span={span}",
                        "csv": f"{base}/augmentation-{kind}.csv?{query}&span={span}",
                    }
                    for kind, span in (("cl", "near"), ("cd", "near"), ("cl", "full"))
                ]
                if view.augmented_stations()
                else [],
                "dynamic_stall_csv": f"{base}/dynamic-stall.csv?{query}",
                "url_name": url_name,
            },
        )

    @router.get("/derived/{recipe_hash}/lineage", response_class=HTMLResponse, name="lineage")
    def lineage_page(
        request: Request,
        recipe_hash: str,
        viewer: PageReader,
        session: ReadSession,
    ) -> HTMLResponse:
        table = pipeline.find_derived(session, recipe_hash)
        recipe = derived_store.derived_recipe(table)
        return render(
            request,
            "lineage.html",
            {
                "viewer": viewer,
                "nav": "catalogue",
                "title": f"Lineage of {table.kind} table {table.recipe_hash[:12]}",
                "table": table,
                "recipe": recipe,
                "recipe_text": json.dumps(recipe, indent=2, sort_keys=True),
                "inputs": [
                    (revision, viewdata.provenance_rows(revision)) for revision in table.inputs
                ],
                "url_name": url_name,
            },
        )

    @router.get("/audit", response_class=HTMLResponse, name="audit")
    def audit_page(
        request: Request,
        viewer: PageReader,
        session: ReadSession,
        since: str = "",
        until: str = "",
        object: str = "",
        actor: str = "",
    ) -> HTMLResponse:
        problems = []
        moments = {}
        for field_name, text in (("since", since), ("until", until)):
            try:
                moments[field_name] = viewdata.parse_moment(field_name, text)
            except viewdata.PageInputError as exc:
                problems.append(str(exc))
                moments[field_name] = None
        wanted_actor = actor.strip() or None
        if wanted_actor is not None and not viewer.sees_identities:
            problems.append("filtering by actor needs the admin role; the filter was left out")
            wanted_actor = None
        rows = visibility.audit_trail(
            session,
            viewer.principal,
            since=moments["since"],
            until=moments["until"],
            object_key=object.strip() or None,
            actor=wanted_actor,
            limit=AUDIT_PAGE_LIMIT,
        )
        return render(
            request,
            "audit.html",
            {
                "viewer": viewer,
                "nav": "audit",
                "title": "Audit trail",
                "rows": rows,
                "problems": problems,
                "form": {"since": since, "until": until, "object": object, "actor": actor},
                "limit": AUDIT_PAGE_LIMIT,
                "object_query": lambda key: urlencode({"object": key}),
            },
        )

"""Derived-table storage under read traffic: parameters are canonicalised before a recipe is
hashed, anonymous requests are computed without being stored (no rows, no audit events),
reader-token cache writes stop at a size budget, and cache writes are attributed to the
system with the requesting actor recorded.

The demo data are the fictional "skua" family and "skerry-48" blade (synthetic, no source).
"""

from __future__ import annotations

import json

import pytest
from fastapi.testclient import TestClient
from sqlalchemy import func, select

from polarsvc import recipes
from polarsvc.api.app import create_app
from polarsvc.api.settings import Settings
from polarsvc.store.db import session_scope
from polarsvc.store.models import AuditEvent, DerivedTable

BLADE_TABLES = "/api/v1/blades/skerry-48/tables"


def _counts(factory) -> tuple[int, int]:
    with session_scope(factory, write=False) as session:
        derived = session.scalar(select(func.count()).select_from(DerivedTable))
        events = session.scalar(select(func.count()).select_from(AuditEvent))
    return int(derived or 0), int(events or 0)


def _client(prepared_db, **settings: object) -> TestClient:
    return TestClient(create_app(Settings(database_url=prepared_db[0], **settings)))


def test_anonymous_reads_add_no_rows_and_no_audit_events(prepared_db, demo_factory):
    """200 anonymous requests varying cd_max by 1e-9 once added 200 stored tables and 200
    audit events; now the tables are served and nothing is written."""
    before = _counts(demo_factory)
    with _client(prepared_db, public_reads=True, read_only=True) as client:
        recipe_hashes = set()
        for step in range(12):
            answer = client.get(
                BLADE_TABLES, params={"cd_max": 1.2 + step * 1e-9, "format": "bin"}
            )
            assert answer.status_code == 200, answer.text
            assert answer.headers["X-Polarsvc-Stored"] == "no"
            recipe_hashes.add(answer.headers["X-Polarsvc-Recipe-Hash"])
        for step in range(4):  # values above the precision are new recipes, still not stored
            answer = client.get(BLADE_TABLES, params={"cd_max": 1.3 + step * 0.01})
            assert answer.status_code == 200, answer.text
            assert answer.headers["X-Polarsvc-Stored"] == "no"
    assert len(recipe_hashes) == 1
    assert _counts(demo_factory) == before


def test_values_below_the_documented_precision_are_one_recipe(prepared_db, demo_factory, tokens):
    with _client(prepared_db) as client:
        headers = tokens.header("reader")
        first = client.get(BLADE_TABLES, params={"cd_max": 1.2}, headers=headers)
        nudged = client.get(BLADE_TABLES, params={"cd_max": 1.2 + 1e-9}, headers=headers)
        other = client.get(BLADE_TABLES, params={"cd_max": 1.21}, headers=headers)
        odd = client.get(
            "/api/v1/families/skua/blend",
            params={"thickness": 0.2345678, "reynolds": 4567890.0, "cd_max": 1.23456},
            headers=headers,
        )
    assert first.status_code == nudged.status_code == other.status_code == 200
    assert first.headers["X-Polarsvc-Recipe-Hash"] == nudged.headers["X-Polarsvc-Recipe-Hash"]
    assert first.headers["X-Polarsvc-Recipe-Hash"] != other.headers["X-Polarsvc-Recipe-Hash"]
    assert nudged.headers["X-Polarsvc-Cache"] == "hit"
    # Rounded by hand: 4 significant digits for t/c, Re and cd_max.
    params = odd.json()["recipe"]["params"]
    assert params["thickness"] == 0.2346
    assert params["reynolds"] == 4568000.0
    assert params["extension"]["cd_max"] == 1.235
    assert _counts(demo_factory)[0] == 3


def test_every_numeric_table_parameter_has_a_documented_precision():
    """One place documents the precision of every numeric parameter of the table endpoints
    (the query parameters the OpenAPI document declares as numbers)."""
    app = create_app(Settings(database_url="sqlite://"))
    document = app.openapi()
    numeric = set()
    for path, operations in document["paths"].items():
        if not any(path.endswith(end) for end in ("/tables", "/blend", "/resampled",
                                                  "/extended", "/augmented")):
            continue
        for parameter in operations["get"].get("parameters", []):
            schema = parameter["schema"]
            types = {schema.get("type")} | {s.get("type") for s in schema.get("anyOf", [])}
            if types & {"number", "integer"}:
                numeric.add(parameter["name"])
    assert numeric, "no numeric parameters found"
    assert numeric <= set(recipes.PARAMETER_PRECISION)
    for name, precision in recipes.PARAMETER_PRECISION.items():
        assert (precision.significant is None) != (precision.decimals is None), name
        assert precision.why, name


@pytest.mark.parametrize(
    ("name", "value", "expected"),
    [  # rounded by hand
        ("cd_max", 1.23449999, 1.234),
        ("reynolds", 3.0e6 + 1e-3, 3.0e6),
        ("alpha_stall_pos_deg", 15.00049, 15.0),
        ("twist_deg", -0.0000001, 0.0),
        ("mu_pa_s", 1.81206e-5, 1.8121e-5),
        ("step_deg", 0.5 + 1e-12, 0.5),
    ],
)
def test_canonical_values(name, value, expected):
    assert recipes.canonical_parameter(name, value) == expected


def test_cache_writes_are_the_systems_with_the_requester_recorded(
    prepared_db, demo_factory, tokens
):
    with _client(prepared_db) as client:
        answer = client.get(BLADE_TABLES, headers=tokens.header("reader"))
    assert answer.status_code == 200 and answer.headers["X-Polarsvc-Stored"] == "yes"
    with session_scope(demo_factory, write=False) as session:
        event = session.scalars(
            select(AuditEvent).where(AuditEvent.action == "derived.store")
        ).one()
        assert (event.actor_name, event.actor_role) == ("system", "system")
        assert json.loads(event.detail)["requested_by"] == {
            "name": "test-reader", "role": "reader"
        }
        assert event.object_key == answer.headers["X-Polarsvc-Recipe-Hash"]


def test_reader_cache_writes_stop_at_the_budget(prepared_db, demo_factory, tokens):
    with _client(prepared_db, reader_cache_budget_bytes=1) as client:
        reader = tokens.header("reader")
        first = client.get(BLADE_TABLES, params={"cd_max": 1.5}, headers=reader)
        second = client.get(BLADE_TABLES, params={"cd_max": 1.6}, headers=reader)
        curator = client.get(BLADE_TABLES, params={"cd_max": 1.7}, headers=tokens.header("curator"))
    assert first.headers["X-Polarsvc-Stored"] == "yes"  # the cache was empty: under budget
    assert second.status_code == 200 and second.headers["X-Polarsvc-Stored"] == "no"
    assert curator.headers["X-Polarsvc-Stored"] == "yes"
    assert _counts(demo_factory)[0] == 2


def test_a_table_computed_anonymously_is_stored_when_a_curator_asks(
    prepared_db, demo_factory, tokens
):
    with _client(prepared_db, public_reads=True) as client:
        anonymous = client.get(BLADE_TABLES, params={"cd_max": 1.4})
        curator = client.get(BLADE_TABLES, params={"cd_max": 1.4}, headers=tokens.header("curator"))
        lineage = client.get(f"/api/v1/derived/{curator.headers['X-Polarsvc-Content-Hash']}")
    assert anonymous.headers["X-Polarsvc-Stored"] == "no"
    assert curator.headers["X-Polarsvc-Stored"] == "yes"
    assert (anonymous.headers["X-Polarsvc-Content-Hash"]
            == curator.headers["X-Polarsvc-Content-Hash"])
    assert lineage.status_code == 200
    assert _counts(demo_factory)[0] == 1


def test_anonymous_rotor_performance_adds_no_rows_and_no_audit_events(
    prepared_db, demo_factory
):
    """Rotor results follow the same policy as blade sets: an anonymous request on a
    public-reads service is computed and answered, and nothing is written."""
    before = _counts(demo_factory)
    with _client(prepared_db, public_reads=True, read_only=True) as client:
        answer = client.get("/api/v1/blades/skerry-48/performance")
    assert answer.status_code == 200, answer.text
    assert answer.headers["X-Polarsvc-Stored"] == "no"
    assert _counts(demo_factory) == before

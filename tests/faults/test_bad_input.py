"""The bad-input corpus (tests/faults/bad_input/, listed in cases.json): malformed CSV and
JSON, wrong types, huge numbers, NUL and control characters, path names, oversize bodies.
Every case is answered 4xx (413 for the oversize body) and nothing is stored: no family,
airfoil, revision, blade, token, derived table or audit event. The corpus's own control, the
same table without its defect, is stored (so each case is refused for its defect)."""

from __future__ import annotations

import json
import os
import uuid
from pathlib import Path

import pytest
from fastapi.testclient import TestClient
from sqlalchemy import create_engine, func, make_url, select, text
from sqlalchemy.pool import NullPool

from polarsvc.api.app import create_app
from polarsvc.api.settings import Settings
from polarsvc.store.db import make_engine, make_session_factory, session_scope, upgrade_database
from polarsvc.store.models import (
    Airfoil,
    ApiToken,
    AuditEvent,
    BladeDefinition,
    DerivedTable,
    Family,
    PolarRevision,
)
from tests.api.conftest import make_tokens
from tests.conftest import POSTGRES_URL_ENV

CORPUS = Path(__file__).with_name("bad_input")
CASES = json.loads((CORPUS / "cases.json").read_text(encoding="utf-8"))["cases"]
CONTROL = (CORPUS / "33_huge_float_reynolds.csv").read_text(encoding="utf-8").replace(
    "# reynolds: 1e400", "# reynolds: 3000000.0"
)


@pytest.fixture(
    scope="module", params=["sqlite", pytest.param("postgresql", marks=pytest.mark.postgres)]
)
def service(request, tmp_path_factory):
    """One migrated database per module (the cases store nothing, so they can share it), an
    application on it, and tokens of each role."""
    schema = None
    if request.param == "sqlite":
        url = f"sqlite:///{tmp_path_factory.mktemp('corpus') / 'corpus.db'}"
    else:
        base = os.environ.get(POSTGRES_URL_ENV)
        if not base:
            pytest.skip(f"set {POSTGRES_URL_ENV} to run the PostgreSQL variant")
        schema = f"test_{uuid.uuid4().hex[:16]}"
        admin = create_engine(base, poolclass=NullPool)
        with admin.begin() as connection:
            connection.execute(text(f'CREATE SCHEMA "{schema}"'))
        url = make_url(base).update_query_dict(
            {"options": f"-csearch_path={schema}"}
        ).render_as_string(hide_password=False)
    engine = make_engine(url)
    upgrade_database(engine)
    factory = make_session_factory(engine)
    tokens = make_tokens(factory)
    try:
        with TestClient(create_app(Settings(database_url=url))) as client:
            # the family the corpus files name exists, so each case is refused for its own fault
            created = client.post("/api/v1/families", json={"name": "skua-test"},
                                  headers=tokens.header("curator"))
            assert created.status_code == 201, created.text
            yield client, factory, tokens
    finally:
        engine.dispose()
        if schema is not None:
            with admin.begin() as connection:
                connection.execute(text(f'DROP SCHEMA IF EXISTS "{schema}" CASCADE'))
            admin.dispose()


def _counts(factory) -> dict[str, int]:
    with session_scope(factory, write=False) as session:
        return {
            model.__tablename__: int(session.scalar(select(func.count()).select_from(model)))
            for model in (Family, Airfoil, PolarRevision, BladeDefinition, ApiToken,
                          DerivedTable, AuditEvent)
        }


def _body(case: dict) -> bytes:
    data = (CORPUS / case["file"]).read_bytes()
    return data * case.get("repeat", 1)


def _marks(case: dict) -> list:
    if "pending" not in case:
        return []
    return [pytest.mark.xfail(reason=f"pending: {case['pending']}", strict=False)]


def test_the_corpus_holds_48_cases_with_their_files():
    assert len(CASES) == 48
    assert len({c["name"] for c in CASES}) == 48
    for case in CASES:
        assert (CORPUS / case["file"]).is_file(), case["file"]


def test_the_control_table_is_stored(client, tokens):
    created = client.post("/api/v1/families", json={"name": "skua-test"},
                          headers=tokens.header("curator"))
    assert created.status_code == 201, created.text
    answer = client.post("/api/v1/polars", content=CONTROL.encode("utf-8"),
                         headers={**tokens.header("curator"), "Content-Type": "text/csv"})
    assert answer.status_code == 201, answer.text


@pytest.mark.parametrize(
    "case", [pytest.param(c, id=c["name"], marks=_marks(c)) for c in CASES]
)
def test_bad_input_is_refused_and_nothing_is_stored(service, case):
    client, factory, tokens = service
    before = _counts(factory)
    answer = client.request(
        case["method"], case["path"], content=_body(case), params=case["params"],
        headers={**tokens.header(case["role"]), "Content-Type": case["content_type"]},
    )
    if case["expect"] == "4xx":
        assert 400 <= answer.status_code < 500, (answer.status_code, answer.text[:300])
    else:
        assert answer.status_code == int(case["expect"]), answer.text[:300]
    assert "detail" in answer.json()
    assert _counts(factory) == before

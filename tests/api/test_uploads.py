"""Uploads over HTTP: stored once, identical content deduplicated, bad input refused with
nothing stored (the bad-input corpus)."""

from __future__ import annotations

import pytest
from sqlalchemy import func, select

from polarsvc.store.db import session_scope
from polarsvc.store.models import AuditEvent, PolarRevision
from tests.api.conftest import SEED_DIR

SEED_FILE = SEED_DIR / "skua" / "SKUA-210_re4e6_clean.csv"


def counts(factory) -> tuple[int, int]:
    with session_scope(factory, write=False) as session:
        revisions = session.scalar(select(func.count()).select_from(PolarRevision))
        events = session.scalar(select(func.count()).select_from(AuditEvent))
    return revisions, events


def test_upload_stores_a_revision_and_deduplicates_identical_content(
    client, tokens, prepared_db
):
    body = SEED_FILE.read_bytes()
    family = client.post("/api/v1/families", json={"name": "skua"},
                         headers=tokens.header("curator"))
    assert family.status_code == 201
    first = client.post("/api/v1/polars", content=body, headers={
        **tokens.header("curator"), "Content-Type": "text/csv"})
    assert first.status_code == 201, first.text
    stored = first.json()["stored"]
    assert len(stored) == 1 and stored[0]["created"] is True
    assert stored[0]["airfoil"] == "SKUA-210"
    again = client.post("/api/v1/polars", content=body, headers={
        **tokens.header("curator"), "Content-Type": "text/csv"})
    assert again.status_code == 200
    assert again.json()["stored"][0]["content_hash"] == stored[0]["content_hash"]
    assert again.json()["stored"][0]["created"] is False
    assert counts(prepared_db[1])[0] == 1
    revision = client.get(f"/api/v1/polars/{stored[0]['content_hash']}",
                          headers=tokens.header("reader")).json()
    assert revision["provenance"]["source_kind"] == "synthetic"
    assert revision["review"]["state"] == "draft"
    assert revision["created_by"] is None  # token names are for admins (api/visibility.py)
    as_admin = client.get(f"/api/v1/polars/{stored[0]['content_hash']}",
                          headers=tokens.header("admin")).json()
    assert as_admin["created_by"] == "test-curator"


HEADER = (
    "# airfoil: SKUA-X\n# thickness: 0.2\n# reynolds: 3e6\n# source_kind: synthetic\n"
    "alpha_deg,cl,cd\n"
)

BAD_INPUTS = {
    "empty": (b"", "text/csv", 422),
    "binary": (b"\x89PNG\r\n\x1a\n\x00\x00\x00\rIHDR\x00\x01", "text/csv", 422),
    "nan": ((HEADER + "0,0.1,0.01\n5,nan,0.01\n10,1.0,0.02\n").encode(), "text/csv", 422),
    "duplicate angles": (
        (HEADER + "0,0.1,0.01\n5,0.6,0.01\n5,0.7,0.01\n").encode(), "text/csv", 422),
    "radians": ((HEADER + "-0.1,-0.5,0.01\n0,0.1,0.01\n0.1,0.7,0.01\n0.2,1.2,0.02\n"
                 "1.5,0.9,0.5\n").encode(), "text/csv", 422),
    "missing cd column": (
        b"# airfoil: SKUA-X\n# thickness: 0.2\n# source_kind: synthetic\n"
        b"alpha_deg,cl\n0,0.1\n5,0.6\n", "text/csv", 422),
    "negative drag": ((HEADER + "0,0.1,0.01\n5,0.6,-0.01\n").encode(), "text/csv", 422),
    "wrong content type": (SEED_FILE.read_bytes(), "image/png", 415),
    "json with NaN literal": (
        b'{"airfoil": "SKUA-X", "conditions": {"thickness": 0.2}, '
        b'"provenance": {"source_kind": "synthetic"}, '
        b'"table": {"alpha_deg": [0, 5], "cl": [NaN, 0.5], "cd": [0.01, 0.01]}}',
        "application/json", 422),
}


@pytest.mark.parametrize("case", sorted(BAD_INPUTS))
def test_bad_input_is_refused_and_nothing_is_stored(case, client, tokens, prepared_db):
    body, content_type, status = BAD_INPUTS[case]
    before = counts(prepared_db[1])
    response = client.post("/api/v1/polars", content=body, headers={
        **tokens.header("curator"), "Content-Type": content_type})
    assert response.status_code == status, response.text
    assert "detail" in response.json()
    assert counts(prepared_db[1]) == before


def test_refusal_names_the_line_and_field(client, tokens):
    body = (HEADER + "0,0.1,0.01\n5,0.6,0.01\n10,abc,0.02\n").encode()
    response = client.post("/api/v1/polars", content=body, headers={
        **tokens.header("curator"), "Content-Type": "text/csv"})
    assert response.status_code == 422
    answer = response.json()
    assert answer["line"] == 8  # the header block is 5 comment lines + 1 header line
    assert answer["field"] == "cl"


def test_huge_upload_is_refused_with_413(prepared_db, tokens):
    from fastapi.testclient import TestClient

    from polarsvc.api.app import create_app
    from polarsvc.api.settings import Settings

    app = create_app(Settings(database_url=prepared_db[0], max_upload_bytes=10_000))
    with TestClient(app) as small_client:
        before = counts(prepared_db[1])
        body = (HEADER + "".join(f"{a},0.1,0.01\n" for a in range(-180, 180))).encode() * 4
        response = small_client.post("/api/v1/polars", content=body, headers={
            **tokens.header("curator"), "Content-Type": "text/csv"})
        assert response.status_code == 413
        assert counts(prepared_db[1]) == before


def test_a_file_of_several_polars_is_stored_whole_or_not_at_all(client, tokens, prepared_db):
    good = {
        "airfoil": "SKUA-X", "conditions": {"thickness": 0.2, "reynolds": 3e6},
        "provenance": {"source_kind": "synthetic"},
        "table": {"alpha_deg": [0, 5, 10], "cl": [0.1, 0.6, 1.0], "cd": [0.01, 0.012, 0.02]},
    }
    bad = {**good, "conditions": {"thickness": 0.2, "reynolds": 4e6},
           "table": {"alpha_deg": [0, 5], "cl": [0.1, 0.6], "cd": [0.01, -0.01]}}
    before = counts(prepared_db[1])
    response = client.post("/api/v1/polars", json=[good, bad], headers=tokens.header("curator"))
    assert response.status_code == 422
    assert counts(prepared_db[1]) == before

"""Access control over HTTP: every write needs a curator, token management an admin, reads a
reader unless public reads are on; expired and revoked tokens are refused; secrets never
appear after creation. Roles and rules: common practice for bearer-token APIs (RFC 6750 for
the 401 / WWW-Authenticate answer)."""

from __future__ import annotations

import datetime as dt

import pytest
from fastapi.testclient import TestClient
from sqlalchemy import func, select

from polarsvc.api.app import create_app
from polarsvc.api.settings import Settings
from polarsvc.store import tokens as token_store
from polarsvc.store.audit import SYSTEM_ACTOR
from polarsvc.store.db import session_scope
from polarsvc.store.models import AuditEvent
from tests.api.conftest import SEED_DIR
from tests.plausible import plausible_rows

CSV = (SEED_DIR / "skua" / "SKUA-210_re4e6_clean.csv").read_bytes()
# new content for the demo database: another contributor's copy, another blade name
NEW_CSV = CSV.replace(b"# contributor: ", b"# contributor: second copy of ")
BLADE = (SEED_DIR / "skerry-48.json").read_text().replace('"skerry-48"', '"skerry-48-b"')


def write_requests(revision: str) -> dict[str, tuple[str, str, dict]]:
    """Every write endpoint with a valid body."""
    return {
        "upload": ("POST", "/api/v1/polars",
                   {"content": NEW_CSV, "headers": {"Content-Type": "text/csv"}}),
        "blade": ("POST", "/api/v1/blades",
                  {"content": BLADE, "headers": {"Content-Type": "application/json"}}),
        "review": ("POST", f"/api/v1/polars/{revision}/review", {"json": {"state": "approved"}}),
        "family": ("POST", "/api/v1/families", {"json": {"name": "tern", "description": "x"}}),
        "airfoil": ("POST", "/api/v1/airfoils", {"json": {
            "name": "TERN-240", "thickness": 0.24, "family": "skua",
            "coordinates": {"x": [1.0, 0.5, 0.0, 0.5, 1.0], "y": [0.0, 0.06, 0.0, -0.05, 0.0]},
        }}),
    }


def admin_requests() -> dict[str, tuple[str, str, dict]]:
    return {
        "create token": ("POST", "/api/v1/tokens", {"json": {"name": "new", "role": "reader"}}),
        "list tokens": ("GET", "/api/v1/tokens", {}),
        "revoke token": ("DELETE", "/api/v1/tokens/test-reader", {}),
    }


def any_revision(client, tokens) -> str:
    return client.get("/api/v1/polars", headers=tokens.header("reader")).json()[0]["content_hash"]


def event_count(factory) -> int:
    with session_scope(factory, write=False) as session:
        return session.scalar(select(func.count()).select_from(AuditEvent))


@pytest.mark.parametrize("name", ["upload", "blade", "review", "family", "airfoil"])
def test_writes_need_a_curator(name, demo_client, tokens, prepared_db):
    method, url, kwargs = write_requests(any_revision(demo_client, tokens))[name]
    headers = kwargs.pop("headers", {})
    before = event_count(prepared_db[1])
    missing = demo_client.request(method, url, headers=headers, **kwargs)
    assert missing.status_code == 401
    assert missing.headers["www-authenticate"] == "Bearer"
    wrong = demo_client.request(method, url, headers={**headers, "Authorization": "Bearer psv_x"},
                                **kwargs)
    assert wrong.status_code == 401
    reader = demo_client.request(method, url, headers={**headers, **tokens.header("reader")},
                                 **kwargs)
    assert reader.status_code == 403
    assert event_count(prepared_db[1]) == before
    curator = demo_client.request(method, url, headers={**headers, **tokens.header("curator")},
                                  **kwargs)
    assert curator.status_code in (200, 201), curator.text
    assert event_count(prepared_db[1]) - before == 1  # each write leaves exactly one record


@pytest.mark.parametrize("name", ["create token", "list tokens", "revoke token"])
def test_token_management_needs_an_admin(name, client, tokens):
    method, url, kwargs = admin_requests()[name]
    assert client.request(method, url, **kwargs).status_code == 401
    for role in ("reader", "curator"):
        assert client.request(method, url, headers=tokens.header(role), **kwargs
                              ).status_code == 403
    answer = client.request(method, url, headers=tokens.header("admin"), **kwargs)
    assert answer.status_code in (200, 201), answer.text


def test_token_secret_is_shown_once_and_never_again(client, tokens):
    created = client.post("/api/v1/tokens", json={"name": "script", "role": "reader"},
                          headers=tokens.header("admin"))
    secret = created.json()["secret"]
    assert secret.startswith("psv_")
    listing = client.get("/api/v1/tokens", headers=tokens.header("admin"))
    assert secret not in listing.text
    assert "token_hash" not in listing.text
    audit = client.get("/api/v1/audit", headers=tokens.header("reader"))
    assert secret not in audit.text
    assert client.get("/api/v1/families", headers={"Authorization": f"Bearer {secret}"}
                      ).status_code == 200
    refused = client.get("/api/v1/families", headers={"Authorization": f"Bearer {secret}x"})
    assert secret not in refused.text


def test_reads_need_a_reader_unless_public_reads_are_on(prepared_db, tokens):
    with TestClient(create_app(Settings(database_url=prepared_db[0]))) as closed:
        assert closed.get("/api/v1/families").status_code == 401
        assert closed.get("/api/v1/families", headers=tokens.header("reader")).status_code == 200
    with TestClient(create_app(Settings(database_url=prepared_db[0], public_reads=True))) as open_:
        assert open_.get("/api/v1/families").status_code == 200
        assert open_.post("/api/v1/polars", content=CSV,
                          headers={"Content-Type": "text/csv"}).status_code == 401


def test_expired_and_revoked_tokens_are_refused(client, tokens, prepared_db):
    factory = prepared_db[1]
    with session_scope(factory, write=True) as session:
        token, secret = token_store.create_token(
            session, name="short", role="reader",
            expires_at=dt.datetime.now(dt.UTC) + dt.timedelta(seconds=30), actor=SYSTEM_ACTOR)
        token.expires_at = dt.datetime.now(dt.UTC) - dt.timedelta(seconds=1)
    assert client.get("/api/v1/families", headers={"Authorization": f"Bearer {secret}"}
                      ).status_code == 401
    assert client.get("/api/v1/families", headers=tokens.header("reader")).status_code == 200
    revoked = client.delete("/api/v1/tokens/test-reader", headers=tokens.header("admin"))
    assert revoked.status_code == 200 and revoked.json()["revoked_at"]
    assert client.get("/api/v1/families", headers=tokens.header("reader")).status_code == 401


def test_read_only_server_refuses_writes(prepared_db, tokens):
    app = create_app(Settings(database_url=prepared_db[0], read_only=True))
    with TestClient(app) as client:
        answer = client.post("/api/v1/polars", content=CSV,
                             headers={**tokens.header("admin"), "Content-Type": "text/csv"})
        assert answer.status_code == 403


def test_audit_rows_cannot_be_changed_through_any_endpoint(demo_client, tokens):
    """No route edits or removes audit events: the only audit operation is a GET."""
    paths = demo_client.app.openapi()["paths"]
    audit_paths = {path: set(ops) for path, ops in paths.items() if "audit" in path}
    assert audit_paths == {"/api/v1/audit": {"get"}}
    events = demo_client.get("/api/v1/audit", headers=tokens.header("reader")).json()
    event_id = events[0]["id"]
    for method in ("PUT", "PATCH", "DELETE", "POST"):
        answer = demo_client.request(method, f"/api/v1/audit/{event_id}",
                                     headers=tokens.header("admin"))
        assert answer.status_code in (404, 405)
    assert demo_client.get("/api/v1/audit", headers=tokens.header("reader")).json() == events


def test_audit_trail_records_who_what_and_from_where(demo_client, tokens):
    key = any_revision(demo_client, tokens)
    demo_client.post(f"/api/v1/polars/{key}/review", json={"state": "approved"},
                     headers=tokens.header("curator"))
    events = demo_client.get("/api/v1/audit", params={"object": key},
                             headers=tokens.header("admin")).json()
    review = [e for e in events if e["action"] == "polar.review"]
    assert len(review) == 1
    assert review[0]["actor"] == {"name": "test-curator", "role": "curator"}
    assert review[0]["remote_addr"] == "testclient"
    assert review[0]["detail"]["from"] == "draft" and review[0]["detail"]["to"] == "approved"
    by_actor = demo_client.get("/api/v1/audit", params={"actor": "test-curator"},
                               headers=tokens.header("admin")).json()
    assert [e["id"] for e in by_actor] == [review[0]["id"]]
    future = demo_client.get("/api/v1/audit", params={"since": "2999-01-01T00:00:00Z"},
                             headers=tokens.header("reader")).json()
    assert future == []


def test_names_and_notes_with_sql_and_html_are_kept_literally(client, tokens):
    refused = client.post(
        "/api/v1/polars", params={"airfoil": "X'); DROP TABLE airfoil;--<b>"},
        content=b"alpha_deg,cl,cd\n0,0.1,0.01\n5,0.6,0.012\n",
        headers={**tokens.header("curator"), "Content-Type": "text/csv"})
    assert refused.status_code == 422 and refused.json()["field"] == "airfoil"
    tricky_name = "X (DROP TABLE airfoil) --"  # within the name grammar (polarsvc.names)
    notes = "<script>alert(1)</script> ' OR 1=1 --"
    body = (
        f"# airfoil: {tricky_name}\n# thickness: 0.2\n# reynolds: 3e6\n"
        f"# source_kind: synthetic\n# notes: {notes}\n{plausible_rows()}"
    ).encode()
    answer = client.post("/api/v1/polars", content=body,
                         headers={**tokens.header("curator"), "Content-Type": "text/csv"})
    assert answer.status_code == 201, answer.text
    key = answer.json()["stored"][0]["content_hash"]
    revision = client.get(f"/api/v1/polars/{key}", headers=tokens.header("reader")).json()
    assert revision["airfoil"] == tricky_name
    assert revision["provenance"]["notes"] == notes
    from urllib.parse import quote

    assert client.get(f"/api/v1/airfoils/{quote(tricky_name, safe='')}",
                      headers=tokens.header("reader")).status_code == 200

"""Who sees whom: token names (the actors) and client addresses in the audit trail, and the
token that stored a revision or blade, are shown to admins only. Readers and anonymous users
see each event with the actor's role, and no token-management events at all (their object is
a token name); filtering by actor is an admin's query. Same rule in the API and the pages."""

from __future__ import annotations

from fastapi.testclient import TestClient

from polarsvc.api.app import create_app
from polarsvc.api.settings import Settings

SECRETS = ("test-curator", "test-admin", "test-reader", "testclient")


def curated(demo_client, tokens) -> str:
    """One review by the curator token from the test client's address; returns the hash."""
    reader = tokens.header("reader")
    revision = demo_client.get("/api/v1/polars", headers=reader).json()[0]["content_hash"]
    answer = demo_client.post(f"/api/v1/polars/{revision}/review", json={"state": "approved"},
                              headers=tokens.header("curator"))
    assert answer.status_code == 200
    assert demo_client.post("/api/v1/tokens", json={"name": "extra-reader", "role": "reader"},
                            headers=tokens.header("admin")).status_code == 201
    return revision


def test_admins_see_actors_and_addresses(demo_client, tokens):
    curated(demo_client, tokens)
    events = demo_client.get("/api/v1/audit", headers=tokens.header("admin")).json()
    review = next(e for e in events if e["action"] == "polar.review")
    assert review["actor"] == {"name": "test-curator", "role": "curator"}
    assert review["remote_addr"] == "testclient"
    assert any(e["object"]["kind"] == "api_token" for e in events)
    by_actor = demo_client.get("/api/v1/audit", params={"actor": "test-curator"},
                               headers=tokens.header("admin"))
    assert by_actor.status_code == 200 and len(by_actor.json()) == 1


def test_readers_see_roles_only(demo_client, tokens):
    revision = curated(demo_client, tokens)
    reader = tokens.header("reader")
    answer = demo_client.get("/api/v1/audit", headers=reader)
    assert answer.status_code == 200
    events = answer.json()
    review = next(e for e in events if e["action"] == "polar.review")
    assert review["actor"] == {"name": None, "role": "curator"}
    assert review["remote_addr"] is None
    assert all(e["object"]["kind"] != "api_token" for e in events)
    assert not any(name in answer.text for name in (*SECRETS, "extra-reader"))
    refused = demo_client.get("/api/v1/audit", params={"actor": "test-curator"}, headers=reader)
    assert refused.status_code == 403
    hidden = demo_client.get("/api/v1/audit", params={"object": "extra-reader"}, headers=reader)
    assert hidden.json() == []
    for url in (f"/api/v1/polars/{revision}", "/api/v1/polars", "/api/v1/blades",
                "/api/v1/blades/skerry-48"):
        shown = demo_client.get(url, headers=reader)
        assert shown.status_code == 200 and not any(n in shown.text for n in SECRETS), url
    admin_view = demo_client.get(f"/api/v1/polars/{revision}", headers=tokens.header("admin"))
    assert admin_view.json()["created_by"] == "system"


def test_anonymous_public_readers_see_roles_only(demo_client, tokens, prepared_db):
    curated(demo_client, tokens)
    with TestClient(create_app(Settings(database_url=prepared_db[0], public_reads=True))) as c:
        answer = c.get("/api/v1/audit")
        assert answer.status_code == 200 and answer.json()
        assert not any(name in answer.text for name in SECRETS)
        assert c.get("/api/v1/audit", params={"actor": "test-curator"}).status_code == 403


def test_lineage_shows_uploaders_and_reviewers_to_admins_only(demo_client, tokens):
    revision = curated(demo_client, tokens)
    reader = tokens.header("reader")
    table = demo_client.get(f"/api/v1/polars/{revision}/extended", headers=reader).json()
    key = table["recipe_hash"]
    for fmt in ("json", "text"):
        shown = demo_client.get(f"/api/v1/derived/{key}/lineage", params={"format": fmt},
                                headers=reader)
        assert shown.status_code == 200
        assert "test-curator" not in shown.text and "system" not in shown.text, fmt
        full = demo_client.get(f"/api/v1/derived/{key}/lineage", params={"format": fmt},
                               headers=tokens.header("admin"))
        assert "test-curator" in full.text and "system" in full.text, fmt
    tree = demo_client.get(f"/api/v1/derived/{key}/lineage", headers=reader).json()
    leaf = tree["inputs"][0]
    assert leaf["uploaded_by"] is None and leaf["reviews"][0]["by"] is None
    assert leaf["reviews"][0]["role"] == "curator"

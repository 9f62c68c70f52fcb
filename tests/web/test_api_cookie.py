"""The page session cookie opens the pages only. The API authenticates bearer tokens and
ignores the cookie, so a cross-site form or script riding on a signed-in browser cannot write
(or read) through the API (OWASP CSRF Prevention Cheat Sheet: a token that the browser does
not attach by itself defeats cross-site request forgery; from memory). Page forms keep their
own CSRF tokens (tests/web/test_sessions.py)."""

from __future__ import annotations

from tests.web.conftest import SEED_DIR, Demo

CSV = (SEED_DIR / "skua" / "SKUA-210_re4e6_clean.csv").read_bytes().replace(
    b"# contributor: ", b"# contributor: cross-site copy of ")


def test_api_writes_with_only_the_page_cookie_are_refused(demo: Demo):
    demo.sign_in("admin")  # the client now carries the session cookie
    before = demo.client.get("/api/v1/polars", headers=demo.bearer("reader")).json()
    forged = demo.client.post(
        "/api/v1/polars", content=CSV,
        headers={"Content-Type": "text/csv", "Origin": "https://elsewhere.example"})
    assert forged.status_code == 401, forged.text
    family = demo.client.post("/api/v1/families", json={"name": "tern"},
                              headers={"Origin": "https://elsewhere.example"})
    assert family.status_code == 401
    token = demo.client.post("/api/v1/tokens", json={"name": "stolen", "role": "admin"})
    assert token.status_code == 401
    after = demo.client.get("/api/v1/polars", headers=demo.bearer("reader")).json()
    assert len(after) == len(before)


def test_api_reads_ignore_the_cookie_and_pages_still_use_it(demo: Demo):
    demo.sign_in("reader")
    assert demo.client.get("/api/v1/families").status_code == 401
    assert demo.client.get("/api/v1/families", headers=demo.bearer("reader")).status_code == 200
    page = demo.client.get("/families/skua", follow_redirects=False)
    assert page.status_code == 200  # the page itself accepts the session


def test_bearer_writes_work_alongside_a_cookie(demo: Demo):
    demo.sign_in("reader")  # a weaker cookie does not get in the way of a stronger token
    answer = demo.client.post("/api/v1/polars", content=CSV,
                              headers={**demo.bearer("curator"), "Content-Type": "text/csv"})
    assert answer.status_code == 201, answer.text


def test_the_audit_page_shows_actors_to_admins_only(demo: Demo):
    revision = demo.client.get("/api/v1/polars", headers=demo.bearer("reader")).json()[0]
    demo.client.post(f"/api/v1/polars/{revision['content_hash']}/review",
                     json={"state": "approved"}, headers=demo.bearer("curator"))
    as_reader = demo.client.get("/audit", headers=demo.bearer("reader")).text
    assert "demo-curator" not in as_reader and "testclient" not in as_reader
    assert "polar.review" in as_reader and "curator" in as_reader
    assert "demo-curator" in demo.client.get("/audit", headers=demo.bearer("admin")).text
    airfoil_page = demo.client.get(f"/airfoils/{revision['airfoil']}",
                                   headers=demo.bearer("reader")).text
    assert "by system" not in airfoil_page

"""Control characters typed into the pages (addresses, filters, forms) are refused with the
HTML error page (422), never a 500, and nothing changes; the rule is the API's
(polarsvc.names)."""

from __future__ import annotations

from polarsvc.store import polars as polar_store
from polarsvc.store.db import session_scope
from tests.web.conftest import Demo


def draft(demo: Demo) -> str:
    with session_scope(demo.app.state.session_factory, write=False) as session:
        revisions = polar_store.list_revisions(session, airfoil="SKUA-210", surface="clean")
        return revisions[0].content_hash


def test_control_characters_in_page_addresses_and_filters(demo: Demo):
    reader = demo.bearer("reader")
    for url in ("/airfoils/SKUA%00210", "/families/sk%00ua", "/audit?object=%00",
                "/audit?since=2026%00", "/?q=a%1bb"):
        answer = demo.client.get(url, headers=reader, follow_redirects=False)
        assert answer.status_code == 422, url
        assert answer.headers["content-type"].startswith("text/html"), url
        assert "U+00" in answer.text


def test_a_review_reason_with_nul_is_refused_and_changes_nothing(demo: Demo):
    csrf = demo.sign_in("curator")
    target = draft(demo)
    answer = demo.client.post(
        "/airfoils/SKUA-210/review",
        data={"csrf_token": csrf, "revision": target, "action": "deprecate",
              "reason": "bad\x00run"}, follow_redirects=False)
    assert answer.status_code == 422 and "U+0000" in answer.text
    with session_scope(demo.app.state.session_factory, write=False) as session:
        assert polar_store.get_revision(session, target).review_state == "draft"

"""Listings come in keyset pages: following the Link headers visits every matching item once,
in the documented order, whatever the page size; counts and filters agree with a plain
Python filter and sort of the whole listing (the reference; common practice, no source);
summary queries never read the table columns."""

from __future__ import annotations

import pytest
from sqlalchemy import event

from polarsvc.store import polars as polar_store


def walk(client, url, headers, **params):
    """Every item of a listing by following rel="next", and the pages' sizes."""
    response = client.get(url, params=params, headers=headers)
    assert response.status_code == 200, response.text
    items, sizes = list(response.json()), [len(response.json())]
    total = response.headers.get("x-total-count")
    while "next" in response.links:
        response = client.get(response.links["next"]["url"], headers=headers)
        assert response.status_code == 200, response.text
        items.extend(response.json())
        sizes.append(len(response.json()))
    return items, sizes, total


@pytest.mark.parametrize("page_size", [1, 5, 7, 1000])
def test_revision_pages_visit_every_revision_once_in_order(demo_client, tokens, page_size):
    reader = tokens.header("reader")
    items, sizes, total = walk(demo_client, "/api/v1/polars", reader, limit=page_size)
    hashes = [item["content_hash"] for item in items]
    assert len(hashes) == len(set(hashes)) == int(total)
    assert all(size <= page_size for size in sizes) and sizes[-1] >= 1
    names = [item["airfoil"] for item in items]
    assert names == sorted(names)  # by airfoil name (then storage order)
    # the demo family: 7 airfoils x 3 Reynolds numbers x 2 surfaces (seed_polars/README.md)
    assert int(total) == 42


def test_filters_and_counts_agree_with_a_python_filter(demo_client, tokens):
    reader = tokens.header("reader")
    everything, _, _ = walk(demo_client, "/api/v1/polars", reader, limit=1000)
    for params in ({"surface": "rough"}, {"family": "skua", "reynolds": 6e6},
                   {"airfoil": "SKUA-250"}, {"source_kind": "synthetic"}):
        items, _, total = walk(demo_client, "/api/v1/polars", reader, limit=4, **params)
        def keep(item, params=params):
            surface = item["conditions"]["surface"]
            return (
                surface == params.get("surface", surface)
                and item["family"] == params.get("family", item["family"])
                and item["airfoil"] == params.get("airfoil", item["airfoil"])
                and item["conditions"]["reynolds"] == params.get(
                    "reynolds", item["conditions"]["reynolds"])
                and item["provenance"]["source_kind"] == params.get(
                    "source_kind", item["provenance"]["source_kind"])
            )
        expected = [item["content_hash"] for item in everything if keep(item)]
        assert [item["content_hash"] for item in items] == expected, params
        assert int(total) == len(expected)


def test_summaries_are_those_of_the_single_revision(demo_client, tokens):
    reader = tokens.header("reader")
    first = demo_client.get("/api/v1/polars", params={"limit": 1}, headers=reader).json()[0]
    one = demo_client.get(f"/api/v1/polars/{first['content_hash']}", headers=reader).json()
    assert {k: v for k, v in one.items() if k != "table"} == first


def test_airfoils_families_blades_and_audit_pages(demo_client, tokens):
    reader = tokens.header("reader")
    airfoils, sizes, total = walk(demo_client, "/api/v1/airfoils", reader, limit=2)
    assert len(airfoils) == int(total) == 7 and len(sizes) == 4
    keys = [(a["thickness"], a["name"]) for a in airfoils]
    assert keys == sorted(keys)
    families, _, total = walk(demo_client, "/api/v1/families", reader, limit=1)
    assert [f["name"] for f in families] == ["skua"] and int(total) == 1
    assert len(families[0]["airfoils"]) == 7
    blades, _, total = walk(demo_client, "/api/v1/blades", reader, limit=1)
    assert [b["name"] for b in blades] == ["skerry-48"] and int(total) == 1
    events, sizes, _ = walk(demo_client, "/api/v1/audit", reader, limit=10)
    ids = [e["id"] for e in events]
    assert ids == sorted(set(ids)) and len(sizes) > 1
    whole = demo_client.get("/api/v1/audit", params={"limit": 10000}, headers=reader).json()
    assert [e["id"] for e in whole] == ids


@pytest.mark.parametrize(
    ("params", "field"),
    [({"after": "not-a-cursor"}, "after"), ({"after": "WzFd"}, "after"), ({"limit": 0}, "limit"),
     ({"limit": 1001}, "limit")],
)
def test_bad_cursor_or_limit_is_refused_by_name(demo_client, tokens, params, field):
    response = demo_client.get("/api/v1/polars", params=params, headers=tokens.header("reader"))
    assert response.status_code == 422
    assert field in str(response.json())


def test_summary_queries_never_read_table_columns(demo_factory):
    statements: list[str] = []
    engine = demo_factory.kw["bind"]

    def record(conn, cursor, statement, parameters, context, executemany):
        statements.append(statement)

    event.listen(engine, "before_cursor_execute", record)
    try:
        with demo_factory() as session:
            page = polar_store.page_revisions(session, limit=50)
            assert len(page.items) == 42
            polar_store.list_revisions(session, airfoil="SKUA-250", with_tables=False)
    finally:
        event.remove(engine, "before_cursor_execute", record)
    for statement in statements:
        for column in ("alpha_deg", ".cl,", ".cl ", ".cd", ".cm"):
            assert f"polar_revision{column}" not in statement.replace('"', ""), statement


def test_catalogue_page_rows_come_in_pages_with_sql_summaries(demo_factory):
    from polarsvc.web import viewdata

    with demo_factory() as session:
        whole = viewdata.catalogue_rows(session, viewdata.CatalogueFilters(), limit=1000)
        first = viewdata.catalogue_rows(session, viewdata.CatalogueFilters(), limit=3)
        rest = viewdata.catalogue_rows(
            session, viewdata.CatalogueFilters(), after=first.next_cursor, limit=1000)
        rough = viewdata.catalogue_rows(
            session, viewdata.CatalogueFilters(surface="rough", review_state="draft"))
    assert [r.name for r in first.rows + rest.rows] == [r.name for r in whole.rows]
    assert whole.total == first.total == 7 and rest.next_cursor is None
    # each demo airfoil holds 3 Reynolds numbers x 2 surfaces (seed_polars/README.md)
    assert all(r.n_revisions == 6 and r.surfaces == ["clean", "rough"] for r in whole.rows)
    assert all(len(r.reynolds) == 3 for r in whole.rows)
    assert all(r.n_revisions == 3 and r.surfaces == ["rough"] for r in rough.rows)


def test_a_page_of_airfoils_takes_as_many_queries_however_long(demo_client, tokens):
    """Each airfoil's aliases and family are read for the whole page at once: a page of 7
    airfoils issues as many SQL statements as a page of 1 (no query per row)."""
    from sqlalchemy import Engine

    reader = tokens.header("reader")
    counts = {}
    demo_client.get("/api/v1/airfoils", headers=reader)  # the total is counted once, kept
    for limit in (1, 7):
        statements: list[str] = []

        def record(conn, cursor, statement, parameters, context, executemany,
                   statements=statements):
            statements.append(statement)

        event.listen(Engine, "before_cursor_execute", record)
        try:
            response = demo_client.get("/api/v1/airfoils", params={"limit": limit},
                                       headers=reader)
        finally:
            event.remove(Engine, "before_cursor_execute", record)
        assert response.status_code == 200 and len(response.json()) == limit
        counts[limit] = len(statements)
    assert counts[7] == counts[1], counts


def test_token_pages_visit_every_token_once_by_name(client, tokens):
    admin = tokens.header("admin")
    for name in ("zephyr", "alpha-script", "mid-reader", "beta", "omega"):
        assert client.post("/api/v1/tokens", json={"name": name, "role": "reader"},
                           headers=admin).status_code == 201
    assert client.delete("/api/v1/tokens/beta", headers=admin).status_code == 200
    items, sizes, total = walk(client, "/api/v1/tokens", admin, limit=3)
    # the fixture's three tokens and the five above (the revoked one still listed), by name
    expected = sorted(["test-reader", "test-curator", "test-admin", "zephyr", "alpha-script",
                       "mid-reader", "beta", "omega"])
    assert [t["name"] for t in items] == expected
    assert int(total) == 8 and sizes == [3, 3, 2]
    assert [t["name"] for t in items if t["revoked_at"]] == ["beta"]
    assert all("secret" not in t and "token_hash" not in t for t in items)


def test_used_by_pages_visit_every_derived_table_once_oldest_first(demo_client, tokens):
    reader = tokens.header("reader")
    revision = demo_client.get("/api/v1/polars", params={"airfoil": "SKUA-250", "limit": 1},
                               headers=reader).json()[0]["content_hash"]
    made = []
    for path, params in (("resampled", {"step_deg": 0.5}), ("resampled", {"step_deg": 1.0}),
                         ("resampled", {"step_deg": 2.0}), ("extended", {"step_deg": 1.0}),
                         ("extended", {"step_deg": 2.0})):
        response = demo_client.get(f"/api/v1/polars/{revision}/{path}", params=params,
                                   headers=reader)
        assert response.status_code == 200 and response.headers["x-polarsvc-stored"] == "yes"
        made.append(response.json()["recipe_hash"])
    url = f"/api/v1/polars/{revision[:12]}/used-by"
    response = demo_client.get(url, params={"limit": 2}, headers=reader)
    pages = [response]
    while "next" in response.links:
        response = demo_client.get(response.links["next"]["url"], headers=reader)
        pages.append(response)
    assert all(p.status_code == 200 for p in pages)
    assert all(p.json()["revision"] == revision for p in pages)
    assert all(p.headers["x-total-count"] == "5" for p in pages)
    assert [len(p.json()["derived"]) for p in pages] == [2, 2, 1]
    # stored in the order they were asked for: the oldest first
    assert [d["recipe_hash"] for p in pages for d in p.json()["derived"]] == made
    whole = demo_client.get(url, headers=reader)
    assert "link" not in whole.headers and len(whole.json()["derived"]) == 5


@pytest.mark.parametrize("url", ["/api/v1/tokens", "/api/v1/polars/{h}/used-by"])
@pytest.mark.parametrize(("params", "field"), [({"limit": 0}, "limit"),
                                               ({"after": "not-a-cursor"}, "after")])
def test_new_pages_refuse_a_bad_cursor_or_limit_by_name(demo_client, tokens, url, params,
                                                        field):
    admin = tokens.header("admin")
    revision = demo_client.get("/api/v1/polars", params={"limit": 1},
                               headers=admin).json()[0]["content_hash"]
    response = demo_client.get(url.format(h=revision), params=params, headers=admin)
    assert response.status_code == 422
    assert field in str(response.json())

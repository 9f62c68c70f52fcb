"""Names follow one grammar and text inputs hold no control characters, on SQLite and
PostgreSQL alike: every refusal is a 422 naming the field, and nothing is stored.

Why the rules (common practice, no source): a name becomes a URL path segment and a file
name, so it holds no path separator; PostgreSQL text cannot hold NUL (PostgreSQL manual,
"Character Types", from memory), so NUL is refused on both databases."""

from __future__ import annotations

import json

import pytest
from sqlalchemy import func, select

from polarsvc.store.db import session_scope
from polarsvc.store.models import Airfoil, AuditEvent, Family, PolarRevision
from tests.api.conftest import SEED_DIR
from tests.plausible import plausible_rows

CSV = (SEED_DIR / "skua" / "SKUA-210_re4e6_clean.csv").read_text()
BLADE = json.loads((SEED_DIR / "skerry-48.json").read_text())


def counts(factory) -> tuple[int, ...]:
    with session_scope(factory, write=False) as session:
        return tuple(
            session.scalar(select(func.count()).select_from(model))
            for model in (Family, Airfoil, PolarRevision, AuditEvent)
        )


def upload(client, tokens, body: str, **params):
    return client.post("/api/v1/polars", content=body.encode(), params=params,
                       headers={**tokens.header("curator"), "Content-Type": "text/csv"})


def new_airfoil_csv(name: str, notes: str = "synthetic") -> str:
    return (f"# airfoil: {name}\n# thickness: 0.2\n# reynolds: 3e6\n# source_kind: synthetic\n"
            f"# notes: {notes}\n{plausible_rows()}")


def field_of(answer) -> str:
    body = answer.json()
    if isinstance(body["detail"], list):  # request validation: the location names the field
        return body["detail"][0]["loc"][-1]
    return body["field"]


BAD_NAMES = ["../../escaped", "/tmp/absolute", "dir/sub", "a\\b", ".hidden", "x" * 101]


@pytest.mark.parametrize("name", BAD_NAMES)
def test_uploads_refuse_bad_airfoil_and_family_names(name, client, tokens, prepared_db):
    before = counts(prepared_db[1])
    in_file = upload(client, tokens, new_airfoil_csv(name))
    assert in_file.status_code == 422, in_file.text
    assert in_file.json()["field"] == "airfoil" and in_file.json()["line"] == 1
    in_query = upload(client, tokens, "alpha_deg,cl,cd\n0,0.1,0.01\n5,0.6,0.012\n",
                      airfoil=name, thickness="0.2", source_kind="synthetic")
    assert in_query.status_code == 422 and in_query.json()["field"] == "airfoil"
    family = upload(client, tokens, new_airfoil_csv("TERN-200"), family=name)
    assert family.status_code == 422 and family.json()["field"] == "family"
    assert counts(prepared_db[1]) == before


@pytest.mark.parametrize("name", BAD_NAMES)
def test_json_bodies_refuse_bad_names(name, client, tokens, prepared_db):
    before = counts(prepared_db[1])
    curator = tokens.header("curator")
    attempts = [
        client.post("/api/v1/families", json={"name": name}, headers=curator),
        client.post("/api/v1/airfoils", json={"name": name, "thickness": 0.2}, headers=curator),
        client.post("/api/v1/blades", json={**BLADE, "name": name}, headers=curator),
        client.post("/api/v1/tokens", json={"name": name, "role": "reader"},
                    headers=tokens.header("admin")),
    ]
    for answer in attempts:
        assert answer.status_code == 422, answer.text
        assert field_of(answer) == "name"
    assert counts(prepared_db[1]) == before


def test_a_valid_name_with_spaces_and_parentheses_is_reachable(client, tokens):
    name = "TERN 200 (tripped)"
    assert upload(client, tokens, new_airfoil_csv(name)).status_code == 201
    answer = client.get(f"/api/v1/airfoils/{name}", headers=tokens.header("reader"))
    assert answer.status_code == 200 and answer.json()["name"] == name


def test_nul_and_control_characters_in_uploads_are_refused_on_every_database(
    client, tokens, prepared_db
):
    before = counts(prepared_db[1])
    nul = upload(client, tokens, new_airfoil_csv("TERN-200", notes="a\x00b"))
    assert nul.status_code == 422 and nul.json()["line"] == 5  # a NUL byte: not a text file
    escape = upload(client, tokens, new_airfoil_csv("TERN-200", notes="\x1b[2J"))
    assert escape.status_code == 422, escape.text
    assert escape.json()["field"] == "notes" and "U+001B" in escape.json()["detail"]
    for key in ("notes", "reference", "contributor", "facility"):
        in_query = upload(client, tokens, new_airfoil_csv("TERN-200"), **{key: "x\x00y"})
        assert in_query.status_code == 422, in_query.text
        assert in_query.json()["field"] == key
    json_body = json.dumps({
        "airfoil": "TERN-200", "conditions": {"thickness": 0.2, "reynolds": 3e6},
        "provenance": {"source_kind": "cfd", "reference": "run\u00001"},
        "table": {"alpha_deg": [0, 5], "cl": [0.1, 0.6], "cd": [0.01, 0.012]}})
    in_json = client.post("/api/v1/polars", content=json_body.encode(),
                          headers={**tokens.header("curator"), "Content-Type": "application/json"})
    assert in_json.status_code == 422 and in_json.json()["field"] == "provenance.reference"
    assert counts(prepared_db[1]) == before


def test_nul_in_reads_and_searches_is_a_422_naming_the_parameter(demo_client, tokens):
    reader = tokens.header("reader")
    cases = [
        ("/api/v1/airfoils/SKUA%00210", "name"),
        ("/api/v1/families/sk%00ua", "name"),
        ("/api/v1/blades/skerry%0048", "key"),
        ("/api/v1/airfoils?search=%00", "search"),
        ("/api/v1/airfoils?family=sk%00ua", "family"),
        ("/api/v1/polars?airfoil=%00", "airfoil"),
        ("/api/v1/audit?actor=a%00b", "actor"),
        ("/api/v1/audit?object=%01", "object"),
    ]
    for url, field in cases:
        answer = demo_client.get(url, headers=reader)
        assert answer.status_code == 422, (url, answer.text)
        assert answer.json()["field"] == field, url
        assert "U+00" in answer.json()["detail"]
    # tab and line ends are text, not control characters to refuse: nothing found
    assert demo_client.get("/api/v1/airfoils?search=a%09b", headers=reader).json() == []


def test_nul_in_a_review_reason_is_refused(demo_client, tokens, prepared_db):
    revision = demo_client.get("/api/v1/polars", headers=tokens.header("reader")).json()[0]
    answer = demo_client.post(
        f"/api/v1/polars/{revision['content_hash']}/review",
        json={"state": "deprecated", "reason": "bad\u0000run"}, headers=tokens.header("curator"))
    assert answer.status_code == 422 and field_of(answer) == "reason"
    after = demo_client.get(f"/api/v1/polars/{revision['content_hash']}",
                            headers=tokens.header("reader")).json()
    assert after["review"]["state"] == "draft"


@pytest.mark.parametrize(
    ("where", "field"),
    [("conditions", "conditions.reynolds"), ("conditions-mach", "conditions.mach"),
     ("thickness", "conditions.thickness")],
)
def test_a_400_digit_integer_in_metadata_is_a_422_naming_the_field(
    where, field, client, tokens, prepared_db
):
    huge = "1" + "0" * 399  # 400 digits: beyond the largest double, about 1.8e308 (IEEE 754)
    conditions = {"reynolds": "3e6", "thickness": "0.2", "mach": "0.1"}
    key = {"conditions": "reynolds", "conditions-mach": "mach", "thickness": "thickness"}[where]
    conditions[key] = huge
    body = (
        '{"airfoil": "TERN-200", "conditions": {'
        + ", ".join(f'"{k}": {v}' for k, v in conditions.items())
        + '}, "provenance": {"source_kind": "cfd"}, '
        '"table": {"alpha_deg": [0, 5], "cl": [0.1, 0.6], "cd": [0.01, 0.012]}}'
    )
    before = counts(prepared_db[1])
    answer = client.post("/api/v1/polars", content=body.encode(),
                         headers={**tokens.header("curator"), "Content-Type": "application/json"})
    assert answer.status_code == 422, answer.text
    assert answer.json()["field"] == field
    assert counts(prepared_db[1]) == before
    in_query = upload(client, tokens, "alpha_deg,cl,cd\n0,0.1,0.01\n5,0.6,0.012\n",
                      airfoil="TERN-200", thickness="0.2", source_kind="synthetic",
                      reynolds=huge)
    assert in_query.status_code == 422 and field_of(in_query) == "reynolds"

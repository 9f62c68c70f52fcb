"""Corrections with history over HTTP: move, rename (old name kept as an alias), retire from
blends, fix provenance by a superseding revision; each one audit event holding before and
after; nothing deleted. A replacement must match the conditions it replaces or say why."""

from __future__ import annotations

import json
from pathlib import Path

from sqlalchemy import select

from polarsvc.store.db import session_scope
from polarsvc.store.models import AuditEvent

CORPUS = Path(__file__).resolve().parents[1] / "quality_corpus"


def upload_member(client, tokens) -> str:
    answer = client.post(
        "/api/v1/polars", content=(CORPUS / "single_reynolds_member.csv").read_bytes(),
        headers={**tokens.header("curator"), "Content-Type": "text/csv"},
    )
    assert answer.status_code == 201, answer.text
    return answer.json()["stored"][0]["content_hash"]


def events(factory, action: str) -> list[dict]:
    with session_scope(factory, write=False) as session:
        rows = session.scalars(select(AuditEvent).where(AuditEvent.action == action)).all()
        return [{"key": e.object_key, **json.loads(e.detail)} for e in rows]


def blade(client, tokens):
    return client.get("/api/v1/blades/skerry-48/tables", headers=tokens.header("reader"))


def test_retire_and_reinstate(demo_client, tokens, prepared_db):
    curator = tokens.header("curator")
    member = upload_member(demo_client, tokens)
    assert blade(demo_client, tokens).status_code == 422  # SKUA-240 covers Re 3e6 only
    no_reason = demo_client.post("/api/v1/airfoils/SKUA-240/retire", json={"reason": ""},
                                 headers=curator)
    assert no_reason.status_code == 422
    retired = demo_client.post("/api/v1/airfoils/SKUA-240/retire",
                               json={"reason": "one Reynolds number only"}, headers=curator)
    assert retired.status_code == 200 and retired.json()["retired"] is True
    served = blade(demo_client, tokens)
    assert served.status_code == 200, served.text
    assert member not in [i["revision"] for i in served.json()["inputs"]]
    # still stored and served by its hash
    assert demo_client.get(f"/api/v1/polars/{member}",
                           headers=tokens.header("reader")).status_code == 200
    (event,) = events(prepared_db[1], "airfoil.retire")
    assert event["from"]["retired"] is False and event["to"]["retired"] is True
    assert event["reason"] == "one Reynolds number only"
    back = demo_client.post("/api/v1/airfoils/SKUA-240/reinstate",
                            json={"reason": "more Reynolds numbers coming"}, headers=curator)
    assert back.status_code == 200 and back.json()["retired"] is False
    assert blade(demo_client, tokens).status_code == 422
    assert len(events(prepared_db[1], "airfoil.reinstate")) == 1


def test_move_to_another_family(demo_client, tokens, prepared_db):
    curator = tokens.header("curator")
    upload_member(demo_client, tokens)
    unknown = demo_client.post("/api/v1/airfoils/SKUA-240/move",
                               json={"family": "skua-lab", "reason": "lab series"},
                               headers=curator)
    # the family named in the body does not exist: the body is wrong (422 naming the field),
    # not the airfoil addressed (common practice, no source)
    assert unknown.status_code == 422, unknown.text
    assert "family" in unknown.json()["detail"]
    demo_client.post("/api/v1/families", json={"name": "skua-lab"}, headers=curator)
    moved = demo_client.post("/api/v1/airfoils/SKUA-240/move",
                             json={"family": "skua-lab", "reason": "lab series"},
                             headers=curator)
    assert moved.status_code == 200, moved.text
    assert moved.json()["family"] == "skua-lab"
    assert blade(demo_client, tokens).status_code == 200
    (event,) = events(prepared_db[1], "airfoil.move")
    assert event == {"key": "SKUA-240", "from": {"family": "skua"},
                     "to": {"family": "skua-lab"}, "reason": "lab series"}
    # a second airfoil of one thickness in a family is refused by name, when created ...
    refused = demo_client.post("/api/v1/airfoils", json={
        "name": "TWIN-250", "thickness": 0.25, "family": "skua"}, headers=curator)
    assert refused.status_code == 409 and "SKUA-250" in refused.json()["detail"]
    # ... and when moved in
    twin = demo_client.post("/api/v1/airfoils", json={
        "name": "TWIN-250", "thickness": 0.25, "family": "skua-lab"}, headers=curator)
    assert twin.status_code == 201
    clash = demo_client.post("/api/v1/airfoils/TWIN-250/move",
                             json={"family": "skua", "reason": "x"}, headers=curator)
    assert clash.status_code == 409 and "SKUA-250" in clash.json()["detail"]


def test_rename_keeps_the_old_name_as_an_alias(demo_client, tokens, prepared_db):
    curator, reader = tokens.header("curator"), tokens.header("reader")
    member = upload_member(demo_client, tokens)
    extended = demo_client.get(f"/api/v1/polars/{member}/extended", headers=reader).json()
    renamed = demo_client.post("/api/v1/airfoils/SKUA-240/rename",
                               json={"new_name": "SKUA-240-LAB", "reason": "lab naming"},
                               headers=curator)
    assert renamed.status_code == 200, renamed.text
    assert renamed.json()["aliases"] == ["SKUA-240"]
    by_old = demo_client.get("/api/v1/airfoils/SKUA-240", headers=reader).json()
    assert by_old["name"] == "SKUA-240-LAB"
    assert [r["content_hash"] for r in by_old["revisions"]] == [member]
    # stored hashes still verify (they hold the name they were stored under)
    report = demo_client.post(f"/api/v1/derived/{extended['content_hash']}/verify",
                              headers=reader).json()
    assert report["matches"] is True, report
    taken = demo_client.post("/api/v1/airfoils/SKUA-250/rename",
                             json={"new_name": "SKUA-240", "reason": "x"}, headers=curator)
    assert taken.status_code == 409
    (event,) = events(prepared_db[1], "airfoil.rename")
    assert event["from"] == {"name": "SKUA-240"} and event["to"] == {"name": "SKUA-240-LAB"}


def test_provenance_correction_supersedes_and_keeps_the_old_revision(
    demo_client, tokens, prepared_db
):
    curator, reader = tokens.header("curator"), tokens.header("reader")
    old = demo_client.get("/api/v1/polars", params={"airfoil": "SKUA-250", "surface": "clean"},
                          headers=reader).json()[0]
    corrected = demo_client.post(
        f"/api/v1/polars/{old['content_hash']}/correct",
        json={"provenance": {"facility": "Skerry low-speed tunnel (fictional)",
                             "measured_on": "2026-03-01"},
              "reason": "facility and date were left out"},
        headers=curator,
    )
    assert corrected.status_code == 201, corrected.text
    new = corrected.json()
    assert new["supersedes"] == old["content_hash"]
    assert new["provenance"]["facility"] == "Skerry low-speed tunnel (fictional)"
    assert new["provenance"]["reference"] == old["provenance"]["reference"]
    assert new["conditions"] == old["conditions"]
    kept = demo_client.get(f"/api/v1/polars/{old['content_hash']}", headers=reader)
    assert kept.status_code == 200
    (event,) = events(prepared_db[1], "polar.correct")
    assert event["key"] == new["content_hash"]
    assert event["from"] == {"facility": None, "measured_on": None}
    assert event["to"] == {"facility": "Skerry low-speed tunnel (fictional)",
                           "measured_on": "2026-03-01"}
    assert event["reason"] == "facility and date were left out"
    served = demo_client.get("/api/v1/families/skua/blend",
                             params={"thickness": 0.25, "reynolds": old["conditions"]["reynolds"]},
                             headers=reader).json()
    used = [i["revision"] for i in served["inputs"]]
    assert new["content_hash"] in used and old["content_hash"] not in used
    nothing = demo_client.post(f"/api/v1/polars/{new['content_hash']}/correct",
                               json={"provenance": {}, "reason": "x"}, headers=curator)
    assert nothing.status_code == 422


def test_replacement_at_other_conditions_needs_a_reason(demo_client, tokens):
    curator, reader = tokens.header("curator"), tokens.header("reader")
    rows = demo_client.get("/api/v1/polars", params={"airfoil": "SKUA-250", "surface": "clean"},
                           headers=reader).json()
    low, high = rows[0]["content_hash"], rows[1]["content_hash"]
    refused = demo_client.post(f"/api/v1/polars/{low}/review", json={
        "state": "deprecated", "reason": "bad run", "replaced_by": high}, headers=curator)
    assert refused.status_code == 409
    assert "reynolds" in refused.json()["detail"]
    accepted = demo_client.post(f"/api/v1/polars/{low}/review", json={
        "state": "deprecated", "reason": "bad run", "replaced_by": high,
        "replacement_reason": "the higher-Re run is the series reference"}, headers=curator)
    assert accepted.status_code == 200, accepted.text

"""Review state, approved-only serving, lineage in both directions, and verification
(recomputation from the recorded recipe) including detection of a tampered input."""

from __future__ import annotations

from sqlalchemy import text

from polarsvc.store.db import session_scope


def revisions(client, tokens, **filters):
    return client.get("/api/v1/polars", params=filters, headers=tokens.header("reader")).json()


def test_approved_only_serving_and_deprecation_flags(demo_client, tokens):
    reader, curator = tokens.header("reader"), tokens.header("curator")
    refused = demo_client.get("/api/v1/blades/skerry-48/tables",
                              params={"approved_only": True}, headers=reader)
    assert refused.status_code == 422  # no approved data yet
    for revision in revisions(demo_client, tokens, surface="clean"):
        answer = demo_client.post(f"/api/v1/polars/{revision['content_hash']}/review",
                                  json={"state": "approved"}, headers=curator)
        assert answer.status_code == 200
    served = demo_client.get("/api/v1/blades/skerry-48/tables",
                             params={"approved_only": True}, headers=reader)
    assert served.status_code == 200
    assert served.json()["draws_on_deprecated"] is False
    target = revisions(demo_client, tokens, airfoil="SKUA-300", surface="clean")[0]
    no_reason = demo_client.post(f"/api/v1/polars/{target['content_hash']}/review",
                                 json={"state": "deprecated"}, headers=curator)
    assert no_reason.status_code == 409
    deprecated = demo_client.post(f"/api/v1/polars/{target['content_hash']}/review",
                                  json={"state": "deprecated", "reason": "suspect balance"},
                                  headers=curator)
    assert deprecated.json()["review"] == {
        "state": "deprecated", "reason": "suspect balance", "replaced_by": None}
    # the deprecated revision leaves the default selection (the blade's stations near
    # t/c 0.30 lie within the Reynolds numbers SKUA-300 keeps)
    after = demo_client.get("/api/v1/blades/skerry-48/tables", headers=reader)
    assert after.status_code == 200, after.text
    assert after.json()["draws_on_deprecated"] is False
    assert target["content_hash"] not in [i["revision"] for i in after.json()["inputs"]]
    alone = demo_client.get(f"/api/v1/polars/{target['content_hash']}/extended",
                            headers=reader).json()
    assert alone["deprecated_inputs"] == [target["content_hash"]]
    strict = demo_client.get("/api/v1/blades/skerry-48/tables", params={"approved_only": True},
                             headers=reader)
    # approved-only serving gives the same selection (every other clean revision is approved)
    assert strict.status_code == 200, strict.text
    assert strict.json()["content_hash"] == after.json()["content_hash"]


def test_lineage_reaches_every_stored_revision_and_reverse_lineage_finds_the_set(
    demo_client, tokens
):
    reader = tokens.header("reader")
    blade_set = demo_client.get("/api/v1/blades/skerry-48/tables", headers=reader).json()
    tree = demo_client.get(f"/api/v1/derived/{blade_set['content_hash']}/lineage",
                           headers=reader).json()
    assert tree["kind"] == "blade-set"
    assert tree["software"]["name"] == "polarsvc"
    assert tree["blade"]["name"] == "skerry-48"
    leaf_hashes = {leaf["content_hash"] for leaf in tree["inputs"]}
    clean = {r["content_hash"] for r in revisions(demo_client, tokens, surface="clean")}
    assert leaf_hashes == clean
    assert all(leaf["content_intact"] for leaf in tree["inputs"])
    assert all(leaf["provenance"]["source_kind"] == "synthetic" for leaf in tree["inputs"])
    text_form = demo_client.get(f"/api/v1/derived/{blade_set['recipe_hash']}/lineage",
                                params={"format": "text"}, headers=reader).text
    assert blade_set["content_hash"] in text_form
    for leaf_hash in leaf_hashes:
        assert leaf_hash in text_form
        used = demo_client.get(f"/api/v1/polars/{leaf_hash}/used-by", headers=reader).json()
        assert blade_set["recipe_hash"] in {d["recipe_hash"] for d in used["derived"]}


def test_verify_passes_then_fails_after_tampering(demo_client, tokens, prepared_db):
    reader = tokens.header("reader")
    blade_set = demo_client.get("/api/v1/blades/skerry-48/tables", headers=reader).json()
    report = demo_client.post(f"/api/v1/derived/{blade_set['content_hash']}/verify",
                              headers=reader).json()
    assert report["matches"] is True, report
    assert report["recomputed_content_hash"] == blade_set["content_hash"]
    victim = blade_set["inputs"][3]["revision"]
    tampered = bytes(8)  # cl of the first row set to 0.0, behind the service's back
    with session_scope(prepared_db[1], write=True) as session:
        row = session.execute(text("SELECT cl FROM polar_revision WHERE content_hash = :h"),
                              {"h": victim}).one()
        session.execute(text("UPDATE polar_revision SET cl = :cl WHERE content_hash = :h"),
                        {"cl": tampered + bytes(row.cl)[8:], "h": victim})
    report = demo_client.post(f"/api/v1/derived/{blade_set['content_hash']}/verify",
                              headers=reader).json()
    assert report["matches"] is False
    assert any(victim in problem for problem in report["problems"])
    tree = demo_client.get(f"/api/v1/derived/{blade_set['content_hash']}/lineage",
                           headers=reader).json()
    assert [leaf["content_intact"] for leaf in tree["inputs"]].count(False) == 1

"""Families one upload cannot break: a new member with a narrow Reynolds range only matters
where it brackets a station in thickness, errors name the airfoil and its range, deprecated
revisions leave the default selection, and a member without a Reynolds number stays out."""

from __future__ import annotations

from pathlib import Path

CORPUS = Path(__file__).resolve().parents[1] / "quality_corpus"


def upload(client, tokens, name: str, **params):
    answer = client.post(
        "/api/v1/polars", content=(CORPUS / name).read_bytes(), params=params,
        headers={**tokens.header("curator"), "Content-Type": "text/csv"},
    )
    assert answer.status_code == 201, answer.text
    return answer.json()["stored"][0]["content_hash"]


def blend(client, tokens, thickness: float, reynolds: float, **params):
    return client.get("/api/v1/families/skua/blend",
                      params={"thickness": thickness, "reynolds": reynolds, **params},
                      headers=tokens.header("reader"))


def test_a_one_reynolds_member_breaks_only_what_it_brackets(demo_client, tokens):
    reader = tokens.header("reader")
    before = blend(demo_client, tokens, 0.27, 2.45e6)
    assert before.status_code == 200
    member = upload(demo_client, tokens, "single_reynolds_member.csv")  # t/c 0.24, Re 3e6
    # t/c 0.27 uses the 0.25 and 0.30 members only: unchanged
    after = blend(demo_client, tokens, 0.27, 2.45e6)
    assert after.status_code == 200, after.text
    assert after.json()["content_hash"] == before.json()["content_hash"]
    # the blade has stations between t/c 0.21 and 0.25: they need the new member, whose
    # single Reynolds number does not cover them; the error says which airfoil and range
    blade = demo_client.get("/api/v1/blades/skerry-48/tables", headers=reader)
    assert blade.status_code == 422
    assert "airfoil 'SKUA-240' (t/c 0.24) [3e+06, 3e+06]" in blade.json()["detail"]
    # between 0.21 and 0.24 the new member is used: the error names it and its range
    refused = blend(demo_client, tokens, 0.23, 2.45e6)
    assert refused.status_code == 422
    detail = refused.json()["detail"]
    assert "'SKUA-240'" in detail and "[3e+06, 3e+06]" in detail
    clamped = blend(demo_client, tokens, 0.23, 2.45e6, clamp=True)
    assert clamped.status_code == 200
    assert member in [i["revision"] for i in clamped.json()["inputs"]]


def test_deprecated_revisions_leave_the_default_selection(demo_client, tokens):
    member = upload(demo_client, tokens, "single_reynolds_member.csv")
    answer = demo_client.post(f"/api/v1/polars/{member}/review",
                              json={"state": "deprecated", "reason": "one Reynolds number only"},
                              headers=tokens.header("curator"))
    assert answer.status_code == 200
    served = blend(demo_client, tokens, 0.23, 2.45e6)
    assert served.status_code == 200, served.text
    assert member not in [i["revision"] for i in served.json()["inputs"]]
    assert served.json()["draws_on_deprecated"] is False
    blade = demo_client.get("/api/v1/blades/skerry-48/tables", headers=tokens.header("reader"))
    assert blade.status_code == 200, blade.text
    # the revision itself still serves by its hash
    alone = demo_client.get(f"/api/v1/polars/{member}/extended", headers=tokens.header("reader"))
    assert alone.status_code == 200
    assert alone.json()["draws_on_deprecated"] is True


def test_a_member_stored_without_reynolds_number_stays_out_of_blends(demo_client, tokens):
    member = upload(demo_client, tokens, "missing_reynolds.csv",
                    override_quality="kept for the record only")
    served = blend(demo_client, tokens, 0.245, 3e6)
    assert served.status_code == 200, served.text
    assert member not in [i["revision"] for i in served.json()["inputs"]]

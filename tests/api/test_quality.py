"""Quality flags at upload: the corpus of mistakes under tests/quality_corpus is refused or
flagged as specified, with the line and field named; a curator's override is recorded in the
audit trail; flags show in the revision, the listing and every derived table that uses a
flagged input.

Expected lines are counted in the corpus files themselves (10 comment lines and a header,
so the first data row is line 12)."""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from sqlalchemy import func, select

from polarsvc.store.db import session_scope
from polarsvc.store.models import AuditEvent, PolarRevision

CORPUS = Path(__file__).resolve().parents[1] / "quality_corpus"


def line_of(name: str, alpha_deg: float) -> int:
    """The file line holding ``alpha_deg`` (read from the corpus file, independently of the
    reader under test)."""
    for number, text in enumerate((CORPUS / name).read_text().splitlines(), start=1):
        cells = text.replace(" ", ",").split(",")
        try:
            if float(cells[0]) == alpha_deg:
                return number
        except ValueError:
            continue
    raise AssertionError(f"{alpha_deg} not in {name}")


def upload(client, tokens, name: str, *, content_type: str = "text/csv", **params):
    return client.post(
        "/api/v1/polars", content=(CORPUS / name).read_bytes(), params=params,
        headers={**tokens.header("curator"), "Content-Type": content_type},
    )


def revision_count(factory) -> int:
    with session_scope(factory, write=False) as session:
        return session.scalar(select(func.count()).select_from(PolarRevision))


# (file, error code, field, angle of the named row or None for the first data row)
REFUSED = [
    ("radians_under_alpha_deg.csv", "angles-radians", "alpha_deg", None),
    ("cl_fifty.csv", "cl-magnitude", "cl", 8.0),
    ("cd_in_counts.csv", "cd-counts", "cd", None),
    ("three_rows.csv", "too-few-rows", "alpha_deg", None),
    ("missing_reynolds.csv", "reynolds-missing", "reynolds", None),
    ("mach_inconsistent.csv", "mach-inconsistent", "mach", None),
    ("absurd_magnitude.csv", "absurd-magnitude", "cl", 8.0),
]


@pytest.mark.parametrize(("name", "code", "field", "alpha"), REFUSED)
def test_corpus_mistakes_are_refused_naming_line_and_field(
    demo_client, tokens, prepared_db, name, code, field, alpha
):
    before = revision_count(prepared_db[1])
    answer = upload(demo_client, tokens, name)
    assert answer.status_code == 422, answer.text
    body = answer.json()
    errors = [f for f in body["quality_flags"] if f["level"] == "error"]
    assert code in [f["code"] for f in errors], body
    flag = next(f for f in errors if f["code"] == code)
    assert flag["field"] == field
    if alpha is not None:
        assert flag["line"] == line_of(name, alpha)
        assert f"line {flag['line']}" in body["detail"]
    assert f"field '{field}'" in body["detail"]
    assert revision_count(prepared_db[1]) == before  # nothing stored


def test_missing_thickness_of_a_new_family_member_is_refused(demo_client, tokens):
    answer = upload(demo_client, tokens, "missing_thickness.csv")
    assert answer.status_code == 422
    assert answer.json()["field"] == "thickness"


def test_missing_mach_is_stored_with_a_warning_not_silently(demo_client, tokens):
    answer = upload(demo_client, tokens, "mach_missing.csv")
    assert answer.status_code == 201, answer.text
    (stored,) = answer.json()["stored"]
    codes = {(f["code"], f["level"]) for f in stored["quality_flags"]}
    assert ("mach-not-stated", "warning") in codes
    shown = demo_client.get(f"/api/v1/polars/{stored['content_hash']}",
                            headers=tokens.header("reader")).json()
    assert "mach-not-stated" in [f["code"] for f in shown["quality_flags"]]


def test_override_stores_the_table_and_the_audit_records_it(demo_client, tokens, prepared_db):
    answer = upload(demo_client, tokens, "cl_fifty.csv",
                    override_quality="cl at 8 deg checked against the run log")
    assert answer.status_code == 201, answer.text
    (stored,) = answer.json()["stored"]
    assert "cl-magnitude" in [f["code"] for f in stored["quality_flags"]]
    with session_scope(prepared_db[1], write=False) as session:
        (event,) = session.scalars(
            select(AuditEvent).where(AuditEvent.object_key == stored["content_hash"])
        ).all()
        detail = json.loads(event.detail)
    assert detail["quality"]["override"] == "cl at 8 deg checked against the run log"
    assert "cl-magnitude" in detail["quality"]["errors"]
    revision = demo_client.get(f"/api/v1/polars/{stored['content_hash']}",
                               headers=tokens.header("reader")).json()
    assert revision["quality_override"] == "cl at 8 deg checked against the run log"


def test_absurd_magnitudes_are_refused_even_with_an_override(demo_client, tokens, prepared_db):
    before = revision_count(prepared_db[1])
    answer = upload(demo_client, tokens, "absurd_magnitude.csv", override_quality="trust me")
    assert answer.status_code == 422
    assert "no override" in answer.json()["detail"]
    assert revision_count(prepared_db[1]) == before


def test_demo_data_carry_no_flags(demo_client, tokens):
    listing = demo_client.get("/api/v1/polars", params={"family": "skua"},
                              headers=tokens.header("reader")).json()
    assert listing and all(r["quality_flags"] == [] for r in listing)


def test_derived_tables_report_flagged_inputs(demo_client, tokens):
    answer = upload(demo_client, tokens, "mach_missing.csv")
    content_hash = answer.json()["stored"][0]["content_hash"]
    extended = demo_client.get(f"/api/v1/polars/{content_hash}/extended",
                               headers=tokens.header("reader"))
    assert extended.status_code == 200, extended.text
    meta = extended.json()
    (flagged,) = meta["flagged_inputs"]
    assert flagged["revision"] == content_hash
    assert "mach-not-stated" in flagged["flags"]
    # a blend of the family draws on the flagged member too (t/c 0.24 lies between members)
    blend = demo_client.get("/api/v1/families/skua/blend",
                            params={"thickness": 0.24, "reynolds": 4e6, "clamp": True},
                            headers=tokens.header("reader"))
    assert blend.status_code == 200, blend.text
    body = blend.json()
    meta = body
    assert content_hash in [f["revision"] for f in meta["flagged_inputs"]]

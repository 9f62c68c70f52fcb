"""Export bundles: a round trip into a second database reproduces every content hash, review
state, link, creation time and audit row; a tampered, incomplete or padded bundle is refused
and leaves the target database unchanged; tokens never leave the database.

References: file checksums are checked against :mod:`hashlib` (SHA-256, FIPS 180-4); the
audit CSV is read back with the standard library's :mod:`csv` reader (RFC 4180). The tables
are the fictional demo family "skua" (seed_polars/, synthetic demo data, no source).
"""

from __future__ import annotations

import csv
import hashlib
import io
import json
import os
import uuid
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from sqlalchemy import create_engine, func, make_url, select, text
from sqlalchemy.orm import Session, sessionmaker
from sqlalchemy.pool import NullPool

from polarsvc.bundle import (
    AUDIT_COLUMNS,
    FORMAT_TAG,
    IMPORT_ACTION,
    BundleError,
    _read_csv,
    _write_csv,
    export_bundle,
    import_bundle,
    verify_bundle,
)
from polarsvc.hashing import canonical_json
from polarsvc.ingest import store_file
from polarsvc.store import airfoils as airfoil_store
from polarsvc.store import blades as blade_store
from polarsvc.store import polars as polar_store
from polarsvc.store.audit import Actor
from polarsvc.store.db import make_engine, make_session_factory, session_scope, upgrade_database
from polarsvc.store.models import (
    Airfoil,
    AuditEvent,
    BladeDefinition,
    Family,
    PolarRevision,
)
from polarsvc.store.tokens import TOKEN_PREFIX, create_token

from ..conftest import POSTGRES_URL_ENV
from .conftest import CURATOR, small_polar

SEED_DIR = Path(__file__).resolve().parents[2] / "seed_polars"
IMPORTER = Actor(name="skerry-admin", role="admin", remote_addr="10.0.0.7")
REVIEWER = Actor(name="skerry-reviewer", role="curator", remote_addr=None)

# names keep to the name grammar (polarsvc.names) but still read as SQL and as a path
HOSTILE_FAMILY = "skua (lab) - DELETE FROM family"
HOSTILE_AIRFOIL = "SKUA-210 .. (x) DROP TABLE polar_revision --"
HOSTILE_NOTES = "<script>alert('x')</script>\n'; DROP TABLE audit_event;-- & %s {0}"
SEED_FILES = (
    "SKUA-210_re4e6_clean.csv",
    "SKUA-210_re4e6_rough.csv",
    "SKUA-300_re4e6_clean.csv",
    "SKUA-CYL_re4e6_clean.csv",
)


# --------------------------------------------------------------------------------------
# fixtures


@pytest.fixture
def target_factory(database_url: str, tmp_path: Path) -> Iterator[sessionmaker[Session]]:
    """A second empty, migrated database of the same kind as ``database_url``: another
    SQLite file, or another fresh PostgreSQL schema (as in tests/conftest.py)."""
    if make_url(database_url).get_backend_name() == "sqlite":
        engine = make_engine(f"sqlite:///{tmp_path / 'polarsvc-target.db'}")
        upgrade_database(engine)
        try:
            yield make_session_factory(engine)
        finally:
            engine.dispose()
        return
    base = os.environ[POSTGRES_URL_ENV]
    schema = f"test_{uuid.uuid4().hex[:16]}"
    admin = create_engine(base, poolclass=NullPool)
    with admin.begin() as connection:
        connection.execute(text(f'CREATE SCHEMA "{schema}"'))
    url = make_url(base).update_query_dict({"options": f"-csearch_path={schema}"})
    engine = make_engine(url)
    try:
        upgrade_database(engine)
        yield make_session_factory(engine)
    finally:
        engine.dispose()
        with admin.begin() as connection:
            connection.execute(text(f'DROP SCHEMA IF EXISTS "{schema}" CASCADE'))
        admin.dispose()


@pytest.fixture
def source(session_factory: sessionmaker[Session]) -> dict[str, Any]:
    """A database with demo polars, a superseding revision, an approval, a deprecation with
    replacement, the demo blade, a token, and a second family whose names and notes hold
    SQL and HTML fragments."""
    facts: dict[str, Any] = {"factory": session_factory}
    family_doc = json.loads((SEED_DIR / "family.json").read_text(encoding="utf-8"))
    with session_scope(session_factory, write=True) as session:
        airfoil_store.get_or_create_family(
            session, name="skua", description=family_doc["notes"], actor=CURATOR
        )
        for airfoil in family_doc["airfoils"]:
            airfoil_store.create_airfoil(
                session, name=airfoil["name"], thickness=airfoil["thickness"], family="skua",
                description=airfoil["description"], actor=CURATOR,
                coordinates={"x": [1.0, 0.5, 0.0, 0.5, 1.0], "y": [0.0, 0.05, 0.0, -0.05, 0.0]}
                if airfoil["name"] == "SKUA-210" else None,
            )
        hashes = {}
        for name in SEED_FILES:
            data = (SEED_DIR / "skua" / name).read_bytes()
            (outcome,) = store_file(session, data, actor=CURATOR, filename=name)
            hashes[name] = outcome.content_hash
        clean = hashes["SKUA-210_re4e6_clean.csv"]
        newer = (SEED_DIR / "skua" / "SKUA-210_re4e6_clean.csv").read_bytes().replace(
            b"# reference: ", b"# facility: skerry tunnel 2\n# reference: "
        )
        (outcome,) = store_file(session, newer, actor=CURATOR, filename="v2.csv",
                                supersedes=clean)
        facts["superseding"] = outcome.content_hash
    with session_scope(session_factory, write=True) as session:
        polar_store.set_review_state(
            session, content_hash=hashes["SKUA-300_re4e6_clean.csv"], state="approved",
            reason="checked against the model <b>ok</b>", actor=REVIEWER,
        )
        polar_store.set_review_state(
            session, content_hash=clean, state="deprecated", reason="facility missing",
            replaced_by_hash=facts["superseding"], actor=REVIEWER,
        )
        definition = json.loads((SEED_DIR / "skerry-48.json").read_text(encoding="utf-8"))
        blade, _ = blade_store.store_blade(
            session, name=definition["name"], definition=definition, actor=CURATOR
        )
        facts["blade"] = blade.content_hash
        token, secret = create_token(session, name="skerry-ci", role="curator", actor=CURATOR)
        facts["token_hash"], facts["secret"] = token.token_hash, secret
    with session_scope(session_factory, write=True) as session:
        airfoil_store.get_or_create_family(
            session, name=HOSTILE_FAMILY, description="<b>bold</b> & 'quoted'", actor=CURATOR
        )
        airfoil_store.create_airfoil(
            session, name=HOSTILE_AIRFOIL, thickness=0.21, family=HOSTILE_FAMILY,
            description="'; SELECT 1;--", actor=CURATOR,
        )
        revision, _ = polar_store.store_polar(
            session, airfoil_name=HOSTILE_AIRFOIL, polar=small_polar(thickness=0.21),
            provenance={"source_kind": "synthetic", "notes": HOSTILE_NOTES,
                        "contributor": "  padded <u>name</u>  ", "reference": ""},
            actor=CURATOR,
        )
        facts["hostile_revision"] = revision.content_hash
    facts["hashes"] = hashes
    return facts


# --------------------------------------------------------------------------------------
# helpers


def snapshot(factory: sessionmaker[Session]) -> dict[str, Any]:
    """Everything a bundle carries, keyed by content hash or name (ids left out)."""
    with session_scope(factory, write=False) as session:
        revisions = {
            r.content_hash: {
                "airfoil": r.airfoil.name,
                "supersedes": r.supersedes.content_hash if r.supersedes else None,
                "replaced_by": r.replaced_by.content_hash if r.replaced_by else None,
                "review": (r.review_state, r.review_reason),
                "created": (r.created_at, r.created_by),
                "provenance": polar_store.revision_provenance(r),
                "recomputed": polar_store.verify_revision(r),
                "table": (r.alpha_deg, r.cl, r.cd, r.cm, r.reynolds, r.mach, r.surface),
            }
            for r in session.scalars(select(PolarRevision))
        }
        blades = {
            b.content_hash: (b.name, b.definition, b.created_at, b.created_by,
                             blade_store.recompute_blade_hash(b))
            for b in session.scalars(select(BladeDefinition))
        }
        families = {f.name: (f.description, f.created_at) for f in session.scalars(select(Family))}
        airfoils = {
            a.name: (a.family.name if a.family else None, a.thickness, a.description,
                     a.coordinates, a.created_at)
            for a in session.scalars(select(Airfoil))
        }
        audit = [
            (e.actor_name, e.actor_role, e.action, e.object_kind, e.object_key,
             e.before_hash, e.after_hash, e.remote_addr, e.detail, e.occurred_at)
            for e in session.scalars(select(AuditEvent).order_by(AuditEvent.id))
        ]
    return {"revisions": revisions, "blades": blades, "families": families,
            "airfoils": airfoils, "audit": audit}


def row_counts(factory: sessionmaker[Session]) -> dict[str, int]:
    with session_scope(factory, write=False) as session:
        return {
            model.__tablename__: session.scalar(select(func.count()).select_from(model))
            for model in (Family, Airfoil, PolarRevision, BladeDefinition, AuditEvent)
        }


def rewrite_manifest(bundle: Path, path: str) -> None:
    """Make the manifest agree with the current bytes of ``path`` (as a forger would)."""
    manifest = json.loads((bundle / "manifest.json").read_text(encoding="utf-8"))
    data = (bundle / path).read_bytes()
    for item in manifest["files"]:
        if item["path"] == path:
            item["size"], item["sha256"] = len(data), hashlib.sha256(data).hexdigest()
    manifest["files_sha256"] = hashlib.sha256(canonical_json(manifest["files"])).hexdigest()
    (bundle / "manifest.json").write_text(json.dumps(manifest), encoding="utf-8")


def table_path(bundle: Path, content_hash: str) -> str:
    entries = json.loads((bundle / "revisions.json").read_text(encoding="utf-8"))
    return next(e["file"] for e in entries if e["content_hash"] == content_hash)


def change_one_number(bundle: Path, path: str) -> None:
    """Change the lift coefficient of the first data row of a CSV table by +0.001."""
    lines = (bundle / path).read_text(encoding="utf-8").splitlines(keepends=True)
    index = next(i for i, line in enumerate(lines) if line.startswith("alpha_deg")) + 1
    cells = lines[index].rstrip("\n").split(",")
    cells[1] = repr(float(cells[1]) + 0.001)
    lines[index] = ",".join(cells) + "\n"
    (bundle / path).write_text("".join(lines), encoding="utf-8")


# --------------------------------------------------------------------------------------
# round trip


def test_round_trip_reproduces_everything(
    source: dict[str, Any], target_factory: sessionmaker[Session], tmp_path: Path
) -> None:
    bundle = tmp_path / "bundle"
    manifest = export_bundle(source["factory"], bundle)
    assert manifest.format == FORMAT_TAG and manifest.family is None
    report = import_bundle(target_factory, bundle, actor=IMPORTER)

    before, after = snapshot(source["factory"]), snapshot(target_factory)
    assert report.revisions == len(before["revisions"]) == 6
    assert report.blades == 1 and not report.unchanged
    for key in ("revisions", "blades", "families", "airfoils"):
        assert after[key] == before[key], key
    assert after["revisions"][source["hashes"]["SKUA-210_re4e6_clean.csv"]]["review"] == (
        "deprecated", "facility missing"
    )
    assert after["revisions"][source["hashes"]["SKUA-210_re4e6_clean.csv"]]["replaced_by"] == (
        source["superseding"]
    )
    assert after["revisions"][source["superseding"]]["supersedes"] == (
        source["hashes"]["SKUA-210_re4e6_clean.csv"]
    )
    # the audit rows as they were, then exactly one event recording the import
    assert after["audit"][:-1] == before["audit"]
    last = after["audit"][-1]
    assert last[:5] == ("skerry-admin", "admin", IMPORT_ACTION, "bundle", report.bundle_sha256)
    assert last[7] == "10.0.0.7"
    assert json.loads(last[8])["revisions"] == 6
    with session_scope(target_factory, write=False) as session:
        count = session.scalar(
            select(func.count()).select_from(AuditEvent).where(AuditEvent.action == IMPORT_ACTION)
        )
    assert count == 1


def test_manifest_lists_every_file_with_its_sha256(source: dict[str, Any], tmp_path: Path) -> None:
    bundle = tmp_path / "bundle"
    export_bundle(source["factory"], bundle)
    document = json.loads((bundle / "manifest.json").read_text(encoding="utf-8"))
    files = sorted(p.relative_to(bundle).as_posix() for p in bundle.rglob("*") if p.is_file())
    assert [item["path"] for item in document["files"]] == [f for f in files
                                                             if f != "manifest.json"]
    for item in document["files"]:
        data = (bundle / item["path"]).read_bytes()
        # reference: hashlib.sha256 (FIPS 180-4)
        assert (item["size"], item["sha256"]) == (len(data), hashlib.sha256(data).hexdigest())
    assert document["files_sha256"] == hashlib.sha256(
        canonical_json(document["files"])
    ).hexdigest()
    assert document["scope"] == {"kind": "database", "family": None}
    assert verify_bundle(bundle).files_sha256 == document["files_sha256"]
    # every folder name under polars/ is a plain, safe name
    for folder in (bundle / "polars").iterdir():
        assert folder.name not in (".", "..") and not folder.name.startswith(".")
        assert "/" not in folder.name and "<" not in folder.name


def test_audit_csv_is_readable_by_the_standard_csv_reader(
    source: dict[str, Any], tmp_path: Path
) -> None:
    bundle = tmp_path / "bundle"
    export_bundle(source["factory"], bundle)
    rows = list(csv.reader(io.StringIO((bundle / "audit.csv").read_text(encoding="utf-8"),
                                       newline="")))
    assert tuple(rows[0]) == AUDIT_COLUMNS
    with session_scope(source["factory"], write=False) as session:
        events = session.scalars(select(AuditEvent).order_by(AuditEvent.id)).all()
    assert len(rows) - 1 == len(events)
    for row, event in zip(rows[1:], events, strict=True):
        assert int(row[0]) == event.id
        assert row[4] == event.action and row[10] == event.detail
        assert row[8] == (event.after_hash or "")


@settings(max_examples=100, deadline=None)
@given(
    st.lists(
        # two or more cells: the csv module reads a line holding one empty field as []
        st.lists(st.one_of(st.none(), st.text()), min_size=2, max_size=6),
        max_size=8,
    )
)
def test_audit_csv_cells_round_trip(rows: list[list[str | None]]) -> None:
    text_ = _write_csv(rows)
    assert _read_csv(text_, "audit.csv") == rows
    # the standard reader (RFC 4180) sees the same values, null read as empty text
    assert list(csv.reader(io.StringIO(text_, newline=""))) == [
        ["" if value is None else value for value in row] for row in rows
    ]


def test_identical_content_is_accepted_unchanged(
    source: dict[str, Any], target_factory: sessionmaker[Session], tmp_path: Path
) -> None:
    bundle = tmp_path / "bundle"
    export_bundle(source["factory"], bundle)
    import_bundle(target_factory, bundle, actor=IMPORTER)
    counts = row_counts(target_factory)
    report = import_bundle(target_factory, bundle, actor=IMPORTER)
    assert report.unchanged
    assert row_counts(target_factory) == counts


def test_a_database_with_other_content_is_refused(
    source: dict[str, Any], target_factory: sessionmaker[Session], tmp_path: Path
) -> None:
    bundle = tmp_path / "bundle"
    export_bundle(source["factory"], bundle)
    with session_scope(target_factory, write=True) as session:
        airfoil_store.get_or_create_family(session, name="skua", actor=CURATOR)
    counts = row_counts(target_factory)
    with pytest.raises(BundleError, match="not empty") as caught:
        import_bundle(target_factory, bundle, actor=IMPORTER)
    assert caught.value.file is None
    assert row_counts(target_factory) == counts


# --------------------------------------------------------------------------------------
# scope


def test_family_export_holds_only_that_family(
    source: dict[str, Any], target_factory: sessionmaker[Session], tmp_path: Path
) -> None:
    bundle = tmp_path / "skua"
    manifest = export_bundle(source["factory"], bundle, family="skua")
    assert manifest.scope == {"kind": "family", "family": "skua"}
    revisions = json.loads((bundle / "revisions.json").read_text(encoding="utf-8"))
    exported = {entry["content_hash"] for entry in revisions}
    assert exported == {*source["hashes"].values(), source["superseding"]}
    assert source["hostile_revision"] not in exported
    families = json.loads((bundle / "families.json").read_text(encoding="utf-8"))
    assert [f["name"] for f in families] == ["skua"]
    airfoils = json.loads((bundle / "airfoils.json").read_text(encoding="utf-8"))
    assert {a["family"] for a in airfoils} == {"skua"}
    blades = json.loads((bundle / "blades.json").read_text(encoding="utf-8"))
    assert [b["content_hash"] for b in blades] == [source["blade"]]  # its "family" is skua
    rows = list(csv.reader(io.StringIO((bundle / "audit.csv").read_text(encoding="utf-8"),
                                       newline="")))[1:]
    in_scope = exported | {source["blade"], "skua"} | {a["name"] for a in airfoils}
    assert rows and all(row[6] in in_scope for row in rows)
    assert not any("skerry-ci" in row[6] or HOSTILE_FAMILY in row[6] for row in rows)

    import_bundle(target_factory, bundle, actor=IMPORTER)
    after = snapshot(target_factory)
    assert set(after["revisions"]) == exported
    assert after["revisions"] == {
        key: value for key, value in snapshot(source["factory"])["revisions"].items()
        if key in exported
    }


def test_family_export_refuses_a_replacement_outside_the_family(
    source: dict[str, Any], tmp_path: Path
) -> None:
    with session_scope(source["factory"], write=True) as session:
        polar_store.set_review_state(
            session, content_hash=source["hashes"]["SKUA-CYL_re4e6_clean.csv"],
            state="deprecated", reason="replaced by the lab table",
            replaced_by_hash=source["hostile_revision"],
            replacement_reason="the lab table covers this section", actor=REVIEWER,
        )
    with pytest.raises(BundleError, match="outside family") as caught:
        export_bundle(source["factory"], tmp_path / "skua", family="skua")
    assert caught.value.file == "revisions.json"
    assert not any(p.name.startswith("skua") for p in tmp_path.iterdir())  # nothing left
    export_bundle(source["factory"], tmp_path / "whole")  # the whole database is complete


# --------------------------------------------------------------------------------------
# refusals


def _assert_refused(
    target: sessionmaker[Session], bundle: Path, file: str | None, match: str
) -> None:
    counts = row_counts(target)
    with pytest.raises(BundleError, match=match) as caught:
        import_bundle(target, bundle, actor=IMPORTER)
    assert caught.value.file == file
    if file is not None:
        assert file in str(caught.value)
    assert row_counts(target) == counts == dict.fromkeys(counts, 0)


def test_a_changed_number_is_refused_by_the_checksum(
    source: dict[str, Any], target_factory: sessionmaker[Session], tmp_path: Path
) -> None:
    bundle = tmp_path / "bundle"
    export_bundle(source["factory"], bundle)
    path = table_path(bundle, source["hashes"]["SKUA-300_re4e6_clean.csv"])
    change_one_number(bundle, path)
    _assert_refused(target_factory, bundle, path, "sha256|bytes")


def test_a_forged_manifest_is_refused_by_the_content_hash(
    source: dict[str, Any], target_factory: sessionmaker[Session], tmp_path: Path
) -> None:
    bundle = tmp_path / "bundle"
    export_bundle(source["factory"], bundle)
    # the last revision stored, so that rows of earlier ones are in the rolled-back transaction
    path = table_path(bundle, source["hostile_revision"])
    change_one_number(bundle, path)
    rewrite_manifest(bundle, path)
    verify_bundle(bundle)  # the manifest check alone now passes
    _assert_refused(target_factory, bundle, path, "hashes to")


def test_forged_provenance_is_refused_by_the_content_hash(
    source: dict[str, Any], target_factory: sessionmaker[Session], tmp_path: Path
) -> None:
    bundle = tmp_path / "bundle"
    export_bundle(source["factory"], bundle)
    entries = json.loads((bundle / "revisions.json").read_text(encoding="utf-8"))
    target = next(e for e in entries if e["content_hash"] == source["hostile_revision"])
    target["provenance"]["notes"] = "quietly edited"
    (bundle / "revisions.json").write_text(json.dumps(entries), encoding="utf-8")
    rewrite_manifest(bundle, "revisions.json")
    _assert_refused(target_factory, bundle, target["file"], "hashes to")


def test_a_csv_that_contradicts_revisions_json_is_refused(
    source: dict[str, Any], target_factory: sessionmaker[Session], tmp_path: Path
) -> None:
    bundle = tmp_path / "bundle"
    export_bundle(source["factory"], bundle)
    path = table_path(bundle, source["hashes"]["SKUA-CYL_re4e6_clean.csv"])
    table = (bundle / path).read_text(encoding="utf-8")
    (bundle / path).write_text(table.replace("# source_kind: synthetic", "# source_kind: cfd"),
                               encoding="utf-8")
    rewrite_manifest(bundle, path)
    _assert_refused(target_factory, bundle, path, "source_kind")


def test_a_missing_file_is_refused(
    source: dict[str, Any], target_factory: sessionmaker[Session], tmp_path: Path
) -> None:
    bundle = tmp_path / "bundle"
    export_bundle(source["factory"], bundle)
    path = table_path(bundle, source["superseding"])
    (bundle / path).unlink()
    _assert_refused(target_factory, bundle, path, "missing")


def test_an_extra_file_is_refused(
    source: dict[str, Any], target_factory: sessionmaker[Session], tmp_path: Path
) -> None:
    bundle = tmp_path / "bundle"
    export_bundle(source["factory"], bundle)
    (bundle / "polars" / "SKUA-210" / "extra.csv").write_text("alpha_deg,cl,cd\n")
    _assert_refused(target_factory, bundle, "polars/SKUA-210/extra.csv", "not listed")


def test_an_unknown_format_is_refused(
    source: dict[str, Any], target_factory: sessionmaker[Session], tmp_path: Path
) -> None:
    bundle = tmp_path / "bundle"
    export_bundle(source["factory"], bundle)
    manifest = json.loads((bundle / "manifest.json").read_text(encoding="utf-8"))
    manifest["format"] = "polarsvc-bundle/99"
    (bundle / "manifest.json").write_text(json.dumps(manifest), encoding="utf-8")
    _assert_refused(target_factory, bundle, "manifest.json", "unknown format")


def test_an_edited_audit_row_is_refused(
    source: dict[str, Any], target_factory: sessionmaker[Session], tmp_path: Path
) -> None:
    bundle = tmp_path / "bundle"
    export_bundle(source["factory"], bundle)
    audit = (bundle / "audit.csv").read_text(encoding="utf-8")  # same size, other bytes
    (bundle / "audit.csv").write_text(audit.replace("skerry-reviewer", "mallory-skerry1"),
                                      encoding="utf-8")
    _assert_refused(target_factory, bundle, "audit.csv", "sha256")


def test_export_refuses_a_folder_in_use(source: dict[str, Any], tmp_path: Path) -> None:
    (tmp_path / "busy").mkdir()
    (tmp_path / "busy" / "keep.txt").write_text("x")
    with pytest.raises(BundleError, match="not an empty folder"):
        export_bundle(source["factory"], tmp_path / "busy")
    assert [p.name for p in tmp_path.iterdir() if p.name.startswith("busy")] == ["busy"]


# --------------------------------------------------------------------------------------
# what must and must not be in a bundle


def test_tokens_never_appear_in_a_bundle(source: dict[str, Any], tmp_path: Path) -> None:
    for family in (None, "skua"):
        bundle = tmp_path / f"bundle-{family}"
        export_bundle(source["factory"], bundle, family=family)
        for path in bundle.rglob("*"):
            if path.is_file():
                data = path.read_bytes()
                assert TOKEN_PREFIX.encode() not in data, path
                assert source["token_hash"].encode() not in data, path
                assert source["secret"].encode() not in data, path


def test_names_and_notes_with_sql_and_html_survive_literally(
    source: dict[str, Any], target_factory: sessionmaker[Session], tmp_path: Path
) -> None:
    bundle = tmp_path / "bundle"
    export_bundle(source["factory"], bundle)
    import_bundle(target_factory, bundle, actor=IMPORTER)
    with session_scope(target_factory, write=False) as session:
        revision = polar_store.get_revision(session, source["hostile_revision"])
        assert revision.airfoil.name == HOSTILE_AIRFOIL
        assert revision.airfoil.family.name == HOSTILE_FAMILY
        assert revision.airfoil.description == "'; SELECT 1;--"
        assert revision.notes == HOSTILE_NOTES
        assert revision.contributor == "  padded <u>name</u>  "
        assert revision.reference == ""
        assert airfoil_store.get_family(session, HOSTILE_FAMILY).description == (
            "<b>bold</b> & 'quoted'"
        )
        assert session.scalar(select(func.count()).select_from(PolarRevision)) == 6
    # the hostile airfoil's folder is a safe name; its CSV still states the real name
    path = table_path(bundle, source["hostile_revision"])
    assert path.startswith("polars/SKUA-210_.._") and ".." not in Path(path).parts
    assert f"# airfoil: {HOSTILE_AIRFOIL}\n" in (bundle / path).read_text(encoding="utf-8")

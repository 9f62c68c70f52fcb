"""Storing, loading, looking up and reviewing polar revisions."""

from __future__ import annotations

import datetime as dt
import json

import numpy as np
import pytest
from sqlalchemy import func, select, text
from sqlalchemy.orm import Session, sessionmaker

from polarsvc.aero.polar import Polar
from polarsvc.store.airfoils import create_airfoil, get_airfoil, list_airfoils, list_families
from polarsvc.store.audit import query_events
from polarsvc.store.db import session_scope
from polarsvc.store.errors import (
    AmbiguousKey,
    Conflict,
    InvalidTransition,
    InvalidValue,
    NotFound,
)
from polarsvc.store.models import AuditEvent, PolarRevision
from polarsvc.store.polars import (
    get_revision,
    list_revisions,
    load_polar,
    set_review_state,
    store_polar,
    verify_revision,
)

from .conftest import CURATOR, SYNTHETIC, small_polar
from .test_hashing import VECTOR_HASH, VECTOR_PROVENANCE, vector_polar


def _store(factory: sessionmaker[Session], polar: Polar, **kwargs) -> tuple[str, bool]:
    kwargs.setdefault("provenance", SYNTHETIC)
    kwargs.setdefault("airfoil_name", "SKUA-210")
    with session_scope(factory, write=True) as session:
        revision, created = store_polar(session, polar=polar, actor=CURATOR, **kwargs)
        return revision.content_hash, created


def _events(session: Session) -> int:
    return session.scalar(select(func.count()).select_from(AuditEvent)) or 0


def test_round_trip_is_bit_exact(seeded: sessionmaker[Session]) -> None:
    tiny = 5e-324  # smallest subnormal binary64 (IEEE 754), must survive the database
    polar = Polar(
        alpha_deg=[-10.0, -0.0, 0.1, 10.0],
        cl=[-0.7, -0.0, 0.1 + 0.2, 1.0000000000000002],
        cd=[0.02, tiny, 0.0081, 0.02],
        cm=None,
        reynolds=2.5e6,
        mach=0.05,
        surface="tripped",
    )
    key, created = _store(seeded, polar)
    assert created
    with session_scope(seeded, write=False) as session:
        loaded = load_polar(get_revision(session, key))
        assert verify_revision(get_revision(session, key)) == key
    assert loaded.cm is None and not loaded.has_cm
    for name in ("alpha_deg", "cl", "cd"):
        original = getattr(polar, name) + 0.0  # the store writes -0.0 as +0.0
        assert getattr(loaded, name).tobytes() == original.astype("<f8").tobytes()
    assert np.signbit(loaded.alpha_deg[1]) == np.False_
    assert np.signbit(loaded.cl[1]) == np.False_
    assert (loaded.reynolds, loaded.mach, loaded.surface) == (2.5e6, 0.05, "tripped")
    assert loaded.thickness == 0.21
    assert loaded.history == ({"step": "stored-revision", "content_hash": key},)


def test_hash_is_the_regression_vector_on_every_backend(seeded: sessionmaker[Session]) -> None:
    # the same value (tests/store/test_hashing.py) on SQLite and PostgreSQL, before and after
    # the round trip through the database
    key, _ = _store(seeded, vector_polar(), provenance=VECTOR_PROVENANCE)
    assert key == VECTOR_HASH
    with session_scope(seeded, write=False) as session:
        assert verify_revision(get_revision(session, key)) == VECTOR_HASH


def test_identical_upload_returns_the_same_revision(seeded: sessionmaker[Session]) -> None:
    first, created_first = _store(seeded, small_polar())
    second, created_second = _store(seeded, small_polar())
    assert (first, created_first, created_second) == (second, True, False)
    with session_scope(seeded, write=False) as session:
        assert len(session.scalars(select(PolarRevision)).all()) == 1
        assert [e.action for e in query_events(session, object_key=first)] == ["polar.store"]


def test_provenance_is_part_of_identity(seeded: sessionmaker[Session]) -> None:
    first, _ = _store(seeded, small_polar())
    other, created = _store(seeded, small_polar(), provenance={**SYNTHETIC, "notes": "again"})
    assert created and other != first


def test_literal_text_with_sql_and_html(seeded: sessionmaker[Session]) -> None:
    name = "SKUA_x (DROP TABLE airfoil) --"  # within the name grammar (polarsvc.names)
    notes = "<script>alert('x')</script> %_ \\ \"; DELETE FROM audit_event; --"
    with session_scope(seeded, write=True) as session:
        with pytest.raises(InvalidValue, match="not a valid name"):
            create_airfoil(session, name="SKUA'); DROP TABLE airfoil;--<b>", thickness=0.25,
                           actor=CURATOR)
        create_airfoil(session, name=name, thickness=0.25, description=notes, actor=CURATOR)
    key, _ = _store(
        seeded,
        small_polar(),
        airfoil_name=name,
        provenance={**SYNTHETIC, "notes": notes, "facility": "<i>tunnel</i>"},
    )
    with session_scope(seeded, write=False) as session:
        revision = get_revision(session, key)
        assert revision.notes == notes and revision.facility == "<i>tunnel</i>"
        assert revision.airfoil.name == name and get_airfoil(session, name).description == notes
        assert [a.name for a in list_airfoils(session, search="x (drop")] == [name]
        assert list_airfoils(session, search="k_a") == []  # "_" is literal, not a wildcard
        assert list_airfoils(session, search="%") == []  # wildcards are literal
        assert session.execute(text("SELECT count(*) FROM audit_event")).scalar() == 5


def test_lookup_by_prefix(seeded: sessionmaker[Session]) -> None:
    key, _ = _store(seeded, small_polar())
    with session_scope(seeded, write=False) as session:
        assert get_revision(session, key[:8].upper()).content_hash == key
        with pytest.raises(InvalidValue, match="at least 8"):
            get_revision(session, key[:7])
        with pytest.raises(InvalidValue):
            get_revision(session, "%" * 10)
        with pytest.raises(NotFound):
            get_revision(session, "0" * 64 if key[0] != "0" else "1" * 64)


def test_ambiguous_prefix(seeded: sessionmaker[Session]) -> None:
    keys = [_store(seeded, small_polar(i * 1e-3))[0] for i in range(3)]
    with session_scope(seeded, write=True) as session:
        # force a shared prefix (test setup only: revisions are otherwise immutable)
        for index, key in enumerate(keys[:2]):
            session.execute(
                text("UPDATE polar_revision SET content_hash = :new WHERE content_hash = :old"),
                {"new": "abcdef01" + str(index) * 56, "old": key},
            )
    with session_scope(seeded, write=False) as session, pytest.raises(AmbiguousKey) as info:
        get_revision(session, "abcdef01")
    assert info.value.matches == 2


def test_list_revisions_filters(seeded: sessionmaker[Session]) -> None:
    a, _ = _store(seeded, small_polar(reynolds=3e6))
    b, _ = _store(seeded, small_polar(reynolds=6e6))
    c, _ = _store(seeded, small_polar(reynolds=3e6, surface="rough"))
    d, _ = _store(seeded, small_polar(reynolds=3e6), airfoil_name="SKUA-300")
    with session_scope(seeded, write=True) as session:
        set_review_state(session, content_hash=b, state="approved", actor=CURATOR)
    with session_scope(seeded, write=False) as session:

        def keys(**filters) -> list[str]:
            return [r.content_hash for r in list_revisions(session, **filters)]

        assert keys() == [a, c, b, d]
        assert keys(airfoil="SKUA-210", reynolds=3e6) == [a, c]
        assert keys(surface="rough") == [c]
        assert keys(review_state="approved") == [b]
        assert [f.name for f in list_families(session)] == ["skua"]
        assert [x.name for x in list_airfoils(session, family="skua")] == ["SKUA-210", "SKUA-300"]


def test_supersedes(seeded: sessionmaker[Session]) -> None:
    old, _ = _store(seeded, small_polar())
    new, created = _store(seeded, small_polar(0.01), supersedes_hash=old[:12])
    with session_scope(seeded, write=False) as session:
        revision = get_revision(session, new)
        assert created and revision.supersedes.content_hash == old
        assert verify_revision(revision) == new
    with pytest.raises(InvalidValue, match="belongs to airfoil"):
        _store(seeded, small_polar(), airfoil_name="SKUA-300", supersedes_hash=old)


def test_store_refusals(seeded: sessionmaker[Session]) -> None:
    with pytest.raises(NotFound):
        _store(seeded, small_polar(), airfoil_name="SKUA-999")
    with pytest.raises(InvalidValue, match="thickness"):
        _store(seeded, small_polar(thickness=0.30))
    with pytest.raises(InvalidValue, match="source_kind"):
        _store(seeded, small_polar(), provenance={"source_kind": "guess"})
    with pytest.raises(InvalidValue, match="measured_on"):
        _store(seeded, small_polar(), provenance={**SYNTHETIC, "measured_on": "2026-13-01"})
    key, _ = _store(seeded, small_polar(), provenance={**SYNTHETIC, "measured_on": "2026-03-04"})
    with session_scope(seeded, write=False) as session:
        assert get_revision(session, key).measured_on == dt.date(2026, 3, 4)


def test_airfoil_idempotent_and_conflict(seeded: sessionmaker[Session]) -> None:
    with session_scope(seeded, write=True) as session:
        airfoil, created = create_airfoil(
            session, name="SKUA-210", thickness=0.21, family="skua", actor=CURATOR
        )
        assert not created and airfoil.name == "SKUA-210"
        with pytest.raises(Conflict, match="thickness"):
            create_airfoil(session, name="SKUA-210", thickness=0.22, family="skua", actor=CURATOR)
        with pytest.raises(InvalidValue):
            create_airfoil(session, name="SKUA-X", thickness=21.0, actor=CURATOR)


def test_review_transitions(seeded: sessionmaker[Session]) -> None:
    a, _ = _store(seeded, small_polar())
    b, _ = _store(seeded, small_polar(0.02))
    with session_scope(seeded, write=True) as session:
        before = _events(session)
        with pytest.raises(InvalidTransition, match="reason"):
            set_review_state(session, content_hash=a, state="deprecated", actor=CURATOR)
        with pytest.raises(InvalidTransition, match="replacement"):
            set_review_state(
                session, content_hash=a, state="approved", replaced_by_hash=b, actor=CURATOR
            )
        set_review_state(session, content_hash=a, state="approved", actor=CURATOR)
        with pytest.raises(InvalidTransition, match="approved -> approved"):
            set_review_state(session, content_hash=a, state="approved", actor=CURATOR)
        with pytest.raises(InvalidTransition, match="itself"):
            set_review_state(
                session,
                content_hash=a,
                state="deprecated",
                reason="x",
                replaced_by_hash=a,
                actor=CURATOR,
            )
        revision = set_review_state(
            session,
            content_hash=a,
            state="deprecated",
            reason="tunnel wall correction missing",
            replaced_by_hash=b,
            actor=CURATOR,
        )
        assert revision.replaced_by.content_hash == b
        with pytest.raises(InvalidTransition, match="none"):
            set_review_state(session, content_hash=a, state="approved", actor=CURATOR)
        assert _events(session) == before + 2
    with session_scope(seeded, write=False) as session:
        events = query_events(session, object_key=a)
        assert [e.action for e in events] == ["polar.store", "polar.review", "polar.review"]
        assert '"to":"deprecated"' in events[-1].detail
        assert verify_revision(get_revision(session, a)) == a  # review is not content


def test_a_replacement_must_match_the_conditions_or_say_why(
    seeded: sessionmaker[Session],
) -> None:
    a, _ = _store(seeded, small_polar())
    other_reynolds, _ = _store(seeded, small_polar(0.01, reynolds=6.0e6))
    same, _ = _store(seeded, small_polar(0.02))
    differs = r"reynolds 6000000\.0 instead of 3000000\.0"
    with session_scope(seeded, write=True) as session, pytest.raises(InvalidTransition,
                                                                    match=differs):
        set_review_state(session, content_hash=a, state="deprecated", reason="x",
                         replaced_by_hash=other_reynolds, actor=CURATOR)
    with session_scope(seeded, write=True) as session:
        set_review_state(session, content_hash=a, state="deprecated", reason="x",
                         replaced_by_hash=other_reynolds,
                         replacement_reason="the 6e6 run supersedes the whole series",
                         actor=CURATOR)
    with session_scope(seeded, write=True) as session:
        set_review_state(session, content_hash=other_reynolds, state="deprecated",
                         reason="y", replaced_by_hash=a, replacement_reason="back",
                         actor=CURATOR)
        revision = set_review_state(session, content_hash=same, state="deprecated",
                                    reason="z", replaced_by_hash=a, actor=CURATOR)
        assert revision.replaced_by.content_hash == a
    with session_scope(seeded, write=False) as session:
        (event,) = [e for e in query_events(session, object_key=a) if e.action == "polar.review"]
        detail = json.loads(event.detail)
    assert (detail["from"], detail["to"]) == ("draft", "deprecated")
    assert detail["replacement_reason"] == "the 6e6 run supersedes the whole series"

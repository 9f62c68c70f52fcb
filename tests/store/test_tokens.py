"""API tokens: only hashes stored; expired and revoked tokens refused."""

from __future__ import annotations

import datetime as dt
import hashlib

import pytest
from sqlalchemy import text
from sqlalchemy.orm import Session, sessionmaker

from polarsvc.store.audit import query_events
from polarsvc.store.db import session_scope
from polarsvc.store.errors import Conflict, InvalidValue
from polarsvc.store.models import utc_now
from polarsvc.store.tokens import (
    authenticate_token,
    create_token,
    list_tokens,
    revoke_token,
)

from .conftest import CURATOR


def test_only_the_hash_is_stored(session_factory: sessionmaker[Session]) -> None:
    with session_scope(session_factory, write=True) as session:
        token, secret = create_token(session, name="skerry-ci", role="reader", actor=CURATOR)
    assert secret.startswith("psv_") and len(secret) == 4 + 43  # token_urlsafe(32): 43 chars
    # reference: hashlib.sha256 of the UTF-8 secret
    assert token.token_hash == hashlib.sha256(secret.encode()).hexdigest()
    with session_scope(session_factory, write=False) as session:
        dump = session.execute(text("SELECT * FROM api_token")).all()
        assert secret not in repr(dump)
        assert secret not in repr(session.execute(text("SELECT * FROM audit_event")).all())
        found = authenticate_token(session, secret=secret)
        assert found is not None and (found.name, found.role) == ("skerry-ci", "reader")
        assert authenticate_token(session, secret=secret + "x") is None
        assert authenticate_token(session, secret="not-a-token") is None


def test_expired_and_revoked_are_refused(session_factory: sessionmaker[Session]) -> None:
    soon = utc_now() + dt.timedelta(hours=1)
    with session_scope(session_factory, write=True) as session:
        _, expiring = create_token(
            session, name="short", role="curator", expires_at=soon, actor=CURATOR
        )
        _, revoked = create_token(session, name="gone", role="admin", actor=CURATOR)
        revoke_token(session, name="gone", actor=CURATOR)
        revoke_token(session, name="gone", actor=CURATOR)  # idempotent, not recorded again
    with session_scope(session_factory, write=False) as session:
        assert authenticate_token(session, secret=expiring) is not None
        later = soon + dt.timedelta(seconds=1)
        assert authenticate_token(session, secret=expiring, now=later) is None
        assert authenticate_token(session, secret=revoked) is None
        assert [t.name for t in list_tokens(session)] == ["gone", "short"]
        assert [e.action for e in query_events(session, object_key="gone")] == [
            "token.create",
            "token.revoke",
        ]
        assert list_tokens(session)[1].expires_at == soon


def test_token_refusals(session_factory: sessionmaker[Session]) -> None:
    with session_scope(session_factory, write=True) as session:
        create_token(session, name="one", role="reader", actor=CURATOR)
        with pytest.raises(Conflict):
            create_token(session, name="one", role="admin", actor=CURATOR)
        with pytest.raises(InvalidValue, match="role"):
            create_token(session, name="two", role="root", actor=CURATOR)
        with pytest.raises(InvalidValue, match="expires_at"):
            create_token(
                session,
                name="three",
                role="reader",
                expires_at=dt.datetime(2030, 1, 1),
                actor=CURATOR,
            )
        with pytest.raises(InvalidValue, match="future"):
            create_token(
                session,
                name="four",
                role="reader",
                expires_at=utc_now() - dt.timedelta(seconds=1),
                actor=CURATOR,
            )

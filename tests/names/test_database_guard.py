"""Behind the input checks, the engine itself refuses NUL in any text parameter, on SQLite
(which could store it) exactly as on PostgreSQL (which cannot: PostgreSQL manual, "Character
Types", from memory), naming the bound parameter."""

from __future__ import annotations

import pytest
from sqlalchemy import select

from polarsvc.store.db import session_scope
from polarsvc.store.errors import InvalidValue
from polarsvc.store.models import Family


def test_nul_in_an_insert_is_refused_on_every_database(session_factory):
    with (
        pytest.raises(InvalidValue, match="U\\+0000") as raised,
        session_scope(session_factory, write=True) as session,
    ):
        session.add(Family(name="sk\x00ua", description=""))
        session.flush()
    assert raised.value.field == "name"
    with session_scope(session_factory, write=False) as session:
        assert session.scalars(select(Family)).all() == []


def test_nul_in_a_query_is_refused_on_every_database(session_factory):
    with (
        pytest.raises(InvalidValue, match="U\\+0000"),
        session_scope(session_factory, write=False) as session,
    ):
        session.scalars(select(Family).where(Family.name == "a\x00")).all()

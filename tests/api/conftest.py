"""Fixtures of the service tests: an application on a fresh database per test, tokens of
each role, and the demo data (the fictional "skua" family and the "skerry-48" blade)."""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path

import pytest
from fastapi.testclient import TestClient
from sqlalchemy.orm import Session, sessionmaker

from polarsvc.api.app import create_app
from polarsvc.api.settings import Settings
from polarsvc.ingest import load_demo
from polarsvc.store import tokens as token_store
from polarsvc.store.audit import SYSTEM_ACTOR
from polarsvc.store.db import make_engine, make_session_factory, session_scope, upgrade_database

SEED_DIR = Path(__file__).resolve().parents[2] / "seed_polars"


@dataclass(frozen=True)
class Tokens:
    """Secrets of one token per role."""

    reader: str
    curator: str
    admin: str

    def header(self, role: str) -> dict[str, str]:
        return {"Authorization": f"Bearer {getattr(self, role)}"}


def make_tokens(factory: sessionmaker[Session]) -> Tokens:
    secrets = {}
    with session_scope(factory, write=True) as session:
        for role in ("reader", "curator", "admin"):
            _, secrets[role] = token_store.create_token(
                session, name=f"test-{role}", role=role, actor=SYSTEM_ACTOR
            )
    return Tokens(**secrets)


@pytest.fixture
def prepared_db(database_url: str) -> Iterator[tuple[str, sessionmaker[Session]]]:
    """A migrated, empty database and a session factory on it."""
    engine = make_engine(database_url)
    upgrade_database(engine)
    try:
        yield database_url, make_session_factory(engine)
    finally:
        engine.dispose()


@pytest.fixture
def tokens(prepared_db: tuple[str, sessionmaker[Session]]) -> Tokens:
    return make_tokens(prepared_db[1])


def _client(database_url: str, **settings: object) -> Iterator[TestClient]:
    app = create_app(Settings(database_url=database_url, **settings))
    with TestClient(app) as client:
        yield client


@pytest.fixture
def client(prepared_db: tuple[str, sessionmaker[Session]], tokens: Tokens
           ) -> Iterator[TestClient]:
    """A client of an application on an empty database (reads need a token)."""
    yield from _client(prepared_db[0])


@pytest.fixture
def demo_factory(prepared_db: tuple[str, sessionmaker[Session]]) -> sessionmaker[Session]:
    """The database with the demo data loaded."""
    load_demo(prepared_db[1], SEED_DIR, actor=SYSTEM_ACTOR)
    return prepared_db[1]


@pytest.fixture
def demo_client(prepared_db, demo_factory, tokens: Tokens) -> Iterator[TestClient]:
    """A client of an application on the demo data (reads need a token)."""
    yield from _client(prepared_db[0])

"""Shared fixtures: a fresh, migrated database per test, on SQLite always and on PostgreSQL
when ``POLARSVC_TEST_POSTGRES_URL`` is set (e.g.
``postgresql+psycopg://postgres@127.0.0.1:5432/test``).

Each PostgreSQL test gets its own randomly named schema (put first on ``search_path`` through
the URL's ``options``), dropped afterwards, so tests assert exact results.
"""

from __future__ import annotations

import os
import uuid
from collections.abc import Iterator
from pathlib import Path

import pytest
from hypothesis import settings
from sqlalchemy import Engine, create_engine, make_url, text
from sqlalchemy.orm import Session, sessionmaker
from sqlalchemy.pool import NullPool

from polarsvc.store.db import make_engine, make_session_factory, upgrade_database

POSTGRES_URL_ENV = "POLARSVC_TEST_POSTGRES_URL"

# Mutation runs (benchmarks/mutation.py) run the aero tests once per mutant: fewer generated
# examples per property keep them within hours; everyone else gets hypothesis' defaults.
settings.register_profile("mutation", max_examples=20, deadline=None)
settings.load_profile(os.environ.get("POLARSVC_HYPOTHESIS_PROFILE", "default"))


@pytest.fixture(
    params=[
        "sqlite",
        pytest.param("postgresql", marks=pytest.mark.postgres),
    ]
)
def database_url(request: pytest.FixtureRequest, tmp_path: Path) -> Iterator[str]:
    """URL of an empty database: a SQLite file in ``tmp_path``, or a fresh PostgreSQL schema."""
    if request.param == "sqlite":
        yield f"sqlite:///{tmp_path / 'polarsvc-test.db'}"
        return
    base = os.environ.get(POSTGRES_URL_ENV)
    if not base:
        pytest.skip(f"set {POSTGRES_URL_ENV} to run the PostgreSQL variant")
    schema = f"test_{uuid.uuid4().hex[:16]}"
    admin = create_engine(base, poolclass=NullPool)
    with admin.begin() as connection:
        connection.execute(text(f'CREATE SCHEMA "{schema}"'))
    url = make_url(base).update_query_dict({"options": f"-csearch_path={schema}"})
    try:
        yield url.render_as_string(hide_password=False)
    finally:
        with admin.begin() as connection:
            connection.execute(text(f'DROP SCHEMA IF EXISTS "{schema}" CASCADE'))
        admin.dispose()


@pytest.fixture
def engine(database_url: str) -> Iterator[Engine]:
    """An engine on ``database_url`` with the migrations applied."""
    engine = make_engine(database_url)
    upgrade_database(engine)
    try:
        yield engine
    finally:
        engine.dispose()


@pytest.fixture
def session_factory(engine: Engine) -> sessionmaker[Session]:
    """A session factory on the migrated database (use with ``session_scope``)."""
    return make_session_factory(engine)

"""Fixtures of the page tests: the application on a copy of a database seeded once per
session with the demo data (seed_polars/: the fictional "skua" family and "skerry-48" blade)
and three tokens, and helpers to sign in through the page like a browser."""

from __future__ import annotations

import re
import warnings
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path

import pytest
from fastapi import FastAPI

with warnings.catch_warnings():
    # Starlette 1.10 prefers httpx2 for its test client and warns once, at import, when it
    # finds httpx only; the client works the same with either.
    warnings.filterwarnings("ignore", message="Using `httpx` with `starlette.testclient`")
    from fastapi.testclient import TestClient

from polarsvc.api.app import create_app
from polarsvc.api.settings import Settings
from polarsvc.ingest import load_demo
from polarsvc.store import tokens as token_store
from polarsvc.store.audit import SYSTEM_ACTOR
from polarsvc.store.db import (
    make_engine,
    make_session_factory,
    online_backup,
    session_scope,
    upgrade_database,
)

SEED_DIR = Path(__file__).resolve().parents[2] / "seed_polars"
ROLES = ("reader", "curator", "admin")
CSRF_PATTERN = re.compile(r'name="csrf_token" value="([^"]+)"')


@dataclass(frozen=True)
class DemoDatabase:
    path: Path
    secrets: dict[str, str]


@pytest.fixture(scope="session")
def demo_database(tmp_path_factory: pytest.TempPathFactory) -> DemoDatabase:
    """A migrated SQLite database holding the demo data and one token per role."""
    path = tmp_path_factory.mktemp("web-demo") / "demo.db"
    engine = make_engine(f"sqlite:///{path}")
    try:
        upgrade_database(engine)
        factory = make_session_factory(engine)
        load_demo(factory, SEED_DIR, actor=SYSTEM_ACTOR)
        secrets = {}
        with session_scope(factory, write=True) as session:
            for role in ROLES:
                _, secrets[role] = token_store.create_token(
                    session, name=f"demo-{role}", role=role, actor=SYSTEM_ACTOR
                )
    finally:
        engine.dispose()
    return DemoDatabase(path=path, secrets=secrets)


@dataclass
class Demo:
    app: FastAPI
    client: TestClient
    secrets: dict[str, str]

    def bearer(self, role: str) -> dict[str, str]:
        return {"Authorization": f"Bearer {self.secrets[role]}"}

    def sign_in(self, role: str) -> str:
        """Sign in through the page with the token of ``role``; return the session's CSRF
        token (read from the next page, as a browser would see it)."""
        form = self.client.get("/sign-in")
        token = csrf_from(form.text)
        answer = self.client.post(
            "/sign-in",
            data={"csrf_token": token, "token": self.secrets[role], "next": "/"},
            follow_redirects=False,
        )
        assert answer.status_code == 303, answer.text
        page = self.client.get("/")
        assert page.status_code == 200
        return csrf_from(page.text)


def csrf_from(html: str) -> str:
    match = CSRF_PATTERN.search(html)
    assert match, "no CSRF field in the page"
    return match.group(1)


def _copy(template: Path, destination: Path) -> None:
    online_backup(f"sqlite:///{template}", destination)


@pytest.fixture
def demo_settings(demo_database: DemoDatabase, tmp_path: Path) -> Settings:
    copy = tmp_path / "demo.db"
    _copy(demo_database.path, copy)
    return Settings(database_url=f"sqlite:///{copy}")


@pytest.fixture
def demo(demo_settings: Settings, demo_database: DemoDatabase) -> Iterator[Demo]:
    """The application on a fresh copy of the demo database (reads need a token)."""
    app = create_app(demo_settings)
    with TestClient(app) as client:
        yield Demo(app=app, client=client, secrets=demo_database.secrets)

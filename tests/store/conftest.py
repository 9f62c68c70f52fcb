"""Fixtures of the storage tests (demo data: the fictional "skua" family)."""

from __future__ import annotations

from typing import Any

import pytest
from sqlalchemy.orm import Session, sessionmaker

from polarsvc.aero.polar import Polar
from polarsvc.store.airfoils import create_airfoil, get_or_create_family
from polarsvc.store.audit import Actor
from polarsvc.store.db import session_scope

CURATOR = Actor(name="skerry-curator", role="curator", remote_addr="127.0.0.1")
SYNTHETIC: dict[str, Any] = {"source_kind": "synthetic", "reference": "store tests"}


def small_polar(offset: float = 0.0, **conditions: Any) -> Polar:
    """An invented five-row table (demo data, no source); ``offset`` shifts the lift."""
    conditions.setdefault("reynolds", 3.0e6)
    return Polar(
        alpha_deg=[-8.0, -4.0, 0.0, 4.0, 8.0],
        cl=[-0.6 + offset, -0.2 + offset, 0.25 + offset, 0.7 + offset, 1.1 + offset],
        cd=[0.014, 0.010, 0.008, 0.010, 0.016],
        cm=[-0.02, -0.05, -0.08, -0.09, -0.085],
        **conditions,
    )


@pytest.fixture
def seeded(session_factory: sessionmaker[Session]) -> sessionmaker[Session]:
    """The migrated database with family "skua" and airfoils SKUA-210 and SKUA-300."""
    with session_scope(session_factory, write=True) as session:
        get_or_create_family(session, name="skua", description="demo family", actor=CURATOR)
        create_airfoil(session, name="SKUA-210", thickness=0.21, family="skua", actor=CURATOR)
        create_airfoil(session, name="SKUA-300", thickness=0.30, family="skua", actor=CURATOR)
    return session_factory

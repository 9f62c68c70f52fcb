"""Property: any valid table survives the database bit for bit and keeps its hash."""

from __future__ import annotations

import numpy as np
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from sqlalchemy.orm import Session, sessionmaker

from polarsvc.aero.polar import Polar
from polarsvc.store.db import session_scope
from polarsvc.store.polars import get_revision, load_polar, store_polar, verify_revision

from .conftest import CURATOR, SYNTHETIC

finite = st.floats(min_value=-1e6, max_value=1e6, allow_nan=False, width=64)
positive = st.floats(min_value=5e-324, max_value=10.0, allow_nan=False, width=64)


@st.composite
def polars(draw: st.DrawFn) -> Polar:
    alpha = draw(st.lists(st.floats(-180.0, 180.0, width=64), min_size=2, max_size=40, unique=True))
    n = len(alpha)
    with_cm = draw(st.booleans())
    return Polar(
        alpha_deg=alpha,
        cl=draw(st.lists(finite, min_size=n, max_size=n)),
        cd=draw(st.lists(positive, min_size=n, max_size=n)),
        cm=draw(st.lists(finite, min_size=n, max_size=n)) if with_cm else None,
        reynolds=draw(st.none() | st.floats(1e3, 1e8)),
        mach=draw(st.floats(0.0, 0.9)),
        surface=draw(st.sampled_from(["clean", "tripped", "rough"])),
        assume_degrees=True,
    )


@settings(
    max_examples=40, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture]
)
@given(polar=polars())
def test_any_polar_round_trips(seeded: sessionmaker[Session], polar: Polar) -> None:
    with session_scope(seeded, write=True) as session:
        revision, _ = store_polar(
            session, airfoil_name="SKUA-210", polar=polar, provenance=SYNTHETIC, actor=CURATOR
        )
        key = revision.content_hash
    with session_scope(seeded, write=False) as session:
        revision = get_revision(session, key)
        loaded = load_polar(revision)
        assert verify_revision(revision) == key
    for name in ("alpha_deg", "cl", "cd", "cm"):
        expected, actual = getattr(polar, name), getattr(loaded, name)
        if expected is None:
            assert actual is None
        else:
            # the only change allowed: -0.0 stored as +0.0
            assert actual.tobytes() == (expected + 0.0).tobytes()
            assert not np.signbit(actual[actual == 0.0]).any()
    assert (loaded.reynolds, loaded.mach, loaded.surface) == (
        polar.reynolds,
        polar.mach,
        polar.surface,
    )

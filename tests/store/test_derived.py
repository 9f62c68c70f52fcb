"""The derived-table cache and its lineage."""

from __future__ import annotations

import json

import numpy as np
import pytest
from sqlalchemy import func, select
from sqlalchemy.orm import Session, sessionmaker

from polarsvc.hashing import recipe_hash, table_content_hash
from polarsvc.store.audit import query_events
from polarsvc.store.blades import (
    blade_definition,
    get_blade,
    latest_blade,
    recompute_blade_hash,
    store_blade,
)
from polarsvc.store.db import session_scope
from polarsvc.store.derived import (
    derived_arrays,
    derived_recipe,
    derived_using_revision,
    find_derived,
    find_derived_all,
    get_derived,
    put_derived,
)
from polarsvc.store.errors import AmbiguousKey, IntegrityProblem, InvalidValue, NotFound
from polarsvc.store.models import DerivedTable
from polarsvc.store.polars import store_polar

from .conftest import CURATOR, SYNTHETIC, small_polar

ALPHA = np.linspace(-180.0, 180.0, 7)


def _revisions(factory: sessionmaker[Session], count: int) -> list[int]:
    with session_scope(factory, write=True) as session:
        return [
            store_polar(
                session,
                airfoil_name="SKUA-210",
                polar=small_polar(i * 0.01),
                provenance=SYNTHETIC,
                actor=CURATOR,
            )[0].id
            for i in range(count)
        ]


def test_put_get_and_lineage(seeded: sessionmaker[Session]) -> None:
    first, second = _revisions(seeded, 2)
    recipe = {"kind": "extended", "inputs": {"revisions": ["a"]}, "params": {"step": 60.0}}
    cl = np.sin(np.radians(2 * ALPHA))
    cd = 1.0 - np.cos(np.radians(2 * ALPHA)) + 0.01
    with session_scope(seeded, write=True) as session:
        table, created = put_derived(
            session,
            recipe=recipe,
            kind="extended",
            alpha_deg=ALPHA,
            columns={"cl": cl, "cd": cd},
            input_revision_ids=[first],
            actor=CURATOR,
        )
        again, created_again = put_derived(
            session,
            recipe=dict(reversed(recipe.items())),
            kind="extended",
            alpha_deg=ALPHA,
            columns={"cl": cl, "cd": cd},
            input_revision_ids=[first],
            actor=CURATOR,
        )
        assert created and not created_again and again.id == table.id
    with session_scope(seeded, write=False) as session:
        cached = get_derived(session, recipe_hash=recipe_hash(recipe))
        assert cached is not None and cached.content_hash == table_content_hash(ALPHA, cl, cd)
        alpha, columns = derived_arrays(cached)
        assert alpha.tobytes() == ALPHA.tobytes()
        assert list(columns) == ["cl", "cd"]
        assert columns["cl"].tobytes() == (cl + 0.0).tobytes()
        assert derived_recipe(cached) == recipe
        assert [r.id for r in cached.inputs] == [first]
        assert [d.id for d in derived_using_revision(session, revision_id=first)] == [table.id]
        assert derived_using_revision(session, revision_id=second) == []
        assert get_derived(session, recipe_hash="0" * 64) is None
        assert len(query_events(session, object_key=recipe_hash(recipe))) == 1


def test_blade_set_payload(seeded: sessionmaker[Session]) -> None:
    ids = _revisions(seeded, 2)
    definition = {"tip_radius_m": 48.0, "stations": [{"r_m": 3.0}, {"r_m": 24.0}, {"r_m": 47.0}]}
    with session_scope(seeded, write=True) as session:
        blade, created = store_blade(
            session, name="skerry-48", definition=definition, actor=CURATOR
        )
        same, created_again = store_blade(
            session, name="skerry-48", definition=dict(reversed(definition.items())), actor=CURATOR
        )
        assert created and not created_again and same.id == blade.id
        cl = np.arange(21.0).reshape(3, 7)
        table, _ = put_derived(
            session,
            recipe={"kind": "blade-set", "blade": blade.content_hash},
            kind="blade-set",
            alpha_deg=ALPHA,
            columns={"cl": cl, "cd": cl + 1, "cm": -cl},
            input_revision_ids=ids,
            blade_id=blade.id,
            actor=CURATOR,
        )
    with session_scope(seeded, write=False) as session:
        table = session.get(DerivedTable, table.id)
        alpha, columns = derived_arrays(table)
        np.testing.assert_array_equal(alpha, ALPHA)
        np.testing.assert_array_equal(columns["cm"], -cl)
        assert table.blade.name == "skerry-48"
        assert blade_definition(get_blade(session, blade.content_hash[:10])) == definition
        assert latest_blade(session, "skerry-48").id == blade.id
        for revision_id in ids:
            assert [d.id for d in derived_using_revision(session, revision_id=revision_id)] == [
                table.id
            ]


def test_put_refusals(seeded: sessionmaker[Session]) -> None:
    (revision_id,) = _revisions(seeded, 1)
    base = {"alpha_deg": ALPHA, "columns": {"cl": ALPHA * 0.01}, "actor": CURATOR}
    with session_scope(seeded, write=True) as session:
        with pytest.raises(InvalidValue, match="kind"):
            put_derived(session, recipe={}, kind="smoothed", input_revision_ids=[], **base)
        with pytest.raises(InvalidValue, match="recipe"):
            put_derived(
                session,
                recipe={"kind": "augmented"},
                kind="extended",
                input_revision_ids=[],
                **base,
            )
        with pytest.raises(InvalidValue, match="cd"):
            put_derived(
                session,
                recipe={},
                kind="extended",
                alpha_deg=ALPHA,
                columns={"cl": ALPHA, "cd": ALPHA[:3]},
                input_revision_ids=[],
                actor=CURATOR,
            )
        with pytest.raises(NotFound):
            put_derived(
                session,
                recipe={"n": 1},
                kind="extended",
                input_revision_ids=[revision_id + 100],
                **base,
            )
        put_derived(
            session, recipe={"n": 2}, kind="extended", input_revision_ids=[revision_id], **base
        )
        with pytest.raises(IntegrityProblem, match="not deterministic"):
            put_derived(
                session,
                recipe={"n": 2},
                kind="extended",
                alpha_deg=ALPHA,
                columns={"cl": ALPHA * 0.02},
                input_revision_ids=[revision_id],
                actor=CURATOR,
            )
        assert session.scalar(select(func.count()).select_from(DerivedTable)) == 1


def test_reports_and_lookup_by_either_hash(seeded: sessionmaker[Session]) -> None:
    (revision_id,) = _revisions(seeded, 1)
    columns = {"cl": ALPHA * 0.01}
    reports = {"join_deg": np.float64(12.5), "slopes": np.array([1.0, np.nan]), "note": "<i>"}
    with session_scope(seeded, write=True) as session:
        first, _ = put_derived(
            session,
            recipe={"n": 1},
            kind="resampled",
            alpha_deg=ALPHA,
            columns=columns,
            input_revision_ids=[revision_id],
            reports=reports,
            actor=CURATOR,
        )
        second, _ = put_derived(
            session,
            recipe={"n": 2},
            kind="resampled",
            alpha_deg=ALPHA,
            columns=columns,
            input_revision_ids=[revision_id],
            actor=CURATOR,
        )
    with session_scope(seeded, write=False) as session:
        found = find_derived(session, first.recipe_hash[:9])
        assert found.id == first.id
        assert json.loads(found.reports) == {"join_deg": 12.5, "note": "<i>", "slopes": [1.0, None]}
        assert find_derived(session, second.recipe_hash).reports is None
        # both recipes give the same content: the full content hash names both, oldest first
        assert [r.id for r in find_derived_all(session, first.content_hash)] == [
            first.id, second.id]
        assert find_derived(session, first.content_hash).id == first.id
        assert [r.id for r in find_derived_all(session, first.content_hash[:10])] == [
            first.id, second.id]
        assert [r.id for r in find_derived_all(session, second.recipe_hash)] == [second.id]
        with pytest.raises(NotFound):
            find_derived(session, "f" * 64 if first.recipe_hash[0] != "f" else "e" * 64)


def test_a_real_prefix_of_two_recipes_stays_ambiguous(seeded: sessionmaker[Session]) -> None:
    (revision_id,) = _revisions(seeded, 1)
    with session_scope(seeded, write=True) as session:
        stored, _ = put_derived(
            session, recipe={"n": 1}, kind="resampled", alpha_deg=ALPHA,
            columns={"cl": ALPHA * 0.01}, input_revision_ids=[revision_id], actor=CURATOR,
        )
        # two rows whose hashes share 8 digits, crafted for the test (sha256 prefixes collide
        # only by chance, about once in 2**32 pairs)
        for digit in ("0", "1"):
            session.add(DerivedTable(
                recipe_hash="abcdef01" + digit * 56, kind="resampled", recipe="{}",
                content_hash="fedcba98" + digit * 56, payload=stored.payload,
                payload_shape=stored.payload_shape, reports=None,
            ))
    with session_scope(seeded, write=False) as session:
        for prefix in ("abcdef01", "fedcba98"):
            with pytest.raises(AmbiguousKey, match="prefix matches 2 objects"):
                find_derived_all(session, prefix)
        assert find_derived(session, "abcdef010").content_hash == "fedcba98" + "0" * 56
        assert find_derived(session, "fedcba981").recipe_hash == "abcdef01" + "1" * 56


def test_blade_hash_recomputes(seeded: sessionmaker[Session]) -> None:
    with session_scope(seeded, write=True) as session:
        blade, _ = store_blade(
            session, name="skerry-48", definition={"tip_radius_m": 48.0}, actor=CURATOR
        )
        assert recompute_blade_hash(blade) == blade.content_hash
        blade.definition = '{"tip_radius_m":47.0}'  # tampering, for the test only
        assert recompute_blade_hash(blade) != blade.content_hash
        session.rollback()

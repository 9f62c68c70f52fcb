"""Query plans of the revision listing on SQLite: a page is read airfoil by airfoil in name
order through the indexes, never by scanning every revision and sorting them, whatever
statistics the planner has (none, those of a small catalogue, those of a large one).

The plan text is SQLite's ``EXPLAIN QUERY PLAN`` output (SQLite documentation, "EXPLAIN
QUERY PLAN", sqlite.org/eqp.html): ``SCAN t`` reads a whole table or index, ``SEARCH t
USING ... INDEX i (a=?)`` looks rows up by index, ``USE TEMP B-TREE FOR ORDER BY`` is a sort
of every matching row before the first one is returned.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import pytest
from sqlalchemy import Engine, text
from sqlalchemy.orm import Session, sessionmaker

from polarsvc.ingest import import_files, table_files
from polarsvc.store.airfoils import create_airfoil
from polarsvc.store.db import make_engine, session_scope, upgrade_database
from polarsvc.store.paging import encode_cursor
from polarsvc.store.polars import revision_page_keys, set_review_state, store_polar
from tests.store.conftest import CURATOR, SYNTHETIC, small_polar

SEED_DIR = Path(__file__).resolve().parents[2] / "seed_polars"

LARGE_CATALOGUE_STATISTICS = [
    # what ANALYZE wrote for the 50 000-revision benchmark catalogue (1000 airfoils of 50
    # revisions, 100 families; benchmarks/catalogue_db.py), as sqlite_stat1 rows
    ("polar_revision", "ix_polar_revision_listing", "50000 50 1 1 1 1 1"),
    ("polar_revision", "sqlite_autoindex_polar_revision_1", "50000 1"),
    ("airfoil", "ix_airfoil_family_order", "1000 10 1 1"),
    ("airfoil", "ix_airfoil_thickness_name", "1000 100 1"),
    ("airfoil", "ix_airfoil_family_id", "1000 10"),
    ("airfoil", "sqlite_autoindex_airfoil_1", "1000 1"),
    ("family", "sqlite_autoindex_family_1", "100 1"),
]

FILTERS = [
    {"surface": "rough", "review_state": "approved"},
    {"surface": "rough"},
    {"review_state": "approved"},
    {"source_kind": "synthetic", "review_state": "draft"},
    {"reynolds": 3.0e6, "surface": "clean"},
    {},
]


@pytest.fixture
def catalogue(seeded: sessionmaker[Session]) -> sessionmaker[Session]:
    """Two more airfoils; each of the four holds clean and rough tables at two Reynolds
    numbers, one of them approved."""
    with session_scope(seeded, write=True) as session:
        create_airfoil(session, name="SKUA-180", thickness=0.18, family="skua", actor=CURATOR)
        create_airfoil(session, name="SKUA-250", thickness=0.25, family="skua", actor=CURATOR)
        for index, name in enumerate(("SKUA-180", "SKUA-210", "SKUA-250", "SKUA-300")):
            for surface in ("clean", "rough"):
                for reynolds in (3.0e6, 6.0e6):
                    revision, _ = store_polar(
                        session, airfoil_name=name,
                        polar=small_polar(0.01 * index, reynolds=reynolds, surface=surface),
                        provenance=SYNTHETIC, actor=CURATOR,
                    )
                    if reynolds == 6.0e6:
                        set_review_state(session, content_hash=revision.content_hash,
                                         state="approved", actor=CURATOR)
    return seeded


def _with_statistics(engine: Engine, kind: str) -> Engine:
    """A new engine on the same file whose connections see the chosen statistics."""
    with engine.begin() as connection:
        connection.exec_driver_sql("ANALYZE")  # creates sqlite_stat1 when missing
        if kind != "small catalogue":
            connection.exec_driver_sql("DELETE FROM sqlite_stat1")
        if kind == "large catalogue":
            for row in LARGE_CATALOGUE_STATISTICS:
                connection.execute(
                    text("INSERT INTO sqlite_stat1 (tbl, idx, stat) VALUES (:t, :i, :s)"),
                    dict(zip("tis", row, strict=True)),
                )
    engine.dispose()
    return make_engine(engine.url)


def _plan(engine: Engine, statement: Any) -> list[str]:
    compiled = statement.compile(engine, compile_kwargs={"literal_binds": True})
    with engine.connect() as connection:
        rows = connection.exec_driver_sql(f"EXPLAIN QUERY PLAN {compiled}").all()
    return [row[3] for row in rows]


@pytest.mark.parametrize("statistics", ["none", "small catalogue", "large catalogue"])
def test_listing_reads_airfoils_in_name_order_without_sorting(
    catalogue: sessionmaker[Session], engine: Engine, statistics: str
) -> None:
    if engine.dialect.name != "sqlite":
        pytest.skip("the plan shape checked is SQLite's")
    planned = _with_statistics(engine, statistics)
    try:
        for filters in FILTERS:
            for after in (None, encode_cursor(["SKUA-210", 3])):
                plan = _plan(planned, revision_page_keys(**filters, after=after, limit=100))
                assert not any("TEMP B-TREE" in step for step in plan), (filters, plan)
                # the unique index of airfoil names (SQLite names it
                # sqlite_autoindex_airfoil_1), scanned, or searched from the cursor's name
                assert plan[0].startswith((
                    "SCAN airfoil USING COVERING INDEX sqlite_autoindex_airfoil_1",
                    "SEARCH airfoil USING COVERING INDEX sqlite_autoindex_airfoil_1 (name>?)",
                )), (filters, plan)
                assert plan[1] == (
                    "SEARCH polar_revision USING COVERING INDEX ix_polar_revision_listing "
                    "(airfoil_id=?)"
                ), (filters, plan)
    finally:
        planned.dispose()


def test_listing_plan_pages_match_the_rows(catalogue: sessionmaker[Session]) -> None:
    """The ids the planned query gives are the matching revisions in keyset order (counted
    by hand from the fixture: per airfoil one rough approved table, at Re 6e6)."""
    with session_scope(catalogue, write=False) as session:
        ids = session.scalars(
            revision_page_keys(surface="rough", review_state="approved", limit=10)
        ).all()
        rows = session.execute(text(
            "SELECT r.id, a.name, r.surface, r.review_state, r.reynolds FROM polar_revision r "
            "JOIN airfoil a ON a.id = r.airfoil_id WHERE r.id IN ("
            + ", ".join(str(i) for i in ids) + ")"
        )).all()
    by_id = {row[0]: row[1:] for row in rows}
    assert [by_id[i][0] for i in ids] == ["SKUA-180", "SKUA-210", "SKUA-250", "SKUA-300"]
    assert all(by_id[i][1:] == ("rough", "approved", 6.0e6) for i in ids)


def _listing_statistics(engine: Engine) -> list[int]:
    """The integers of the ``sqlite_stat1`` row of the listing index (SQLite documentation,
    "The sqlite_stat1 table": the number of rows in the index, then the average number of
    rows per distinct value of each leading column prefix); empty when there is none."""
    with engine.connect() as connection:
        rows = connection.exec_driver_sql(
            "SELECT stat FROM sqlite_stat1 WHERE idx = 'ix_polar_revision_listing'"
        ).all()
    return [int(n) for n in rows[0][0].split()] if rows else []


def test_migrations_gather_the_planner_statistics(
    catalogue: sessionmaker[Session], engine: Engine
) -> None:
    if engine.dialect.name != "sqlite":
        pytest.skip("PostgreSQL gathers its own statistics")
    # the fixture migrated the empty database, then stored 16 revisions of 4 airfoils
    assert _listing_statistics(engine) == []
    upgrade_database(engine)  # what a server or a command does when it starts
    # 16 revisions, 4 per airfoil (counted from the fixture); then one per (airfoil, id)
    assert _listing_statistics(engine) == [16, 4, 1, 1, 1, 1, 1]


def test_imports_gather_the_planner_statistics(
    seeded: sessionmaker[Session], engine: Engine
) -> None:
    if engine.dialect.name != "sqlite":
        pytest.skip("PostgreSQL gathers its own statistics")
    reports = list(import_files(seeded, table_files([SEED_DIR / "skua"]), actor=CURATOR))
    stored = sum(r.stored for r in reports)
    per_airfoil = {r.path.name.split("_")[0] for r in reports}
    assert stored > 0
    assert _listing_statistics(engine)[:2] == [stored, stored // len(per_airfoil)]

"""Alembic environment: the connection comes from the application.

Run through :func:`polarsvc.store.db.upgrade_database`, which opens the write transaction,
takes the migration lock and passes the connection in ``config.attributes["connection"]``.
No ``fileConfig()``: the application's logging configuration stays as it is.
"""

from __future__ import annotations

from alembic import context

from polarsvc.store.models import Base

target_metadata = Base.metadata


def run_migrations_online() -> None:
    connection = context.config.attributes.get("connection")
    if connection is None:
        raise RuntimeError(
            "polarsvc migrations need a connection in config.attributes['connection']; "
            "run them through polarsvc.store.db.upgrade_database(engine)"
        )
    context.configure(
        connection=connection,
        target_metadata=target_metadata,
        render_as_batch=connection.dialect.name == "sqlite",
        compare_type=True,
    )
    with context.begin_transaction():
        context.run_migrations()


if context.is_offline_mode():
    raise RuntimeError("polarsvc migrations run online only (through upgrade_database)")
run_migrations_online()

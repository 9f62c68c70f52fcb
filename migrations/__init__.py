"""Alembic migrations of the polarsvc store (installed as ``polarsvc.migrations``)."""

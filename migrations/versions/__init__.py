"""Alembic revision scripts of the polarsvc store."""

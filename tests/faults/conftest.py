"""The fault tests use the service fixtures of tests/api (an application on a fresh database
per test, tokens of each role)."""

from tests.api.conftest import client, prepared_db, tokens  # noqa: F401

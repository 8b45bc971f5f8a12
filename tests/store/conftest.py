"""The store tests run on every back end: SQLite, and PostgreSQL where a server is given.

``HARNESS_TEST_POSTGRES`` names a PostgreSQL database the tests may use (``.ci/run`` starts a
throwaway server and sets it); each test gets a schema of its own there, dropped afterwards.
Without it the PostgreSQL cases skip, saying so; with ``HARNESS_REQUIRE_POSTGRES`` set (as
``.ci/run`` sets it) a missing server is a failure instead, so CI never passes without them.
"""

from __future__ import annotations

import os
import secrets
from typing import Any, Callable, Iterator
from urllib.parse import quote

import pytest

from harness.store import Store
from harness.store.database import sqlite_url

POSTGRES_ENV = "HARNESS_TEST_POSTGRES"


def postgres_url() -> str | None:
    url = os.environ.get(POSTGRES_ENV, "").strip()
    if not url and os.environ.get("HARNESS_REQUIRE_POSTGRES"):
        pytest.fail(f"{POSTGRES_ENV} is not set, and HARNESS_REQUIRE_POSTGRES asks for the PostgreSQL store tests")
    return url or None


@pytest.fixture
def postgres_schema() -> Iterator[str]:
    """A URL of a fresh, empty schema in the test database (skips without one)."""
    url = postgres_url()
    if url is None:
        pytest.skip(f"no PostgreSQL server: set {POSTGRES_ENV} (as .ci/run does) to test that back end")
    import psycopg

    name = f"test_{secrets.token_hex(6)}"
    with psycopg.connect(url, autocommit=True) as conn:
        conn.execute(f"CREATE SCHEMA {name}")
    joiner = "&" if "?" in url else "?"
    try:
        yield f"{url}{joiner}options={quote(f'-csearch_path={name}')}"
    finally:
        with psycopg.connect(url, autocommit=True) as conn:
            conn.execute(f"DROP SCHEMA {name} CASCADE")


@pytest.fixture(params=["sqlite", "postgresql"])
def store_url(request: Any, tmp_path: Any) -> str:
    if request.param == "sqlite":
        return sqlite_url(tmp_path / "harness.sqlite")
    return str(request.getfixturevalue("postgres_schema"))


@pytest.fixture
def open_store(store_url: str, tmp_path: Any) -> Callable[..., Store]:
    """Opens the test's store (the same one at every call), on the back end of the case."""
    return lambda **options: Store(tmp_path, url=store_url, **options)

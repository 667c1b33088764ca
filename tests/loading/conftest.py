"""Helpers for the loading-stage tests: a small manifest and data file in a tmp folder; a PostgreSQL test schema."""

from __future__ import annotations

import os
import textwrap
import uuid
from collections.abc import Callable, Iterator
from pathlib import Path

import pytest

from .postgres_support import PG_URL_VARIABLE, Schema, libpq_url, require_server

MONTHLY_CSV = "month,a,b\n" + "".join(f"{2010 + (i // 12)}-{i % 12 + 1:02d},{100 + i},{50 + (i % 7)}\n"
                                       for i in range(36))

BASE_MANIFEST = """\
reportgen: 1
project:
  title: Test dossier
datasets:
  shop:
    path: data.csv
    index: month
series:
  a: {dataset: shop, column: a, transform: [log]}
  b: {dataset: shop, column: b}
regressions:
  a_on_b: {formula: "a ~ b"}
"""


@pytest.fixture
def base() -> str:
    """The text of a small valid manifest."""
    return BASE_MANIFEST


@pytest.fixture
def project(tmp_path: Path) -> Callable[..., Path]:
    """Write ``manifest.yaml`` (and ``data.csv``) and return the manifest's path."""

    def write(manifest: str = BASE_MANIFEST, data: str | bytes | None = MONTHLY_CSV) -> Path:
        path = tmp_path / "manifest.yaml"
        path.write_text(textwrap.dedent(manifest), encoding="utf-8")
        if data is not None:
            target = tmp_path / "data.csv"
            if isinstance(data, bytes):
                target.write_bytes(data)
            else:
                target.write_text(data, encoding="utf-8")
        return path

    return write


# ---------------------------------------------------------------- a PostgreSQL server for the server-source tests


@pytest.fixture(scope="session")
def pg_url() -> str:
    """The URL of a running PostgreSQL test server (its role may create tables and roles)."""
    import psycopg

    url = require_server(os.environ)
    try:
        psycopg.connect(libpq_url(url), connect_timeout=10).close()
    except psycopg.Error as error:
        message = str(error).splitlines()[0] if str(error) else type(error).__name__
        pytest.fail(f"the PostgreSQL test server named by {PG_URL_VARIABLE} does not answer: {message}",
                    pytrace=False)
    return url


@pytest.fixture
def pg_schema(pg_url: str) -> Iterator[Schema]:
    """A fresh schema for one test (with its reader role, if made), dropped afterwards."""
    schema = Schema(pg_url, f"rg_{uuid.uuid4().hex[:12]}")
    with schema.connect() as connection:
        connection.execute(f'CREATE SCHEMA "{schema.name}"')
    yield schema
    with schema.connect() as connection:
        connection.execute(f'DROP SCHEMA "{schema.name}" CASCADE')
        connection.execute(f'DROP ROLE IF EXISTS "{schema.name}_reader"')

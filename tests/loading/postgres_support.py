"""The PostgreSQL test server as the tests see it: its URL, skip-or-fail without it, a schema per test."""

from __future__ import annotations

import csv
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import pytest

#: The environment variable that holds the test server's URL (tools/pg-test-server writes it; .ci/run exports it).
PG_URL_VARIABLE = "REPORTGEN_TEST_PG_URL"
#: The demo's data files, by table name.
DEMO_DATA = Path(__file__).resolve().parents[2] / "manifests" / "data"
DEMO_TABLES = ("harbour_monthly", "cruise_quarterly")


def require_server(environ: Mapping[str, str]) -> str:
    """The test server's URL; without one, skip the test, except under CI (``CI=true``), where it fails."""
    url = environ.get(PG_URL_VARIABLE, "").strip()
    if url:
        return url
    reason = (f"no PostgreSQL test server: {PG_URL_VARIABLE} is not set (start one with "
              f"'tools/pg-test-server start DIR' and export {PG_URL_VARIABLE}=\"$(cat DIR/url)\"; .ci/run does)")
    if environ.get("CI") == "true":
        pytest.fail(f"{reason}; under CI the PostgreSQL tests must run, not skip", pytrace=False)
    pytest.skip(reason)


def libpq_url(url: str) -> str:
    """A SQLAlchemy URL (``postgresql+psycopg://...``) as the plain URL psycopg connects with."""
    from sqlalchemy.engine import make_url

    return make_url(url).set(drivername="postgresql").render_as_string(hide_password=False)


@dataclass(frozen=True, slots=True)
class Schema:
    """A schema of the test database for one test, dropped afterwards, and how to reach it."""

    url: str  # the test role's URL
    name: str

    def connect(self) -> Any:
        """A psycopg connection (autocommit) of the test role."""
        import psycopg

        return psycopg.connect(libpq_url(self.url), autocommit=True)

    def load_demo(self) -> None:
        """The demo's two CSV files as two tables: periods as TEXT, every other column DOUBLE PRECISION."""
        with self.connect() as connection:
            for stem in DEMO_TABLES:
                with (DEMO_DATA / f"{stem}.csv").open(newline="", encoding="utf-8") as stream:
                    rows = list(csv.reader(stream))
                header = rows[0]
                columns = ", ".join([f'"{header[0]}" TEXT', *(f'"{name}" DOUBLE PRECISION' for name in header[1:])])
                connection.execute(f'CREATE TABLE "{self.name}"."{stem}" ({columns})')
                with connection.cursor() as cursor:
                    cursor.executemany(
                        f'INSERT INTO "{self.name}"."{stem}" VALUES ({", ".join(["%s"] * len(header))})',
                        [[row[0], *(float(cell) if cell.strip() else None for cell in row[1:])] for row in rows[1:]])

    def reader(self, password: str) -> str:
        """A new role that may only read this schema, logging in with ``password``; its URL (password %-encoded)."""
        from sqlalchemy.engine import make_url

        role = f"{self.name}_reader"
        with self.connect() as connection:
            connection.execute(f"CREATE ROLE \"{role}\" LOGIN PASSWORD '{password}'")
            connection.execute(f'GRANT USAGE ON SCHEMA "{self.name}" TO "{role}"')
            connection.execute(f'GRANT SELECT ON ALL TABLES IN SCHEMA "{self.name}" TO "{role}"')
        return make_url(self.url).set(username=role, password=password).render_as_string(hide_password=False)

    def count(self, table: str) -> int:
        """The number of rows of a table of the schema."""
        with self.connect() as connection:
            return int(connection.execute(f'SELECT count(*) FROM "{self.name}"."{table}"').fetchone()[0])

"""``python -m bot.adapter.healthcheck``: exit 0 if this bot can do its work, else 1.

For Docker and systemd.

Checks what a running bot needs from outside itself: the database answers (a SQLite file that
exists and opens, or a PostgreSQL server that answers ``SELECT 1``), and in webhook mode that
something accepts connections on the webhook port. Exit codes follow Docker's HEALTHCHECK
contract (docs.docker.com, Dockerfile reference: 0 healthy, 1 unhealthy). It never writes.
"""

from __future__ import annotations

import argparse
import asyncio
import socket
import sqlite3
import sys
from collections.abc import Sequence
from pathlib import Path

import asyncpg  # type: ignore[import-untyped]

from bot.storage.postgres import is_postgres_dsn

TIMEOUT = 5.0


async def database_problem(database: str) -> str | None:
    """None if the database answers, else what is wrong."""
    if is_postgres_dsn(database):
        try:
            connection = await asyncpg.connect(database, timeout=TIMEOUT)
        except (OSError, TimeoutError, asyncpg.PostgresError) as error:
            return f"PostgreSQL does not answer: {type(error).__name__}: {error}"
        try:
            await connection.fetchval("SELECT 1")
        finally:
            await connection.close()
        return None
    path = Path(database)
    if not path.is_file():
        return f"SQLite file {path} does not exist; has the bot ever started here?"
    try:
        with sqlite3.connect(f"{path.resolve().as_uri()}?mode=ro", uri=True, timeout=TIMEOUT) as db:
            db.execute("SELECT count(*) FROM schema_version").fetchone()
    except sqlite3.Error as error:
        return f"SQLite file {path} cannot be read: {error}"
    return None


def port_problem(host: str, port: int) -> str | None:
    """None if something accepts TCP connections at host:port, else what is wrong."""
    try:
        with socket.create_connection((host, port), timeout=TIMEOUT):
            return None
    except OSError as error:
        return f"nothing accepts connections on {host}:{port} ({error})"


def main(argv: Sequence[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description="Exit 0 if the bot's dependencies answer.")
    parser.add_argument("--database", required=True, help="SQLite path or postgresql:// DSN")
    parser.add_argument("--port", type=int, help="webhook port to probe (webhook mode only)")
    parser.add_argument("--host", default="127.0.0.1")
    args = parser.parse_args(argv)
    problems = [asyncio.run(database_problem(args.database))]
    if args.port:
        problems.append(port_problem(args.host, args.port))
    found = [p for p in problems if p]
    for problem in found:
        print(f"unhealthy: {problem}", file=sys.stderr)
    return 1 if found else 0


if __name__ == "__main__":
    raise SystemExit(main())

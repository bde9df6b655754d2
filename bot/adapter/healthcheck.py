"""``python -m bot.adapter.healthcheck``: exit 0 if this bot can do its work, else 1.

For Docker and systemd.

Checks what a running bot needs from outside itself: the database answers (a SQLite file that
exists and opens, or a PostgreSQL server that answers ``SELECT 1``), and in webhook mode that
something accepts connections on the webhook port. Exit codes follow Docker's HEALTHCHECK
contract (docs.docker.com, Dockerfile reference: 0 healthy, 1 unhealthy). It never writes.

The database address comes from ``FLATPACT_DATABASE`` (and, in webhook mode, the port from
``FLATPACT_WEBHOOK_PORT``), the same variables the bot reads, never from the command line: a
PostgreSQL address carries its password, and a command line is visible to every user of the
host in ``ps`` each time the check runs. ``--database`` remains for SQLite paths typed by hand.
Every address it prints goes through :func:`bot.adapter.redaction.safe_address`.
"""

from __future__ import annotations

import argparse
import asyncio
import os
import socket
import sqlite3
import sys
from collections.abc import Mapping, Sequence
from pathlib import Path

import asyncpg  # type: ignore[import-untyped]

from bot.adapter.redaction import address_password, redact, safe_address
from bot.storage.postgres import is_postgres_dsn

TIMEOUT = 5.0


async def database_problem(database: str) -> str | None:
    """None if the database answers, else what is wrong."""
    if is_postgres_dsn(database):
        try:
            connection = await asyncpg.connect(database, timeout=TIMEOUT)
        except (OSError, TimeoutError, asyncpg.PostgresError) as error:
            hidden = [address_password(database) or ""]
            return (
                f"PostgreSQL at {safe_address(database)} does not answer: "
                f"{type(error).__name__}: {redact(str(error), hidden)}"
            )
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


DATABASE_VARIABLE = "FLATPACT_DATABASE"
DEFAULT_DATABASE = "flatpact.sqlite3"  # as bot.adapter.process_settings.Settings


def main(argv: Sequence[str] | None = None, environ: Mapping[str, str] | None = None) -> int:
    env = os.environ if environ is None else environ
    parser = argparse.ArgumentParser(
        description="Exit 0 if the bot's dependencies answer. The database address and, in "
        "webhook mode, the port come from FLATPACT_DATABASE, FLATPACT_MODE and "
        "FLATPACT_WEBHOOK_PORT, like the bot's own."
    )
    parser.add_argument(
        "--database", help="a SQLite path (default: $FLATPACT_DATABASE; never put a password here)"
    )
    parser.add_argument("--port", type=int, help="webhook port to probe (default: from env)")
    parser.add_argument("--host", default="127.0.0.1")
    args = parser.parse_args(argv)
    database = args.database or env.get(DATABASE_VARIABLE) or DEFAULT_DATABASE
    port = args.port
    if port is None and env.get("FLATPACT_MODE") == "webhook":
        port = int(env.get("FLATPACT_WEBHOOK_PORT") or "8443")
    problems = [asyncio.run(database_problem(database))]
    if port:
        problems.append(port_problem(args.host, port))
    found = [p for p in problems if p]
    for problem in found:
        print(f"unhealthy: {problem}", file=sys.stderr)
    return 1 if found else 0


if __name__ == "__main__":
    raise SystemExit(main())

"""Open and migrate the database before the bot says anything to Telegram.

``python -m bot`` calls :func:`database_problem` right after the settings are read: a wrong
path, a file that is no database, or a PostgreSQL server that does not answer ends the run
with one line naming ``FLATPACT_DATABASE`` and the file or host (through
:func:`~bot.adapter.redaction.safe_address`, so never a password), before the token is used.
The store is closed again; the application opens its own in ``post_init`` (on its own event
loop), where the migrations then have nothing left to do.
"""

from __future__ import annotations

import sqlite3
from dataclasses import dataclass

from bot.adapter.redaction import address_password, redact, safe_address
from bot.rounds.clock import Clock, system_clock
from bot.rounds.errors import StorageUnavailable
from bot.storage.open_store import open_store
from bot.storage.postgres import is_postgres_dsn

#: Exit codes: a database setting that cannot work is a usage error like any bad setting;
#: a server that does not answer may come back, so a supervisor's restart can help.
BAD_DATABASE = 2
DATABASE_DOWN = 1


@dataclass(frozen=True, slots=True)
class DatabaseProblem:
    """Why the database could not be opened: one line for stderr and the exit code."""

    line: str
    exit_code: int


async def database_problem(database: str, *, clock: Clock = system_clock) -> DatabaseProblem | None:
    """None when ``database`` opens and migrates; else one line saying what to fix."""
    shown = safe_address(database)
    kind = "PostgreSQL at" if is_postgres_dsn(database) else "the SQLite file"
    try:
        if not is_postgres_dsn(database):
            # Connect once synchronously first: when aiosqlite's own connect fails, its worker
            # thread reports to the event loop after asyncio.run has closed it, and prints a
            # traceback of its own. A path that cannot be opened fails here instead.
            sqlite3.connect(database).close()
        store = await open_store(database, clock=clock)
    except StorageUnavailable as error:
        return DatabaseProblem(_line(database, str(error)), DATABASE_DOWN)
    except (sqlite3.Error, OSError) as error:
        return DatabaseProblem(
            _line(
                database,
                f"{kind} {shown} cannot be opened ({_reason(database, error)}); "
                "check the path, that its folder exists and that the file is a Flatpact "
                "database",
            ),
            BAD_DATABASE,
        )
    except Exception as error:  # driver errors: wrong password, unknown database, newer schema
        return DatabaseProblem(
            _line(database, f"{kind} {shown} cannot be used ({_reason(database, error)})"),
            BAD_DATABASE,
        )
    await store.close()
    return None


def _reason(database: str, error: BaseException) -> str:
    text = " ".join(str(error).split()) or type(error).__name__
    return redact(text, [address_password(database) or ""])


def _line(database: str, message: str) -> str:
    text = " ".join(redact(message, [address_password(database) or ""]).split())
    return f"flatpact: FLATPACT_DATABASE: {text}"

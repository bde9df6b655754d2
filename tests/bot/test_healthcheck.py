"""``python -m bot.adapter.healthcheck`` against real databases and a real listening socket.

Exit codes follow Docker's HEALTHCHECK contract (Dockerfile reference, docs.docker.com:
0 healthy, 1 unhealthy). Listeners bind 127.0.0.1 only.
"""

from __future__ import annotations

import socket
import subprocess
import sys
from pathlib import Path

import pytest

from bot.adapter.healthcheck import database_problem, main, port_problem
from bot.rounds.clock import ManualClock
from bot.storage.sqlite import SqliteStore


async def test_a_migrated_sqlite_file_is_healthy(db_path: Path, clock: ManualClock) -> None:
    async with await SqliteStore.open(db_path, clock=clock):
        pass
    assert await database_problem(str(db_path)) is None


async def test_a_missing_or_foreign_sqlite_file_is_unhealthy(tmp_path: Path) -> None:
    missing = await database_problem(str(tmp_path / "nope.sqlite3"))
    assert missing is not None and "does not exist" in missing
    junk = tmp_path / "junk.sqlite3"
    junk.write_bytes(b"not a database at all" * 10)
    problem = await database_problem(str(junk))
    assert problem is not None and "cannot be read" in problem


async def test_postgres_answers(postgres_dsn: str) -> None:
    assert await database_problem(postgres_dsn) is None


async def test_a_postgres_nobody_listens_on_is_unhealthy() -> None:
    with socket.socket() as probe:  # a port that was free a moment ago: nothing listens there
        probe.bind(("127.0.0.1", 0))
        port = probe.getsockname()[1]
    problem = await database_problem(f"postgresql://nobody@127.0.0.1:{port}/none")
    assert problem is not None and "does not answer" in problem


def test_the_webhook_port_probe() -> None:
    with socket.socket() as listener:
        listener.bind(("127.0.0.1", 0))
        listener.listen()
        port = listener.getsockname()[1]
        assert port_problem("127.0.0.1", port) is None
    assert port_problem("127.0.0.1", port) is not None


def test_exit_codes_as_docker_expects(db_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["--database", str(db_path)]) == 1
    assert "unhealthy" in capsys.readouterr().err
    done = subprocess.run(
        [sys.executable, "-m", "bot.adapter.healthcheck", "--database", str(db_path)],
        capture_output=True,
        text=True,
        timeout=60,
    )
    assert done.returncode == 1 and "does not exist" in done.stderr

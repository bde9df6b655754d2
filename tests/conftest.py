"""Shared test settings and the Bot API spec fixture.

Hypothesis runs without per-example deadlines (CI machines are slow). The ``spec`` fixture is
the outside reference for everything Telegram: the official Bot API spec, vendored in
``bot/sandbox/botapi/api.json`` (Bot API 10.1; source and licence in ``SOURCE.md`` there), or
``$FLATPACT_BOT_API_SPEC``. It never skips: a missing spec is an error.
"""

import os
from typing import Any

import pytest
from hypothesis import HealthCheck, settings

from bot.sandbox import BotApiSpec, load_spec

settings.register_profile(
    "flatpact", deadline=None, suppress_health_check=[HealthCheck.too_slow], print_blob=True
)
settings.load_profile("flatpact")


@pytest.fixture(scope="session")
def spec() -> BotApiSpec:
    """Telegram Bot API spec 10.1, vendored in bot/sandbox/botapi/api.json."""
    return load_spec()


# --------------------------------------------------------------------- honest skips
#
# Only the PostgreSQL tests may skip, and only while no server is configured
# (FLATPACT_TEST_POSTGRES_DSN unset; CI always sets it). Any other skip fails the run, so a test
# that silently stopped running is noticed. The run ends with one line saying what skipped and
# how to enable it.

POSTGRES_VARIABLE = "FLATPACT_TEST_POSTGRES_DSN"
ALLOWED_WITHOUT_POSTGRES = (f"{POSTGRES_VARIABLE} is not set", "FLATPACT_TEST_POSTGRES_DATA")
_skips: list[tuple[str, str]] = []


def skip_is_allowed(reason: str, postgres_configured: bool) -> bool:
    """True for the one skip we accept: a PostgreSQL test with no server configured."""
    return not postgres_configured and any(mark in reason for mark in ALLOWED_WITHOUT_POSTGRES)


def pytest_runtest_logreport(report: pytest.TestReport) -> None:
    if report.skipped and isinstance(report.longrepr, tuple):
        _skips.append((report.nodeid, str(report.longrepr[2])))


def _unexpected() -> list[tuple[str, str]]:
    configured = bool(os.environ.get(POSTGRES_VARIABLE))
    return [(node, why) for node, why in _skips if not skip_is_allowed(why, configured)]


def pytest_terminal_summary(terminalreporter: Any) -> None:
    if not _skips:
        return
    unexpected = _unexpected()
    allowed = len(_skips) - len(unexpected)
    if allowed:
        terminalreporter.write_line(
            f"{allowed} PostgreSQL tests skipped: no server configured. To run them: "
            'eval "$(bash deploy/ci/start-postgres.sh)" before make test.',
            yellow=True,
        )
    for node, why in unexpected:
        terminalreporter.write_line(f"NOT ALLOWED TO SKIP: {node}: {why}", red=True)


def pytest_sessionfinish(session: pytest.Session, exitstatus: int) -> None:
    if _unexpected() and session.exitstatus == 0:
        session.exitstatus = pytest.ExitCode.TESTS_FAILED

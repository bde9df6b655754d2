"""The skip guard in tests/conftest.py: only PostgreSQL tests may skip, and only without a server.

Each case runs a small pytest session of its own (pytest's ``pytester``) with our conftest.
"""

from __future__ import annotations

from pathlib import Path

import pytest

pytest_plugins = ["pytester"]

CONFTEST = (Path(__file__).parent / "conftest.py").read_text(encoding="utf-8")


def _run(pytester: pytest.Pytester, body: str) -> pytest.RunResult:
    pytester.makeconftest(CONFTEST)
    pytester.makepyfile(test_inner=body)
    return pytester.runpytest_subprocess("-q", "-p", "no:cacheprovider")


def test_an_ordinary_skip_fails_the_run(
    pytester: pytest.Pytester, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.delenv("FLATPACT_TEST_POSTGRES_DSN", raising=False)
    result = _run(pytester, "import pytest\ndef test_x():\n    pytest.skip('tool missing')\n")
    assert result.ret == pytest.ExitCode.TESTS_FAILED
    result.stdout.fnmatch_lines(["*NOT ALLOWED TO SKIP: test_inner.py::test_x: *tool missing*"])


def test_a_postgres_skip_without_a_server_passes_and_says_how_to_enable_it(
    pytester: pytest.Pytester, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.delenv("FLATPACT_TEST_POSTGRES_DSN", raising=False)
    body = (
        "import pytest\ndef test_x():\n"
        "    pytest.skip('FLATPACT_TEST_POSTGRES_DSN is not set; start it')\n"
    )
    result = _run(pytester, body)
    assert result.ret == pytest.ExitCode.OK
    result.stdout.fnmatch_lines(["*1 PostgreSQL tests skipped*start-postgres.sh*"])


def test_a_postgres_skip_with_a_server_configured_fails(
    pytester: pytest.Pytester, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.setenv("FLATPACT_TEST_POSTGRES_DSN", "postgresql://127.0.0.1:1/none")
    body = (
        "import pytest\ndef test_x():\n"
        "    pytest.skip('FLATPACT_TEST_POSTGRES_DSN is not set; start it')\n"
    )
    assert _run(pytester, body).ret == pytest.ExitCode.TESTS_FAILED

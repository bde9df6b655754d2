"""The deployment files agree with each other and with the code; checked without Docker.

No container engine runs here, so each file is checked by the best parser at hand: the compose
file as YAML (PyYAML, when installed), the Dockerfile by its instruction grammar (Dockerfile
reference, docs.docker.com: one instruction per line, ``\\`` continues a line), the systemd
unit by ``systemd-analyze verify`` itself, the shell scripts by ``bash -n``.
"""

from __future__ import annotations

import re
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

from bot.webhook_guard import SECRET_HEADER

ROOT = Path(__file__).resolve().parents[2]
DEPLOY = ROOT / "deploy"
#: The settings every deployment path uses (agreed names; see deploy/README.md).
BOT_SETTINGS = {
    "FLATPACT_BOT_TOKEN",
    "FLATPACT_DATABASE",
    "FLATPACT_MODE",
    "FLATPACT_WEBHOOK_LISTEN",
    "FLATPACT_WEBHOOK_PORT",
    "FLATPACT_WEBHOOK_URL",
    "FLATPACT_WEBHOOK_SECRET",
    "FLATPACT_LOG_LEVEL",
}
DEPLOY_ONLY = {"FLATPACT_DOMAIN", "FLATPACT_POSTGRES_PASSWORD", "FLATPACT_TEST_POSTGRES_DSN"}
WEBHOOK_PATH = "/telegram"


def dockerfile_instructions(text: str) -> list[tuple[str, str]]:
    """(INSTRUCTION, arguments) pairs: comments dropped, continuation lines joined."""
    joined = re.sub(
        r"\\\n",
        " ",
        "\n".join(line for line in text.splitlines() if not line.lstrip().startswith("#")),
    )
    pairs = []
    for line in joined.splitlines():
        if line.strip():
            keyword, _, rest = line.strip().partition(" ")
            pairs.append((keyword.upper(), rest.strip()))
    return pairs


def test_only_agreed_setting_names_are_used() -> None:
    files = [p for p in DEPLOY.iterdir() if p.is_file()] + [DEPLOY / "README.md"]
    used = {name for p in files for name in re.findall(r"FLATPACT_[A-Z_]+", p.read_text())}
    assert used - BOT_SETTINGS - DEPLOY_ONLY == set()
    assert used >= BOT_SETTINGS


def test_dockerfile_is_slim_non_root_healthchecked_and_runs_the_bot() -> None:
    steps = dockerfile_instructions((DEPLOY / "Dockerfile").read_text())
    known = {
        "FROM",
        "ENV",
        "RUN",
        "WORKDIR",
        "COPY",
        "USER",
        "VOLUME",
        "EXPOSE",
        "HEALTHCHECK",
        "CMD",
    }
    assert {keyword for keyword, _ in steps} <= known
    assert steps[0][0] == "FROM" and "slim" in steps[0][1]
    keywords = [keyword for keyword, _ in steps]
    user_at = keywords.index("USER")
    assert steps[user_at][1] not in ("root", "0")
    assert user_at < keywords.index("CMD") and user_at < keywords.index("HEALTHCHECK")
    health = dict(steps)["HEALTHCHECK"]
    assert health.endswith('CMD ["python", "-m", "bot.healthcheck"]')
    assert dict(steps)["CMD"] == '["python", "-m", "bot"]'
    for keyword, args in steps:
        if keyword == "COPY":
            for source in args.split()[:-1]:
                assert (ROOT / source).exists(), f"COPY {source}: no such file in the repository"


def test_health_check_keeps_the_database_address_off_the_command_line() -> None:
    # A command line is visible to every host user in ps (proc(5): /proc/<pid>/cmdline); the
    # address carries the PostgreSQL password, so the check reads it from the environment.
    health = dict(dockerfile_instructions((DEPLOY / "Dockerfile").read_text()))["HEALTHCHECK"]
    assert "FLATPACT_DATABASE" not in health and "--database" not in health
    compose = (DEPLOY / "compose.yaml").read_text()
    assert "healthcheck.py" not in compose and "--database" not in compose


def test_compose_file_runs_the_bot_in_webhook_mode_on_postgres() -> None:
    yaml = pytest.importorskip("yaml", reason="PyYAML is not installed (add it to [dev])")
    compose = yaml.safe_load((DEPLOY / "compose.yaml").read_text())
    services = compose["services"]
    assert set(services) == {"postgres", "bot", "proxy"}
    bot = services["bot"]
    environment = bot["environment"]
    assert set(environment) == BOT_SETTINGS
    assert environment["FLATPACT_MODE"] == "webhook"
    assert environment["FLATPACT_DATABASE"].startswith("postgresql://")
    assert environment["FLATPACT_WEBHOOK_URL"].endswith(WEBHOOK_PATH)
    assert "ports" not in bot, "only the proxy may publish ports"
    assert bot["depends_on"]["postgres"]["condition"] == "service_healthy"
    assert (
        ROOT / bot["build"]["context"].replace("..", ".") / bot["build"]["dockerfile"]
    ).is_file()
    assert compose["networks"]["backend"]["internal"] is True


def test_proxies_forward_only_the_webhook_path_with_the_secret_header() -> None:
    caddy = (DEPLOY / "Caddyfile").read_text()
    assert f"path {WEBHOOK_PATH}" in caddy
    assert f"header {SECRET_HEADER} {{$FLATPACT_WEBHOOK_SECRET}}" in caddy
    assert "reverse_proxy bot:8443" in caddy
    nginx = (DEPLOY / "nginx.conf.example").read_text()
    # nginx docs (ngx_http_core_module, $http_<name>): header name lower-cased, "-" -> "_".
    variable = "$http_" + SECRET_HEADER.lower().replace("-", "_")
    assert f"location = {WEBHOOK_PATH}" in nginx and variable in nginx
    assert f"proxy_set_header {SECRET_HEADER} {variable};" in nginx
    assert "proxy_pass http://127.0.0.1:8443;" in nginx


def _verify_unit(text: str, folder: Path) -> str:
    unit = folder / "flatpact.service"
    unit.write_text(text.replace("/opt/flatpact/.venv/bin/python", sys.executable))
    done = subprocess.run(
        ["systemd-analyze", "verify", str(unit)], capture_output=True, text=True, timeout=60
    )
    return (done.stdout + done.stderr).strip()


@pytest.mark.skipif(shutil.which("systemd-analyze") is None, reason="systemd-analyze missing")
def test_systemd_unit_verifies(tmp_path: Path) -> None:
    text = (DEPLOY / "flatpact.service").read_text()
    assert _verify_unit(text, tmp_path) == ""
    broken = text.replace("Restart=on-failure", "Restart=sometimes")  # the check can fail
    assert "restart specifier" in _verify_unit(broken, tmp_path)
    assert "FLATPACT_DATABASE=/var/lib/flatpact/" in text and "StateDirectory=flatpact" in text


@pytest.mark.parametrize("script", ["ci/start-postgres.sh", "ci/stop-postgres.sh"])
def test_shell_scripts_parse(script: str) -> None:
    done = subprocess.run(["bash", "-n", str(DEPLOY / script)], capture_output=True, text=True)
    assert done.returncode == 0, done.stderr


def test_ci_runs_make_test_and_stops_postgres() -> None:
    run = (ROOT / ".ci" / "run").read_text()
    assert "deploy/ci/start-postgres.sh" in run and "stop-postgres.sh" in run
    assert "trap" in run and run.rstrip().endswith("make test")

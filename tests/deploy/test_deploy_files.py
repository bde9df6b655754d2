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
from typing import Any

import pytest

from bot.adapter.process_settings import Settings
from bot.adapter.webhook_guard import SECRET_HEADER

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
    "FLATPACT_LOCALE",
    "FLATPACT_ONLY_ADMINS_START",
    "FLATPACT_KEEP_ANSWERS_DAYS",
    "FLATPACT_KEEP_LOG_DAYS",
}
#: Base images by digest, printed by deploy/pin-images.sh into deploy/.env.
IMAGE_PINS = {"FLATPACT_PYTHON_IMAGE", "FLATPACT_POSTGRES_IMAGE", "FLATPACT_CADDY_IMAGE"}
DEPLOY_ONLY = {
    "FLATPACT_DOMAIN",
    "FLATPACT_POSTGRES_PASSWORD",
    "FLATPACT_TEST_POSTGRES_DSN",
    *IMAGE_PINS,
}
#: An image reference pinned by content: name[:tag]@sha256:<64 hex> (OCI distribution spec,
#: digests; Docker "docker pull" reference, "Pull an image by digest").
PINNED = re.compile(r"^[a-z0-9./_:-]+@sha256:[0-9a-f]{64}$")
#: "${NAME:?message}": compose refuses to start while NAME is unset or empty (compose spec,
#: interpolation).
REQUIRED_VARIABLE = re.compile(r"^\$\{(FLATPACT_[A-Z_]+):\?[^}]+\}$")
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
    # ... and each one the bot reads is a field of its settings (pydantic-settings' env prefix)
    fields = {f"FLATPACT_{name.upper()}" for name in Settings.model_fields}
    assert fields >= BOT_SETTINGS


def test_dockerfile_is_slim_non_root_healthchecked_and_runs_the_bot() -> None:
    steps = dockerfile_instructions((DEPLOY / "Dockerfile").read_text())
    known = {
        "ARG",
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
    assert "FROM" in [keyword for keyword, _ in steps]
    keywords = [keyword for keyword, _ in steps]
    user_at = keywords.index("USER")
    assert steps[user_at][1] not in ("root", "0")
    assert user_at < keywords.index("CMD") and user_at < keywords.index("HEALTHCHECK")
    health = dict(steps)["HEALTHCHECK"]
    assert health.endswith('CMD ["python", "-m", "bot.adapter.healthcheck"]')
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


@pytest.mark.parametrize("script", ["ci/start-postgres.sh", "ci/stop-postgres.sh", "pin-images.sh"])
def test_shell_scripts_parse(script: str) -> None:
    done = subprocess.run(["bash", "-n", str(DEPLOY / script)], capture_output=True, text=True)
    assert done.returncode == 0, done.stderr


def test_ci_runs_make_test_and_stops_postgres() -> None:
    run = (ROOT / ".ci" / "run").read_text()
    assert "deploy/ci/start-postgres.sh" in run and "stop-postgres.sh" in run
    assert "trap" in run and run.rstrip().endswith("make test")


# ------------------------------------------------------------------ hardening (issue 17)


def _compose() -> dict[str, Any]:
    yaml = pytest.importorskip("yaml", reason="PyYAML is not installed (add it to [dev])")
    loaded: dict[str, Any] = yaml.safe_load((DEPLOY / "compose.yaml").read_text())
    return loaded


def test_base_images_are_pinned_by_digest_or_required_from_the_pin_script() -> None:
    pin_script = (DEPLOY / "pin-images.sh").read_text()
    printed = set(re.findall(r'"(FLATPACT_[A-Z_]+_IMAGE) ', pin_script))
    assert printed == IMAGE_PINS
    assert "^sha256:[0-9a-f]{64}$" in pin_script  # it never prints anything but a digest
    example = (DEPLOY / "flatpact.env.example").read_text()
    assert all(f"\n{name}=\n" in example for name in IMAGE_PINS)
    # Dockerfile: every FROM names a build argument without a default, or a pinned image
    steps = dockerfile_instructions((DEPLOY / "Dockerfile").read_text())
    arguments = {args.split("=")[0]: "=" in args for keyword, args in steps if keyword == "ARG"}
    for keyword, args in steps:
        if keyword == "FROM":
            image = args.split()[0]
            named = re.fullmatch(r"\$\{(\w+)\}", image)
            assert PINNED.match(image) or (named and arguments.get(named[1]) is False), image
    # compose: every image is pinned, required from the pin variables, or built here
    services = _compose()["services"]
    build_args = services["bot"]["build"]["args"]
    required = REQUIRED_VARIABLE.match(build_args["PYTHON_IMAGE"])
    assert required and required[1] == "FLATPACT_PYTHON_IMAGE"
    for name, service in services.items():
        image = service["image"]
        if "build" in service:
            continue
        variable = REQUIRED_VARIABLE.match(image)
        assert PINNED.match(image) or (variable and variable[1] in IMAGE_PINS), (name, image)


def test_compose_services_gain_no_privileges_and_keep_a_read_only_root() -> None:
    allowed_caps = {
        "postgres": {"CHOWN", "DAC_OVERRIDE", "FOWNER", "SETGID", "SETUID"},  # entrypoint's gosu
        "bot": set(),
        "proxy": {"NET_BIND_SERVICE"},  # ports 80 and 443
    }
    for name, service in _compose()["services"].items():
        assert "no-new-privileges:true" in service.get("security_opt", []), name
        assert service.get("cap_drop") == ["ALL"], name
        assert set(service.get("cap_add", [])) <= allowed_caps[name], name
        assert service.get("read_only") is True, name
        assert "/tmp" in service.get("tmpfs", []), name


def test_runtime_dependencies_are_locked_with_hashes_and_installed_from_the_lock() -> None:
    from packaging.requirements import Requirement
    from packaging.utils import canonicalize_name

    lock = (DEPLOY / "requirements.lock").read_text()
    assert "pip-compile --generate-hashes" in lock  # how to make it again, written at its top
    pins: dict[str, str] = {}
    hashes: dict[str, int] = {}
    current = ""
    for line in lock.splitlines():
        pinned = re.match(r"^([A-Za-z0-9._-]+)==([^\s\\;]+)", line)
        if pinned:
            current = str(canonicalize_name(pinned[1]))
            pins[current] = pinned[2]
            hashes[current] = 0
        elif re.fullmatch(r"\s+--hash=sha256:[0-9a-f]{64}( \\)?", line):
            hashes[current] += 1
        else:
            assert not line.strip() or line.lstrip().startswith("#"), line
    assert pins and all(count >= 1 for count in hashes.values()), hashes
    # every runtime dependency of pyproject.toml is locked, at a version it allows (PEP 508/440)
    pyproject = (ROOT / "pyproject.toml").read_text()
    block = pyproject.split("dependencies = [", 1)[1].split("]\n", 1)[0]
    for text in re.findall(r'"([^"]+)"', block):
        requirement = Requirement(text)
        name = str(canonicalize_name(requirement.name))
        assert name in pins, f"{name} is not in deploy/requirements.lock"
        assert requirement.specifier.contains(pins[name]), (name, pins[name])
    install = [
        a for k, a in dockerfile_instructions((DEPLOY / "Dockerfile").read_text()) if k == "RUN"
    ]
    assert any("--require-hashes -r deploy/requirements.lock" in a for a in install)
    assert not any(re.search(r"pip install\b(?!.*--require-hashes)", a) for a in install)


def test_proxies_cap_the_body_like_the_bot_endpoint() -> None:
    from bot.adapter.guarded_webhook import MAX_BODY_BYTES

    assert MAX_BODY_BYTES == 1024 * 1024
    assert "max_size 1MB" in (DEPLOY / "Caddyfile").read_text()
    assert "client_max_body_size 1m;" in (DEPLOY / "nginx.conf.example").read_text()


def _exposure(text: str, folder: Path) -> float:
    unit = folder / "flatpact.service"
    unit.write_text(text.replace("/opt/flatpact/.venv/bin/python", sys.executable))
    done = subprocess.run(
        ["systemd-analyze", "security", "--offline=yes", str(unit)],
        capture_output=True,
        text=True,
        timeout=60,
    )
    found = re.search(r"Overall exposure level for \S+: (\d+\.\d+)", done.stdout)
    assert found, done.stdout + done.stderr
    return float(found[1])


@pytest.mark.skipif(shutil.which("systemd-analyze") is None, reason="systemd-analyze missing")
def test_systemd_unit_exposure_is_low(tmp_path: Path) -> None:
    # systemd-analyze security: 0 = fully sandboxed .. 10 = exposed; "OK" is below 2.0 by its
    # own scale (systemd-analyze(1)).
    text = (DEPLOY / "flatpact.service").read_text()
    assert _exposure(text, tmp_path) <= 2.0
    assert "UMask=0077" in text
    loosened = re.sub(
        r"^(Protect|Private|Restrict|SystemCall|Capability).*\n", "", text, flags=re.M
    )
    assert _exposure(loosened, tmp_path) > 2.0  # the check can fail

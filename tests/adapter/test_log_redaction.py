"""``python -m bot`` against the stand-in: its DEBUG log hides secrets; its files are private.

PTB logs the Bot API address, which contains the token (Bot API spec, "Making requests":
``https://api.telegram.org/bot<token>/METHOD_NAME``), and the parameters of ``setWebhook``,
among them ``secret_token``. The stand-in checks every call against the spec (fixture).
"""

from __future__ import annotations

import asyncio
import os
import signal
import socket
import stat
import sys
from pathlib import Path

from bot.sandbox import BotApiStandIn

SECRET = "quiet-harbour_secret-42"


def _free_port() -> int:
    with socket.socket() as probe:
        probe.bind(("127.0.0.1", 0))
        return int(probe.getsockname()[1])


async def _run_bot(standin: BotApiStandIn, tmp_path: Path) -> str:
    """``python -m bot`` in webhook mode at DEBUG until it has set its webhook; its stderr."""
    env = {
        **os.environ,
        "FLATPACT_BOT_TOKEN": standin.token,
        "FLATPACT_DATABASE": str(tmp_path / "flatpact.sqlite3"),
        "FLATPACT_BASE_URL": standin.base_url,
        "FLATPACT_BASE_FILE_URL": standin.base_file_url,
        "FLATPACT_LOG_LEVEL": "DEBUG",
        "FLATPACT_MODE": "webhook",
        "FLATPACT_WEBHOOK_LISTEN": "127.0.0.1",
        "FLATPACT_WEBHOOK_PORT": str(_free_port()),
        "FLATPACT_WEBHOOK_URL": "https://bot.invalid/telegram",
        "FLATPACT_WEBHOOK_SECRET": SECRET,
    }
    bot = await asyncio.create_subprocess_exec(
        sys.executable,
        "-m",
        "bot",
        env=env,
        cwd=tmp_path,  # no .env file here
        stdout=asyncio.subprocess.PIPE,
        stderr=asyncio.subprocess.PIPE,
    )
    try:
        for _ in range(600):  # at most 60 s
            if any(call.method == "setWebhook" for call in standin.calls) or bot.returncode:
                break
            await asyncio.sleep(0.1)
        await asyncio.sleep(0.5)
    finally:
        if bot.returncode is None:
            bot.send_signal(signal.SIGINT)  # python -m bot stops cleanly on SIGINT
        _, err = await asyncio.wait_for(bot.communicate(), timeout=60)
    assert bot.returncode == 0, err.decode()[-2000:]
    assert any(call.method == "setWebhook" for call in standin.calls)
    return err.decode()


async def test_debug_log_of_a_real_run_hides_token_and_webhook_secret(
    standin: BotApiStandIn, tmp_path: Path
) -> None:
    log = await _run_bot(standin, tmp_path)
    # the log is the DEBUG one, and it talked about the webhook
    assert "DEBUG telegram" in log and "setWebhook" in log
    # ... and neither the token (nor its secret half) nor the webhook secret is in it
    token_secret = standin.token.split(":", 1)[1]
    assert standin.token not in log and token_secret not in log
    assert SECRET not in log
    assert "[redacted]" in log


async def test_a_fresh_database_is_readable_by_the_bot_user_alone(
    standin: BotApiStandIn, tmp_path: Path
) -> None:
    old = os.umask(0o022)  # the usual umask: without care, new files are world-readable
    try:
        await _run_bot(standin, tmp_path)
    finally:
        os.umask(old)
    created = [p for p in tmp_path.iterdir() if p.name.startswith("flatpact.sqlite3")]
    assert created
    for path in created:  # the database and any journal left behind
        assert stat.S_IMODE(path.stat().st_mode) & 0o077 == 0, (path, oct(path.stat().st_mode))


async def test_a_refused_token_stops_the_bot_with_one_line_that_does_not_quote_it(
    standin: BotApiStandIn, tmp_path: Path
) -> None:
    # PTB's InvalidToken quotes the token; uncaught, Python would print it in the traceback.
    wrong = "7000000009:AAHdqTcvCH1vGWJxfSeofSAs0K5PALDsawX"
    env = {
        **os.environ,
        "FLATPACT_BOT_TOKEN": wrong,
        "FLATPACT_DATABASE": str(tmp_path / "flatpact.sqlite3"),
        "FLATPACT_BASE_URL": standin.base_url,
        "FLATPACT_BASE_FILE_URL": standin.base_file_url,
    }
    bot = await asyncio.create_subprocess_exec(
        sys.executable,
        "-m",
        "bot",
        env=env,
        cwd=tmp_path,
        stdout=asyncio.subprocess.PIPE,
        stderr=asyncio.subprocess.PIPE,
    )
    _, err = await asyncio.wait_for(bot.communicate(), timeout=60)
    text = err.decode()
    assert bot.returncode == 2  # a usage error, like any other bad setting
    assert text.strip().splitlines()[-1].startswith("flatpact: Telegram refused FLATPACT_BOT_TOKEN")
    assert wrong.split(":", 1)[1] not in text

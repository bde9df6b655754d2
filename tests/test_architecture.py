"""The layers, checked on what Python actually imports (a fresh interpreter per check).

- ``solver`` never imports the bot;
- the round engine (``bot.rounds``) imports neither Telegram nor a database driver nor the
  adapter or storage packages: it reaches storage through its port;
- the Bot API stand-in (``bot.sandbox``) imports nothing of the bot it stands in for;
- no module is longer than about 400 lines (common practice for keeping a module one concept).
"""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
MAX_LINES = 420


def _loaded_after_importing(*modules: str) -> list[str]:
    code = (
        "import importlib, json, sys\n"
        f"for name in {list(modules)!r}: importlib.import_module(name)\n"
        "print(json.dumps(sorted(sys.modules)))\n"
    )
    done = subprocess.run(
        [sys.executable, "-c", code], capture_output=True, text=True, cwd=ROOT, check=True
    )
    loaded: list[str] = json.loads(done.stdout)
    return loaded


def _package_modules(package: str) -> list[str]:
    folder = ROOT / package.replace(".", "/")
    return [
        f"{package}.{path.stem}" if path.stem != "__init__" else package
        for path in sorted(folder.glob("*.py"))
        if path.stem != "__main__"
    ]


def test_solver_never_imports_the_bot() -> None:
    loaded = _loaded_after_importing(*_package_modules("solver"))
    assert [m for m in loaded if m == "bot" or m.startswith("bot.")] == []


def test_the_engine_imports_no_telegram_no_driver_and_no_adapter() -> None:
    loaded = _loaded_after_importing(*_package_modules("bot.rounds"))
    forbidden = ("telegram", "aiosqlite", "asyncpg", "bot.adapter", "bot.storage", "bot.demo")
    found = [m for m in loaded if any(m == f or m.startswith(f + ".") for f in forbidden)]
    assert found == []


def test_the_stand_in_imports_nothing_of_the_bot() -> None:
    loaded = _loaded_after_importing(*_package_modules("bot.sandbox"))
    found = [m for m in loaded if m.startswith("bot.") and not m.startswith("bot.sandbox")]
    assert found == []


@pytest.mark.parametrize("package", ["bot"])
def test_no_module_is_longer_than_about_400_lines(package: str) -> None:
    long = {
        str(path.relative_to(ROOT)): n
        for path in (ROOT / package).rglob("*.py")
        if (n := len(path.read_text(encoding="utf-8").splitlines())) > MAX_LINES
    }
    assert long == {}

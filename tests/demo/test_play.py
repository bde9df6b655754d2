"""``--play`` driven through a pipe: the test answers for one flatmate with its own fixed rule.

The rule (always the cheapest room on offer, then agree) is the test's, not the demo's; the
prices are read from the prompt the demo printed. Outside reference: the stand-in checks the
bot's calls against the Telegram Bot API spec, and the demo exits non-zero on any violation.
"""

from __future__ import annotations

import re
import subprocess
import sys
from decimal import Decimal
from pathlib import Path

PRICE_LINE = re.compile(
    r"^\s+(?P<n>\d+)\) .+?: €(?P<amount>[\d,]+\.\d\d)(?P<off> \(not on offer\))?$"
)


def test_play_by_pipe_reaches_agreement(tmp_path: Path) -> None:
    demo = subprocess.Popen(
        [
            sys.executable,
            "-m",
            "bot.demo",
            "--rooms",
            "3",
            "--play",
            "Tomasz",
            "--out",
            str(tmp_path),
        ],
        stdin=subprocess.PIPE,
        stdout=subprocess.PIPE,
        text=True,
        bufsize=1,
    )
    assert demo.stdin is not None and demo.stdout is not None
    offered: list[tuple[Decimal, int]] = []
    output, questions, proposals = [], 0, 0
    for line in demo.stdout:
        output.append(line)
        match = PRICE_LINE.match(line)
        if match and not match.group("off"):
            offered.append((Decimal(match.group("amount").replace(",", "")), int(match.group("n"))))
        if line.startswith("Type a room number"):
            demo.stdin.write(f"{min(offered)[1]}\n")
            demo.stdin.flush()
            offered, questions = [], questions + 1
        if "Type 'a' to agree" in line:
            demo.stdin.write("a\n")
            demo.stdin.flush()
            proposals += 1
    assert demo.wait(timeout=60) == 0, "".join(output)
    text = "".join(output)
    assert questions >= 2 and proposals == 1
    assert "the division (agreed by everyone)" in text
    assert "Tomasz (you)" in text
    assert (tmp_path / "walk.png").is_file()


def test_play_stops_cleanly_when_input_ends(tmp_path: Path) -> None:
    done = subprocess.run(
        [
            sys.executable,
            "-m",
            "bot.demo",
            "--rooms",
            "2",
            "--play",
            "Ines",
            "--out",
            str(tmp_path),
        ],
        input="",
        capture_output=True,
        text=True,
        timeout=60,
    )
    assert done.returncode == 3, done.stdout + done.stderr
    assert "standard input ended" in done.stdout

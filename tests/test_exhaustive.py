"""Commands and replies are closed unions: every handler of one ends in ``assert_never``, so
``mypy --strict`` names each place a new command or reply must be handled."""

from __future__ import annotations

import re
import subprocess
import sys
from pathlib import Path

from helpers import package_copy

CONFIG = Path(__file__).parents[1] / "pyproject.toml"
MYPY = Path(sys.executable).with_name("mypy")


def _with_a_new_command(text: str) -> str:
    old = "Command = DiagnosePort | ShowHistory | ShowTree | ListSuspects | ShowModel | ShowHelp"
    assert old in text
    new_one = "@dataclass(frozen=True, slots=True)\nclass ShowNewThing:\n    pass\n\n\n"
    return text.replace(old, new_one + old + " | ShowNewThing")


def _with_a_new_reply(text: str) -> str:
    new_one = (
        "@dataclass(frozen=True, slots=True)\nclass NewThingReply:\n"
        '    visibility: Visibility = "channel"\n\n\n'
    )
    return text.replace("Reply = (\n", new_one + "Reply = (\n    NewThingReply\n    | ", 1)


def test_a_new_command_or_reply_fails_the_type_check_at_every_handler(tmp_path: Path) -> None:
    root = package_copy(
        tmp_path,
        {"bot/commands.py": _with_a_new_command, "render/replies.py": _with_a_new_reply},
    )
    done = subprocess.run(
        [str(MYPY), "--config-file", str(CONFIG), "--cache-dir", str(tmp_path / "cache"),
         "linktriage"],
        cwd=root, capture_output=True, text=True, check=False,
    )  # fmt: skip
    assert done.returncode == 1, done.stdout + done.stderr
    unhandled = re.findall(
        r"^linktriage/(\S+?):\d+: error: Argument 1 to \"assert_never\" has incompatible type "
        r"\"(\w+)\"",
        done.stdout,
        re.MULTILINE,
    )
    # Each handler once: answering a command and checking its names before an
    # acknowledgement (the bot), Slack's choice to answer after the acknowledgement, a
    # reply drawn as a Slack message and its thread, and a reply drawn as text.
    assert sorted(unhandled) == [
        ("bot/triage.py", "ShowNewThing"),
        ("bot/triage.py", "ShowNewThing"),
        ("render/blocks.py", "NewThingReply"),
        ("render/blocks.py", "NewThingReply"),
        ("render/text.py", "NewThingReply"),
        ("transports/slack.py", "ShowNewThing"),
    ], done.stdout
    assert f"Found {len(unhandled)} errors" in done.stdout  # and nothing else breaks

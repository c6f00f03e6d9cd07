"""README and help stay true to the code."""

from __future__ import annotations

import re
from pathlib import Path

import pytest
from click.testing import CliRunner

from linktriage.bot.commands import FORMS
from linktriage.cli import main
from linktriage.engine.verdicts import VERDICTS

ROOT = Path(__file__).resolve().parent.parent
README = (ROOT / "README.md").read_text(encoding="utf-8")


def test_readme_opens_with_the_job_then_the_two_set_up_commands() -> None:
    paragraphs = README.split("\n\n")
    assert paragraphs[0].startswith("# linktriage")
    assert "on-call network engineer" in paragraphs[1]
    assert "make demo" in paragraphs[2] and "make test" in paragraphs[2]


@pytest.mark.parametrize("command", sorted(main.commands))
def test_every_command_and_its_options_are_in_the_readme(command: str) -> None:
    assert f"linktriage {command}" in README
    cmd = main.commands[command]
    for param in cmd.params:
        for opt in getattr(param, "opts", []):
            if opt.startswith("--") and opt != "--help":
                # The command's usage: from its first mention to the end of that paragraph.
                usage = re.search(rf"linktriage {command}.*?(\n\n|$)", README, re.DOTALL)
                assert usage is not None and opt in usage.group(0), (command, opt)


def test_the_readmes_table_of_chat_commands_is_the_bots() -> None:
    # bot/commands.py FORMS is the one list of commands: parsing, help and usage use it.
    section = README.split("## In the team channel", 1)[1]
    rows = re.findall(r"^\| `/triage ([^`]+)` \| (.+) \|$", section, re.MULTILINE)
    assert rows == [(form.form, form.does) for form in FORMS]


def test_every_verdict_is_in_the_readme() -> None:
    for verdict in VERDICTS:
        assert f"`{verdict}`" in README


def test_the_readme_ask_example_is_what_ask_prints() -> None:
    block = README.split("$ linktriage ask lark-east-idf2 port14\n", 1)[1].split("  ...")[0]
    out = CliRunner().invoke(main, ["ask", "lark-east-idf2", "port14"]).stdout
    assert out.startswith(block)


def test_the_readme_diagnose_example_is_what_diagnose_prints() -> None:
    block = README.split("```\n$ linktriage diagnose ", 1)[1].split("```", 1)[0]
    command, *shown = block.splitlines()
    result = CliRunner().invoke(main, ["diagnose", *command.split()])
    assert result.exit_code == 0
    # Every line shown is printed ("..." stands for lines left out), those of each stream
    # (the table on standard output, what was skipped on standard error) in their order.
    shown = [line for line in shown if line != "..."]
    assert set(shown) <= set(result.stdout.splitlines()) | set(result.stderr.splitlines())
    for stream in (result.stdout, result.stderr):
        printed = stream.splitlines()
        assert [line for line in shown if line in printed] == [
            line for line in printed if line in shown
        ]

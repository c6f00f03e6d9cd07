"""`linktriage suspects`: the list /triage suspects gives in chat, on the command line, with
the exit codes of every command that reads devices (0 all read, 3 some, 4 none)."""

from __future__ import annotations

import json
import re
from pathlib import Path

import pytest
from click.testing import CliRunner

from linktriage.cli import READ_ALL, READ_NONE, READ_SOME, main

import plugins
from helpers import polled_for_an_hour


def run(*args: str, text: str | None = None) -> tuple[int, str, str]:
    result = CliRunner().invoke(main, list(args), input=text)
    return result.exit_code, result.stdout, result.stderr


def listed(text: str) -> list[str]:
    """The list's links as ranked: "rank. device port: title (verdict)", each reading's
    counts left out (they grow with the moment the port is read)."""
    return [found[1] for found in re.finditer(r"^\s*(\d+\. \S+ \S+: [^,\n]+)", text, re.MULTILINE)]


def test_suspects_lists_what_suspects_lists_in_chat(tmp_path: Path) -> None:
    config = polled_for_an_hour(tmp_path)
    code, out, _ = run("suspects", "--config", str(config))
    assert code == READ_ALL == 0
    _, chat, _ = run("chat", "--config", str(config), text="suspects\n")
    # The same definition of a suspect link and the same counts (render/words
    # coverage_words), the same links in the same order. (Why a port was not judged may
    # differ: the demo's self-service terminal clears its counters at every poll, and the
    # list in chat reads the poll the command line's list added.)
    head = "15 suspect links among 91 ports judged; 4 ports not judged ("
    assert out.splitlines()[1].startswith(head)
    assert any(line.startswith(head) for line in chat.splitlines())
    assert listed(out) == listed(chat) and len(listed(out)) == 15
    assert listed(out)[0] == "1. lark-east-idf2 port14: cable or connector fault (cable_fault)"


def test_suspects_of_a_site_or_of_devices_lists_only_theirs(tmp_path: Path) -> None:
    config = polled_for_an_hour(tmp_path)
    code, out, _ = run("suspects", "annex", "--config", str(config))
    assert code == 0
    assert out.startswith("Suspect links at annex, ")
    assert all(" lark-annex-" in line for line in listed(out))
    code, out, _ = run("suspects", "east", "--config", str(config))  # a part of device names
    assert code == 0
    assert out.startswith("Suspect links on lark-east-idf1 and lark-east-idf2, ")
    assert {line.split()[1] for line in listed(out)} == {"lark-east-idf1", "lark-east-idf2"}


def test_suspects_of_a_site_that_is_not_one_says_which_there_are(tmp_path: Path) -> None:
    config = polled_for_an_hour(tmp_path)
    code, out, err = run("suspects", "mars", "--config", str(config))
    assert (code, out) == (1, "")  # a linktriage error: nothing read, nothing listed
    assert "mars" in err and "annex" in err and "central" in err
    assert "Traceback" not in err


def test_suspects_json_is_one_object_with_what_was_read_and_each_diagnosis(
    tmp_path: Path,
) -> None:
    config = polled_for_an_hour(tmp_path)
    code, out, _ = run("suspects", "central", "--json", "--config", str(config))
    assert code == 0
    (line,) = out.splitlines()
    found = json.loads(line)
    assert found["kind"] == "suspects" and found["failed"] == {}
    assert found["coverage"].startswith(f"{len(found['suspects'])} suspect links among ")
    assert found["since"] is None and found["cleared"] == []  # a digest's alone
    first = found["suspects"][0]
    assert (first["rank"], first["new"]) == (1, False)
    # Each suspect carries its diagnosis as a line of `diagnose --json` writes it.
    diagnosis = first["diagnosis"]
    assert (diagnosis["device"], diagnosis["port"]) == ("lark-east-idf2", "port14")
    assert diagnosis["verdict"] == "cable_fault" and diagnosis["next_checks"]
    assert first["reason"] == diagnosis["evidence"][0]["said"]


def test_suspects_where_nothing_answers_names_every_device_and_clears_nothing(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    plugins.install(tmp_path / "site", monkeypatch)
    inventory = plugins.dead_inventory(tmp_path, ["lark-dead1", "lark-dead2"], with_demo=False)
    code, out, _ = run("suspects", "--inventory", str(inventory))
    assert code == READ_NONE == 4
    assert "Nothing was read" in out
    for name in ("lark-dead1", "lark-dead2"):
        assert f"{name}: could not list its ports: no answer within" in out
    assert "No suspects" not in out and "Nothing suspect" not in out


def test_suspects_where_some_devices_answer_says_what_was_not_read(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    plugins.install(tmp_path / "site", monkeypatch)
    inventory = plugins.dead_inventory(tmp_path, ["lark-dead1"], with_demo=True)
    settings = tmp_path / "config.toml"
    settings.write_text("[chat]\nquick_window_s = 1\n")
    code, out, _ = run(
        "suspects", "--json", "--inventory", str(inventory), "--config", str(settings)
    )
    assert code == READ_SOME == 3
    found = json.loads(out)
    assert found["failed"]["lark-dead1"].startswith("could not list its ports: no answer")
    assert "1 device not read (lark-dead1: could not list its ports" in found["coverage"]
    assert found["ports_judged"] > 0
    assert {s["diagnosis"]["device"] for s in found["suspects"]} <= {"lark-annex-sw1"}


def test_sweep_is_refused_with_its_new_name() -> None:
    code, _, err = run("sweep", "--json")
    assert code == 2  # a wrong command line
    assert "`linktriage sweep` is now `linktriage suspects [SITE]`" in err

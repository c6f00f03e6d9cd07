"""The deploy files stay true to the code: scopes, command, events, settings, inventory,
unit."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from linktriage.bot.commands import COMMAND, FORMS
from linktriage.network.inventory import load_inventory, problems
from linktriage.settings import load_settings

DEPLOY = Path(__file__).resolve().parent.parent / "deploy"


def test_the_manifest_declares_what_the_bot_uses() -> None:
    manifest = json.loads((DEPLOY / "slack-app-manifest.json").read_text())
    (command,) = manifest["features"]["slash_commands"]
    assert command["command"] == COMMAND
    assert command["usage_hint"] == " | ".join(form.form for form in FORMS)
    scopes = set(manifest["oauth_config"]["scopes"]["bot"])
    # slash command, posting, mentions, uploading pictures, reading thread replies,
    # checking user groups (Slack scopes)
    assert scopes == {
        "commands",
        "chat:write",
        "app_mentions:read",
        "files:write",
        "channels:history",
        "groups:history",
        "usergroups:read",
    }
    settings = manifest["settings"]
    assert set(settings["event_subscriptions"]["bot_events"]) == {
        "app_mention",
        "message.channels",
        "message.groups",
    }
    assert settings["interactivity"]["is_enabled"] is True
    assert settings["socket_mode_enabled"] is True
    assert len(manifest["display_information"]["name"]) <= 35
    assert 174 <= len(manifest["display_information"]["long_description"]) <= 4000


def test_the_example_config_is_valid_settings() -> None:
    settings = load_settings(DEPLOY / "config.example.toml")
    assert settings.schedule.timezone == "Europe/Oslo"
    assert settings.slack.channel == "C0123456789"


def test_the_service_unit_runs_serve_with_tokens_from_a_file() -> None:
    unit = (DEPLOY / "linktriage.service").read_text()
    assert (
        "ExecStart=/opt/linktriage/bin/linktriage serve --config /etc/linktriage/config.toml"
        in unit
    )
    assert "EnvironmentFile=/etc/linktriage/env" in unit
    assert "xoxb-" not in unit.split("[Unit]")[1]  # no token in the unit itself


def test_the_example_inventory_builds_every_collector_and_names_unset_credentials(
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    inventory = load_inventory(DEPLOY / "inventory.example.toml")
    assert {d.collector for d in inventory.devices} == {"snmp", "restconf", "prometheus", "linux"}
    for name in ("LARK_SNMP_AUTH", "LARK_SNMP_PRIV", "LARK_RESTCONF_PASSWORD"):
        monkeypatch.setenv(name, "from-the-environment")
    # Every entry's options are valid; only the community file is absent on this machine.
    assert list(problems(inventory)) == ["lark-annex-sw1"]
    assert "/etc/linktriage/secrets/snmp-community" in problems(inventory)["lark-annex-sw1"]
    monkeypatch.delenv("LARK_SNMP_PRIV")
    assert "LARK_SNMP_PRIV" in problems(inventory)["lark-east-idf2"]

"""Settings: one TOML file plus environment overrides, read once at start and passed down.

Where the file is: ``--config FILE``, else ``$LINKTRIAGE_CONFIG``, else ``config.toml`` in the
data directory if it exists; with none, the defaults run the embedded demo. Any setting
can be overridden from the environment as ``LINKTRIAGE_<SECTION>__<KEY>`` (e.g.
``LINKTRIAGE_SCHEDULE__POLL_MINUTES=10``). Slack's tokens come only from the environment,
under the names Slack's own tools use, and are held as secrets that never print:
``SLACK_BOT_TOKEN``, ``SLACK_APP_TOKEN``, ``SLACK_SIGNING_SECRET``; the Web API base URL may
be pointed elsewhere (a local emulator) with ``LINKTRIAGE_SLACK_API_URL``.
"""

from __future__ import annotations

import os
import re
from pathlib import Path
from typing import Any, Literal
from zoneinfo import ZoneInfo, ZoneInfoNotFoundError

from pydantic import (
    BaseModel,
    ConfigDict,
    Field,
    SecretStr,
    ValidationError,
    field_validator,
    model_validator,
)
from pydantic_settings import (
    BaseSettings,
    PydanticBaseSettingsSource,
    SettingsConfigDict,
    TomlConfigSettingsSource,
)

from linktriage import invalid
from linktriage.errors import ConfigError
from linktriage.paths import data_dir

CONFIG_ENV = "LINKTRIAGE_CONFIG"
DEFAULT_SLACK_API = "https://slack.com/api/"
_DAYS = ("mon", "tue", "wed", "thu", "fri", "sat", "sun")


class _Section(BaseModel):
    model_config = ConfigDict(extra="forbid", frozen=True)


class SlackSettings(_Section):
    """How the bot meets Slack (tokens are read from the environment, not from here)."""

    mode: Literal["socket", "http"] = "socket"
    channel: str | None = Field(default=None, description="channel ID digests are posted to")
    http_port: int = Field(default=3000, ge=1, le=65535)
    http_host: str = Field(
        default="127.0.0.1", description="address HTTP mode listens on; a TLS proxy goes in front"
    )
    api_url: str = DEFAULT_SLACK_API
    give_up_after_min: float = Field(
        default=30.0,
        gt=0,
        description="a message Slack keeps refusing (rate limits, outages) is dropped after "
        "this long, and whoever asked is told (minutes)",
    )


class StoreSettings(_Section):
    """Where polls, diagnoses, labels and the audit log are kept."""

    url: str | None = Field(default=None, description="SQLAlchemy URL; default: SQLite file")
    keep_polls_h: float = Field(
        default=72.0,
        ge=2.0,
        description="polls older than this are forgotten by the poll job (hours)",
    )
    keep_answers_days: float = Field(
        default=180.0,
        ge=1.0,
        description="answers, lists of suspects, the audit log and sent messages older than "
        "this are forgotten (days); a labelled answer is kept with its label",
    )

    def resolved_url(self) -> str:
        return self.url or f"sqlite:///{data_dir() / 'linktriage.sqlite'}"


class ChatSettings(_Section):
    """How a chat request for one port is answered."""

    quick_window_s: float = Field(
        default=30.0, gt=0, le=600, description="two polls this far apart when none is recent"
    )
    recent_poll_s: float = Field(
        default=900.0, gt=0, description="a stored poll younger than this starts the window"
    )


class ScheduleSettings(_Section):
    """The poll job and the digest job."""

    poll_minutes: float = Field(default=5.0, gt=0)
    digest_days: str = "mon-fri"
    digest_time: str = "07:30"
    timezone: str = "UTC"

    @field_validator("digest_days")
    @classmethod
    def _days(cls, value: str) -> str:
        parts = [p.strip() for p in value.lower().split(",")]
        for part in parts:
            for day in part.split("-"):
                if day not in _DAYS:
                    raise ValueError(f"unknown day {day!r}; use mon..sun, ranges and commas")
        return ",".join(parts)

    @field_validator("digest_time")
    @classmethod
    def _time(cls, value: str) -> str:
        match = re.fullmatch(r"([01]?\d|2[0-3]):([0-5]\d)", value.strip())
        if match is None:
            raise ValueError("use HH:MM on a 24-hour clock, e.g. 07:30")
        return f"{int(match[1]):02d}:{match[2]}"

    @field_validator("timezone")
    @classmethod
    def _zone(cls, value: str) -> str:
        try:
            ZoneInfo(value)
        except (ZoneInfoNotFoundError, ValueError) as exc:
            raise ValueError(
                f"unknown time zone {value!r} (an IANA name, e.g. Europe/Oslo)"
            ) from exc
        return value

    @property
    def zone(self) -> ZoneInfo:
        return ZoneInfo(self.timezone)


class LabelSettings(_Section):
    """Who may label verdicts; empty lists mean anyone, anywhere the bot is."""

    channels: list[str] = Field(default_factory=list, description="channel IDs")
    user_groups: list[str] = Field(default_factory=list, description="user group IDs")


class NetworkSettings(_Section):
    """Which network the bot watches: the built-in demo, or the devices of an inventory."""

    source: Literal["demo", "inventory"] = "demo"
    inventory: Path | None = Field(default=None, description="inventory TOML file")

    @model_validator(mode="after")
    def _inventory_named(self) -> NetworkSettings:
        if self.source == "inventory" and self.inventory is None:
            raise ValueError('source = "inventory" needs inventory = "/path/to/inventory.toml"')
        return self


class Settings(BaseSettings):
    """Everything linktriage is told at start."""

    model_config = SettingsConfigDict(
        env_prefix="LINKTRIAGE_",
        env_nested_delimiter="__",
        extra="forbid",
        frozen=True,
        populate_by_name=True,
    )

    slack: SlackSettings = SlackSettings()
    store: StoreSettings = StoreSettings()
    chat: ChatSettings = ChatSettings()
    schedule: ScheduleSettings = ScheduleSettings()
    labels: LabelSettings = LabelSettings()
    network: NetworkSettings = NetworkSettings()
    slack_bot_token: SecretStr | None = Field(default=None, validation_alias="SLACK_BOT_TOKEN")
    slack_app_token: SecretStr | None = Field(default=None, validation_alias="SLACK_APP_TOKEN")
    slack_signing_secret: SecretStr | None = Field(
        default=None, validation_alias="SLACK_SIGNING_SECRET"
    )
    slack_api_url_override: str | None = Field(
        default=None, validation_alias="LINKTRIAGE_SLACK_API_URL"
    )

    @property
    def slack_api_url(self) -> str:
        url = self.slack_api_url_override or self.slack.api_url
        return url if url.endswith("/") else url + "/"

    @classmethod
    def settings_customise_sources(
        cls,
        settings_cls: type[BaseSettings],
        init_settings: PydanticBaseSettingsSource,
        env_settings: PydanticBaseSettingsSource,
        dotenv_settings: PydanticBaseSettingsSource,
        file_secret_settings: PydanticBaseSettingsSource,
    ) -> tuple[PydanticBaseSettingsSource, ...]:
        # The environment wins over the file; no .env files are read.
        return (init_settings, env_settings, TomlConfigSettingsSource(settings_cls))


def config_path(explicit: str | Path | None) -> Path | None:
    """The config file to read, or None to run on defaults."""
    if explicit is not None:
        return Path(explicit)
    from_env = os.environ.get(CONFIG_ENV)
    if from_env:
        return Path(from_env)
    default = data_dir() / "config.toml"
    return default if default.exists() else None


def load_settings(path: str | Path | None = None) -> Settings:
    """Read and validate the settings; every problem is reported at once."""
    source = config_path(path)
    if source is not None and not source.is_file():
        raise ConfigError(f"No config file at {source}.", hint="Give the path of a TOML file.")
    toml_file: Any = source if source is not None else ()

    class FromFile(Settings):
        model_config = SettingsConfigDict(toml_file=toml_file)

    try:
        return FromFile()
    except ValidationError as exc:
        where = source or "the environment"
        raise ConfigError(f"Bad settings in {where}: {'; '.join(invalid.problems(exc))}") from exc
    except ValueError as exc:  # the TOML itself does not parse
        raise ConfigError(f"{source} is {invalid.not_toml(exc)}") from exc

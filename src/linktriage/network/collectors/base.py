"""The collector interface: how linktriage reads one device, whatever it speaks.

A collector is built from one inventory entry (its address and its options, credentials
only by reference) and answers two questions, asynchronously: which ports the device
has, and what their counters read now, as snapshots of the format. A counter the device
does not report is left out of the snapshot, never given as 0. A :class:`HistoryCollector`
also answers for a past window, from a source that keeps history.

Errors a collector raises (all :class:`CollectorError`, a :class:`PollError` naming the
device): :class:`DeviceTimeoutError` when it does not answer in time, :class:`DeviceRefusedError`
when it refuses the credentials, :class:`BadAnswerError` when what it says cannot be read.
A port whose answer is malformed is reported in :attr:`Reading.problems` while the
device's other ports still answer.

Collectors are found by name through the ``linktriage.collectors`` entry-point group, so
a third party ships one as a package of its own; the built-in ones register the same way.
"""

from __future__ import annotations

import asyncio
import os
import random
from abc import ABC, abstractmethod
from collections.abc import Awaitable, Callable, Sequence
from dataclasses import dataclass, field
from importlib.metadata import entry_points
from pathlib import Path
from typing import Any, ClassVar, Generic, TypeVar, cast, get_args, get_origin

from pydantic import BaseModel, ConfigDict, ValidationError, model_validator

from linktriage import invalid
from linktriage.engine.format.snapshot import Snapshot
from linktriage.errors import (
    CollectorError,
    DeviceSetupError,
    DeviceTimeoutError,
    InputError,
    UnknownCollectorError,
)

ENTRY_POINTS = "linktriage.collectors"
T = TypeVar("T")


class TransientError(Exception):
    """Raised inside an attempt for a failure worth retrying (an agent busy or failing)."""


class SecretRef(BaseModel):
    """A credential given by reference: an environment variable or a file, never inline."""

    model_config = ConfigDict(extra="forbid", frozen=True)

    env: str | None = None
    file: Path | None = None

    @model_validator(mode="before")
    @classmethod
    def _reference_only(cls, value: Any) -> Any:
        if isinstance(value, str):
            raise ValueError(
                'credentials are given by reference only: { env = "NAME" } or '
                '{ file = "/path" }, never inline'
            )
        return value

    @model_validator(mode="after")
    def _exactly_one(self) -> SecretRef:
        if (self.env is None) == (self.file is None):
            raise ValueError("give exactly one of env or file")
        return self

    def reveal(self) -> str:
        """The secret's value, read at the moment it is needed."""
        if self.env is not None:
            value = os.environ.get(self.env)
            if value is None:
                raise InputError(f"The environment variable {self.env} is not set.")
            return value
        assert self.file is not None
        try:
            return self.file.read_text(encoding="utf-8").strip()
        except OSError as exc:
            raise InputError(f"Cannot read the secret file {self.file}: {exc.strerror}") from exc

    def describe(self) -> str:
        return f"${self.env}" if self.env is not None else str(self.file)


class Options(BaseModel):
    """A collector's options from the inventory; each collector declares its own."""

    model_config = ConfigDict(extra="forbid", frozen=True)


@dataclass(frozen=True, slots=True)
class Target:
    """One device as the inventory describes it, as a collector receives it."""

    name: str
    address: str | None
    options: dict[str, Any] = field(default_factory=dict)
    timeout_s: float = 2.0
    retries: int = 2


@dataclass(frozen=True, slots=True)
class Reading:
    """What one read of a device gave: its ports' snapshots and per-port problems."""

    snapshots: list[Snapshot]
    problems: dict[str, str] = field(default_factory=dict)  # port -> what was wrong

    def only(self, ports: Sequence[str] | None) -> Reading:
        """The part of the reading about these ports (None: all of it)."""
        if ports is None:
            return self
        wanted = set(ports)
        return Reading(
            [s for s in self.snapshots if s.port in wanted],
            {port: why for port, why in self.problems.items() if port in wanted},
        )


OptionsT = TypeVar("OptionsT", bound=Options)


class Collector(ABC, Generic[OptionsT]):
    """Reads one device. A collector names its options model as its type parameter,
    ``class SnmpCollector(Collector[SnmpOptions])``: the target's options are validated
    with it, and ``self.options`` is typed by it."""

    options_model: ClassVar[type[Options]] = Options
    needs_address: ClassVar[bool] = True

    def __init_subclass__(cls, **kwargs: Any) -> None:
        super().__init_subclass__(**kwargs)
        for base in getattr(cls, "__orig_bases__", ()):
            origin = get_origin(base)
            if isinstance(origin, type) and issubclass(origin, Collector):
                (model,) = get_args(base)
                if isinstance(model, type) and issubclass(model, Options):
                    cls.options_model = model

    def __init__(self, target: Target) -> None:
        if self.needs_address and not target.address:
            raise DeviceSetupError(target.name, "this collector needs an address.")
        self.target = target
        try:
            # options_model is the type parameter, set by __init_subclass__
            self.options = cast(OptionsT, self.options_model.model_validate(target.options))
        except ValidationError as exc:
            said = "; ".join(f"options.{p}" for p in invalid.problems(exc))
            raise DeviceSetupError(target.name, f"bad collector options: {said}") from exc

    @abstractmethod
    async def ports(self) -> list[str]:
        """The device's port names (ifName, or what the protocol calls it)."""

    @abstractmethod
    async def read(self, ports: Sequence[str] | None = None) -> Reading:
        """The counters of some ports (default: all) read now."""

    async def close(self) -> None:
        """Release connections; called once the collector is no longer needed."""

    def error(self, kind: type[CollectorError], message: str) -> CollectorError:
        return kind(self.target.name, message)

    async def retrying(self, attempt: Callable[[], Awaitable[T]], what: str) -> T:
        """Run ``attempt`` with the device's timeout, retrying timeouts and transient
        failures (:class:`TransientError`) with backoff.

        Waits 0.1 s, 0.2 s, 0.4 s ... (with jitter) between tries; refusals and bad
        answers are not retried: asking again would not change them.
        """
        tries = self.target.retries + 1
        for n in range(tries):
            try:
                return await asyncio.wait_for(attempt(), timeout=self.target.timeout_s)
            except (TimeoutError, DeviceTimeoutError, TransientError) as exc:
                if n < tries - 1:
                    await asyncio.sleep(0.1 * 2**n * (1 + random.random() / 2))
                    continue
                if isinstance(exc, TransientError):
                    raise self.error(CollectorError, f"{exc} ({tries} tries)") from None
                raise self.error(
                    DeviceTimeoutError,
                    f"no answer to {what} within {self.target.timeout_s:g} s ({tries} tries)",
                ) from None
        raise AssertionError("unreachable")


class HistoryCollector(Collector[OptionsT]):
    """A collector whose source keeps history (a time-series database): asked about a
    past window it answers at once, where other collectors must be polled twice."""

    @abstractmethod
    async def history(self, ports: Sequence[str] | None, start: float, end: float) -> Reading:
        """Every snapshot the source holds from ``start`` to ``end`` (Unix seconds)."""


def collector_class(name: str) -> type[Collector[Any]]:
    """The collector registered under ``name`` (entry-point group ``linktriage.collectors``)."""
    found = {ep.name: ep for ep in entry_points(group=ENTRY_POINTS)}
    if name not in found:
        known = ", ".join(sorted(found)) or "none"
        raise UnknownCollectorError(
            f"No collector named {name!r}.", hint=f"Known collectors: {known}."
        )
    cls = found[name].load()
    if not (isinstance(cls, type) and issubclass(cls, Collector)):
        raise UnknownCollectorError(
            f"The entry point {name!r} is not a linktriage collector ({cls!r})."
        )
    return cls


def collector_names() -> list[str]:
    return sorted(ep.name for ep in entry_points(group=ENTRY_POINTS))

"""Every error linktriage raises on purpose, in one tree (tests/test_errors.py holds the
drawing to the classes).

::

    LinktriageError              anything linktriage raises on purpose
    ├── InputError               something a person supplied is wrong; safe to show as it is
    │   ├── SnapshotFileError        a snapshot file cannot be opened or decoded at all
    │   ├── UnknownPortError         a device or port name that is not known (close matches)
    │   ├── AmbiguousNameError       a short name that fits several devices (the candidates)
    │   ├── CommandError             chat text that is not a command (the hint: how to ask)
    │   ├── ConfigError              settings that cannot be used (every problem listed)
    │   ├── InventoryError           an inventory that cannot be used (what is wrong)
    │   │   └── DeviceSetupError         one device's entry cannot be read as set up (which, why)
    │   ├── UnknownCollectorError    no collector registered under that name (the ones that are)
    │   └── DigestTargetError        a place to send digests that cannot be used (a URL, a file)
    ├── PollError                a device could not be read; names the device
    │   └── CollectorError           ... as its collector found
    │       ├── DeviceTimeoutError       no answer within the timeout, after every retry
    │       ├── DeviceRefusedError       the request refused (credentials, permissions)
    │       └── BadAnswerError           an answer that cannot be read
    ├── NoHistoryError           no stored polls of a port make a window over the span asked for
    ├── ModelError               a model artefact is missing, malformed or of another format
    ├── VerdictDeclarationError  a verdict module misses a part or clashes with another
    └── StoreError               the store cannot be opened or written (which operation)

A malformed *line* of a snapshot file is not an exception: it is reported as a
:class:`linktriage.engine.format.snapshot.LineProblem` and skipped, so one bad line never stops a
file. Every error carries a message for people and an optional hint saying what to do next.
"""

from __future__ import annotations


class LinktriageError(Exception):
    """Root of linktriage's own errors; ``message`` and ``hint`` are fit to show a person."""

    def __init__(self, message: str, *, hint: str | None = None) -> None:
        super().__init__(message)
        self.message = message
        self.hint = hint

    def render(self) -> str:
        """The message and hint as one or two lines of plain text."""
        return self.message if self.hint is None else f"{self.message}\n{self.hint}"


class InputError(LinktriageError):
    """Something a person supplied (a file, a name, an option) cannot be used."""


class SnapshotFileError(InputError):
    """A snapshot file cannot be opened or decoded as UTF-8 text."""


class UnknownPortError(InputError):
    """A device or port name that is not known; ``suggestions`` holds the closest known names."""

    def __init__(self, message: str, *, suggestions: list[str]) -> None:
        hint = f"Did you mean: {', '.join(suggestions)}?" if suggestions else None
        super().__init__(message, hint=hint)
        self.suggestions = suggestions


class AmbiguousNameError(InputError):
    """A short name that fits several devices; ``candidates`` lists them."""

    def __init__(self, message: str, *, candidates: list[str]) -> None:
        super().__init__(message, hint=f"Which one: {', '.join(candidates)}?")
        self.candidates = candidates


class PollError(LinktriageError):
    """A device could not be read (timeout, refusal, garbage); ``device`` names it."""

    def __init__(self, device: str, message: str, *, hint: str | None = None) -> None:
        super().__init__(f"{device}: {message}", hint=hint)
        self.device = device
        self.reason = message


class NoHistoryError(LinktriageError):
    """No stored polls of a port make a window over the span asked for: nothing to judge,
    which is never to be read as healthy."""


class ModelError(LinktriageError):
    """A model artefact is missing, malformed, or written in a format this version cannot read."""


class CommandError(InputError):
    """The text is not a command the bot knows; the hint shows how to ask."""


class ConfigError(InputError):
    """The settings cannot be used; the message lists every problem found."""


class InventoryError(InputError):
    """The inventory cannot be used; the message lists what is wrong."""


class DeviceSetupError(InventoryError):
    """One device of the inventory cannot be read as it is set up (no address for a
    collector that needs one, options its collector does not take); ``problem`` says why
    without the device's name, for lines that name the device already."""

    def __init__(self, device: str, problem: str) -> None:
        super().__init__(f"{device}: {problem}")
        self.device = device
        self.problem = problem


class UnknownCollectorError(InputError, LookupError):
    """No collector is registered under that name; the hint lists the ones that are."""


class DigestTargetError(InputError):
    """A place the watch is told to send digests cannot be used: a URL it cannot post to, a
    file it cannot append to."""


class CollectorError(PollError):
    """A device could not be read, as its collector found."""


class DeviceTimeoutError(CollectorError):
    """The device did not answer within the timeout, after every retry."""


class DeviceRefusedError(CollectorError):
    """The device refused the request (credentials, permissions)."""


class BadAnswerError(CollectorError):
    """The device answered with something that cannot be read."""


class VerdictDeclarationError(LinktriageError):
    """A verdict module under ``engine/verdicts/`` that misses a part or clashes with another
    verdict: a developer's mistake, refused when the registry gathers the modules."""


class StoreError(LinktriageError):
    """The store cannot be opened or written; the message says which operation failed."""

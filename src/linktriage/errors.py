"""Errors linktriage raises, one root and a subtree per layer.

::

    LinktriageError          anything linktriage raises on purpose
    ├── InputError           something a person supplied is wrong; safe to show as it is
    │   ├── SnapshotFileError    a snapshot file cannot be opened or decoded at all
    │   ├── UnknownPortError     a device or port name that is not known (with close matches)
    │   └── AmbiguousNameError   a short name that fits several devices (with the candidates)
    ├── PollError            a device could not be read; names the device
    └── ModelError           a model artefact is missing, malformed or of another format

A malformed *line* of a snapshot file is not an exception: it is reported as a
:class:`linktriage.snapshot.LineProblem` and skipped, so one bad line never stops a file.
Every error carries a message for people and an optional hint saying what to do next.
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


class ModelError(LinktriageError):
    """A model artefact is missing, malformed, or written in a format this version cannot read."""

"""Every trained model kept, and which one answers: promote, roll back, list.

The registry is a folder of artefacts (``<version>.json``) under the data directory with
an index naming the current one and when each was trained. Nothing is ever deleted, so
any earlier model can be put back with ``linktriage model --use VERSION``.
"""

from __future__ import annotations

import os
import tempfile
from pathlib import Path
from typing import Any

from pydantic import BaseModel

from linktriage.engine.model.artefact import TreeArtefact
from linktriage.errors import ModelError
from linktriage.paths import data_dir


class Entry(BaseModel):
    """One kept model."""

    version: str
    trained_at: float
    labelled_rows: int
    evaluation: dict[str, Any] | None = None  # held-out label scores, when labels were used


class Index(BaseModel):
    current: str | None = None
    versions: list[Entry] = []


class Registry:
    """The models folder of one data directory."""

    def __init__(self, folder: Path | None = None) -> None:
        self.folder = folder or data_dir() / "models"

    @property
    def _index_path(self) -> Path:
        return self.folder / "index.json"

    def index(self) -> Index:
        if not self._index_path.exists():
            return Index()
        try:
            return Index.model_validate_json(self._index_path.read_text(encoding="utf-8"))
        except ValueError as exc:
            raise ModelError(f"The model index {self._index_path} is damaged: {exc}") from exc

    def _write_index(self, index: Index) -> None:
        self.folder.mkdir(parents=True, exist_ok=True)
        # Write then rename, so a crash never leaves half an index.
        fd, tmp = tempfile.mkstemp(dir=self.folder, suffix=".tmp")
        with os.fdopen(fd, "w", encoding="utf-8") as out:
            out.write(index.model_dump_json(indent=1))
        os.replace(tmp, self._index_path)

    def keep(self, artefact: TreeArtefact, entry: Entry, *, promote: bool) -> None:
        """Store an artefact (once per version) and, if asked, make it the current one."""
        self.folder.mkdir(parents=True, exist_ok=True)
        artefact.save(self.folder / f"{artefact.version}.json")
        index = self.index()
        versions = [e for e in index.versions if e.version != entry.version] + [entry]
        current = entry.version if promote else index.current
        self._write_index(Index(current=current, versions=versions))

    def use(self, version: str) -> Entry:
        """Make a kept version the current one (a rollback, or a roll forward)."""
        index = self.index()
        for entry in index.versions:
            if entry.version == version:
                self._write_index(Index(current=version, versions=index.versions))
                return entry
        known = ", ".join(e.version for e in index.versions) or "none yet"
        raise ModelError(f"No kept model {version!r}.", hint=f"Kept versions: {known}.")

    def current(self) -> tuple[TreeArtefact, Entry] | None:
        """The current model and its entry, or None when none was trained here."""
        index = self.index()
        if index.current is None:
            return None
        entry = next(e for e in index.versions if e.version == index.current)
        return TreeArtefact.load(self.folder / f"{entry.version}.json"), entry

    def versions(self) -> list[Entry]:
        """Every kept model, oldest first."""
        return self.index().versions

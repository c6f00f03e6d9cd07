"""Where linktriage keeps its files: one data directory, chosen once from the environment."""

from __future__ import annotations

import os
from pathlib import Path

#: Environment variable naming the data directory; it wins over the XDG default.
HOME_ENV = "LINKTRIAGE_HOME"


def data_dir() -> Path:
    """``$LINKTRIAGE_HOME``, else ``$XDG_DATA_HOME/linktriage``, else ~/.local/share/linktriage."""
    explicit = os.environ.get(HOME_ENV)
    if explicit:
        return Path(explicit)
    xdg = os.environ.get("XDG_DATA_HOME")
    base = Path(xdg) if xdg else Path.home() / ".local" / "share"
    return base / "linktriage"

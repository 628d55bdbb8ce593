"""What the window remembers between sessions: geometry, last folder, recent files.

Stored with QSettings under our own organisation and application names. Tests
pass their own settings object (an INI file in a temporary folder), so a test
run never touches the user's settings.
"""

from __future__ import annotations

from pathlib import Path

from PySide6.QtCore import QSettings

__all__ = ["ORGANISATION", "APPLICATION", "Memory", "MAX_RECENT"]

ORGANISATION = "ClusterDesk Developers"
APPLICATION = "ClusterDesk"
MAX_RECENT = 8


def _as_list(value) -> list:
    if value is None:
        return []
    if isinstance(value, str):
        return [value] if value else []
    return [str(v) for v in value]


class Memory:
    """Typed access to the window's settings.

    Parameters
    ----------
    settings : QSettings, optional
        Default: the user's settings for ClusterDesk.
    """

    def __init__(self, settings: QSettings | None = None):
        self.store = settings if settings is not None else QSettings(ORGANISATION, APPLICATION)

    def last_folder(self) -> str:
        """The folder of the last file opened or saved (the home folder at first)."""
        folder = str(self.store.value("files/last_folder", "") or "")
        return folder if folder and Path(folder).is_dir() else str(Path.home())

    def remember_folder(self, path) -> None:
        """Remember the folder of ``path`` (a file) or ``path`` itself (a folder)."""
        path = Path(path)
        folder = path if path.is_dir() else path.parent
        self.store.setValue("files/last_folder", str(folder))

    def recent_files(self) -> list[str]:
        """Recently opened files, newest first."""
        return _as_list(self.store.value("files/recent", []))

    def add_recent(self, path) -> list[str]:
        """Put ``path`` first in the recent files; returns the new list."""
        path = str(Path(path).resolve())
        recent = [p for p in self.recent_files() if p != path]
        recent = [path] + recent[: MAX_RECENT - 1]
        self.store.setValue("files/recent", recent)
        self.remember_folder(path)
        return recent

    def clear_recent(self) -> None:
        """Forget the recent files."""
        self.store.setValue("files/recent", [])

    def geometry(self):
        """Saved window geometry and state (QByteArray or None each)."""
        return self.store.value("window/geometry"), self.store.value("window/state")

    def save_geometry(self, geometry, state) -> None:
        """Remember the window geometry and state."""
        self.store.setValue("window/geometry", geometry)
        self.store.setValue("window/state", state)

    def splitters(self) -> dict:
        """Saved splitter positions by name."""
        return {key: self.store.value(f"splitters/{key}") for key in ("side", "right", "tables")}

    def save_splitters(self, states: dict) -> None:
        """Remember splitter positions."""
        for key, state in states.items():
            self.store.setValue(f"splitters/{key}", state)

    def sync(self) -> None:
        """Write to disk now."""
        self.store.sync()

"""Memory between sessions: recent files and the last roles and settings per workbook.

The folder is injected (``SettingsStore(folder)``), so tests never touch the user's profile;
``default_folder()`` is used only by ``desktop.app.main``. Plain JSON files, written atomically.
"""

from __future__ import annotations

__all__ = ["SettingsStore", "default_folder"]

import hashlib
import json
import os
from pathlib import Path
from typing import Any

_RECENT_MAX = 10


def default_folder() -> Path:
    """The ``desktop`` folder inside the configuration folder the command line also uses
    (``TAMIS_CONFIG_DIR`` if set, else the platform's per-user folder)."""
    from engine.context import default_context

    return default_context().config_dir / "desktop"


class SettingsStore:
    def __init__(self, folder: Path | str) -> None:
        self.folder = Path(folder)

    # recent files -------------------------------------------------------------------------
    def recent(self) -> list[str]:
        data = self._read(self.folder / "recent.json")
        items = data.get("files", []) if isinstance(data, dict) else []
        return [str(p) for p in items if isinstance(p, str)]

    def add_recent(self, path: Path | str) -> list[str]:
        p = str(Path(path).resolve())
        items = [p] + [q for q in self.recent() if q != p]
        self._write(self.folder / "recent.json", {"files": items[:_RECENT_MAX]})
        return items[:_RECENT_MAX]

    # per workbook -------------------------------------------------------------------------
    def book(self, path: Path | str) -> dict[str, Any]:
        """What was remembered for this workbook: sheet, header_row, roles, settings (or {})."""
        data = self._read(self._book_file(path))
        return data if isinstance(data, dict) else {}

    def remember_book(self, path: Path | str, **values: Any) -> None:
        data = self.book(path)
        data.update(values)
        data["path"] = str(Path(path).resolve())
        self._write(self._book_file(path), data)

    def _book_file(self, path: Path | str) -> Path:
        key = hashlib.sha1(str(Path(path).resolve()).encode("utf-8")).hexdigest()[:16]
        return self.folder / "books" / f"{key}.json"

    # plumbing -----------------------------------------------------------------------------
    @staticmethod
    def _read(file: Path) -> Any:
        try:
            return json.loads(file.read_text(encoding="utf-8"))
        except (OSError, ValueError):
            return {}

    @staticmethod
    def _write(file: Path, data: Any) -> None:
        # memory is a convenience: a read-only profile must never stop the user's work
        try:
            file.parent.mkdir(parents=True, exist_ok=True)
            tmp = file.with_suffix(".tmp")
            tmp.write_text(json.dumps(data, indent=1, sort_keys=True), encoding="utf-8")
            os.replace(tmp, file)
        except OSError:
            pass

"""Replace a file safely: temporary file, fsync, verify, backup, atomic rename, verify again.

The target is either the old file or the complete new one at every moment. Steps:

1. refuse early if the target (or its folder) is read-only or the file is open in a spreadsheet
   program (its lock file is present) - ``WriteProblem`` naming the file, nothing written;
2. build the new content into a temporary file in the same folder, flush and fsync it;
3. verify the temporary file (``verify`` callback: zip CRCs plus our own re-read);
4. refuse if the target changed on disk since it was read (size, mtime and SHA-256 compared
   with the fingerprint taken when it was read);
5. keep the previous version as a backup (a hard link when possible), ``os.replace`` the
   temporary file onto the target, fsync the folder;
6. verify the target; on failure put the backup back; then remove the backup.

``_checkpoint`` is called between steps; tests make it raise to simulate a crash there.
"""

from __future__ import annotations

__all__ = ["Fingerprint", "fingerprint", "check_writable", "commit"]

import hashlib
import os
import shutil
import stat
import tempfile
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path
from typing import BinaryIO

from engine.errors import InputProblem, Place, SourceChanged, WriteProblem

STEPS = ("written", "verified-temp", "backup", "replaced", "verified", "cleaned")


def _checkpoint(step: str) -> None:
    """A no-op marker between steps (tests replace it to simulate a crash)."""


@dataclass(frozen=True)
class Fingerprint:
    """What a file looked like when it was read."""

    size: int
    mtime_ns: int
    sha256: str

    def to_dict(self) -> dict[str, object]:
        return {"size": self.size, "mtime_ns": self.mtime_ns, "sha256": self.sha256}

    @classmethod
    def from_dict(cls, d: dict) -> Fingerprint:
        return cls(int(d["size"]), int(d["mtime_ns"]), str(d["sha256"]))


def fingerprint(path: str | Path) -> Fingerprint:
    path = Path(path)
    st = path.stat()
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for chunk in iter(lambda: fh.read(1 << 20), b""):
            h.update(chunk)
    return Fingerprint(st.st_size, st.st_mtime_ns, h.hexdigest())


def _lock_files(path: Path) -> list[Path]:
    # Excel keeps "~$name" beside an open file; LibreOffice ".~lock.name#"
    return [
        path.with_name("~$" + path.name[2:] if len(path.name) > 2 else "~$" + path.name),
        path.with_name("~$" + path.name),
        path.with_name(f".~lock.{path.name}#"),
    ]


def check_writable(path: str | Path) -> None:
    """Raise WriteProblem when ``path`` cannot be (re)written now."""
    path = Path(path)
    place = Place(file=str(path))
    folder = path.parent if str(path.parent) else Path(".")
    if not folder.is_dir():
        raise WriteProblem(f"cannot write '{path}': the folder '{folder}' does not exist", place)
    if path.exists():
        if path.is_dir():
            raise WriteProblem(f"cannot write '{path}': it is a folder", place)
        if not os.access(path, os.W_OK) or not path.stat().st_mode & 0o222:
            raise WriteProblem(
                f"cannot write '{path}': the file is read-only; make it writable or "
                "choose another output file",
                place,
            )
        for lock in _lock_files(path):
            if lock.exists():
                raise WriteProblem(
                    f"cannot write '{path}': it is open in a spreadsheet program "
                    f"(lock file '{lock.name}'); close it and try again",
                    place,
                )
    if not os.access(folder, os.W_OK):
        raise WriteProblem(f"cannot write '{path}': the folder '{folder}' is read-only", place)


def tamis_sheets(path: str | Path) -> list[str]:
    """Our sheets (names with the result prefix) in the workbook at ``path``; [] when it has
    none or is not a readable workbook: tells a file of ours from one of the user's."""
    from engine.report.names import PREFIX
    from engine.report.package_merge import read_sheet_list
    from engine.report.zip_parts import ZipSource

    try:
        with ZipSource(path) as src:
            return [s.name for s in read_sheet_list(src) if s.name.startswith(PREFIX)]
    except Exception:  # noqa: BLE001 - anything unreadable is not a workbook of ours
        return []


def refuse_to_replace_users_file(path: str | Path, option: str = "--out") -> None:
    """An output may replace an earlier output of Tamis, never another file (an input problem:
    the user chooses another name)."""
    path = Path(path)
    if path.is_file() and not tamis_sheets(path):
        raise InputProblem(
            f"'{path}' already exists and was not written by Tamis; choose another {option} "
            "(Tamis replaces only its own earlier outputs)",
            Place(file=str(path)),
        )


def _fsync_dir(folder: Path) -> None:
    if os.name != "posix":
        return
    fd = os.open(folder, os.O_RDONLY)
    try:
        os.fsync(fd)
    finally:
        os.close(fd)


def _backup_of(path: Path) -> Path:
    for i in range(1000):
        cand = path.with_name(f"{path.name}.tamis-backup" + (f"-{i}" if i else ""))
        if not cand.exists():
            return cand
    raise WriteProblem(
        f"too many old backups beside '{path}'; remove the *.tamis-backup files",
        Place(file=str(path)),
    )


def commit(
    target: str | Path,
    build: Callable[[BinaryIO], None],
    verify: Callable[[Path], None],
    expected: Fingerprint | None = None,
) -> Path:
    """Write ``target`` atomically from ``build``; see the module docstring for the steps."""
    target = Path(target)
    place = Place(file=str(target))
    check_writable(target)
    folder = target.parent if str(target.parent) else Path(".")
    try:
        fd, tmp_name = tempfile.mkstemp(prefix=f".{target.stem}.", suffix=".tamis-tmp", dir=folder)
    except OSError as exc:
        raise WriteProblem(
            f"cannot write in the folder of '{target}': {exc.strerror}", place
        ) from exc
    written = Path(tmp_name)
    tmp: Path | None = written  # None once the temporary file has become the target
    backup: Path | None = None
    replaced = False
    try:
        # mkstemp creates the file readable by its owner only; give the new file the mode the
        # replaced one had (or the usual mode for a new file) so colleagues keep their access
        os.chmod(tmp_name, _mode_for(target))
        with os.fdopen(fd, "wb") as fh:
            build(fh)
            fh.flush()
            os.fsync(fh.fileno())
        _checkpoint("written")
        verify(written)
        _checkpoint("verified-temp")
        if target.exists():
            if expected is not None and fingerprint(target) != expected:
                raise _changed(target)
            backup = _backup_of(target)
            try:
                os.link(target, backup)
            except OSError:
                shutil.copy2(target, backup)
            _checkpoint("backup")
        try:
            os.replace(written, target)
        except PermissionError as exc:
            raise WriteProblem(
                f"cannot replace '{target}': it is locked or read-only "
                "(is it open in another program?); nothing was changed",
                place,
            ) from exc
        tmp = None
        replaced = True
        _fsync_dir(folder)
        _checkpoint("replaced")
        try:
            verify(target)
        except Exception as exc:
            raise WriteProblem(
                f"the new '{target}' did not read back correctly; the previous version was kept",
                place,
            ) from exc
        _checkpoint("verified")
        if backup is not None:
            os.remove(backup)
            backup = None
        _checkpoint("cleaned")
        return target
    except OSError as exc:
        raise WriteProblem(
            f"cannot write '{target}': {exc.strerror or exc}; nothing was changed", place
        ) from exc
    finally:
        if tmp is not None and tmp.exists():
            tmp.unlink()
        if backup is not None and backup.exists():
            if replaced:
                os.replace(backup, target)  # put the previous version back
            else:
                backup.unlink()


def _mode_for(target: Path) -> int:
    try:
        return stat.S_IMODE(target.stat().st_mode)
    except OSError:
        umask = os.umask(0)
        os.umask(umask)
        return 0o666 & ~umask


def _changed(target: Path) -> WriteProblem:
    return SourceChanged(
        f"'{target}' changed on disk since it was read; nothing was written. Run the "
        "study again on the current file",
        Place(file=str(target)),
    )

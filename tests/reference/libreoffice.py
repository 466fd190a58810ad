"""Run LibreOffice Calc headless with a throw-away profile that recalculates on load.

LibreOffice keeps the cached formula results stored in an .xlsx file unless told otherwise; the
setting is org.openoffice.Office.Calc/Formula/Load, property OOXMLRecalcMode (0 = always
recalculate, 1 = never, 2 = ask). The tests write a profile whose registrymodifications.xcu sets
it to 0, and check that it works by planting a wrong cached value and seeing it corrected.
"""

from __future__ import annotations

import shutil
import subprocess
from pathlib import Path

REGISTRY = """<?xml version="1.0" encoding="UTF-8"?>
<oor:items xmlns:oor="http://openoffice.org/2001/registry" xmlns:xs="http://www.w3.org/2001/XMLSchema" xmlns:xsi="http://www.w3.org/2001/XMLSchema-instance">
<item oor:path="/org.openoffice.Office.Calc/Formula/Load"><prop oor:name="OOXMLRecalcMode" oor:op="fuse"><value>0</value></prop></item>
<item oor:path="/org.openoffice.Office.Calc/Formula/Load"><prop oor:name="ODFRecalcMode" oor:op="fuse"><value>0</value></prop></item>
</oor:items>
"""


def soffice() -> str | None:
    return shutil.which("soffice") or shutil.which("libreoffice")


def make_profile(folder: Path) -> str:
    user = folder / "lo-profile" / "user"
    user.mkdir(parents=True, exist_ok=True)
    (user / "registrymodifications.xcu").write_text(REGISTRY, encoding="utf-8")
    return (folder / "lo-profile").resolve().as_uri()


def convert(
    files: list[Path], fmt: str, outdir: Path, profile_uri: str, timeout: int = 180
) -> list[Path]:
    """Convert every file in one soffice call; returns the converted paths (same stems)."""
    outdir.mkdir(parents=True, exist_ok=True)
    cmd = [
        soffice(),
        f"-env:UserInstallation={profile_uri}",
        "--headless",
        "--norestore",
        "--convert-to",
        fmt,
        "--outdir",
        str(outdir),
        *[str(f) for f in files],
    ]
    proc = subprocess.run(cmd, capture_output=True, text=True, timeout=timeout)
    ext = fmt.split(":")[0]
    outs = [outdir / f"{Path(f).stem}.{ext}" for f in files]
    missing = [o for o in outs if not o.exists()]
    if missing:
        raise RuntimeError(f"LibreOffice did not write {missing}: {proc.stdout} {proc.stderr}")
    return outs

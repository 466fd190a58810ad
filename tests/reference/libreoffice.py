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

import openpyxl

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


def scoring_layout(ws) -> tuple[int, dict[str, int]]:
    """(header row, {heading: column}) of a scoring sheet, 1-based (the paste block first)."""
    for r in range(1, 80):
        row = [c.value for c in ws[r]]
        if any(isinstance(v, str) and v.startswith("Prediction of") for v in row):
            cols: dict[str, int] = {}
            for i, v in enumerate(row):
                if isinstance(v, str):
                    cols.setdefault(v, i + 1)
            return r, cols
    raise AssertionError("no header row on the scoring sheet")


def paste_after_examples(results: Path, headings: list[str], rows: list[tuple], dst: Path) -> Path:
    """A copy of ``results`` with ``rows`` typed under ``headings`` of the scoring sheet, just
    below its five example rows (openpyxl keeps the workbook's date system)."""
    wb = openpyxl.load_workbook(results)
    ws = wb["TM Scoring"]
    head, cols = scoring_layout(ws)
    for i, row in enumerate(rows):
        for heading, value in zip(headings, row):
            ws.cell(head + 6 + i, cols[heading]).value = value
    wb.save(dst)
    return dst

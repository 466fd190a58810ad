"""A user's workbook with many kinds of parts, generated with xlsxwriter for the in-place tests.

It holds a chart, an image, a table, data validation, conditional formatting, comments, workbook
and sheet-level defined names, a hidden sheet, sparklines (an x14 extension), frozen panes and,
for .xlsm, a macro part. The macro part is a stand-in of our own bytes (xlsxwriter stores the
file given to ``add_vba_project`` as xl/vbaProject.bin unchanged); the tests only check that its
bytes survive.
"""

from __future__ import annotations

import struct
import zlib
from pathlib import Path

import xlsxwriter
from study_fixture import HEADINGS, fill_sheet


def tiny_png() -> bytes:
    """A valid 4x4 red PNG (PNG specification, ISO/IEC 15948: signature, IHDR, IDAT, IEND)."""

    def chunk(kind: bytes, data: bytes) -> bytes:
        return (
            struct.pack(">I", len(data))
            + kind
            + data
            + struct.pack(">I", zlib.crc32(kind + data) & 0xFFFFFFFF)
        )

    raw = b"".join(b"\x00" + b"\xff\x00\x00" * 4 for _ in range(4))
    return (
        b"\x89PNG\r\n\x1a\n"
        + chunk(b"IHDR", struct.pack(">IIBBBBB", 4, 4, 8, 2, 0, 0, 0))
        + chunk(b"IDAT", zlib.compress(raw))
        + chunk(b"IEND", b"")
    )


MACRO_BYTES = b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1" + b"tamis test stand-in for a macro part" * 20


def write_rich(path: Path, rows: list[dict]) -> None:
    tmp = path.with_suffix(".parts")
    tmp.mkdir(exist_ok=True)
    png = tmp / "logo.png"
    png.write_bytes(tiny_png())
    wb = xlsxwriter.Workbook(str(path))
    if path.suffix == ".xlsm":
        vba = tmp / "vbaProject.bin"
        vba.write_bytes(MACRO_BYTES)
        wb.add_vba_project(str(vba))
    ws = wb.add_worksheet("Lots")
    bold = wb.add_format({"bold": True, "font_color": "#1F4E78"})
    fill_sheet(wb, ws, rows, HEADINGS, bold)
    n = len(rows)
    ws.freeze_panes(1, 1)
    ws.write_comment(1, 0, "first lot of the season")
    ws.data_validation(1, 4, n, 4, {"validate": "list", "source": ["washed", "natural", "honey"]})
    ws.conditional_format(
        1,
        8,
        n,
        8,
        {
            "type": "cell",
            "criteria": ">",
            "value": 85,
            "format": wb.add_format({"bg_color": "#C6EFCE"}),
        },
    )
    ws.insert_image(2, 11, str(png))
    chart = wb.add_chart({"type": "line"})
    chart.add_series({"name": "score", "values": ["Lots", 1, 8, n, 8]})
    ws.insert_chart(6, 11, chart)
    ws.write_string(0, 12, "spark")
    ws.add_sparkline(1, 12, {"range": "Lots!B2:I2"})
    wb.define_name("AllScores", f"=Lots!$I$2:$I${n + 1}")
    wb.define_name("Lots!LocalAltitude", f"=Lots!$B$2:$B${n + 1}")

    summary = wb.add_worksheet("Overview")
    summary.add_table(
        0,
        0,
        3,
        1,
        {
            "data": [["washed", 1], ["natural", 2], ["honey", 3]],
            "columns": [{"header": "process"}, {"header": "code"}],
        },
    )
    summary.write_formula(5, 0, "=SUM(B2:B4)", None, 6)
    wb.define_name("Overview!LocalCodes", "=Overview!$B$2:$B$4")
    hidden = wb.add_worksheet("Lookup")
    hidden.write_string(0, 0, "kept hidden")
    hidden.hide()
    wb.close()

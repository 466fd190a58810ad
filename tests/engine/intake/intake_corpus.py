"""Builders of ugly workbooks for the intake tests, generated inside the tests.

Each builder writes a file with a known layout and returns the facts a correct reader must
find, computed from the construction itself (not from Tamis). A plain helper module rather
than a conftest.py, because several test folders import helpers by module name.
"""

from __future__ import annotations

import datetime as dt
import struct
import zipfile
from pathlib import Path

import openpyxl

MESSY_ROWS = 24  # data rows in the messy sheet, blank rows not counted
MESSY_BLANK_AFTER = 10  # one blank row after this many data rows


def write_messy_book(path: Path) -> dict:
    """A bakery-style sheet: title and notes above the headings, blank rows, numbers as text,
    error cells, a duplicated heading, a constant, a copied column, dates, flags, categories,
    identifiers and an empty column; a hidden sheet before it."""
    wb = openpyxl.Workbook()
    hidden = wb.active
    hidden.title = "Lookup"
    hidden["A1"] = "code"
    hidden["A2"] = "internal"
    hidden.sheet_state = "hidden"
    ws = wb.create_sheet("Demand")
    ws["A1"] = "Weekly demand, neighbourhood bakeries"
    ws["A2"] = "Notes: prices in EUR; demand in loaves"
    headings = [
        "week",
        "store",
        "price",
        "demand",
        "promo",
        "holiday",
        "lot code",
        "comment",
        "oven temp",
        "oven temp",
        "price again",
        "price cents",
        "region",
    ]
    for j, h in enumerate(headings):
        ws.cell(row=4, column=j + 1, value=h)
    stores = ["North", "South", "East"]
    expected_rows = []
    sheet_row = 5
    price_texts = {}
    demand_bad = {}
    demand_err = {}
    for i in range(MESSY_ROWS):
        if i == MESSY_BLANK_AFTER:
            sheet_row += 1  # leave one row blank
        r = sheet_row
        price = 1.5 + 0.25 * (i % 7) + 0.01 * i
        ws.cell(r, 1, dt.datetime(2023, 1, 2) + dt.timedelta(days=7 * i))
        ws.cell(r, 2, stores[i % 3])
        if i % 5 == 1:  # price stored as text, with a thousands separator on one of them
            text = f"{price:,.2f}" if i != 6 else f"1,{price:.2f}".replace("1,", "1,00")
            price = float(text.replace(",", ""))
            ws.cell(r, 3, text)
            price_texts[f"C{r}"] = text
        else:
            price = round(price, 2)
            ws.cell(r, 3, price)
        if i == 3:
            ws.cell(r, 4, "n/a")
            demand_bad[f"D{r}"] = "n/a"
        elif i in (8, 17):
            ws.cell(r, 4, "#DIV/0!" if i == 8 else "#N/A")  # openpyxl writes these as error cells
            demand_err[f"D{r}"] = True
        else:
            ws.cell(r, 4, 100 + 3 * i)
        ws.cell(r, 5, "yes" if i % 2 else "no")
        ws.cell(r, 6, i % 4 == 0)
        ws.cell(r, 7, f"LOT-{1000 + i}")
        # column H "comment" left empty
        ws.cell(r, 9, 180)
        ws.cell(r, 10, 170 + i)
        ws.cell(r, 11, price)
        ws.cell(r, 12, price * 100)
        ws.cell(r, 13, "coast" if i % 2 else "inland")
        expected_rows.append(r)
        sheet_row += 1
    wb.save(path)
    return {
        "sheet": "Demand",
        "header_row": 4,
        "row_numbers": expected_rows,
        "price_texts": price_texts,
        "demand_bad": demand_bad,
        "demand_err": demand_err,
    }


def write_formula_book(path: Path) -> list[str]:
    """openpyxl writes formulas without results; returns the formula cells."""
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Data"
    ws.append(["a", "b", "total"])
    cells = []
    for i in range(8):
        r = i + 2
        ws.append([i, 2 * i, f"=A{r}+B{r}"])
        cells.append(f"Data!C{r}")
    wb.save(path)
    return cells


def write_encrypted_container(path: Path) -> None:
    """A minimal compound file (version 3, 512-byte sectors) holding the two streams an
    encrypted Office Open XML workbook has: EncryptionInfo and EncryptedPackage.

    Source: the published compound file binary format [MS-CFB] for the layout and the sector
    markers below; [MS-OFFCRYPTO] for the stream names (values from memory; the intake test
    that reads this file checks that it is recognised as an encrypted workbook)."""
    endchain, free, fatsect, nostream = 0xFFFFFFFE, 0xFFFFFFFF, 0xFFFFFFFD, 0xFFFFFFFF
    header = bytearray(512)
    header[0:8] = b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1"
    struct.pack_into("<HHHHH", header, 24, 0x3E, 3, 0xFFFE, 9, 6)
    struct.pack_into("<IIIIIIIII", header, 40, 0, 1, 1, 0, 0x1000, endchain, 0, endchain, 0)
    difat = [0] + [free] * 108
    struct.pack_into("<109I", header, 76, *difat)
    fat = [fatsect, endchain] + list(range(3, 10)) + [endchain] + list(range(11, 18)) + [endchain]
    fat += [free] * (128 - len(fat))
    fat_sector = struct.pack("<128I", *fat)

    def entry(
        name: str, kind: int, left: int, right: int, child: int, start: int, size: int
    ) -> bytes:
        raw = bytearray(128)
        encoded = (name + "\0").encode("utf-16-le") if name else b""
        raw[0 : len(encoded)] = encoded
        struct.pack_into("<HBB", raw, 64, len(encoded), kind, 1)
        struct.pack_into("<III", raw, 68, left, right, child)
        struct.pack_into("<IQ", raw, 116, start, size)
        return bytes(raw)

    directory = (
        entry("Root Entry", 5, nostream, nostream, 1, endchain, 0)
        + entry("EncryptionInfo", 2, nostream, 2, nostream, 2, 4096)
        + entry("EncryptedPackage", 2, nostream, nostream, nostream, 10, 4096)
        + entry("", 0, nostream, nostream, nostream, 0, 0)
    )
    body = fat_sector + directory + bytes(range(256)) * 16 + b"\x5a" * 4096
    path.write_bytes(bytes(header) + body)


def rewrite_part(src: Path, dst: Path, part: str, data: bytes) -> None:
    """Copy a zip package replacing one part."""
    with zipfile.ZipFile(src) as zin, zipfile.ZipFile(dst, "w", zipfile.ZIP_DEFLATED) as zout:
        for info in zin.infolist():
            zout.writestr(info, data if info.filename == part else zin.read(info.filename))

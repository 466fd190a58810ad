"""CSV intake: encodings, delimiters and decimal marks (the files are written by the tests)."""

from __future__ import annotations

import csv
import io

import numpy as np
import pytest

from engine.errors import InputProblem
from engine.intake import ColumnKind, read_table

ROWS = [
    ("North", "1,5", "1 234,5", "04/03/2021", "yes"),
    ("South", "2,25", "12", "05/03/2021", "no"),
    ("North", "3", "#N/A", "13/03/2021", "yes"),
    ("East", "0,75", "-7,25", "20/03/2021", "no"),
    ("North", "1,5", "8", "27/03/2021", "no"),
    ("South", "2", "9,5", "03/04/2021", "yes"),
]


def _semicolon_text(title: bool = True) -> str:
    lines = ["Weekly report, all stores", ""] if title else []
    lines.append("store;price;units;when;promo")
    for i, r in enumerate(ROWS):
        lines.append(";".join(r))
        if i == 2:
            lines.append(";;;;")  # a blank record
    return "\r\n".join(lines) + "\r\n"


def test_semicolon_with_decimal_comma(tmp_path):
    path = tmp_path / "report.csv"
    path.write_text(_semicolon_text(), encoding="utf-8")
    table = read_table(path)
    assert table.file_format == "csv" and table.sheet == "report"
    assert table.reading == {"encoding": "utf-8", "delimiter": "semicolon", "decimal mark": "comma"}
    assert table.header_row == 3
    assert table.blank_rows_skipped == 1
    assert table.row_numbers.tolist() == [4, 5, 6, 8, 9, 10]
    price = table.column("price")
    assert price.kind == ColumnKind.NUMBER
    assert price.values.tolist() == [1.5, 2.25, 3.0, 0.75, 1.5, 2.0]
    units = table.column("units")
    assert units.values[0] == 1234.5 and units.values[3] == -7.25
    assert units.errors == 1 and units.missing == 1 and np.isnan(units.values[2])
    when = table.column("when")
    assert when.kind == ColumnKind.DATE
    # 13/03 and 20/03 decide day-first for the whole column
    assert when.minimum == "2021-03-04" and when.maximum == "2021-04-03"
    assert table.column("promo").kind == ColumnKind.FLAG
    assert table.column("promo").values.tolist() == [1.0, 0.0, 1.0, 0.0, 0.0, 1.0]
    assert table.column("store").kind == ColumnKind.CATEGORY
    assert [c.letter for c in table.columns] == ["1", "2", "3", "4", "5"]


@pytest.mark.parametrize(
    ("delimiter", "word"), [(",", "comma"), ("\t", "tab"), ("|", "vertical bar")]
)
def test_other_delimiters_with_decimal_point(tmp_path, delimiter, word):
    buf = io.StringIO()
    writer = csv.writer(buf, delimiter=delimiter, lineterminator="\n")
    writer.writerow(["id", "amount", "share", "label, long"])
    for i in range(12):
        writer.writerow([f"K{i:03d}", f"{1000 + i * 250.5:,.1f}", f"{i}%", f"a, {i % 3}"])
    path = tmp_path / "data.csv"
    path.write_text(buf.getvalue(), encoding="utf-8")
    table = read_table(path)
    assert table.reading["delimiter"] == word and table.reading["decimal mark"] == "point"
    assert table.column("amount").values.tolist() == [1000 + i * 250.5 for i in range(12)]
    assert table.column("share").values.tolist() == pytest.approx([i / 100 for i in range(12)])
    assert table.column("id").kind == ColumnKind.IDENTIFIER
    assert table.column("label, long").kind == ColumnKind.CATEGORY
    assert table.column("label, long").levels == ["a, 0", "a, 1", "a, 2"]


@pytest.mark.parametrize(
    ("encoding", "expected"),
    [
        ("utf-8-sig", "utf-8 (with byte-order mark)"),
        ("cp1252", "windows-1252"),
        ("utf-16", "utf-16"),
    ],
)
def test_encodings(tmp_path, encoding, expected):
    text = "ville;température\nMontréal;-3,5\nZürich;2,25\nSão Paulo;21\n"
    path = tmp_path / "temps.csv"
    path.write_bytes(text.encode(encoding))
    table = read_table(path)
    assert table.reading["encoding"] == expected
    assert [c.name for c in table.columns] == ["ville", "température"]
    assert table.column("ville").values.tolist() == ["Montréal", "Zürich", "São Paulo"]
    assert table.column("température").values.tolist() == [-3.5, 2.25, 21.0]


def test_latin1_bytes_outside_windows_1252(tmp_path):
    # 0x81 is undefined in Windows-1252, so Latin-1 (which maps every byte) takes over
    path = tmp_path / "odd.csv"
    path.write_bytes(b"name,value\nab\x81c,1\nd\xe9f,2\n")
    table = read_table(path)
    assert table.reading["encoding"] == "latin-1"
    assert table.column("name").values.tolist() == ["ab\x81c", "déf"]


def test_spaces_and_accounting_negatives(tmp_path):
    path = tmp_path / "money.csv"
    path.write_text('item,net\na, 42 \nb,(1.5)\nc,"1,234.5"\nd,$7\n', encoding="utf-8")
    net = read_table(path).column("net")
    assert net.values.tolist() == [42.0, -1.5, 1234.5, 7.0]


def test_csv_sheet_option(tmp_path):
    path = tmp_path / "one.csv"
    path.write_text("a,b\n1,2\n", encoding="utf-8")
    assert read_table(path, sheet="one").n_rows == 1
    from engine.errors import InputProblem

    with pytest.raises(InputProblem, match="single sheet, 'one'"):
        read_table(path, sheet="Data")


def test_rows_with_more_or_fewer_fields_than_the_headings_are_named(tmp_path):
    # RFC 4180 section 2: each record should hold the same number of fields as the header
    lines = ["site,units,price"] + [f"S{i},{100 + i},2.5" for i in range(6)]
    lines[3] = "S2,102,2.5,extra"
    lines[5] = "S4,104"
    path = tmp_path / "ragged.csv"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    table = read_table(path)
    assert table.n_rows == 6
    assert any("row 4 has more fields than the 3 of the heading row" in w for w in table.warnings)
    assert any("row 6 has fewer fields than the 3 of the heading row" in w for w in table.warnings)


def test_lines_writing_their_empty_last_fields_are_not_called_short(tmp_path):
    # RFC 4180 section 2: "a;b;" holds three fields, the last one empty; an optional comment
    # column left blank on most lines is a full record, not a ragged one
    lines = ["site;units;note"] + [f"S{i};{100 + i};" for i in range(6)]
    lines[2] = "S1;101;late delivery"
    lines[4] = "S3;103;;"  # one delimiter too many, but no value beyond the headings
    path = tmp_path / "notes.csv"
    path.write_text("\r\n".join(lines) + "\r\n", encoding="utf-8")
    table = read_table(path)
    assert table.n_rows == 6
    assert not any("fields than the" in w for w in table.warnings), table.warnings


@pytest.mark.parametrize("suffix", [".txt", ".tsv"])
def test_tab_separated_text_saved_as_txt_or_tsv_is_read_like_csv(tmp_path, suffix):
    # common practice: spreadsheet programs save "Unicode text" as tab-separated UTF-16 with a
    # byte-order mark under .txt; .tsv is the usual name for tab-separated values
    text = "Region\tPrix\tDate\r\nNord\t9,35\t01/02/2024\r\nSud\t10,5\t15/02/2024\r\n"
    path = tmp_path / f"export{suffix}"
    path.write_bytes(text.encode("utf-16"))
    table = read_table(path)
    assert table.reading["delimiter"] == "tab" and table.reading["encoding"] == "utf-16"
    assert table.column("Prix").values.tolist() == [9.35, 10.5]
    assert table.column("Date").kind == ColumnKind.DATE
    assert table.sheet == "export"


def test_numbers_whose_value_depends_on_the_decimal_mark_are_said_in_a_text_file(tmp_path):
    # a semicolon file with decimal commas (common practice in decimal-comma locales), where
    # some columns were written with points: "8.666" is 8666 with a decimal comma and 8.666
    # with a point, so the reading chosen is said among the warnings; a "7,25" among numbers
    # written with points is read as 7.25, and said, rather than dropped
    lines = ["a;e;d;y"]
    lines += ["8.666;8.66;3,5;1", "11.395;9.1;4,25;2", "7.851;10.25;5,125;3", "9.838;7.5;6,5;4"]
    lines += ["7,25;7,25;7,75;5"]
    path = tmp_path / "marks.csv"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    table = read_table(path)
    a, e = table.column("a"), table.column("e")
    np.testing.assert_allclose(a.values, [8666, 11395, 7851, 9838, 7.25])
    np.testing.assert_allclose(e.values, [8.66, 9.1, 10.25, 7.5, 7.25])
    assert [w.split(":")[0] for w in table.warnings] == ["column 'a' (1)", "column 'e' (2)"]
    assert table.warnings[0].startswith(
        "column 'a' (1): numbers such as row 2, column 1 '8.666' (8666) read with a decimal comma"
    )
    assert table.warnings[1] == (
        "column 'e' (2): 1 number written with the other decimal mark (e.g. row 6, column 2 "
        "'7,25') read as 7.25"
    )
    assert a.missing == e.missing == 0
    # a dotted code is no decimal number: it stays unread, and named ("1,234,567" is a
    # number with grouped digits under the column's decimal point)
    odd = tmp_path / "odd.csv"
    odd.write_text('a,b\n8.66,1\n9.1,2\n10.25,3\n7.5,4\n192.168.1.2,5\n"1,234,567",6\n')
    col = read_table(odd).column("a")
    assert col.missing == 1 and any("192.168.1.2" in n for n in col.notes), col.notes
    assert col.values[5] == 1234567


@pytest.mark.parametrize("codec", ["utf-16-le", "utf-16-be"])
def test_utf16_without_a_byte_order_mark_is_read(tmp_path, codec):
    # some exports write UTF-16 with no byte-order mark (the Unicode Standard allows it; the
    # byte order then shows in which byte of each ASCII character is zero)
    text = "site\tvalue\n" + "".join(f"Zürich {i}\t{i}.5\n" for i in range(12))
    path = tmp_path / "export.tsv"
    path.write_bytes(text.encode(codec))
    table = read_table(path)
    assert table.reading["encoding"] == f"{codec} (no byte-order mark)"
    assert table.column("value").values[3] == 3.5
    assert table.column("site").values[0] == "Zürich 0"
    # binary files are still refused, also those full of zero bytes (little-endian integers,
    # an empty disk image) that resemble UTF-16 in one half of their bytes
    import struct

    for name, data in (
        ("garbage.csv", bytes(range(256)) * 8),
        ("integers.csv", b"".join(struct.pack("<i", i) for i in range(2000))),
        ("zeros.csv", bytes(5000)),
    ):
        (tmp_path / name).write_bytes(data)
        with pytest.raises(InputProblem, match="does not look like text"):
            read_table(tmp_path / name)

"""Memory between sessions lives only in the injected folder."""

from __future__ import annotations

from pathlib import Path

from desktop.settings_store import SettingsStore


def test_recent_files_most_recent_first_without_duplicates(tmp_path: Path):
    s = SettingsStore(tmp_path / "profile")
    assert s.recent() == []
    for name in ("a.xlsx", "b.xlsx", "a.xlsx"):
        s.add_recent(tmp_path / name)
    assert [Path(p).name for p in s.recent()] == ["a.xlsx", "b.xlsx"]
    for i in range(15):
        s.add_recent(tmp_path / f"f{i}.csv")
    assert len(s.recent()) == 10


def test_book_memory_round_trip_and_isolation(tmp_path: Path):
    s = SettingsStore(tmp_path / "profile")
    s.remember_book(tmp_path / "one.xlsx", sheet="S", roles={"y": "response"})
    s.remember_book(tmp_path / "one.xlsx", settings={"folds": 5})
    got = s.book(tmp_path / "one.xlsx")
    assert (
        got["sheet"] == "S"
        and got["roles"] == {"y": "response"}
        and got["settings"] == {"folds": 5}
    )
    assert s.book(tmp_path / "two.xlsx") == {}
    files = {p.relative_to(tmp_path).parts[0] for p in tmp_path.rglob("*") if p.is_file()}
    assert files == {"profile"}  # nothing written outside the injected folder


def test_a_damaged_memory_file_is_ignored(tmp_path: Path):
    s = SettingsStore(tmp_path)
    (tmp_path / "recent.json").write_text("{not json", encoding="utf-8")
    assert s.recent() == []

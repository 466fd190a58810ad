"""Fast checks of the kit builder's target logic (no download): platform tags and markers."""

from __future__ import annotations

import importlib.util
import sys
import zipfile
from pathlib import Path

REPO = Path(__file__).resolve().parents[2]
_spec = importlib.util.spec_from_file_location("build_kit", REPO / "installer" / "build_kit.py")
build_kit = importlib.util.module_from_spec(_spec)
sys.modules.setdefault("build_kit", build_kit)  # dataclasses look their module up there
_spec.loader.exec_module(build_kit)


def _fake_wheel(folder: Path, name: str, requires: list[str]) -> None:
    meta = f"Metadata-Version: 2.1\nName: {name}\nVersion: 1.0\n"
    meta += "".join(f"Requires-Dist: {r}\n" for r in requires)
    with zipfile.ZipFile(folder / f"{name}-1.0-py3-none-any.whl", "w") as zf:
        zf.writestr(f"{name}-1.0.dist-info/METADATA", meta)


def test_markers_are_evaluated_for_the_target_not_the_build_machine(tmp_path):
    # Source: PEP 508 environment markers (sys_platform "win32" on Windows, "linux", "darwin")
    _fake_wheel(
        tmp_path,
        "demo_pkg",
        [
            'tzdata; sys_platform == "win32"',
            'appnope; sys_platform == "darwin"',
            'helper; extra == "docs"',
        ],
    )
    win = build_kit.Target("windows-x64", "3.11")
    mac = build_kit.Target("macos-arm64", "3.11")
    linux = build_kit.Target("linux-x64", "3.11")
    assert build_kit.missing_for_target(win, tmp_path) == ["tzdata"]
    assert build_kit.missing_for_target(mac, tmp_path) == ["appnope"]
    assert build_kit.missing_for_target(linux, tmp_path) == []
    _fake_wheel(tmp_path, "tzdata", [])
    assert build_kit.missing_for_target(win, tmp_path) == []


def test_linux_tags_cover_every_older_manylinux():
    # Source: PEP 600 (manylinux_2_x tags) and PEP 599 (manylinux2014 = manylinux_2_17)
    tags = build_kit.Target("linux-x64", "3.11", glibc="2.28").platform_tags()
    assert tags[0] == "manylinux_2_28_x86_64"
    assert "manylinux_2_17_x86_64" in tags and "manylinux2014_x86_64" in tags
    assert not any(t.startswith("manylinux_2_29") for t in tags)
    assert build_kit.Target("windows-x64", "3.11").platform_tags() == ["win_amd64"]
    opts = build_kit.Target("macos-x64", "3.12", macos="13.0").pip_target_options()
    assert opts[opts.index("--platform") + 1] == "macosx_13_0_x86_64"
    assert opts[opts.index("--python-version") + 1] == "3.12" and "cp312" in opts

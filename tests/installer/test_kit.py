"""The offline wheel kit for Linux x64: build it, install it with no network, run Tamis from it.

Building fetches wheels from the package registry once (kept in installer/build/wheel-cache/);
installing and running happen inside a fresh network namespace (``unshare -n``) when the machine
allows it, so "nothing is downloaded at install or run time" is checked, not assumed. Where
namespaces are not allowed, pip still runs with ``--no-index``.
"""

from __future__ import annotations

import hashlib
import json
import os
import shutil
import subprocess
import sys
import zipfile
from pathlib import Path

import pytest

pytestmark = [
    pytest.mark.slow,
    pytest.mark.skipif(
        not sys.platform.startswith("linux"), reason="the Linux kit installs on Linux"
    ),
]

REPO = Path(__file__).resolve().parents[2]
DEMO = REPO / "demo" / "tamis_demo.xlsx"


def _no_network_prefix() -> list[str]:
    """``unshare -n`` (a network namespace with only a down loopback) when it works here."""
    if shutil.which("unshare"):
        probe = subprocess.run(["unshare", "-n", "true"], capture_output=True)
        if probe.returncode == 0:
            return ["unshare", "-n"]
    return []


@pytest.fixture(scope="module")
def kit(tmp_path_factory) -> Path:
    out = tmp_path_factory.mktemp("kit")
    done = subprocess.run(
        [
            sys.executable,
            str(REPO / "installer" / "build_kit.py"),
            "--platform",
            "linux-x64",
            "--out",
            str(out),
        ],
        capture_output=True,
        text=True,
        timeout=900,
    )
    assert done.returncode == 0, done.stderr[-4000:]
    folder = Path(done.stdout.strip().splitlines()[-1])
    assert folder.is_dir()
    return folder


@pytest.fixture(scope="module")
def installed(kit, tmp_path_factory) -> dict:
    root = tmp_path_factory.mktemp("user")
    home = root / "home"
    home.mkdir()
    env = {
        k: v
        for k, v in os.environ.items()
        if not k.startswith(("PIP_", "XDG_", "DISPLAY", "WAYLAND"))
    }
    env.update(HOME=str(home), TAMIS_CONFIG_DIR=str(root / "config"), TAMIS_NO_WINDOW="1")
    prefix = root / "prefix"
    offline = _no_network_prefix()
    done = subprocess.run(
        [
            *offline,
            "sh",
            str(kit / "install.sh"),
            "--prefix",
            str(prefix),
            "--python",
            sys.executable,
        ],
        capture_output=True,
        text=True,
        env=env,
        timeout=900,
    )
    assert done.returncode == 0, done.stdout[-3000:] + done.stderr[-3000:]
    return {"root": root, "home": home, "prefix": prefix, "env": env, "offline": offline}


def _sha256(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def test_kit_lists_a_correct_checksum_for_every_file(kit):
    # two routes: hashlib here and the sha256sum tool (GNU coreutils) must both accept the list
    lines = (kit / "SHA256SUMS").read_text(encoding="utf-8").splitlines()
    listed = {name: digest for digest, name in (line.split("  ", 1) for line in lines)}
    on_disk = {p.relative_to(kit).as_posix() for p in kit.rglob("*") if p.is_file()} - {
        "SHA256SUMS"
    }
    assert set(listed) == on_disk
    assert all(_sha256(kit / name) == digest for name, digest in listed.items())
    if shutil.which("sha256sum"):
        assert subprocess.run(["sha256sum", "--quiet", "-c", "SHA256SUMS"], cwd=kit).returncode == 0


def test_kit_holds_only_wheels_pinned_by_hash(kit):
    wheels = sorted((kit / "wheels").iterdir())
    assert wheels and all(w.suffix == ".whl" for w in wheels)  # nothing to compile on the target
    names = {w.name.split("-")[0].lower() for w in wheels}
    for needed in (
        "tamis",
        "numpy",
        "scipy",
        "pandas",
        "scikit_learn",
        "pyside6_essentials",
        "pyqtgraph",
    ):
        assert needed in names
    # every wheel of a Linux kit is either pure Python or built for manylinux x86_64
    assert all(
        w.name.endswith("-any.whl") or "manylinux" in w.name and "x86_64" in w.name for w in wheels
    )
    pins = [
        line
        for line in (kit / "requirements.txt").read_text().splitlines()
        if not line.startswith("#")
    ]
    assert len(pins) == len(wheels)
    by_hash = {_sha256(w) for w in wheels}
    assert {line.split("--hash=sha256:")[1] for line in pins} == by_hash
    # the Tamis wheel carries the demo workbook and no tests
    tamis = next(w for w in wheels if w.name.startswith("tamis-"))
    with zipfile.ZipFile(tamis) as zf:
        members = zf.namelist()
    assert "demo/tamis_demo.xlsx" in members
    assert not any(m.startswith("tests/") or "/tests/" in m for m in members)


def test_kit_rejects_a_tampered_file(kit, tmp_path):
    # invariant: the installer refuses a kit whose files no longer match SHA256SUMS
    copy = tmp_path / "kit"
    shutil.copytree(kit, copy, symlinks=True)
    (copy / "README.txt").write_text("changed\n")
    done = subprocess.run(
        [
            "sh",
            str(copy / "install.sh"),
            "--prefix",
            str(tmp_path / "p"),
            "--python",
            sys.executable,
        ],
        capture_output=True,
        text=True,
        env={**os.environ, "HOME": str(tmp_path)},
    )
    assert done.returncode != 0
    assert "SHA256SUMS" in done.stderr
    assert not (tmp_path / "p").exists()


def _tamis(installed, *args: str, timeout: float = 600) -> subprocess.CompletedProcess:
    exe = installed["prefix"] / "venv" / "bin" / "tamis"
    return subprocess.run(
        [*installed["offline"], str(exe), *args],
        capture_output=True,
        text=True,
        env=installed["env"],
        cwd=installed["root"],
        timeout=timeout,
    )


def test_installed_command_line_works_offline(installed):
    if not installed["offline"]:
        print("network namespaces unavailable here: only pip's --no-index kept the install offline")
    version = _tamis(installed, "--version")
    assert version.returncode == 0 and version.stdout.startswith("tamis ")
    inspect = _tamis(installed, "inspect", str(DEMO), "--sheet", "Bakery demand", "--json")
    assert inspect.returncode == 0, inspect.stderr[-3000:]
    report = json.loads(inspect.stdout)
    text = json.dumps(report)
    for column in ("loaves_sold", "price", "promotion", "footfall_count"):
        assert column in text


def test_installed_demo_and_fit_run_offline(installed):
    out = installed["root"] / "demo-run.xlsx"
    demo = _tamis(installed, "demo", "--out", str(out), "--json")
    assert demo.returncode == 0, demo.stderr[-3000:]
    document = json.loads(demo.stdout)  # exactly one JSON document on stdout
    assert [a["analysis"] for a in document["analyses"]] == ["roastery", "bakery"]
    assert out.exists()

    fit = _tamis(
        installed,
        "fit", str(DEMO), "--sheet", "Roastery lots", "--response", "cup_score",
        "--methods", "lasso", "--out", str(installed["root"] / "roastery-fit.xlsx"), "--json",
    )  # fmt: skip
    assert fit.returncode == 0, fit.stderr[-3000:]
    result = json.loads(fit.stdout)
    lasso = next(m for m in result["models"] if m["method"] == "lasso")
    # simulated known truth (demo/TRUTH.md): the three strongest true columns are found
    for column in ("farm_altitude_m", "fermentation_hours", "defects_per_300g"):
        assert column in lasso["selected"]
    assert (installed["root"] / "roastery-fit.xlsx").exists()


def test_launchers_then_clean_uninstall(installed):
    home, prefix = installed["home"], installed["prefix"]
    entry = home / ".local" / "share" / "applications" / "tamis.desktop"
    link = home / ".local" / "bin" / "tamis"
    assert entry.is_file() and link.is_symlink()
    exec_line = next(line for line in entry.read_text().splitlines() if line.startswith("Exec="))
    target = Path(exec_line.split('"')[1])
    assert target == prefix / "venv" / "bin" / "tamis-desktop" and os.access(target, os.X_OK)
    assert link.resolve() == (prefix / "venv" / "bin" / "tamis").resolve()

    settings = Path(installed["env"]["TAMIS_CONFIG_DIR"])
    settings.mkdir(exist_ok=True)
    (settings / "settings.json").write_text("{}")
    done = subprocess.run(
        ["sh", str(prefix / "uninstall.sh")], capture_output=True, text=True, env=installed["env"]
    )
    assert done.returncode == 0, done.stderr
    assert (
        not prefix.exists() and not entry.exists() and not link.exists() and not link.is_symlink()
    )
    assert (settings / "settings.json").exists()  # settings stay unless --settings is given

"""The PyInstaller app bundle: build it, run its command line on the demo, start its window.

The bundle runs with no Python of ours on the path (a minimal environment), inside a network
namespace when the machine allows it. Its size is printed for the build report.
"""

from __future__ import annotations

import json
import os
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

pytestmark = pytest.mark.slow

REPO = Path(__file__).resolve().parents[2]
DEMO = REPO / "demo" / "tamis_demo.xlsx"


def _no_network_prefix() -> list[str]:
    if sys.platform.startswith("linux") and shutil.which("unshare"):
        if subprocess.run(["unshare", "-n", "true"], capture_output=True).returncode == 0:
            return ["unshare", "-n"]
    return []


@pytest.fixture(scope="module")
def bundle(tmp_path_factory) -> Path:
    pytest.importorskip("PyInstaller")
    out = tmp_path_factory.mktemp("bundle")
    done = subprocess.run(
        [sys.executable, str(REPO / "installer" / "build_bundle.py"), "--out", str(out)],
        capture_output=True,
        text=True,
        timeout=1500,
    )
    assert done.returncode == 0, done.stderr[-4000:]
    folder = Path(done.stdout.strip().splitlines()[-1])
    size = sum(p.stat().st_size for p in folder.rglob("*") if p.is_file() and not p.is_symlink())
    print(f"\nbundle {folder}: {size / 1e6:.0f} MB")
    return folder


@pytest.fixture(scope="module")
def env(tmp_path_factory) -> dict[str, str]:
    """A bare environment: no PYTHONPATH, no virtual environment, no display, own config folder."""
    root = tmp_path_factory.mktemp("bundle-user")
    keep = {k: os.environ[k] for k in ("LANG", "LC_ALL", "TMPDIR", "SYSTEMROOT") if k in os.environ}
    return {
        **keep,
        "PATH": "/usr/bin:/bin",
        "HOME": str(root),
        "TAMIS_CONFIG_DIR": str(root / "config"),
        "TAMIS_NO_WINDOW": "1",
        "QT_QPA_PLATFORM": "offscreen",
    }


def _run(bundle: Path, env: dict, *args: str, timeout: float = 600) -> subprocess.CompletedProcess:
    exe = bundle / ("tamis.exe" if sys.platform == "win32" else "tamis")
    return subprocess.run(
        [*_no_network_prefix(), str(exe), *args],
        capture_output=True,
        text=True,
        env=env,
        cwd=env["HOME"],
        timeout=timeout,
    )


def test_bundle_is_lean(bundle):
    # what build_bundle.py promises to leave out
    names = {p.name for p in bundle.rglob("*")}
    for absent in (
        "pytest",
        "hypothesis",
        "statsmodels",
        "botocore",
        "translations",
        "QtNetwork.abi3.so",
    ):
        assert absent not in names
    assert (bundle / "_internal" / "demo" / "tamis_demo.xlsx").is_file()


def test_bundle_command_line_runs_the_demo(bundle, env, tmp_path):
    version = _run(bundle, env, "--version")
    assert version.returncode == 0 and version.stdout.startswith("tamis "), version.stderr
    out = Path(env["HOME"]) / "demo.xlsx"
    demo = _run(bundle, env, "demo", "--out", str(out), "--json")
    assert demo.returncode == 0, demo.stderr[-4000:]
    assert [a["analysis"] for a in json.loads(demo.stdout)["analyses"]] == ["roastery", "bakery"]
    fit = _run(
        bundle, env, "fit", str(DEMO), "--sheet", "Roastery lots", "--response", "cup_score",
        "--methods", "lasso", "--out", str(tmp_path / "fit.xlsx"), "--json",
    )  # fmt: skip
    assert fit.returncode == 0, fit.stderr[-4000:]
    lasso = next(m for m in json.loads(fit.stdout)["models"] if m["method"] == "lasso")
    # simulated known truth (demo/TRUTH.md): the three strongest true columns are found
    assert {"farm_altitude_m", "fermentation_hours", "defects_per_300g"} <= set(lasso["selected"])
    # the lasso ran compiled: a frozen program keeps numba's machine code in the user's cache
    cached = list((Path(env["HOME"]) / ".cache" / "numba").rglob("*gram_kernel*.nbi"))
    assert cached, "the compiled path loop did not run in the bundle"


def test_bundle_runs_validation_parts_in_worker_processes(bundle, env, tmp_path):
    # the bundle starts joblib's workers by running itself (tamis_entry._run_as_worker); with
    # parts forced into processes the numbers must equal those of parts kept on threads
    if sys.platform == "win32":
        pytest.skip("Windows bundles keep validation parts on threads")
    fit_args = [
        "fit", str(DEMO), "--sheet", "Roastery lots", "--response", "cup_score",
        "--methods", "lasso,elastic-net", "--json",
    ]  # fmt: skip
    runs = {}
    for mode in ("processes", "threads"):
        out = tmp_path / f"{mode}.xlsx"
        done = _run(bundle, {**env, "TAMIS_PARALLEL": mode}, *fit_args, "--out", str(out))
        assert done.returncode == 0, done.stderr[-4000:]
        runs[mode] = {
            m["method"]: (m["coefficients"], m["cv_error"], m["penalty"])
            for m in json.loads(done.stdout)["models"]
        }
    assert runs["processes"] == runs["threads"]


def test_bundle_window_shows_and_quits(bundle, env):
    done = _run(bundle, {**env, "TAMIS_SMOKE_QUIT_MS": "4000"}, timeout=300)
    assert done.returncode == 0, done.stderr[-4000:]
    assert "tamis smoke: windows shown: 'Tamis" in done.stderr

"""Build the Tamis app bundle: a PyInstaller one-folder build for the machine it runs on.

The same script builds the Windows, macOS or Linux bundle when run on that system; PyInstaller
cannot cross-build. The bundle needs no Python on the target machine:

    installer/dist/tamis/            (Windows: tamis.exe; macOS/Linux: tamis)
        tamis[.exe]     no arguments: the desktop window; with arguments: the command line
        _internal/      Python, the libraries, Qt (PySide6 Essentials only), the demo workbook

It is kept small on purpose: only the Qt modules the desktop uses are collected, the Qt
translations and unused Qt plugins are left out, and test suites and test-only libraries
(pytest, hypothesis, statsmodels) are excluded. ``--archive`` packs the folder (.zip on Windows,
.tar.gz elsewhere) and writes its SHA-256 beside it.

Usage::

    python installer/build_bundle.py [--out DIR] [--archive] [--clean]
"""

from __future__ import annotations

import argparse
import hashlib
import os
import shutil
import subprocess
import sys
import tarfile
import zipfile
from pathlib import Path

HERE = Path(__file__).resolve().parent
REPO = HERE.parent
ENTRY = HERE / "tamis_entry.py"
DEFAULT_OUT = HERE / "dist"
WORK = HERE / "build" / "pyinstaller"
NAME = "tamis"

# Qt modules the desktop does not use (PySide6 Essentials still ships them)
UNUSED_QT = [
    "QtNetwork",
    "QtQml",
    "QtQuick",
    "QtQuickWidgets",
    "QtQuickControls2",
    "QtQuickTest",
    "QtSql",
    "QtDesigner",
    "QtHelp",
    "QtUiTools",
    "QtXml",
    "QtConcurrent",
    "QtDBus",
    "QtPrintSupport",
    "QtMultimedia",
    "QtMultimediaWidgets",
    "QtWebEngineCore",
    "QtWebEngineWidgets",
    "QtWebChannel",
    "QtWebSockets",
    "QtPdf",
    "QtPdfWidgets",
    "QtNetworkAuth",
    "QtBluetooth",
    "QtNfc",
    "QtPositioning",
    "QtSerialPort",
    "QtSensors",
    "QtCharts",
    "QtDataVisualization",
    "Qt3DCore",
    "Qt3DRender",
    "QtSpatialAudio",
    "QtStateMachine",
    "QtTextToSpeech",
    "QtRemoteObjects",
    "QtScxml",
    "QtAxContainer",
]
# libraries that are installed for tests or tooling, or pulled in by optional imports
UNUSED_PYTHON = [
    "pytest",
    "_pytest",
    "pytestqt",
    "hypothesis",
    "statsmodels",
    "patsy",
    "matplotlib",
    "IPython",
    "jupyter_client",
    "ipykernel",
    "notebook",
    "PyQt5",
    "PyQt6",
    "PySide2",
    "tkinter",
    "_tkinter",
    "sphinx",
    "docutils",
    "setuptools",
    "pip",
    "pkg_resources",
    "lib2to3",
    "pydoc_data",
    "pyarrow",
    "sqlalchemy",
    "tables",
    "h5py",
    "dask",
    "cupy",
    "torch",
    "sklearn.datasets.tests",
    "pyqtgraph.opengl",
    "pyqtgraph.examples",
    "pyqtgraph.jupyter",
    "OpenGL",
    # optional back ends of pandas and friends (cloud storage, templating, HTML, YAML)
    "botocore",
    "boto3",
    "s3fs",
    "gcsfs",
    "fsspec",
    "yaml",
    "jinja2",
    "markupsafe",
    "lxml",
    "bs4",
    "html5lib",
    "charset_normalizer",
    "requests",
    "urllib3",
    "cffi",
    "pycparser",
    "cryptography",
    "PIL",
    "xarray",
    "tabulate",
    "psutil",
    "sqlite3",
    "curses",
    "readline",
]
# Qt plugin folders the bundle keeps (platform windows, image formats, styles, icon engines)
KEEP_QT_PLUGINS = {
    "platforms",
    "imageformats",
    "styles",
    "iconengines",
    "platformthemes",
    "xcbglintegrations",
    "wayland-shell-integration",
    "wayland-graphics-integration-client",
    "wayland-decoration-client",
    "platforminputcontexts",
    "generic",
}


def _say(words: str) -> None:
    print(f"[build_bundle] {words}", file=sys.stderr, flush=True)


def pyinstaller_args(out: Path, work: Path) -> list[str]:
    sep = os.pathsep  # PyInstaller's --add-data separator (";" on Windows, ":" elsewhere)
    args = [
        str(ENTRY),
        "--name", NAME,
        "--onedir",
        "--console",  # the command line needs a console; the entry closes one it owns (Windows)
        "--noconfirm",
        "--log-level", "WARN",
        "--distpath", str(out),
        "--workpath", str(work),
        "--specpath", str(work),
        "--paths", str(REPO),
        # subcommands and windows are imported by name at run time, so list them explicitly
        "--collect-submodules", "engine",
        "--collect-submodules", "desktop",
        # validation workers start the bundle with "-m" on these (see tamis_entry.py)
        "--collect-submodules", "joblib.externals.loky",
        "--add-data", f"{REPO / 'demo' / 'tamis_demo.xlsx'}{sep}demo",
    ]  # fmt: skip
    for module in UNUSED_QT:
        args += ["--exclude-module", f"PySide6.{module}"]
    for module in UNUSED_PYTHON:
        args += ["--exclude-module", module]
    return args


def _prune(bundle: Path) -> int:
    """Remove what PyInstaller collected but Tamis never loads; returns bytes freed."""
    freed = 0

    def drop(path: Path) -> None:
        nonlocal freed
        if path.is_dir():
            freed += sum(p.stat().st_size for p in path.rglob("*") if p.is_file())
            shutil.rmtree(path)
        elif path.exists():
            freed += path.stat().st_size
            path.unlink()

    for qt in bundle.rglob("PySide6"):
        if not qt.is_dir():
            continue
        for translations in qt.rglob("translations"):
            drop(translations)  # Qt's own dialog texts; Tamis's words are its own
        for plugins in [p for p in qt.rglob("plugins") if p.is_dir()]:
            for folder in plugins.iterdir():
                if folder.is_dir() and folder.name not in KEEP_QT_PLUGINS:
                    drop(folder)
        for item in ("qml", "metatypes", "typesystems", "include", "glue", "scripts", "examples"):
            for found in qt.rglob(item):
                drop(found)
    for tests in [p for p in bundle.rglob("tests") if p.is_dir()]:
        drop(tests)
    for data in ("sklearn/datasets/data", "sklearn/datasets/images", "sklearn/datasets/descr"):
        for found in bundle.rglob(data):
            drop(found)
    return freed


def folder_size(path: Path) -> int:
    return sum(p.stat().st_size for p in path.rglob("*") if p.is_file() and not p.is_symlink())


def _sha256(path: Path) -> str:
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for block in iter(lambda: fh.read(1 << 20), b""):
            h.update(block)
    return h.hexdigest()


def archive(bundle: Path) -> Path:
    if sys.platform == "win32":
        out = bundle.with_name(f"{bundle.name}-windows-x64.zip")
        with zipfile.ZipFile(out, "w", compression=zipfile.ZIP_DEFLATED) as zf:
            for item in sorted(bundle.rglob("*")):
                zf.write(item, Path(bundle.name) / item.relative_to(bundle))
    else:
        system = "macos" if sys.platform == "darwin" else "linux"
        out = bundle.with_name(f"{bundle.name}-{system}-{os.uname().machine}.tar.gz")
        with tarfile.open(out, "w:gz") as tf:
            tf.add(bundle, arcname=bundle.name)
    out.with_name(out.name + ".sha256").write_text(
        f"{_sha256(out)}  {out.name}\n", encoding="utf-8"
    )
    return out


def build_bundle(out: Path = DEFAULT_OUT, work: Path = WORK, clean: bool = False) -> Path:
    """Run PyInstaller and prune; returns the bundle folder (``out/tamis``)."""
    if clean and work.exists():
        shutil.rmtree(work)
    work.mkdir(parents=True, exist_ok=True)
    cmd = [sys.executable, "-m", "PyInstaller", *pyinstaller_args(out, work)]
    _say("running PyInstaller (a few minutes)")
    done = subprocess.run(cmd, cwd=REPO)
    if done.returncode != 0:
        raise SystemExit("PyInstaller failed (see the messages above)")
    bundle = out / NAME
    freed = _prune(bundle)
    _say(f"pruned {freed / 1e6:.0f} MB; bundle {bundle}: {folder_size(bundle) / 1e6:.0f} MB")
    return bundle


def main(argv: list[str] | None = None) -> int:
    p = argparse.ArgumentParser(prog="build_bundle.py", description=__doc__.splitlines()[0])
    p.add_argument(
        "--out", type=Path, default=DEFAULT_OUT, help="output folder (default: %(default)s)"
    )
    p.add_argument(
        "--work", type=Path, default=WORK, help="PyInstaller work folder (default: %(default)s)"
    )
    p.add_argument("--clean", action="store_true", help="start from an empty work folder")
    p.add_argument("--archive", action="store_true", help="also pack the bundle with its SHA-256")
    args = p.parse_args(argv)
    bundle = build_bundle(args.out, args.work, args.clean)
    print(archive(bundle) if args.archive else bundle)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())

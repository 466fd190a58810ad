"""Build the offline wheel kit: every wheel Tamis needs for one platform, plus install scripts.

The kit is a folder (optionally an archive) that an IT department can copy to a machine with no
network access and install per user, without administrator rights:

    tamis-kit-<version>-<platform>-py<X.Y>/
        wheels/             every wheel, Tamis itself included (no source packages, nothing to compile)
        requirements.txt    each wheel pinned by name, version and SHA-256 (pip hash-checking mode)
        SHA256SUMS          checksum of every file of the kit (sha256sum -c format)
        KIT_INFO            platform, Python version, Tamis version, build date
        README.txt          the short version of docs/IT.md
        install.sh, uninstall.sh                     Linux and macOS
        install.ps1, install.cmd, uninstall.ps1      Windows

Downloading happens here, at build time, and only here: the install scripts run pip with
``--no-index`` and never reach any server. Wheels fetched from the package registry are kept in
``installer/build/wheel-cache/<platform>-py<X.Y>/`` so a second build needs no network at all.

Usage::

    python installer/build_kit.py                          # this machine's platform and Python
    python installer/build_kit.py --platform windows-x64 --python-version 3.11 --archive
    python installer/build_kit.py --all-platforms --archive
    python installer/build_kit.py --refresh                # ask the registry for newer versions

Platforms: linux-x64 (manylinux, glibc >= --glibc, default 2.34), windows-x64, macos-arm64,
macos-x64 (macOS >= --macos, default 14.0).
"""

from __future__ import annotations

import argparse
import datetime as dt
import hashlib
import os
import platform
import re
import shutil
import subprocess
import sys
import tarfile
import tempfile
import zipfile
from dataclasses import dataclass
from pathlib import Path

HERE = Path(__file__).resolve().parent
REPO = HERE.parent
SCRIPTS = HERE / "kit_scripts"
DEFAULT_CACHE = HERE / "build" / "wheel-cache"
DEFAULT_OUT = HERE / "dist"

PLATFORMS = ("linux-x64", "windows-x64", "macos-arm64", "macos-x64")
# the parts of the source tree that go into the Tamis wheel (tests and tooling stay out)
WHEEL_SOURCES = ("pyproject.toml", "README.md", "engine", "desktop", "demo")


@dataclass(frozen=True)
class Target:
    """One platform and Python version to gather wheels for."""

    platform: str  # one of PLATFORMS
    python_version: str  # "3.11"
    glibc: str = "2.34"  # linux: the oldest glibc the kit must run on
    macos: str = "14.0"  # macos: the oldest macOS the kit must run on

    @property
    def key(self) -> str:
        return f"{self.platform}-py{self.python_version}"

    @property
    def windows(self) -> bool:
        return self.platform.startswith("windows")

    def platform_tags(self) -> list[str]:
        """pip ``--platform`` values: the newest tag the target accepts and every older one.

        pip widens macOS tags itself (older releases, universal2) but takes manylinux tags
        literally, so the manylinux list is spelled out (PEP 600 names plus the legacy aliases).
        """
        if self.platform == "windows-x64":
            return ["win_amd64"]
        if self.platform.startswith("macos"):
            arch = "arm64" if self.platform.endswith("arm64") else "x86_64"
            major, _, minor = self.macos.partition(".")
            return [f"macosx_{major}_{minor or 0}_{arch}"]
        g_major, g_minor = (int(x) for x in self.glibc.split(".")[:2])
        if g_major != 2 or g_minor < 17:
            raise SystemExit(f"--glibc must be 2.17 or newer (got {self.glibc})")
        tags = [f"manylinux_2_{m}_x86_64" for m in range(g_minor, 16, -1)]
        return tags + [
            "manylinux2014_x86_64",
            "manylinux_2_12_x86_64",
            "manylinux2010_x86_64",
            "manylinux_2_5_x86_64",
            "manylinux1_x86_64",
        ]

    def marker_environment(self) -> dict[str, str]:
        """PEP 508 marker values of the target (pip evaluates markers for the build machine)."""
        systems = {
            "windows": ("win32", "Windows", "nt"),
            "macos": ("darwin", "Darwin", "posix"),
            "linux": ("linux", "Linux", "posix"),
        }
        system = systems[self.platform.split("-")[0]]
        machine = {"windows-x64": "AMD64", "macos-arm64": "arm64"}.get(self.platform, "x86_64")
        return {
            "sys_platform": system[0],
            "platform_system": system[1],
            "os_name": system[2],
            "platform_machine": machine,
            "python_version": self.python_version,
            "python_full_version": f"{self.python_version}.0",
            "implementation_name": "cpython",
            "platform_python_implementation": "CPython",
            "extra": "",
        }

    def pip_target_options(self) -> list[str]:
        nodot = self.python_version.replace(".", "")
        opts = [
            "--only-binary=:all:",
            "--python-version",
            self.python_version,
            "--implementation",
            "cp",
        ]
        for abi in (f"cp{nodot}", "abi3", "none"):
            opts += ["--abi", abi]
        for tag in self.platform_tags():
            opts += ["--platform", tag]
        return opts


def current_platform() -> str:
    """This machine's kit platform name."""
    machine = platform.machine().lower()
    if sys.platform == "win32":
        return "windows-x64"
    if sys.platform == "darwin":
        return "macos-arm64" if machine in ("arm64", "aarch64") else "macos-x64"
    if machine not in ("x86_64", "amd64"):
        raise SystemExit(
            f"no kit platform for {sys.platform}/{machine}; choose one with --platform"
        )
    return "linux-x64"


def _say(words: str) -> None:
    print(f"[build_kit] {words}", file=sys.stderr, flush=True)


def _run(
    cmd: list[str], env: dict[str, str] | None = None, quiet: bool = False
) -> subprocess.CompletedProcess:
    _say("$ " + " ".join(cmd))
    done = subprocess.run(cmd, env=env, text=True, capture_output=quiet)
    return done


def _offline_env() -> dict[str, str]:
    """Environment in which pip reads no configuration at all (so no index from a config file)."""
    env = {k: v for k, v in os.environ.items() if not k.startswith("PIP_")}
    env["PIP_CONFIG_FILE"] = os.devnull
    return env


def sha256_of(path: Path) -> str:
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for block in iter(lambda: fh.read(1 << 20), b""):
            h.update(block)
    return h.hexdigest()


def tamis_version() -> str:
    import tomllib

    with open(REPO / "pyproject.toml", "rb") as fh:
        return tomllib.load(fh)["project"]["version"]


def installed_pins(root: str = "tamis") -> list[str]:
    """``name==version`` for Tamis's dependency closure as installed where the kit is built.

    The kit then carries the versions the test suite ran against, not whatever the registry
    offers on build day (``--latest`` skips this). Requirements that only come with an extra
    are not followed; pins for packages the target does not need are ignored by pip.
    """
    from importlib import metadata

    pins: dict[str, str] = {}
    todo = [root]
    while todo:
        name = todo.pop()
        key = re.sub(r"[-_.]+", "-", name).lower()
        if key in pins:
            continue
        try:
            dist = metadata.distribution(name)
        except metadata.PackageNotFoundError:
            continue
        if key != root:
            pins[key] = dist.version
        else:
            pins[key] = ""
        for req in dist.requires or []:
            if "extra ==" in req.replace('"', " ").replace("'", " ").replace("  ", " "):
                continue
            match = re.match(r"\s*([A-Za-z0-9][A-Za-z0-9._-]*)", req)
            if match:
                todo.append(match.group(1))
    return [f"{k}=={v}" for k, v in sorted(pins.items()) if v]


def build_tamis_wheel(out_dir: Path) -> Path:
    """``pip wheel --no-deps`` of a clean copy of the source (no tests, no build leftovers)."""
    out_dir.mkdir(parents=True, exist_ok=True)
    with tempfile.TemporaryDirectory(prefix="tamis-src-") as tmp:
        src = Path(tmp) / "tamis"
        src.mkdir()
        ignore = shutil.ignore_patterns("__pycache__", "*.pyc", "*.egg-info", "build", "dist")
        for name in WHEEL_SOURCES:
            item = REPO / name
            if item.is_dir():
                shutil.copytree(item, src / name, ignore=ignore)
            elif item.exists():
                shutil.copy2(item, src / name)
        base = [
            sys.executable,
            "-m",
            "pip",
            "wheel",
            "--no-deps",
            "--disable-pip-version-check",
            "-q",
            "-w",
            str(out_dir),
            str(src),
        ]
        # the installed setuptools usually suffices; otherwise let pip fetch the build backend
        done = _run(base[:5] + ["--no-build-isolation"] + base[5:], quiet=True)
        if done.returncode != 0:
            _say("building without isolation failed; retrying with pip's isolated build")
            done = _run(base)
            if done.returncode != 0:
                raise SystemExit("could not build the Tamis wheel")
    wheels = sorted(out_dir.glob("tamis-*.whl"))
    if not wheels:
        raise SystemExit("pip wheel reported success but left no tamis wheel")
    return wheels[-1]


def gather_wheels(
    target: Target,
    tamis_wheel: Path,
    cache: Path,
    dest: Path,
    refresh: bool,
    constraints: Path | None = None,
) -> None:
    """Resolve Tamis for ``target`` into ``dest``, then add what the target's markers require."""
    requirements = [str(tamis_wheel)]
    extra: list[str] = []
    for _ in range(5):  # each round brings the added requirements' own dependencies too
        _gather(target, requirements, cache, dest, refresh, constraints)
        extra = missing_for_target(target, dest)
        if not extra:
            return
        _say(f"the target also needs {', '.join(extra)} (markers for {target.platform})")
        requirements = extra
    raise SystemExit(
        f"the dependencies for {target.key} did not settle; missing: {', '.join(extra)}"
    )


def _gather(
    target: Target,
    requirements: list[str],
    cache: Path,
    dest: Path,
    refresh: bool,
    constraints: Path | None,
) -> None:
    """Put Tamis and every dependency wheel for ``target`` into ``dest``.

    First resolve from the cache alone (no network). When the cache lacks something, or
    ``refresh`` asks for it, download into the cache from the configured registry and resolve
    from the cache again, so the kit always comes out of the cache folder.
    """
    cache.mkdir(parents=True, exist_ok=True)
    dest.mkdir(parents=True, exist_ok=True)
    opts = target.pip_target_options()
    common = [
        sys.executable,
        "-m",
        "pip",
        "download",
        "--disable-pip-version-check",
        "--no-cache-dir",
        *opts,
    ]
    if constraints is not None:
        common += ["-c", str(constraints)]
    from_cache = [
        *common[:4],
        "--isolated",
        *common[4:],
        "--no-index",
        "--find-links",
        str(cache),
        "-d",
        str(dest),
        *requirements,
    ]
    if not refresh:
        done = _run(from_cache, env=_offline_env(), quiet=True)
        if done.returncode == 0:
            _say(f"all wheels for {target.key} came from the cache {cache}")
            return
        _say("the cache lacks some wheels; downloading from the package registry")
    fetch = [*common, "-d", str(cache), *requirements]
    fetched = _run(fetch).returncode
    # pip copies the Tamis wheel it was given into the cache too; a stale copy there would
    # stand in for the next build's own wheel (and its dependencies), so it never stays
    for own in cache.glob("tamis-*.whl"):
        own.unlink()
    if fetched != 0:
        raise SystemExit(
            f"pip could not gather the wheels for {target.key} (see the messages above)"
        )
    done = _run(from_cache, env=_offline_env(), quiet=True)
    if done.returncode != 0:
        raise SystemExit(
            f"resolving from the cache failed after downloading:\n{done.stdout}\n{done.stderr}"
        )


def _canonical(name: str) -> str:
    return re.sub(r"[-_.]+", "-", name).lower()


def missing_for_target(target: Target, wheels_dir: Path) -> list[str]:
    """Requirements the target needs that pip left out.

    pip evaluates environment markers for the machine it runs on, so a Linux build of a Windows
    kit misses e.g. ``tzdata; sys_platform == "win32"`` (a pandas requirement). Read every
    wheel's metadata and evaluate its markers for the target instead.
    """
    try:
        from packaging.requirements import Requirement
    except ImportError:  # pip always carries a copy
        from pip._vendor.packaging.requirements import Requirement  # type: ignore[assignment]

    env = target.marker_environment()
    have = {_canonical(_wheel_name_version(w)[0]) for w in wheels_dir.glob("*.whl")}
    missing: set[str] = set()
    for wheel in wheels_dir.glob("*.whl"):
        with zipfile.ZipFile(wheel) as zf:
            meta = next(n for n in zf.namelist() if n.endswith(".dist-info/METADATA"))
            text = zf.read(meta).decode("utf-8", "replace")
        for line in text.splitlines():
            if not line.startswith("Requires-Dist:"):
                continue
            req = Requirement(line.split(":", 1)[1].strip())
            if req.marker is not None and not req.marker.evaluate(env):
                continue
            if _canonical(req.name) not in have:
                req.marker = None
                missing.add(str(req))
    return sorted(missing)


def _wheel_name_version(path: Path) -> tuple[str, str]:
    name, version = path.name.split("-")[:2]
    return name.replace("_", "-").lower(), version


def write_requirements(wheels: list[Path], path: Path) -> None:
    """Pin every wheel by version and hash so pip installs exactly these files (hash-checking mode)."""
    lines = ["# Generated by installer/build_kit.py: every requirement pinned, checked by SHA-256."]
    for wheel in sorted(wheels, key=lambda p: p.name.lower()):
        name, version = _wheel_name_version(wheel)
        lines.append(f"{name}=={version} --hash=sha256:{sha256_of(wheel)}")
    path.write_text("\n".join(lines) + "\n", encoding="utf-8", newline="\n")


def write_checksums(kit: Path) -> Path:
    """SHA256SUMS in the ``sha256sum -c`` format, paths relative to the kit, forward slashes."""
    out = kit / "SHA256SUMS"
    rows = []
    for item in sorted(p for p in kit.rglob("*") if p.is_file() and p != out):
        rows.append(f"{sha256_of(item)}  {item.relative_to(kit).as_posix()}")
    out.write_text("\n".join(rows) + "\n", encoding="utf-8", newline="\n")
    return out


def copy_scripts(target: Target, kit: Path) -> None:
    names = (
        ["install.ps1", "install.cmd", "uninstall.ps1"]
        if target.windows
        else ["install.sh", "uninstall.sh"]
    )
    for name in names + ["README.txt"]:
        data = (SCRIPTS / name).read_bytes().replace(b"\r\n", b"\n")
        if name.endswith((".ps1", ".cmd")) or (target.windows and name == "README.txt"):
            data = data.replace(b"\n", b"\r\n")  # Windows tools expect CRLF
        (kit / name).write_bytes(data)
        if name.endswith(".sh"):
            (kit / name).chmod(0o755)


def archive_kit(kit: Path, target: Target) -> Path:
    """A .zip for Windows, a .tar.gz elsewhere (keeps the scripts executable)."""
    if target.windows:
        out = kit.with_name(kit.name + ".zip")
        with zipfile.ZipFile(out, "w", compression=zipfile.ZIP_DEFLATED) as zf:
            for item in sorted(kit.rglob("*")):
                zf.write(item, Path(kit.name) / item.relative_to(kit))
    else:
        out = kit.with_name(kit.name + ".tar.gz")
        with tarfile.open(out, "w:gz") as tf:
            tf.add(kit, arcname=kit.name)
    out.with_name(out.name + ".sha256").write_text(
        f"{sha256_of(out)}  {out.name}\n", encoding="utf-8", newline="\n"
    )
    return out


def build_kit(
    target: Target,
    out_dir: Path = DEFAULT_OUT,
    cache_root: Path = DEFAULT_CACHE,
    archive: bool = False,
    refresh: bool = False,
    tamis_wheel: Path | None = None,
    latest: bool = False,
) -> Path:
    """Build the kit folder for ``target`` under ``out_dir``; return the folder (or the archive).

    Unless ``latest``, dependency versions are pinned to those installed here (``installed_pins``).
    """
    version = tamis_version()
    kit = out_dir / f"tamis-kit-{version}-{target.key}"
    if kit.exists():
        shutil.rmtree(kit)
    wheels_dir = kit / "wheels"
    wheels_dir.mkdir(parents=True)
    with tempfile.TemporaryDirectory(prefix="tamis-wheel-") as tmp:
        own = tamis_wheel or build_tamis_wheel(Path(tmp))
        constraints = None
        pins = [] if latest else installed_pins()
        if pins:
            constraints = Path(tmp) / "constraints.txt"
            constraints.write_text("\n".join(pins) + "\n", encoding="utf-8")
            _say("pinning to the versions installed here: " + ", ".join(pins))
        gather_wheels(target, own, cache_root / target.key, wheels_dir, refresh, constraints)
    wheels = sorted(wheels_dir.glob("*.whl"))
    if not any(w.name.startswith("tamis-") for w in wheels):
        raise SystemExit("the Tamis wheel is missing from the kit")
    write_requirements(wheels, kit / "requirements.txt")
    info = {
        "tamis_version": version,
        "platform": target.platform,
        "python_version": target.python_version,
        "platform_tags": " ".join(target.platform_tags()),
        "built": dt.datetime.now(dt.UTC).strftime("%Y-%m-%dT%H:%M:%SZ"),
        "wheels": str(len(wheels)),
    }
    (kit / "KIT_INFO").write_text(
        "".join(f"{k}={v}\n" for k, v in info.items()), encoding="utf-8", newline="\n"
    )
    copy_scripts(target, kit)
    write_checksums(kit)
    size = sum(p.stat().st_size for p in kit.rglob("*") if p.is_file())
    _say(f"kit ready: {kit} ({len(wheels)} wheels, {size / 1e6:.0f} MB)")
    return archive_kit(kit, target) if archive else kit


def main(argv: list[str] | None = None) -> int:
    p = argparse.ArgumentParser(prog="build_kit.py", description=__doc__.splitlines()[0])
    p.add_argument(
        "--platform", choices=PLATFORMS, help="target platform (default: this machine's)"
    )
    p.add_argument("--all-platforms", action="store_true", help="build a kit for every platform")
    p.add_argument(
        "--python-version",
        default=f"{sys.version_info.major}.{sys.version_info.minor}",
        help="Python version of the target machines, X.Y (default: %(default)s)",
    )
    p.add_argument(
        "--glibc", default="2.34", help="linux: oldest glibc to support (default: %(default)s)"
    )
    p.add_argument(
        "--macos", default="14.0", help="macos: oldest macOS to support (default: %(default)s)"
    )
    p.add_argument(
        "--out", type=Path, default=DEFAULT_OUT, help="output folder (default: %(default)s)"
    )
    p.add_argument(
        "--cache", type=Path, default=DEFAULT_CACHE, help="wheel cache (default: %(default)s)"
    )
    p.add_argument(
        "--archive", action="store_true", help="also pack the kit as .zip (Windows) or .tar.gz"
    )
    p.add_argument(
        "--refresh", action="store_true", help="ask the registry for newer wheels even if cached"
    )
    p.add_argument(
        "--latest",
        action="store_true",
        help="take the newest versions the registry offers instead of the versions installed here",
    )
    args = p.parse_args(argv)
    platforms = PLATFORMS if args.all_platforms else (args.platform or current_platform(),)
    with tempfile.TemporaryDirectory(prefix="tamis-wheel-") as tmp:
        own = build_tamis_wheel(Path(tmp))  # one wheel (pure Python) serves every platform
        for name in platforms:
            target = Target(name, args.python_version, glibc=args.glibc, macos=args.macos)
            result = build_kit(
                target,
                args.out,
                args.cache,
                args.archive,
                args.refresh,
                tamis_wheel=own,
                latest=args.latest,
            )
            print(result)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())

"""The environment a front runs in, injected so tests never touch real streams or user folders."""

from __future__ import annotations

__all__ = ["Context", "default_context", "tune_own_process", "THREAD_SWITCH_SECONDS"]

import os
import sys
from dataclasses import dataclass, field
from pathlib import Path
from typing import TextIO


def _config_dir() -> Path:
    if os.environ.get("TAMIS_CONFIG_DIR"):
        return Path(os.environ["TAMIS_CONFIG_DIR"])
    if sys.platform == "win32":
        base = Path(os.environ.get("APPDATA", Path.home() / "AppData" / "Roaming"))
    elif sys.platform == "darwin":
        base = Path.home() / "Library" / "Application Support"
    else:
        base = Path(os.environ.get("XDG_CONFIG_HOME", Path.home() / ".config"))
    return base / "tamis"


@dataclass
class Context:
    stdout: TextIO = field(default_factory=lambda: sys.stdout)
    stderr: TextIO = field(default_factory=lambda: sys.stderr)
    config_dir: Path = field(default_factory=_config_dir)
    # whether stderr is a terminal that can show a live progress line
    interactive: bool = False
    # a real process (not a test calling main): after the desktop window closes, leave without the
    # interpreter's final clean-up, which can abort in a compiled GUI extension (PySide6 6.12)
    own_process: bool = False
    # files this command has written so far: a failure or cancel afterwards says so instead of
    # claiming nothing was written
    written: list[str] = field(default_factory=list)

    @property
    def log_file(self) -> Path:
        return self.config_dir / "tamis-error.log"


def write_error_log(ctx: Context, text: str) -> str | None:
    """Append an unexpected failure's traceback to the log file; its path, or None when it
    could not be written."""
    import datetime as _dt

    from engine import __version__

    try:
        ctx.config_dir.mkdir(parents=True, exist_ok=True)
        with open(ctx.log_file, "a", encoding="utf-8") as fh:
            fh.write(
                f"--- {_dt.datetime.now().isoformat(timespec='seconds')} tamis {__version__}\n{text}\n"
            )
        return str(ctx.log_file)
    except OSError:
        return None


def default_context() -> Context:
    return Context(interactive=sys.stderr.isatty(), own_process=True)


# Fits run on worker threads whose Python bookkeeping between compiled calls holds the interpreter
# lock; with the default 5 ms hand-over interval the threads (and a window's event loop) queue
# behind each other. 0.5 ms measured here: the desktop's longest event-loop wait during a demo fit
# fell from 286 ms to 49 ms, and a threaded command-line fit ran about 15% faster.
THREAD_SWITCH_SECONDS = 0.0005


# glibc returns large freed blocks (from 128 kB, a threshold it then moves) to the system, so
# the next p x p array of a validation part is fresh memory again, and on a virtual machine a
# first touch costs several microseconds per 4 kB page (measured here: 4-6 us, so 2-3 ms per
# 500 x 500 array; 30 to 4000 such faults per 1000x500 validation depending on that moving
# threshold). Blocks up to the fixed size below come from the heap, and up to the trim size of
# freed memory stays with the process for the next part.
HEAP_BLOCK_LIMIT = 32 << 20  # glibc's largest allowed value
HEAP_KEEP_FREE = 256 << 20


def _tune_allocator() -> bool:
    """Apply the two glibc allocator settings above; False where there is no glibc."""
    if not sys.platform.startswith("linux"):
        return False
    import ctypes

    try:
        libc = ctypes.CDLL(None)
        mallopt = libc.mallopt
    except (OSError, AttributeError):  # musl and other C libraries: leave them alone
        return False
    m_trim_threshold, m_mmap_threshold = -1, -3  # from glibc's malloc.h
    mallopt.argtypes = [ctypes.c_int, ctypes.c_int]
    return bool(mallopt(m_mmap_threshold, HEAP_BLOCK_LIMIT)) and bool(
        mallopt(m_trim_threshold, HEAP_KEEP_FREE)
    )


def tune_own_process() -> None:
    """Settings for a process of our own that runs threaded fits (the command line, the
    window, the benchmarks); not applied when the engine is a library in someone's program."""
    sys.setswitchinterval(THREAD_SWITCH_SECONDS)
    _tune_allocator()

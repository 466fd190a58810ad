"""Entry point of the Tamis app bundle (PyInstaller): the window by default, the command line with arguments.

- no arguments                -> the desktop window (``desktop.app.main([])``)
- one existing workbook path  -> the desktop window on that workbook (a file dropped on the program)
- anything else               -> the command line (``engine.cli.main(args)``), e.g. ``tamis fit ...``
- ``-m joblib.externals.loky...`` / ``-c from joblib.externals.loky...`` -> a validation worker
  process started by the program itself (Linux and macOS)

``TAMIS_SMOKE_QUIT_MS=N`` (for build checks): N milliseconds after the event loop starts, report
on stderr whether a window is showing, then close it as a user would (exit 0); exit 4 if none was shown, 5 if the loop
did not end after closing.
"""

from __future__ import annotations

import os
import sys
from pathlib import Path

_APP = None  # the QApplication, when this module created it
WORKBOOK_SUFFIXES = {".xlsx", ".xlsm", ".xls", ".ods", ".csv"}


def _is_workbook(arg: str) -> bool:
    return Path(arg).suffix.lower() in WORKBOOK_SUFFIXES and Path(arg).is_file()


def _release_own_console() -> None:
    """Windows: a double-clicked console program gets a console window of its own; close it.

    A console shared with a shell (the program was started from cmd or PowerShell) is kept.
    """
    if sys.platform != "win32":
        return
    import ctypes

    kernel32 = ctypes.windll.kernel32  # type: ignore[attr-defined]
    processes = (ctypes.c_uint32 * 4)()
    if kernel32.GetConsoleProcessList(processes, 4) == 1:
        kernel32.FreeConsole()


def _arm_smoke_quit(milliseconds: int) -> None:
    """Create the application early and schedule the window check and quit."""
    from PySide6.QtCore import QTimer
    from PySide6.QtWidgets import QApplication

    from desktop.app import make_app

    global _APP
    app = _APP = (
        make_app()
    )  # held until exit: a collected QApplication wrapper has crashed at shutdown

    def check_and_quit() -> None:
        shown = [w for w in QApplication.topLevelWidgets() if w.isVisible()]
        titles = ", ".join(repr(w.windowTitle()) for w in shown) or "none"
        print(f"tamis smoke: windows shown: {titles}", file=sys.stderr, flush=True)
        if not shown:
            app.exit(4)
        # close the way a user does (the last window closed ends the loop); app.exit() with the
        # window still open has crashed at interpreter shutdown
        for window in shown:
            window.close()
        QTimer.singleShot(3000, report_stuck)

    def report_stuck() -> None:  # the loop should have ended with the last window
        left = [
            w.windowTitle() or type(w).__name__
            for w in QApplication.topLevelWidgets()
            if w.isVisible()
        ]
        print(f"tamis smoke: still open after closing: {left}", file=sys.stderr, flush=True)
        app.exit(5)

    QTimer.singleShot(milliseconds, check_and_quit)


# joblib's process workers (loky) start the program again as if it were a Python interpreter:
# "-m <module> ..." for a worker, "-c <code>" for its resource tracker. Only these modules
# are run, so the bundle does not become a general interpreter.
_WORKER_MODULE_PREFIX = "joblib.externals.loky."


def _run_as_worker(args: list[str]) -> bool:
    """Run a loky worker or resource tracker when started as one; False for ordinary use."""
    if sys.platform == "win32":
        return False  # Windows bundles keep validation parts on threads (see engine.tuning.parts)
    # interpreter flags come first, one token each ("-B", "-Wignore", "-Xdev")
    while args and args[0].startswith("-") and args[0] not in ("-m", "-c") and len(args[0]) > 1:
        if args[0][1] not in "BEIOSWXdsuv":
            return False
        args = args[1:]
    if len(args) >= 2 and args[0] == "-m" and args[1].startswith(_WORKER_MODULE_PREFIX):
        import runpy

        sys.argv = [args[1], *args[2:]]
        runpy.run_module(args[1], run_name="__main__", alter_sys=True)
        return True
    if len(args) >= 2 and args[0] == "-c" and args[1].startswith(f"from {_WORKER_MODULE_PREFIX}"):
        sys.argv = ["-c", *args[2:]]
        exec(compile(args[1], "<tamis worker>", "exec"), {"__name__": "__main__"})
        return True
    return False


def main(argv: list[str] | None = None) -> int:
    args = list(sys.argv[1:] if argv is None else argv)
    if _run_as_worker(args):
        return 0
    if sys.platform != "win32":
        sys._tamis_runs_worker_processes = True  # type: ignore[attr-defined]
    if not args or (len(args) == 1 and _is_workbook(args[0])):
        _release_own_console()
        smoke = os.environ.get("TAMIS_SMOKE_QUIT_MS")
        if smoke:
            _arm_smoke_quit(int(smoke))
        from desktop.app import main as desktop_main

        status = int(desktop_main(args) or 0)
        # The window is closed and everything the user chose is written by now. Skip the
        # interpreter's teardown, where the order Python frees Qt objects in has crashed
        # (reported to the desktop side); a crash there would show the user a crash report.
        sys.stdout.flush()
        sys.stderr.flush()
        os._exit(status)
    from engine.cli import main as cli_main

    return int(cli_main(args))


if __name__ == "__main__":
    import multiprocessing

    multiprocessing.freeze_support()  # harmless unless a library starts worker processes
    raise SystemExit(main())

"""Take screenshots of the main window states for docs/screenshots (run under a display).

    Xvfb :99 -screen 0 1600x1000x24 &
    DISPLAY=:99 python tools/screenshots.py [--out docs/screenshots] [--scale 1.5]

Uses a copy of the demo workbook and a throw-away settings folder; the real engine runs.
Pictures are grabbed with QWidget.grab() and shrunk to a 256-colour palette when ImageMagick
is present, so they stay small in the repository.
"""

from __future__ import annotations

import argparse
import os
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--out", type=Path, default=ROOT / "docs" / "screenshots")
    ap.add_argument("--scale", type=float, default=1.0, help="screen scaling, e.g. 1.25 or 1.5")
    ap.add_argument("--only-scaled", action="store_true", help="take just the one scaled picture")
    args = ap.parse_args(argv)
    if args.scale != 1.0:
        os.environ["QT_SCALE_FACTOR"] = str(args.scale)
    args.out.mkdir(parents=True, exist_ok=True)

    from desktop.app import make_app
    from desktop.main_window import PAGE_SETTINGS, MainWindow
    from desktop.roles import Role
    from desktop.settings_store import SettingsStore

    app = make_app()
    work = Path(tempfile.mkdtemp(prefix="tamis-shots-"))
    book = Path(shutil.copy(ROOT / "demo" / "tamis_demo.xlsx", work / "tamis_demo.xlsx"))
    w = MainWindow(SettingsStore(work / "profile"))
    w.resize(1440, 900)
    w.show()

    def pump(seconds: float = 0.3) -> None:
        end = time.monotonic() + seconds
        while time.monotonic() < end:
            app.processEvents()
            time.sleep(0.01)

    def idle() -> None:
        while w.runner.busy:
            pump(0.05)
        pump(0.4)

    def shot(name: str) -> None:
        pump(0.4)
        path = args.out / name
        w.grab().save(str(path))
        if shutil.which("convert"):
            subprocess.run(
                ["convert", str(path), "-colors", "256", "-strip", f"PNG8:{path}"], check=False
            )
        print(f"wrote {path} ({path.stat().st_size // 1024} KB)")

    suffix = "" if args.scale == 1.0 else f"-scaled-{int(args.scale * 100)}"
    if not args.only_scaled:
        shot("01-empty.png")
    w.open_book(book, sheet="Bakery demand")
    idle()
    w.ledger.model.set_roles({"loaves_sold": Role.RESPONSE, "price": Role.FOCAL})
    w.settings_panel.set_values({"stability_runs": 60})
    w.ledger.select_names(["price"])
    w.ledger.show_problem_row("price")
    if args.only_scaled:
        shot(f"02-roles{suffix}.png")
        return 0
    shot("02-roles.png")
    w.pages.setCurrentIndex(PAGE_SETTINGS)
    shot("03-settings.png")
    w.run_study()
    while w.runner.busy and w.progress_bar.value() < 250:
        pump(0.05)
    shot("04-running.png")
    idle()
    if w.result is None:
        print("the run failed:", w.last_message, file=sys.stderr)
        return 1
    w.message.hide()
    w.results.method_box.setCurrentIndex(max(0, w.results.method_box.findData("lasso")))
    shot("05-path.png")
    w.results.tabs.setCurrentIndex(1)
    shot("06-validation.png")
    w.results.tabs.setCurrentIndex(2)
    shot("07-compare.png")
    w.results.tabs.setCurrentIndex(w.results.FOCAL_TAB)
    shot("08-focal.png")
    w.results.tabs.setCurrentIndex(w.results.STABILITY_TAB)
    shot("09-stability.png")
    w.results.tabs.setCurrentIndex(w.results.CHECK_TAB)
    shot("10-rows-to-check.png")
    w.close()
    return 0


if __name__ == "__main__":
    code = main()
    from desktop.engine_calls import stop_background_work

    stop_background_work()  # os._exit below would leave the worker processes behind
    sys.stdout.flush()
    os._exit(code)  # skip interpreter tear-down (see desktop.app.run_and_exit)

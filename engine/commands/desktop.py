"""`tamis desktop [BOOK]`: open the window (the only command that imports Qt)."""

from __future__ import annotations

import os
import sys


def open_window(argv: list[str], ctx) -> int:
    """Run the desktop until its window closes; in a real process, leave right after."""
    from desktop.app import main as desktop_main

    code = int(desktop_main(argv))
    if ctx.own_process:
        sys.stdout.flush()
        sys.stderr.flush()
        os._exit(code)
    return code


def run(args, ctx) -> int:
    return open_window([args.book] if args.book else [], ctx)

"""`tamis desktop [BOOK]`: open the window (the only command that imports Qt)."""

from __future__ import annotations


def run(args, ctx) -> int:
    from desktop.app import main as desktop_main

    return int(desktop_main([args.book] if args.book else []))

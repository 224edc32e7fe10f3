"""``lensmass gui``: open the desktop window, optionally on an image or a session."""

from __future__ import annotations

import argparse


def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("file", nargs="?", metavar="IMAGE|SESSION",
                        help="a FITS image, a picture, or a session file (.json) to open")
    parser.add_argument("--screenshot", metavar="OUT.png",
                        help="render the window on FILE into this PNG and exit (works without a display)")
    parser.add_argument("--size", metavar="WxH", default=None,
                        help="window size for the screenshot, e.g. 1440x900")


def _size(text: str | None) -> tuple[int, int] | None:
    from lensmass.core.errors import LensInputError

    if not text:
        return None
    try:
        w, h = (int(v) for v in text.lower().split("x"))
    except ValueError:
        raise LensInputError(f"--size must look like 1440x900, got '{text}'.") from None
    if not (320 <= w <= 8000 and 240 <= h <= 8000):
        raise LensInputError(f"--size must be between 320x240 and 8000x8000, got '{text}'.")
    return w, h


def run(args: argparse.Namespace) -> int:
    from lensmass.gui.app import run_window

    return run_window(args.file, args.screenshot, _size(args.size))

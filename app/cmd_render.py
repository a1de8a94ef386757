"""``kinestat render FILE -o OUT.png``: draw a scheme with its verdict, headless.

The picture is the one the app exports (:func:`kinestat.app.drawing.paint_scheme`): the
scheme, the first mechanism shape when it is unstable, the verdict in words, the hand
count and the concept-stage caution.  ``OUT`` ending in ``.svg`` writes SVG instead.
Qt is imported only when the command runs, on the offscreen platform when there is no
display.  Exit status: 0 written; 2 the scheme file cannot be loaded or the picture cannot
be written.
"""
from __future__ import annotations

import argparse
import os
import sys
from pathlib import Path


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("file", metavar="FILE", help="scheme file (kinestat-scheme JSON)")
    p.add_argument("-o", "--output", required=True, metavar="OUT",
                   help="picture to write (.png, or .svg for a vector drawing)")
    p.add_argument("--width", type=int, default=1600, help="width in pixels (default 1600)")
    p.add_argument("--height", type=int, default=1000, help="height in pixels (default 1000)")
    p.add_argument("--scale", type=float, default=1.0,
                   help="device pixel ratio of a PNG (2 for high-DPI screens; default 1)")
    p.add_argument("--ids", action="store_true", help="label nodes and members with their ids")
    p.add_argument("--no-mode", action="store_true", help="leave out the first mechanism shape")


def ensure_gui_app():
    """A QGuiApplication for painting (offscreen when no display is reachable)."""
    if sys.platform.startswith("linux") and not (os.environ.get("DISPLAY") or os.environ.get("WAYLAND_DISPLAY")):
        os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
    from PySide6.QtGui import QGuiApplication

    return QGuiApplication.instance() or QGuiApplication(["kinestat-render"])


def run(args: argparse.Namespace) -> int:
    from kinestat.core.io import SchemeError, load

    try:
        scheme = load(args.file)
    except SchemeError as exc:
        print(f"kinestat render: {Path(args.file).name}: {exc}", file=sys.stderr)
        return 2
    if args.width < 64 or args.height < 64:
        print("kinestat render: --width and --height must be at least 64 pixels", file=sys.stderr)
        return 2
    c = None
    if scheme.members:
        from kinestat.core.classify import classify

        c = classify(scheme)
    app = ensure_gui_app()  # the application must live while painting
    from . import drawing as dr

    out = Path(args.output)
    kw = {"show_ids": args.ids, "show_mode": not args.no_mode}
    try:
        if out.suffix.lower() == ".svg":
            dr.save_svg(out, scheme, c, args.width, args.height, **kw)
        else:
            dr.save_png(out, scheme, c, args.width, args.height, dpr=max(0.5, args.scale), **kw)
    except OSError as exc:
        print(f"kinestat render: cannot write {out}: {exc}", file=sys.stderr)
        return 2
    words = c.summary() if c is not None else "no members"
    print(f"{out}: {words}")
    del app
    return 0

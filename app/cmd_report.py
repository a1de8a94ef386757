"""``kinestat report FILE [-o REPORT.pdf] [--no-extras]``: write the PDF check report.

Runs headless: with no display it sets ``QT_QPA_PLATFORM=offscreen`` before Qt starts, and
it makes a ``QGuiApplication`` when none exists.  A file that cannot be loaded gives one
line on stderr naming the item and the field, exit status 2, and no PDF (the report is
written to a temporary file beside the target and renamed over it only when complete).
"""
from __future__ import annotations

import argparse
import sys
from pathlib import Path

_PROG = "kinestat report"


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("file", metavar="FILE", help="scheme file (kinestat-scheme JSON)")
    p.add_argument("-o", "--output", metavar="REPORT.pdf",
                   help="the PDF to write (default: FILE with the suffix .pdf)")
    p.add_argument("--no-extras", action="store_true",
                   help="verdict, count and drawing only: skip motion tracing and redundancy (faster on big schemes)")


def _fail(msg: str) -> int:
    print(f"{_PROG}: {msg}", file=sys.stderr)
    return 2


def run(args: argparse.Namespace) -> int:
    from kinestat.core.io import SchemeError, load

    src = Path(args.file)
    out = Path(args.output) if args.output else src.with_suffix(".pdf")
    try:
        scheme = load(src)
    except SchemeError as exc:
        return _fail(f"{src.name}: {exc}")
    if out.is_dir():
        return _fail(f"{out}: is a folder; give the PDF's file name with -o")
    if not out.parent.is_dir():
        return _fail(f"{out}: folder {out.parent} does not exist")
    if out.resolve() == src.resolve():
        return _fail(f"{out}: the report would overwrite the scheme file")
    from kinestat.app.cmd_render import ensure_gui_app

    app = ensure_gui_app()  # noqa: F841 - keeps the application alive while painting
    from kinestat.app.report import write_report

    try:
        info = write_report(scheme, out, src.name, extras=not args.no_extras)
    except OSError as exc:
        return _fail(f"{out}: cannot be written ({exc.strerror or exc})")
    print(f"{out}: {info.pages} page(s), {info.verdict}, scheme hash {info.hash}")
    return 0

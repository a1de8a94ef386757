"""``kinestat [FILE]``: start the desktop app (Qt is imported here, not by the CLI)."""
from __future__ import annotations

import argparse
import sys
from pathlib import Path


def run_gui(argv: list[str]) -> int:
    p = argparse.ArgumentParser(prog="kinestat", description="kinestat: sketch a 2D scheme, see its verdict live. "
                                "Concept-stage check only; not structural design.")
    p.add_argument("file", nargs="?", help="a scheme file (.json) to open")
    args = p.parse_args(argv)

    from PySide6.QtWidgets import QApplication

    from .main_window import MainWindow

    app = QApplication.instance() or QApplication(sys.argv[:1])
    app.setApplicationName("kinestat")
    app.setOrganizationName("kinestat")
    app.setApplicationDisplayName("kinestat")
    win = MainWindow()
    win.show()
    restored = win.offer_restore()
    if args.file and not restored:
        win.open_path(Path(args.file), ask=False)
    win.first_start()
    return app.exec()

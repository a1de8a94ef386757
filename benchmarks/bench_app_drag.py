"""Frame time of dragging a node on the canvas of a 500-member scheme.

One frame = one mouse-move event on the viewport while the button is held (the select
tool snaps, the document pushes a merged move command, the scene updates the items at the
node) plus the event processing that follows it, which repaints the viewport once.  Runs offscreen unless DISPLAY is set.

    python benchmarks/bench_app_drag.py [--frames 120]

Prints a table: scenario, frames, mean / median / 95th percentile / worst frame in ms, and
how many verdicts arrived during the drag.
"""
from __future__ import annotations

import argparse
import os
import statistics
import sys
import time

if not os.environ.get("DISPLAY"):
    os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")

from PySide6.QtCore import QEvent, QPointF, QSettings, Qt  # noqa: E402
from PySide6.QtGui import QMouseEvent  # noqa: E402
from PySide6.QtWidgets import QApplication  # noqa: E402


def _scheme(bays: int, storeys: int):
    from kinestat.app.generators import frame

    return frame(bays, storeys, 5.0, 3.0, "fixed")


def _window(tmp, sync: bool, live: bool):
    from kinestat.app.main_window import MainWindow

    s = QSettings(os.path.join(tmp, "s.ini"), QSettings.IniFormat)
    s.setValue("welcomed", True)
    w = MainWindow(s, os.path.join(tmp, "rec.json"), sync_analysis=sync)
    w.resize(1400, 900)
    w.show()
    if not live:
        w.doc.changed.disconnect(w.runner._on_changed)
    QApplication.processEvents()
    return w


def _press(vpw, p, kind, buttons):
    ev = QMouseEvent(kind, QPointF(p), QPointF(vpw.mapToGlobal(p)),
                     Qt.LeftButton if kind != QEvent.MouseMove else Qt.NoButton, buttons, Qt.NoModifier)
    QApplication.sendEvent(vpw, ev)


def drag(w, nid: str, frames: int, pace_ms: float) -> tuple[list[float], int]:
    view, doc = w.view, w.doc
    vpw = view.viewport()
    x0, y0 = doc.scheme.node_xy(nid)
    w.set_tool("select")
    results_before = w.runner.runs
    start = view.mapFromScene(QPointF(x0, -y0))
    _press(vpw, start, QEvent.MouseButtonPress, Qt.LeftButton)
    times = []
    for k in range(1, frames + 1):
        t0 = time.perf_counter()
        # a wandering path (also crossing grid points, so snapping works every frame)
        p = view.mapFromScene(QPointF(x0 + 3.0 * k / frames, -(y0 + 1.5 * ((k % 20) / 20.0))))
        _press(vpw, p, QEvent.MouseMove, Qt.LeftButton)
        QApplication.processEvents()  # the one repaint the move scheduled
        times.append((time.perf_counter() - t0) * 1000)
        spare = pace_ms / 1000 - (time.perf_counter() - t0)
        if spare > 0:
            time.sleep(spare)
            QApplication.processEvents()
    _press(vpw, p, QEvent.MouseButtonRelease, Qt.NoButton)
    QApplication.processEvents()
    w.runner.wait_idle(30000)
    QApplication.processEvents()
    return times, w.runner.runs - results_before


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--frames", type=int, default=120)
    ap.add_argument("--bays", type=int, default=25)
    ap.add_argument("--storeys", type=int, default=10)
    args = ap.parse_args(argv)
    import tempfile

    app = QApplication.instance() or QApplication(sys.argv[:1])
    from kinestat.app.analysis_runner import classify_scheme

    scheme = _scheme(args.bays, args.storeys)
    t0 = time.perf_counter()
    c = classify_scheme(scheme)
    t_classify = (time.perf_counter() - t0) * 1000
    nid = f"n{args.bays // 2}_{args.storeys}"
    rows = []
    with tempfile.TemporaryDirectory() as tmp:
        for label, live, pace in (("canvas only (analysis off)", False, 0.0),
                                  ("live verdict, background thread, 60 Hz pace", True, 16.7)):
            w = _window(tmp, sync=False, live=live)
            w.doc.replace_scheme(scheme)
            w.view.fit()
            QApplication.processEvents()
            times, runs = drag(w, nid, args.frames, pace)
            rows.append((label, times, runs if live else "-"))
            w.doc.undo_stack.setClean()
            w.close()
            app.processEvents()
    print(f"scheme: {args.bays}-bay x {args.storeys}-storey fixed-base frame, {len(scheme.members)} members, "
          f"{len(scheme.nodes)} nodes; classify once: {t_classify:.0f} ms ({c.summary()})")
    print(f"platform: {QApplication.platformName()}")
    print()
    head = f"{'scenario':46s} {'frames':>6s} {'mean':>7s} {'median':>7s} {'p95':>7s} {'worst':>7s} {'verdicts':>8s}"
    print(head)
    print("-" * len(head))
    for label, times, runs in rows:
        ts = sorted(times)
        p95 = ts[int(0.95 * (len(ts) - 1))]
        print(f"{label:46s} {len(ts):6d} {statistics.mean(ts):7.2f} {statistics.median(ts):7.2f} {p95:7.2f} "
              f"{ts[-1]:7.2f} {runs!s:>8s}")
    print("\n(frame = mouse-move handling + the repaint it schedules, in ms)")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())

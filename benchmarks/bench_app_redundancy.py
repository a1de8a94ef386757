"""Times of the app's redundancy, primary-structure and remedies views on ~500-member schemes.

Schemes: those of ``bench_redundancy.py`` (built in code, about 500 members each):
  frame    rigid frame 10 bays x 25 storeys, fixed feet        m = 0, s = 750
  braced   strip truss, 100 panels, both diagonals in each     m = 0, s = 100
  cut      strip truss, 125 panels, 5 diagonals left out       m = 5, s = 0

Columns (seconds unless marked; best of --repeat):
  redundancy  the view's background job: verdict + canonical states + redundancy diagonal +
              every member / restraint removal (rank update above 150 items)
  primary     the view's background job: verdict + a primary structure and its alternatives,
              each re-analysed
  remedies    the view's background job: verdict + verified remedies and the smallest set
  refresh     the panel filled from a result (table or list) plus one repaint of the canvas
              with the overlay (ms)
  hover       one cursor move over the canvas with the redundancy view showing: pick the
              member, repaint (ms)
  stall       the longest the GUI thread went without running a 5 ms timer while the view's
              job ran on the worker thread, in the real window (ms)

Run:  python benchmarks/bench_app_redundancy.py [--repeat N]
Offscreen unless DISPLAY is set.
"""
from __future__ import annotations

import argparse
import os
import sys
import tempfile
import time
from pathlib import Path

os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
os.environ.setdefault("OMP_NUM_THREADS", "1")
if not os.environ.get("DISPLAY"):
    os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))
sys.path.insert(0, str(HERE.parent / "tests"))

from bench_app_drag import _window  # noqa: E402
from bench_redundancy import scheme  # noqa: E402
from PySide6.QtCore import QElapsedTimer, QTimer  # noqa: E402
from PySide6.QtWidgets import QApplication  # noqa: E402


def best_of(fn, repeat: int):
    best, out = float("inf"), None
    for _ in range(repeat):
        t0 = time.perf_counter()
        out = fn()
        best = min(best, time.perf_counter() - t0)
    return best, out


def window(tmp: str, sync: bool):
    return _window(tmp, sync, live=True)  # the drag benchmark's window: 1400 x 900, shown


def refresh_ms(w, name: str, res, repeat: int) -> float:
    view = w.insight.views[name]
    vpw = w.view.viewport()

    def once():
        view.show_result(res, w.doc.revision)
        if name == "remedies" and view.remedies():
            view.list.setCurrentRow(0)  # the preview is part of what a refresh shows
        vpw.repaint()

    return 1000 * best_of(once, repeat)[0]


def hover_ms(w, frames: int = 40) -> float:
    s = w.doc.scheme
    ids = list(s.members)[:frames]
    times = []
    for mid in ids:
        m = s.members[mid]
        (x0, y0), (x1, y1) = s.node_xy(m.start), s.node_xy(m.end)
        t0 = time.perf_counter()
        w.insight._on_cursor((x0 + x1) / 2, (y0 + y1) / 2)
        w.view.viewport().repaint()
        times.append(time.perf_counter() - t0)
    times.sort()
    return 1000 * times[len(times) // 2]


def stall_ms(tmp: str, sch, name: str) -> tuple[float, float]:
    """Longest gap between 5 ms ticks while the view's job runs in the background; and its time."""
    w = window(tmp, sync=False)
    w.doc.replace_scheme(sch)
    runner = w.insight.runners[name]
    QApplication.processEvents()
    gaps = []
    clock = QElapsedTimer()
    clock.start()
    last = [clock.elapsed()]

    def tick():
        now = clock.elapsed()
        gaps.append(now - last[0])
        last[0] = now

    t = QTimer()
    t.setInterval(5)
    t.timeout.connect(tick)
    t.start()
    t0 = time.perf_counter()
    w.insight.show_view(name)
    while not runner.is_current():
        QApplication.processEvents()
        time.sleep(0.001)
    took = time.perf_counter() - t0
    t.stop()
    runner.wait_idle(60000)
    w.doc.undo_stack.setClean()
    w.close()
    return (max(gaps) if gaps else 0.0), took


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeat", type=int, default=3)
    args = ap.parse_args()
    app = QApplication.instance() or QApplication([])  # noqa: F841 - keeps the application alive
    from kinestat.app.insight_runner import compute_primary, compute_redundancy, compute_remedies

    jobs = {"redundancy": compute_redundancy, "primary": compute_primary, "remedies": compute_remedies}
    plan = {"frame": ("redundancy", "primary"), "braced": ("redundancy", "primary"),
            "cut": ("redundancy", "remedies")}
    tmp = tempfile.mkdtemp(prefix="kinestat-bench-")
    print(f"{'scheme':8s} {'members':>7s} {'view':>10s} {'job s':>8s} {'refresh ms':>11s} {'hover ms':>9s} "
          f"{'stall ms':>9s} {'shown after s':>14s}  notes")
    for sname, views in plan.items():
        sch = scheme(sname)
        w = window(tmp, sync=True)
        w.doc.replace_scheme(sch)
        w.view.fit()
        for name in views:
            t, res = best_of(lambda: jobs[name](sch), args.repeat)
            w.insight.show_view(name)
            QApplication.processEvents()
            ref = refresh_ms(w, name, res, args.repeat)
            hov = f"{hover_ms(w):9.1f}" if name == "redundancy" else f"{'-':>9s}"
            stall, shown = stall_ms(tmp, sch, name)
            if name == "redundancy":
                red = res.redundancy
                note = (f"s={red.self_stress}, sum={red.total:.1f}, "
                        f"{len(res.criticality.critical_members())} critical") if red else res.note
            elif name == "primary":
                note = f"{len(res.structures())} choices of {res.result.self_stress} releases"
            else:
                r = res.result
                note = f"m={r.mechanisms}, {len(r.remedies)} remedies, set of " \
                       f"{len(r.smallest_set.changes) if r.smallest_set else '-'}"
            print(f"{sname:8s} {len(sch.members):7d} {name:>10s} {t:8.2f} {ref:11.1f} {hov} {stall:9.0f} "
                  f"{shown:14.2f}  {note}")
            sys.stdout.flush()
        w.doc.undo_stack.setClean()
        w.close()
    return 0


if __name__ == "__main__":
    raise SystemExit(main())

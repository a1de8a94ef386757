"""Frame time of scrubbing a mechanism's traced path on the canvas of a ~500-member scheme.

One frame = setting the scrubber to a position (the overlay's body paths for that position,
built on the first visit and kept) plus the event processing that follows, which repaints
the viewport once.  Baseline in the same run: repainting the same view with the overlay
hidden: the canvas as it is without the strip (the drawing and its static dashed sketch of the
first mode), and the drawing alone.  Runs offscreen unless DISPLAY is set.

Cases:
  strip truss   ~500 bars, a pin-jointed strip with one diagonal left out (m = 1)
  soft storey   ~500 beams, a rigid frame whose ground-storey columns are hinged at both ends

    python benchmarks/bench_motion_scrub.py [--quick]

Prints per case: members, frames, tracing time (worker), then for each pass the frames,
mean / median / 95th percentile / worst frame in ms.
"""
from __future__ import annotations

import argparse
import os
import random
import statistics
import sys
import tempfile
import time
from pathlib import Path

os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
os.environ.setdefault("OMP_NUM_THREADS", "1")
if not os.environ.get("DISPLAY"):
    os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT / "tests"))
sys.path.insert(0, str(ROOT / "benchmarks"))

from PySide6.QtCore import QSettings  # noqa: E402
from PySide6.QtWidgets import QApplication  # noqa: E402


def cases(quick: bool):
    from bench_motion import soft_storey
    from catalogue import strip_truss

    panels = 40 if quick else 125
    yield "strip truss", strip_truss(panels, missing=(panels // 2,))
    yield "soft storey", soft_storey(10, 8 if quick else 24)


def _window(tmp: str):
    from kinestat.app.main_window import MainWindow

    s = QSettings(os.path.join(tmp, "s.ini"), QSettings.IniFormat)
    s.setValue("welcomed", True)
    w = MainWindow(s, os.path.join(tmp, "rec.json"), sync_analysis=True)
    w.resize(1400, 900)
    w.show()
    QApplication.processEvents()
    return w


def _timed(fn) -> float:
    t0 = time.perf_counter()
    fn()
    QApplication.processEvents()
    return (time.perf_counter() - t0) * 1000


def scrub(ctl, order) -> list[float]:
    times = []
    for k in order:
        times.append(_timed(lambda k=k: ctl.strip.scrubber.setValue(k)))
    return times


def baselines(w, frames: int) -> tuple[list[float], list[float]]:
    """Repaints without the motion: the app's canvas as it was (drawing + its static sketch of
    the first mode), and the drawing alone."""
    ctl = w.motion
    vp = w.view.viewport()
    ctl.overlay.set_shown(False)
    with_sketch = [_timed(vp.update) for _ in range(frames)]
    w.scene.mode_item.setVisible(False)
    alone = [_timed(vp.update) for _ in range(frames)]
    ctl.overlay.set_shown(True)
    return with_sketch, alone


def row(label: str, times: list[float]) -> str:
    ts = sorted(times)
    p95 = ts[int(0.95 * (len(ts) - 1))]
    return (f"  {label:42s} {len(ts):6d} {statistics.mean(ts):7.2f} {statistics.median(ts):7.2f} "
            f"{p95:7.2f} {ts[-1]:7.2f}")


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="smaller schemes")
    args = ap.parse_args(argv)
    app = QApplication.instance() or QApplication(sys.argv[:1])
    print(f"platform: {QApplication.platformName()}")
    head = f"  {'pass':42s} {'frames':>6s} {'mean':>7s} {'median':>7s} {'p95':>7s} {'worst':>7s}"
    with tempfile.TemporaryDirectory() as tmp:
        for name, scheme in cases(args.quick):
            w = _window(tmp)
            ctl = w.motion
            ctl.want_play = False
            t0 = time.perf_counter()
            w.doc.replace_scheme(scheme)  # verdict, then the path, on this thread (sync)
            t_open = time.perf_counter() - t0
            ctl.pause()
            QApplication.processEvents()
            d = ctl.data
            if d is None:
                print(f"\n{name}: no path ({ctl.error})")
                w.close()
                continue
            ctl.fit_path()
            QApplication.processEvents()
            n = d.frames
            print(f"\n{name}: {len(scheme.members)} members, {len(scheme.nodes)} nodes, {n} frames, "
                  f"{len(d.bodies)} moving bodies, {d.motion}; tracing {d.seconds * 1000:.0f} ms "
                  f"(verdict + tracing on opening {t_open * 1000:.0f} ms); ended {d.ended['backward']} / "
                  f"{d.ended['forward']}")
            print(head)
            print("  " + "-" * (len(head) - 2))
            sweep = list(range(n)) + list(range(n - 2, -1, -1))
            first = scrub(ctl, list(range(n)))
            again = scrub(ctl, sweep)
            rnd = random.Random(7)
            jumps = scrub(ctl, [rnd.randrange(n) for _ in range(2 * n)])
            sketch, alone = baselines(w, 2 * n)
            print(row("first sweep (paths built)", first))
            print(row("sweeps back and forth (paths kept)", again))
            print(row("random jumps", jumps))
            print(row("baseline: repaint, no motion (with sketch)", sketch))
            print(row("baseline: repaint, drawing alone", alone))
            w.doc.undo_stack.setClean()
            w.close()
            app.processEvents()
    print("\n(frame = scrubber change + the repaint it schedules, in ms)")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())

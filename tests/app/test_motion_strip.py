"""The motion strip: an unstable scheme's mechanism animated and scrubbable on the canvas.

Positions on the canvas are checked against the tracer (core.motion) and against closed-form
kinematics: Freudenstein's equation and fixed link lengths for a four-bar, the analytic
toggle angles of a non-Grashof linkage, Aronhold-Kennedy instant centres."""
from __future__ import annotations

import math
import threading
from pathlib import Path

import numpy as np
import pytest
from PySide6.QtCore import Qt
from PySide6.QtGui import QImage

from app_helpers import make_window
from kinestat.core.io import load
from kinestat.core.motion import trace

ROOT = Path(__file__).resolve().parents[2]
EX = ROOT / "examples"
DATA = ROOT / "tests" / "core" / "data"
GATE = EX / "gate_fourbar_grashof.json"


def opened(qtbot, tmp_path, path, sync=True):
    w = make_window(qtbot, tmp_path, sync=sync)
    w.open_path(path, as_example=True)
    if not sync:
        qtbot.waitUntil(lambda: w.motion.data is not None, timeout=20000)
    return w, w.motion


def freudenstein_residual(a, b, c, d, th2, th4):
    """K1 cos th4 - K2 cos th2 + K3 - cos(th2 - th4) = 0 (Freudenstein 1955)."""
    K1, K2, K3 = d / a, d / c, (a * a - b * b + c * c + d * d) / (2 * a * c)
    return K1 * math.cos(th4) - K2 * math.cos(th2) + K3 - math.cos(th2 - th4)


def overlay_nodes(ctl, scheme):
    """Node positions as drawn by the overlay's body items (member ends, start then end)."""
    out = {}
    for j, body in enumerate(ctl.data.bodies):
        pts = ctl.overlay.body_points(j)
        for k, mid in enumerate(body.members):
            m = scheme.members[mid]
            for nid, p in ((m.start, pts[2 * k]), (m.end, pts[2 * k + 1])):
                if nid in out:
                    assert p == pytest.approx(out[nid], abs=1e-9)
                out[nid] = p
    return out


def line_intersection(p1, p2, q1, q2):
    d1, d2 = np.subtract(p2, p1), np.subtract(q2, q1)
    t = np.linalg.solve(np.array([d1, -d2]).T, np.subtract(q1, p1))
    return np.asarray(p1) + t[0] * d1


# ---------------------------------------------------------------------- showing
def test_unstable_example_opens_with_the_strip_visible_and_playing(qtbot, tmp_path):
    w, ctl = opened(qtbot, tmp_path, GATE)
    assert ctl.dock.isVisible()
    assert ctl.data is not None and ctl.data.motion == "finite"
    # Grashof 1883: s + l = 2 + 9 <= p + q = 6 + 7 with the crank shortest: it turns fully
    assert ctl.data.ended == {"forward": "full cycle", "backward": "full cycle"}
    assert ctl.playing
    assert ctl.repeat() == "loop"
    # the drawing stays as a faint ghost, the first-mode sketch gives way to the animation
    assert all(it.opacity() < 0.5 for it in w.scene.member_items.values())
    assert not w.scene.mode_item.isVisible()
    assert all(it.isVisible() for it in ctl.overlay.body_items)


def test_scrubbing_moves_the_overlay_to_the_traced_positions(qtbot, tmp_path):
    w, ctl = opened(qtbot, tmp_path, GATE)
    s = load(GATE)
    path = trace(s)  # the tracer on its own, outside the app
    assert ctl.data.frames == len(path.frames)
    # crank, coupler, rocker, ground as drawn (2, 7, 9, 6 to six digits)
    a, b, c, d = (math.dist(s.node_xy(p), s.node_xy(q)) for p, q in (("A", "B"), ("B", "C"), ("D", "C"), ("A", "D")))
    for k in (17, 45, 0, 77, len(path.frames) - 2):
        ctl.strip.scrubber.setValue(k)
        assert not ctl.playing  # scrubbing pauses
        assert ctl.frame == k
        drawn = overlay_nodes(ctl, s)
        for nid in ("A", "B", "C", "D"):
            assert drawn[nid] == pytest.approx(path.frames[k][nid], abs=1e-9)
        # Freudenstein 1955: crank angle th2 at A, rocker angle th4 at D, from the ground line A-D
        th2 = math.atan2(drawn["B"][1] - drawn["A"][1], drawn["B"][0] - drawn["A"][0])
        th4 = math.atan2(drawn["C"][1] - drawn["D"][1], drawn["C"][0] - drawn["D"][0])
        assert abs(freudenstein_residual(a, b, c, d, th2, th4)) < 1e-9
        for m in s.members.values():  # rigid links keep their lengths (exact geometry)
            assert math.dist(drawn[m.start], drawn[m.end]) == pytest.approx(
                math.dist(s.node_xy(m.start), s.node_xy(m.end)), abs=1e-9)
    # keyboard on the scrubber through qtbot: one position at a time
    ctl.strip.scrubber.setFocus()
    qtbot.keyClick(ctl.strip.scrubber, Qt.Key_Right)
    assert ctl.frame == len(path.frames) - 1
    assert overlay_nodes(ctl, s)["C"] == pytest.approx(path.frames[-1]["C"], abs=1e-9)
    # the animation never writes to the document
    assert w.doc.undo_stack.count() == 0
    assert w.doc.scheme.node_xy("C") == s.node_xy("C")


def test_instant_centres_follow_kennedy_along_the_path(qtbot, tmp_path):
    _w, ctl = opened(qtbot, tmp_path, GATE)
    d = ctl.data
    by_members = {b.members: b for b in d.bodies}
    crank, coupler, rocker = by_members[("k1",)], by_members[("k2",)], by_members[("k3",)]
    for k in range(0, d.frames, 7):
        ctl.set_frame(k)
        P = ctl.data.positions(k)
        # a link pinned to the ground turns about its pin
        assert crank.centres[k] == pytest.approx(P["A"], abs=1e-12)
        assert rocker.centres[k] == pytest.approx(P["D"], abs=1e-12)
        # Aronhold-Kennedy: the coupler's centre is where the crank and rocker lines meet
        X = line_intersection(P["A"], P["B"], P["D"], P["C"])
        reach = math.dist(X, P["B"])
        assert math.dist(coupler.centres[k], X) <= 1e-3 * reach


def test_a_translating_body_gets_a_direction_not_a_centre(qtbot, tmp_path):
    _w, ctl = opened(qtbot, tmp_path, EX / "roof_truss_parallel_rollers.json")
    (body,) = ctl.data.bodies
    # every reaction vertical: nothing stops a horizontal slide (common practice)
    assert np.isnan(body.centres).all()
    assert np.abs(body.directions[:, 0]) == pytest.approx(np.ones(ctl.data.frames), abs=1e-9)
    assert body.directions[:, 1] == pytest.approx(np.zeros(ctl.data.frames), abs=1e-9)


def test_dead_centres_are_marked_on_the_scrubber_at_the_toggle_angles(qtbot, tmp_path):
    w = make_window(qtbot, tmp_path)
    w.open_path(DATA / "kin_triple_rocker.json")
    ctl = w.motion
    d = ctl.data
    dead = sorted(m.frame for m in ctl.strip.scrubber.marks if m.kind == "dead centre")
    assert dead == [0, d.frames - 1]
    # toggle: coupler and rocker in line, cos th2 = (a^2 + d^2 - (b + c)^2) / (2 a d)
    # (closed-form four-bar kinematics; a, b, c, d = 6, 7, 8, 10)
    th = math.degrees(math.acos((36 + 100 - 225) / (2 * 6 * 10)))
    for k in dead:
        ctl.strip.scrubber.setValue(k)
        ax, ay = overlay_nodes(ctl, load(DATA / "kin_triple_rocker.json"))["A"]
        assert abs(math.degrees(math.atan2(ay, ax))) == pytest.approx(th, abs=1e-4)


def test_infinitesimal_mechanism_is_shown_linearised_and_labelled(qtbot, tmp_path):
    _w, ctl = opened(qtbot, tmp_path, EX / "signboard_concurrent.json")
    d = ctl.data
    assert d.motion == "infinitesimal" and d.linearised
    assert ctl.strip.banner_label.isVisible()
    assert "LINEARISED" in ctl.strip.banner_label.text()
    assert "no physical meaning" in ctl.strip.banner_label.text()
    assert not [m for m in d.marks if m.kind in ("dead centre", "clash", "limit")]
    assert not ctl.strip.adopt_button.isEnabled()
    ctl.set_frame(d.frames - 1)
    assert not ctl.strip.adopt_button.isEnabled()
    # concurrent reaction lines through (0, 0): the panel turns about that point
    # (Calladine & Pellegrino 1991: an infinitesimal rigid-body mechanism)
    (body,) = d.bodies
    assert body.centres[d.frames - 1] == pytest.approx((0.0, 0.0), abs=1e-9)


# ---------------------------------------------------------------------- playing
def test_play_advances_and_pause_stops_the_frame_index(qtbot, tmp_path):
    w, ctl = opened(qtbot, tmp_path, GATE)
    ctl.pause()
    ctl.set_frame(0)
    qtbot.mouseClick(ctl.strip.play_button, Qt.LeftButton)
    assert ctl.playing
    qtbot.waitUntil(lambda: ctl.frame >= 3, timeout=3000)
    qtbot.mouseClick(ctl.strip.play_button, Qt.LeftButton)
    assert not ctl.playing
    stopped = ctl.frame
    qtbot.wait(250)
    assert ctl.frame == stopped
    assert overlay_nodes(ctl, w.doc.scheme)["B"] == pytest.approx(ctl.data.positions(stopped)["B"], abs=1e-12)
    assert w.doc.undo_stack.count() == 0


def test_back_and_forth_turns_at_the_ends(qtbot, tmp_path):
    _w, ctl = opened(qtbot, tmp_path, EX / "storage_rack_unbraced.json")
    ctl.pause()
    ctl.strip.repeat_combo.setCurrentIndex(0)
    last = ctl.data.frames - 1
    assert ctl.repeat() == "back and forth"
    ctl.set_frame(last - 1)
    seq = []
    k = ctl.frame
    for _ in range(3):
        k = ctl.next_frame(k)
        seq.append(k)
    assert seq == [last, last - 1, last - 2]


def test_editing_while_playing_restarts_the_motion_on_the_new_scheme(qtbot, tmp_path):
    w, ctl = opened(qtbot, tmp_path, GATE)
    assert ctl.playing
    first = ctl.data
    w.doc.move_nodes({"D": (6.5, 0.0)})  # a longer ground link: 2 + 9 <= 6.5 + 7, still Grashof
    assert ctl.data is not first and ctl.data.revision == w.doc.revision
    assert ctl.playing and ctl.frame == ctl.data.start
    new = trace(w.doc.scheme)
    assert ctl.data.frames == len(new.frames)
    assert ctl.data.ended["forward"] == "full cycle"
    ctl.set_frame(40)
    drawn = overlay_nodes(ctl, w.doc.scheme)
    assert drawn["C"] == pytest.approx(new.frames[40]["C"], abs=1e-9)
    assert math.dist(drawn["C"], (6.5, 0.0)) == pytest.approx(math.dist(w.doc.scheme.node_xy("C"), (6.5, 0.0)),
                                                              abs=1e-9)


def test_stable_scheme_hides_the_strip_and_restores_the_drawing(qtbot, tmp_path):
    w, ctl = opened(qtbot, tmp_path, GATE)
    w.open_path(EX / "footbridge_warren.json", as_example=True)
    assert not ctl.dock.isVisible()
    assert ctl.data is None and not ctl.playing
    assert not any(it.isVisible() for it in (ctl.overlay.marks_item, ctl.overlay.still_item))
    assert all(it.opacity() == 1.0 for it in w.scene.member_items.values())
    assert w.scene.mode_item.isVisible()


def test_combination_of_modes_matches_the_tracer(qtbot, tmp_path):
    _w, ctl = opened(qtbot, tmp_path, EX / "storage_rack_unbraced.json")
    cb = ctl.strip.mode_combo
    assert cb.count() == 3  # two modes and a combination
    ctl.strip.weights_edit.setText("1, -0.5")
    cb.setCurrentIndex(2)
    cb.activated.emit(2)
    assert ctl.data.spec.weights == (1.0, -0.5)
    ref = trace(load(EX / "storage_rack_unbraced.json"), weights=[1.0, -0.5])
    assert ctl.data.frames == len(ref.frames)
    for k in (0, ref.start, len(ref.frames) - 1):
        ctl.set_frame(k)
        for nid, xy in ref.frames[k].items():
            assert ctl.data.positions(k)[nid] == pytest.approx(xy, abs=1e-9)
    ctl.strip.weights_edit.setText("1, x")
    ctl.strip.weights_edit.editingFinished.emit()
    assert "mode weights" in ctl.error


def test_paths_are_traced_off_the_gui_thread_and_cached(qtbot, tmp_path):
    w, ctl = opened(qtbot, tmp_path, EX / "storage_rack_unbraced.json", sync=False)
    assert ctl.data.thread != threading.get_ident()
    jobs = ctl.jobs_started
    cb = ctl.strip.mode_combo
    cb.setCurrentIndex(1)
    cb.activated.emit(1)
    qtbot.waitUntil(lambda: ctl.data is not None and ctl.data.spec.mode == 2, timeout=20000)
    cb.setCurrentIndex(0)
    cb.activated.emit(0)
    assert ctl.data.spec.mode == 1  # from the cache, at once
    assert ctl.jobs_started == jobs + 1
    w.motion.wait_idle()


def test_adopt_this_position_is_one_undoable_edit(qtbot, tmp_path):
    w, ctl = opened(qtbot, tmp_path, GATE)
    drawn = dict(w.doc.scheme.nodes)
    ctl.strip.scrubber.setValue(30)
    target = ctl.data.positions(30)
    assert ctl.strip.adopt_button.isEnabled()
    qtbot.mouseClick(ctl.strip.adopt_button, Qt.LeftButton)
    assert w.doc.undo_stack.count() == 1
    for nid, xy in target.items():
        assert w.doc.scheme.node_xy(nid) == pytest.approx(xy, abs=1e-12)
    w.doc.undo_stack.undo()
    assert dict(w.doc.scheme.nodes) == drawn


# ---------------------------------------------------------------------- export
def test_export_writes_a_numbered_png_series_with_the_caution(qtbot, tmp_path):
    from kinestat.app.drawing import CAUTION

    _w, ctl = opened(qtbot, tmp_path, GATE)
    out = tmp_path / "frames"
    out.mkdir()
    paths = ctl.export_to(out, width=320, height=200)
    n = ctl.data.frames
    assert [p.name for p in paths] == [f"motion_{k:04d}.png" for k in range(1, n + 1)]
    assert sorted(p.name for p in out.glob("motion_*.png")) == [p.name for p in paths]
    img = QImage(str(paths[10]))
    assert (img.width(), img.height()) == (320, 200)
    record = (out / "motion_record.txt").read_text(encoding="utf-8")
    assert CAUTION in record and f"frames: {n}" in record and "GIF" in record
    # a shorter series in the same folder leaves no frames of the older one behind
    ctl.doc.undo_stack.setClean()
    _w.open_path(EX / "signboard_concurrent.json", as_example=True)
    short = ctl.export_to(out, width=320, height=200)
    assert len(short) == ctl.data.frames < n
    assert len(list(out.glob("motion_*.png"))) == len(short)
    assert "linearised" in (out / "motion_record.txt").read_text(encoding="utf-8")


def test_a_long_playback_does_not_abort_the_interpreter():
    # PySide6 6.12 on CPython 3.11: Signal.emit hands back True without a reference, and the
    # strip emits once per frame; without app.qt_compat's reserve, 200 000 emits (under two
    # hours of playback) exhaust True's count and CPython aborts with "bool_dealloc" at exit
    # (CPython's own check; True is immortal from 3.12 on, PEP 683, where this passes trivially)
    import subprocess
    import sys

    code = ("import os\n"
            "os.environ['QT_QPA_PLATFORM'] = 'offscreen'\n"
            "from PySide6.QtCore import QObject, Signal\n"
            "import kinestat.app.motion_strip\n"
            "class O(QObject):\n"
            "    frame = Signal(int)\n"
            "o = O()\n"
            "o.frame.connect(lambda k: None)\n"
            "for k in range(200000):\n"
            "    o.frame.emit(k)\n"
            "print('alive')\n")
    r = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=120)
    assert r.returncode == 0 and r.stdout.strip() == "alive", r.stderr[-500:]

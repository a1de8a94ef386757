"""Files in the app: open/save round trip of every example, bad files, the unsaved mark,
the close prompt, autosave and restore, PNG/SVG export, and ``kinestat render``."""
from __future__ import annotations

import json
import subprocess
import sys

import pytest
from PySide6.QtGui import QColor, QImage
from PySide6.QtWidgets import QMessageBox

from app_helpers import draw_chain, make_window

from kinestat.core.io import load, scheme_to_dict
from kinestat.examples import example_paths

EXAMPLES = example_paths()


@pytest.fixture
def win(qtbot, tmp_path):
    return make_window(qtbot, tmp_path)


def test_examples_are_bundled():
    # the Examples menu lists what the package ships
    assert len(EXAMPLES) >= 5


@pytest.mark.parametrize("path", EXAMPLES, ids=lambda p: p.stem)
def test_open_save_round_trip_of_example(qtbot, win, tmp_path, path):
    assert win.open_path(path, ask=False)
    original = load(path)
    assert scheme_to_dict(win.doc.scheme) == scheme_to_dict(original)
    # the verdict shown is the one the file's expected block records (its own cited source)
    exp = original.extra.get("expected", {})
    if "verdict" in exp:
        assert win.runner.result.verdict == exp["verdict"]
    out = tmp_path / "copy.json"
    assert win.save_to(out)
    assert scheme_to_dict(load(out)) == scheme_to_dict(original)
    assert not win.isWindowModified() and win.doc.path == out
    assert str(out.resolve()) in win.recent_files()
    # reopen what was written
    assert win.open_path(out, ask=False)
    assert scheme_to_dict(win.doc.scheme) == scheme_to_dict(original)


def test_examples_menu_lists_every_example(win):
    assert len(win.examples_menu.actions()) == len(EXAMPLES)


@pytest.mark.parametrize("text, words", [
    ("{ not json", "not valid JSON"),
    ('{"format": "kinestat-scheme", "version": 1, "nodes": [{"id": "A", "x": 0}], "members": []}', 'node "A"'),
    ('{"format": "kinestat-scheme", "version": 9, "nodes": [], "members": []}', "newer"),
])
def test_bad_file_shows_the_message_and_leaves_the_drawing(qtbot, win, tmp_path, monkeypatch, text, words):
    draw_chain(qtbot, win, "beam", [(0, 0), (3, 0)])
    before = win.doc.scheme
    steps = win.doc.undo_stack.count()
    shown = []
    monkeypatch.setattr(QMessageBox, "critical", lambda *a, **k: shown.append(a[2]))
    bad = tmp_path / "bad.json"
    bad.write_text(text, encoding="utf-8")
    assert not win.open_path(bad, ask=False)
    assert len(shown) == 1 and words in shown[0] and "bad.json" in shown[0]
    assert win.doc.scheme is before
    assert win.doc.undo_stack.count() == steps and win.doc.path is None
    assert win.isWindowModified()


def test_unsaved_mark_and_close_prompt(qtbot, win, tmp_path, monkeypatch):
    assert not win.isWindowModified() and "[*]" in win.windowTitle()
    draw_chain(qtbot, win, "beam", [(0, 0), (3, 0)])
    assert win.isWindowModified()
    asked = []

    def answer(*a, **k):
        asked.append(a[2])
        return QMessageBox.Cancel

    monkeypatch.setattr(QMessageBox, "question", answer)
    assert not win.close()  # cancel keeps the window
    assert asked and "untitled" in asked[0]
    assert win.isVisible()
    out = tmp_path / "portal.json"
    assert win.save_to(out)
    assert not win.isWindowModified() and win.windowTitle().startswith("portal.json")
    win.doc.undo_stack.undo()
    assert win.isWindowModified()
    win.doc.undo_stack.redo()
    assert not win.isWindowModified()  # back at the saved state


def test_autosave_and_restore_after_a_crash(qtbot, tmp_path):
    w1 = make_window(qtbot, tmp_path)
    assert not w1.autosave()  # nothing to save yet
    draw_chain(qtbot, w1, "beam", [(0, 0), (0, 3), (4, 3)])
    assert w1.autosave()
    assert w1.recovery_path.exists()
    drawn = scheme_to_dict(w1.doc.scheme)
    assert w1.autosave_timer.interval() == 60_000
    # "crash": a new window on the same recovery file, without closing the first
    w2 = make_window(qtbot, tmp_path)
    questions = []
    assert w2.offer_restore(ask=lambda text: questions.append(text) or True)
    assert "2 members" in questions[0]
    assert scheme_to_dict(w2.doc.scheme) == drawn
    assert w2.isWindowModified()
    assert w2.verdict_text() == "Unstable — 3 mechanisms"
    # saving clears the recovery file; a clean close leaves none either
    assert w2.save_to(tmp_path / "restored.json")
    assert not w2.recovery_path.exists()
    w3 = make_window(qtbot, tmp_path)
    assert not w3.offer_restore(ask=lambda text: True)


def test_declined_restore_removes_the_recovery_file(qtbot, tmp_path):
    w1 = make_window(qtbot, tmp_path)
    draw_chain(qtbot, w1, "bar", [(0, 0), (2, 0)])
    assert w1.autosave()
    w2 = make_window(qtbot, tmp_path)
    assert not w2.offer_restore(ask=lambda text: False)
    assert not w2.recovery_path.exists() and not w2.doc.scheme.members


def test_export_png_and_svg(qtbot, win, tmp_path):
    draw_chain(qtbot, win, "beam", [(0, 0), (0, 3), (4, 3), (4, 0)])
    png, svg = tmp_path / "a.png", tmp_path / "a.svg"
    assert win.export("png", png) and win.export("svg", svg)
    img = QImage(str(png))
    assert img.width() == 1600 and img.height() == 1000
    text = svg.read_text(encoding="utf-8")
    assert "<svg" in text and "Concept-stage check only" in text
    # unstable: the mechanism colour is on the picture
    mech = QColor("#d55e00").rgb() & 0xFFFFFF
    found = any((img.pixel(x, y) & 0xFFFFFF) == mech for x in range(0, 1600, 3) for y in range(0, 1000, 3))
    assert found


def _kinestat(*args, tmp_path):
    env = {"PATH": "/usr/bin:/bin", "HOME": str(tmp_path), "QT_QPA_PLATFORM": "offscreen"}
    return subprocess.run([sys.executable, "-m", "kinestat.app", *args], capture_output=True, text=True,
                          env=env, timeout=120)


def test_render_command_writes_png_with_verdict(tmp_path):
    portal = next(p for p in EXAMPLES if p.stem == "four_hinged_portal")
    out = tmp_path / "portal.png"
    r = _kinestat("render", str(portal), "-o", str(out), "--width", "800", "--height", "500", tmp_path=tmp_path)
    assert r.returncode == 0, r.stderr
    assert "Unstable" in r.stdout
    img = QImage(str(out))
    assert (img.width(), img.height()) == (800, 500)
    paper = QColor("#fbfaf6").rgb() & 0xFFFFFF
    assert (img.pixel(2, 2) & 0xFFFFFF) == paper
    bad = tmp_path / "bad.json"
    bad.write_text("[]", encoding="utf-8")
    r = _kinestat("render", str(bad), "-o", str(tmp_path / "x.png"), tmp_path=tmp_path)
    assert r.returncode == 2 and "must be an object" in r.stderr
    assert not (tmp_path / "x.png").exists()


def test_cli_module_does_not_import_qt():
    code = ("import sys, kinestat.app, kinestat.app.cli, kinestat.app.cmd_render; "
            "print(any(m.startswith('PySide6') for m in sys.modules))")
    r = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=60)
    assert r.stdout.strip() == "False", r.stderr


def test_recovery_file_is_valid_json_with_the_scheme(qtbot, win):
    draw_chain(qtbot, win, "beam", [(0, 0), (1, 0)])
    win.autosave()
    data = json.loads(win.recovery_path.read_text(encoding="utf-8"))
    assert data["format"] == "kinestat-recovery" and data["scheme"]["format"] == "kinestat-scheme"


def test_first_start_shows_the_caution_once_and_about_carries_it(qtbot, tmp_path, monkeypatch):
    from PySide6.QtCore import QSettings

    from kinestat.app.dialogs import ABOUT_HTML
    from kinestat.app.drawing import CAUTION
    from kinestat.app.main_window import MainWindow

    settings = QSettings(str(tmp_path / "fresh.ini"), QSettings.IniFormat)
    w = MainWindow(settings, tmp_path / "rec.json", sync_analysis=True)
    qtbot.addWidget(w)
    w.show()
    w.first_start()
    box = w._welcome
    assert box.isVisible() and CAUTION in box.text()
    box.close()
    w._welcome = None
    w.first_start()
    assert w._welcome is None  # only once per user
    assert CAUTION in ABOUT_HTML
    shown = []
    monkeypatch.setattr(QMessageBox, "about", lambda *a: shown.append(a[2]))
    w.about()
    assert shown and "licensed" in shown[0]

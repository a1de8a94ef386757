"""Shared helpers for the app tests: a main window on temporary settings, and real mouse
and key events on the canvas viewport at model coordinates."""
from __future__ import annotations

from PySide6.QtCore import QPoint, QPointF, QSettings, Qt


def make_window(qtbot, tmp_path, *, sync=True):
    from kinestat.app.main_window import MainWindow

    settings = QSettings(str(tmp_path / "settings.ini"), QSettings.IniFormat)
    settings.setValue("welcomed", True)
    w = MainWindow(settings, tmp_path / "recovery.json", sync_analysis=sync)
    # closing asks about unsaved changes: tests close without asking
    qtbot.addWidget(w, before_close_func=lambda w: w.doc.undo_stack.setClean())
    w.resize(1200, 800)
    w.show()
    qtbot.waitExposed(w)
    w.view.set_scale(50.0)
    w.view.centerOn(QPointF(3.0, -2.0))
    w.view.setFocus()
    return w


def vp(view, x: float, y: float) -> QPoint:
    """Viewport pixel of model point (x, y) (model y is up, scene y is down)."""
    return view.mapFromScene(QPointF(x, -y))


def click(qtbot, view, x, y, mod=Qt.NoModifier, button=Qt.LeftButton):
    qtbot.mouseMove(view.viewport(), vp(view, x, y))
    qtbot.mouseClick(view.viewport(), button, mod, vp(view, x, y))


def drag(qtbot, view, a, b, steps=6, mod=Qt.NoModifier):
    """Press at model point a, move in steps, release at b."""
    vpw = view.viewport()
    qtbot.mousePress(vpw, Qt.LeftButton, mod, vp(view, *a))
    for k in range(1, steps + 1):
        t = k / steps
        p = vp(view, a[0] + t * (b[0] - a[0]), a[1] + t * (b[1] - a[1]))
        # QTest.mouseMove carries no buttons; send a real move event with the button held
        from PySide6.QtCore import QEvent
        from PySide6.QtGui import QMouseEvent
        from PySide6.QtWidgets import QApplication

        ev = QMouseEvent(QEvent.MouseMove, QPointF(p), QPointF(vpw.mapToGlobal(p)), Qt.NoButton, Qt.LeftButton, mod)
        QApplication.sendEvent(vpw, ev)
    qtbot.mouseRelease(vpw, Qt.LeftButton, mod, vp(view, *b))


def key(qtbot, view, k, mod=Qt.NoModifier):
    qtbot.keyClick(view, k, mod)


def type_text(qtbot, view, text):
    qtbot.keyClicks(view, text)


def draw_chain(qtbot, w, tool, points):
    w.set_tool(tool)
    for x, y in points:
        click(qtbot, w.view, x, y)
    key(qtbot, w.view, Qt.Key_Escape)

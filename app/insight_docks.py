"""The redundancy, primary-structure and remedies views in the main window.

:class:`Insight` adds three docks (tabbed with the properties panel), one background runner
each (a runner only works while its dock is showing), the canvas overlay they paint on, the
hover read-out of the redundancy values, an Analysis menu, and the command that opens a
primary structure as a new drawing in a window of its own.
"""
from __future__ import annotations

import itertools

from PySide6.QtCore import QEvent, QObject, Qt, QTimer
from PySide6.QtGui import QAction, QCursor, QKeySequence
from PySide6.QtWidgets import QDockWidget, QMenu, QToolTip

from .canvas_overlay import Overlay
from .insight_runner import InsightRunner, compute_primary, compute_redundancy, compute_remedies
from .primary_view import PrimaryView
from .redundancy_view import RedundancyView
from .remedies_panel import RemediesPanel

_WINDOWS = itertools.count(1)


def analysis_menu(window) -> QMenu:
    """The window's Analysis menu (made before Help if nobody has made it yet)."""
    mb = window.menuBar()
    help_action = None
    for a in mb.actions():
        m = a.menu()
        if m is None:
            continue
        if m.title().replace("&", "") == "Analysis":
            return m
        if m.title().replace("&", "") == "Help":
            help_action = a
    menu = QMenu("&Analysis", mb)
    if help_action is not None:
        mb.insertMenu(help_action, menu)
    else:
        mb.addMenu(menu)
    return menu


class Insight(QObject):
    """Wires the three views into ``window`` (a :class:`~.main_window.MainWindow`)."""

    def __init__(self, window):
        super().__init__(window)
        self.window = window
        doc = window.doc
        sync = window.runner.sync
        self.overlay = Overlay(window.scene)
        self.redundancy = RedundancyView(doc, self.overlay)
        self.primary = PrimaryView(doc, self.overlay)
        self.remedies = RemediesPanel(doc, self.overlay)
        self.runners = {
            "redundancy": InsightRunner(doc, compute_redundancy, self, sync=sync),
            "primary": InsightRunner(doc, compute_primary, self, sync=sync),
            "remedies": InsightRunner(doc, compute_remedies, self, sync=sync),
        }
        self.views = {"redundancy": self.redundancy, "primary": self.primary, "remedies": self.remedies}
        self.docks: dict[str, QDockWidget] = {}
        #: windows opened from this one (kept alive here)
        self.opened: list = []
        anchor = window.findChild(QDockWidget, "properties_dock")
        for name, title in (("redundancy", "Redundancy"), ("primary", "Primary"), ("remedies", "Remedies")):
            view, runner = self.views[name], self.runners[name]
            d = QDockWidget(title, window)
            d.setObjectName(f"{name}_dock")
            d.setWidget(view)
            d.setFeatures(QDockWidget.DockWidgetMovable | QDockWidget.DockWidgetFloatable
                          | QDockWidget.DockWidgetClosable)
            window.addDockWidget(Qt.RightDockWidgetArea, d)
            if anchor is not None:
                window.tabifyDockWidget(anchor, d)
            d.visibilityChanged.connect(lambda on, n=name: self._on_visibility(n, on))
            runner.result_ready.connect(lambda rev, res, v=view: v.show_result(res, rev))
            runner.failed.connect(lambda rev, msg, v=view: v.show_error(msg))
            runner.pending.connect(view.set_pending)
            view.set_visible_on_canvas(False)
            self.docks[name] = d
        if anchor is not None:
            anchor.raise_()
        self.primary.open_requested.connect(self.open_primary)
        self.remedies.message.connect(lambda text: window.statusBar().showMessage(text, 8000))
        window.view.cursor_moved.connect(self._on_cursor)
        window.view.zoom_changed.connect(lambda _z: self.overlay.refresh())  # room for pixel-sized marks
        window.installEventFilter(self)
        self._build_menu()

    # ------------------------------------------------------------------ docks
    def _build_menu(self) -> None:
        menu = analysis_menu(self.window)
        self.actions: dict[str, QAction] = {}
        for name, text, key in (("redundancy", "&Redundancy and critical members", "F6"),
                                ("primary", "&Primary structure", "F7"),
                                ("remedies", "R&emedies for an unstable scheme", "F8")):
            a = QAction(text, self.window)
            a.setShortcut(QKeySequence(key))
            a.setStatusTip({"redundancy": "Shade members by their share of the indeterminacy; mark critical ones",
                            "primary": "Releases that leave a stable, statically determinate scheme",
                            "remedies": "Verified single changes that remove mechanisms"}[name])
            a.triggered.connect(lambda _=False, n=name: self.show_view(n))
            menu.addAction(a)
            self.actions[name] = a
        menu.addSeparator()
        a = QAction("Open the primary structure as a &new drawing", self.window)
        a.triggered.connect(self._open_current_primary)
        menu.addAction(a)
        self.actions["open_primary"] = a

    def show_view(self, name: str) -> None:
        """Show and raise one of the docks ("redundancy", "primary", "remedies")."""
        d = self.docks[name]
        d.show()
        d.raise_()
        verdict = self.window.findChild(QDockWidget, "verdict_dock")
        if verdict is not None and not d.isFloating() and d.height() < 0.5 * self.window.height():
            # the lists want room: the verdict panel scrolls
            self.window.resizeDocks([verdict, d], [int(0.42 * self.window.height()),
                                                   int(0.58 * self.window.height())], Qt.Vertical)
        # a raised tab reports its visibility at once; a floating or restored dock may not
        self._on_visibility(name, d.isVisible())

    def _on_visibility(self, name: str, on: bool) -> None:
        self.runners[name].set_active(on)
        self.views[name].set_visible_on_canvas(on)
        if not on and name == "redundancy":
            QToolTip.hideText()

    # ------------------------------------------------------------------ hover
    def _on_cursor(self, x: float, y: float) -> None:
        if not self.runners["redundancy"].active:
            return
        w = self.window
        text = self.redundancy.hover_at(x, y, w.ctx.index(), w.view.tolerance())
        if text:
            QToolTip.showText(QCursor.pos(), text, w.view.viewport())
        else:
            QToolTip.hideText()

    # ------------------------------------------------------------------ new drawing
    def _open_current_primary(self) -> None:
        self.show_view("primary")
        ps = self.primary.current()
        if ps is not None and not self.primary.is_stale():
            self.open_primary(ps)
        else:
            self.window.statusBar().showMessage("No primary structure for this drawing yet", 6000)

    def open_primary(self, ps):
        """A new window whose drawing starts as a copy of this one, with the releases of
        ``ps`` made as one undoable step; this window's drawing is left as it is."""
        w0 = self.window
        k = next(_WINDOWS)
        rec = w0.recovery_path.with_name(f"{w0.recovery_path.stem}-primary{k}{w0.recovery_path.suffix}")
        w = type(w0)(w0.settings, rec, sync_analysis=w0.runner.sync)
        w.doc.replace_scheme(w0.doc.scheme)
        w.doc.commit("Release to the primary structure", ps.scheme)
        w.resize(w0.size())
        w.move(w0.pos() + w0.rect().center() / 8)
        w.show()
        w.view.fit()
        QTimer.singleShot(0, w.view.fit)
        w.statusBar().showMessage(f"Primary structure: {len(ps.releases)} release"
                                  f"{'s' if len(ps.releases) != 1 else ''} made (undo shows the original)", 10000)
        self.opened = [x for x in self.opened if x.isVisible()] + [w]
        return w

    # ------------------------------------------------------------------ shutdown
    def eventFilter(self, obj, ev):  # noqa: N802
        if obj is self.window and ev.type() == QEvent.Close:
            for r in self.runners.values():
                r.wait_idle(5000)  # no job may outlive the window
        return False

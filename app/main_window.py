"""The main window: canvas, tools, verdict and properties panels, files and autosave."""
from __future__ import annotations

from pathlib import Path

from PySide6.QtCore import QSettings, Qt, QTimer
from PySide6.QtGui import QAction, QActionGroup, QKeySequence
from PySide6.QtWidgets import (QApplication, QDialog, QDockWidget, QDoubleSpinBox, QFileDialog, QLabel,
                               QMainWindow, QMessageBox, QToolBar, QUndoView, QWidget, QSizePolicy)

from kinestat.core.io import SchemeError, dumps, load
from kinestat.core.model import Scheme

from . import drawing as dr
from . import edits
from .analysis_runner import AnalysisRunner
from .canvas_scene import CanvasScene
from .canvas_view import CanvasView
from .dialogs import ABOUT_HTML, FIRST_START_HTML, LEGEND_HTML, FrameDialog, TrussDialog
from .document import Document
from .icons import icon
from .properties_panel import PropertiesPanel
from .recovery import clear_recovery, default_recovery_path, read_recovery, write_recovery
from .tools import TOOL_SPECS, ToolContext, delete_selection, make_tools
from .verdict_panel import VerdictPanel

FILE_FILTER = "kinestat scheme (*.json);;All files (*)"
MAX_RECENT = 8
AUTOSAVE_MS = 60_000


def _example_paths() -> list[Path]:
    try:
        from kinestat.examples import example_paths

        return list(example_paths())
    except Exception:  # noqa: BLE001 - a missing examples folder must not stop the app
        return []


class MainWindow(QMainWindow):
    def __init__(self, settings: QSettings | None = None, recovery_path: Path | None = None, *,
                 sync_analysis: bool = False, autosave_ms: int = AUTOSAVE_MS):
        super().__init__()
        self.settings = settings or QSettings("kinestat", "kinestat")
        self.recovery_path = Path(recovery_path) if recovery_path else default_recovery_path()
        self.doc = Document(parent=self)
        self.scene = CanvasScene(self.doc, parent=self.doc)
        self.view = CanvasView(self.scene)
        self.setCentralWidget(self.view)
        self.ctx = ToolContext(self.doc, self.view, self._message)
        self.tools = make_tools(self.ctx)
        self.runner = AnalysisRunner(self.doc, self, sync=sync_analysis)
        self.verdict = VerdictPanel()
        self.props = PropertiesPanel(self.doc)
        self._autosaved_revision = self.doc.revision
        self._build_docks()
        self._build_actions()
        self._build_status()
        from .underlay_panel import install_underlay  # the sketch underlay: menu, panel, canvas item

        self.underlay = install_underlay(self)
        self.runner.result_ready.connect(self._on_result)
        self.runner.failed.connect(self._on_failed)
        self.runner.pending.connect(self._on_pending)
        self.verdict.highlight_requested.connect(self._on_highlight)
        self.doc.undo_stack.cleanChanged.connect(self._update_title)
        self.doc.undo_stack.indexChanged.connect(self._on_index_changed)
        self.doc.path_changed.connect(self._update_title)
        self.doc.changed.connect(self._on_doc_changed)
        self.view.cursor_moved.connect(self._on_cursor)
        self.autosave_timer = QTimer(self)
        self.autosave_timer.setInterval(autosave_ms)
        self.autosave_timer.timeout.connect(self.autosave)
        self.autosave_timer.start()
        # ---- redundancy, primary-structure and remedies views (app/insight_docks.py)
        from .insight_docks import Insight

        self.insight = Insight(self)
        # ---- end redundancy views
        self.set_tool("select")
        self.resize(1440, 900)
        self._update_title()
        self._on_result(self.doc.revision, None)
        # ---- motion strip: animated, scrubbable mechanisms (app/motion_strip.py)
        from .motion_strip import install_motion_strip

        self.motion = install_motion_strip(self, sync=sync_analysis)
        # ---- end motion strip

    # ------------------------------------------------------------------ layout
    def _build_docks(self) -> None:
        d = QDockWidget("Verdict", self)
        d.setObjectName("verdict_dock")
        d.setWidget(self.verdict)
        d.setFeatures(QDockWidget.DockWidgetMovable | QDockWidget.DockWidgetFloatable)
        self.addDockWidget(Qt.RightDockWidgetArea, d)
        p = QDockWidget("Properties", self)
        p.setObjectName("properties_dock")
        p.setWidget(self.props)
        p.setFeatures(QDockWidget.DockWidgetMovable | QDockWidget.DockWidgetFloatable)
        self.addDockWidget(Qt.RightDockWidgetArea, p)
        h = QDockWidget("History", self)
        h.setObjectName("history_dock")
        h.setWidget(QUndoView(self.doc.undo_stack))
        self.addDockWidget(Qt.RightDockWidgetArea, h)
        self.tabifyDockWidget(p, h)
        p.raise_()
        # wide enough for the tab strip of the docks tabbed with Properties to show their names
        self.resizeDocks([d], [480], Qt.Horizontal)
        self.resizeDocks([d, p], [640, 240], Qt.Vertical)
        self.history_dock = h

    def _action(self, text, slot=None, shortcut=None, tip=None, checkable=False, icon_name=None) -> QAction:
        a = QAction(text, self)
        if shortcut:
            a.setShortcut(QKeySequence(shortcut))
        if tip:
            a.setToolTip(tip)
            a.setStatusTip(tip)
        if checkable:
            a.setCheckable(True)
        if icon_name:
            a.setIcon(icon(icon_name))
        if slot:
            (a.toggled if checkable else a.triggered).connect(slot)
        return a

    def _build_actions(self) -> None:
        mb = self.menuBar()
        # ---- file
        fm = mb.addMenu("&File")
        self.act_new = self._action("&New", self.file_new, QKeySequence.New)
        self.act_open = self._action("&Open\u2026", self.file_open, QKeySequence.Open)
        self.act_save = self._action("&Save", self.file_save, QKeySequence.Save)
        self.act_save_as = self._action("Save &as\u2026", self.file_save_as, QKeySequence.SaveAs)
        fm.addActions([self.act_new, self.act_open])
        self.recent_menu = fm.addMenu("Open &recent")
        self.examples_menu = fm.addMenu("&Examples")
        for p in _example_paths():
            a = self.examples_menu.addAction(p.stem.replace("_", " "))
            a.triggered.connect(lambda _=False, p=p: self.open_path(p, as_example=True))
        self.examples_menu.setEnabled(bool(self.examples_menu.actions()))
        fm.addSeparator()
        fm.addActions([self.act_save, self.act_save_as])
        fm.addSeparator()
        fm.addAction(self._action("Export &PNG\u2026", lambda: self.export("png")))
        fm.addAction(self._action("Export S&VG\u2026", lambda: self.export("svg")))
        # ---- DXF import / export and the PDF check report (app/dxf_import_dialog.py, app/report_action.py)
        from .dxf_import_dialog import DxfActions
        from .report_action import ReportAction

        fm.addSeparator()
        self.dxf = DxfActions(self)
        fm.addActions(self.dxf.actions)
        self.report_action = ReportAction(self)
        fm.addAction(self.report_action.action)
        # ---- end DXF / report
        fm.addSeparator()
        fm.addAction(self._action("&Quit", self.close, QKeySequence.Quit))
        self._refresh_recent()
        # ---- edit
        em = mb.addMenu("&Edit")
        self.act_undo = self.doc.undo_stack.createUndoAction(self, "&Undo")
        self.act_undo.setShortcut(QKeySequence.Undo)
        self.act_redo = self.doc.undo_stack.createRedoAction(self, "&Redo")
        self.act_redo.setShortcut(QKeySequence.Redo)
        em.addActions([self.act_undo, self.act_redo])
        em.addSeparator()
        self.act_delete = self._action("&Delete selection", lambda: delete_selection(self.doc), QKeySequence.Delete)
        em.addAction(self.act_delete)
        em.addAction(self._action("Select &all", self.select_all, QKeySequence.SelectAll))
        em.addAction(self._action("&Join at crossings", self.join_crossings, "Ctrl+J",
                                  "Join the selected members (or all) where they cross"))
        # ---- view
        vm = mb.addMenu("&View")
        self.act_fit = self._action("&Fit to view", self.view.fit, "Home", "Fit the drawing to the window", icon_name="fit")
        vm.addAction(self.act_fit)
        vm.addAction(self._action("Zoom &in", lambda: self.view.zoom_by(1.25), QKeySequence.ZoomIn))
        vm.addAction(self._action("Zoom &out", lambda: self.view.zoom_by(0.8), QKeySequence.ZoomOut))
        vm.addSeparator()
        self.act_grid = self._action("&Grid", self._set_grid, "Ctrl+G", "Show the grid and snap to it", True, "grid")
        self.act_grid.setChecked(True)
        self.act_snap = self._action("&Snap to nodes and members", self._set_snap, "Ctrl+K", checkable=True)
        self.act_snap.setChecked(True)
        self.act_ids = self._action("Show &ids", self.scene.set_show_ids, "Ctrl+I", checkable=True)
        self.act_mode = self._action("Show &mechanism shape", self.scene.set_show_mode, "Ctrl+M", checkable=True)
        self.act_mode.setChecked(True)
        vm.addActions([self.act_grid, self.act_snap, self.act_ids, self.act_mode])
        # ---- tools
        tm = mb.addMenu("&Tools")
        self.tool_group = QActionGroup(self)
        self.tool_actions: dict[str, QAction] = {}
        tb = QToolBar("Tools", self)
        tb.setObjectName("tools_toolbar")
        tb.setMovable(False)
        self.addToolBar(Qt.LeftToolBarArea, tb)
        for k, spec in enumerate(TOOL_SPECS):
            a = self._action(spec.label, None, spec.key, f"{spec.label} ({spec.key}): {spec.tip}", True, spec.name)
            a.triggered.connect(lambda _=False, n=spec.name: self.set_tool(n))
            self.tool_group.addAction(a)
            self.tool_actions[spec.name] = a
            tm.addAction(a)
            tb.addAction(a)
            if spec.name in ("bar", "guided", "axial"):
                tb.addSeparator()
        # ---- insert
        im = mb.addMenu("&Insert")
        im.addAction(self._action("&Frame\u2026", self.insert_frame, tip="Insert an n-bay by m-storey frame"))
        im.addAction(self._action("&Truss\u2026", self.insert_truss, tip="Insert a parallel-chord truss"))
        # ---- help
        hm = mb.addMenu("&Help")
        hm.addAction(self._action("&Symbols", lambda: QMessageBox.information(self, "Symbols", LEGEND_HTML)))
        hm.addAction(self._action("&About kinestat", self.about))
        # ---- top bar
        top = QToolBar("File", self)
        top.setObjectName("file_toolbar")
        top.setMovable(False)
        self.addToolBar(Qt.TopToolBarArea, top)
        top.addActions([self.act_new, self.act_open, self.act_save])
        top.addSeparator()
        self.bar_undo = self._action("Undo", self.doc.undo_stack.undo, tip="Undo the last edit")
        self.bar_redo = self._action("Redo", self.doc.undo_stack.redo, tip="Redo")
        self.bar_undo.setEnabled(False)
        self.bar_redo.setEnabled(False)
        self.doc.undo_stack.canUndoChanged.connect(self.bar_undo.setEnabled)
        self.doc.undo_stack.canRedoChanged.connect(self.bar_redo.setEnabled)
        top.addActions([self.bar_undo, self.bar_redo])
        top.addSeparator()
        top.addAction(self.act_fit)
        top.addAction(self.act_grid)
        top.addWidget(QLabel(" spacing "))
        self.grid_spin = QDoubleSpinBox()
        self.grid_spin.setRange(0.001, 1e4)
        self.grid_spin.setDecimals(3)
        self.grid_spin.setValue(self.view.grid)
        self.grid_spin.setKeyboardTracking(False)
        self.grid_spin.valueChanged.connect(self._set_grid_spacing)
        self.grid_spin.setFocusPolicy(Qt.ClickFocus)
        top.addWidget(self.grid_spin)
        self.units_label = QLabel()
        top.addWidget(self.units_label)
        top.addSeparator()
        self.ortho_hint = QLabel("  Shift: 0/45/90\u00b0   Ctrl-click: join at crossings   type: exact length[,angle]")
        self.ortho_hint.setStyleSheet(f"color: {dr.PALETTE.muted};")
        top.addWidget(self.ortho_hint)
        spacer = QWidget()
        spacer.setSizePolicy(QSizePolicy.Expanding, QSizePolicy.Preferred)
        top.addWidget(spacer)

    def _build_status(self) -> None:
        sb = self.statusBar()
        self.coords_label = QLabel("")
        self.caution_label = QLabel("Concept-stage check only \u2014 not structural design")
        self.caution_label.setStyleSheet(f"color: {dr.PALETTE.muted}; font-style: italic;")
        sb.addPermanentWidget(self.coords_label)
        sb.addPermanentWidget(self.caution_label)

    # ------------------------------------------------------------------ tools / view
    def set_tool(self, name: str) -> None:
        if self.view.tool is not None:
            self.view.tool.deactivate()
        self.view.entry = ""
        tool = self.tools[name]
        self.view.tool = tool
        self.tool_actions[name].setChecked(True)
        tool.activate()
        self.view.viewport().update()

    def _message(self, text: str) -> None:
        self.statusBar().showMessage(text, 8000)

    def _on_cursor(self, x: float, y: float) -> None:
        self.coords_label.setText(f"x {x:.3f}  y {y:.3f} {self.doc.scheme.units}")

    def _set_grid(self, on: bool) -> None:
        self.view.grid_on = on
        self.view.resetCachedContent()
        self.view.viewport().update()

    def _set_snap(self, on: bool) -> None:
        self.view.snap_on = on

    def _set_grid_spacing(self, v: float) -> None:
        self.view.grid = v
        self.view.resetCachedContent()
        self.view.viewport().update()

    def select_all(self) -> None:
        s = self.doc.scheme
        self.doc.select(s.nodes, s.members)

    def join_crossings(self) -> None:
        ids = self.doc.selected_members or None
        if self.doc.commit("Join at crossings", edits.join_crossings(self.doc.scheme, ids)):
            self._message("Members joined where they cross")
        else:
            self._message("No unjoined crossings" + (" among the selected members" if ids else ""))

    def _insert(self, part: Scheme, what: str) -> None:
        s, nodes, members = edits.insert(self.doc.scheme, part)
        self.doc.commit(f"Insert {what}", s)
        self.doc.select(nodes, members)
        self._fit_soon()

    def insert_frame(self) -> None:
        dlg = FrameDialog(self, self.doc.scheme.units)
        if dlg.exec() == QDialog.Accepted:
            self._insert(dlg.scheme(), "frame")

    def insert_truss(self) -> None:
        dlg = TrussDialog(self, self.doc.scheme.units)
        if dlg.exec() == QDialog.Accepted:
            self._insert(dlg.scheme(), "truss")

    # ------------------------------------------------------------------ analysis
    def _on_doc_changed(self, change) -> None:
        self.units_label.setText(f"  units: {self.doc.scheme.units} ")
        if self.scene.highlighted:
            self.scene.set_highlight(())
        if not self.doc.scheme.members:
            self.scene.set_classification(None)

    def _fit_soon(self) -> None:
        """Fit now, once the window is laid out, and again when the verdict (and its mechanism
        shape, which may reach outside the drawing) arrives."""
        self._fit_on_result = True
        self.view.fit()
        QTimer.singleShot(0, self.view.fit)

    def _on_pending(self) -> None:
        self.verdict.set_pending(True)

    def _on_result(self, rev: int, c) -> None:
        self.units_label.setText(f"  units: {self.doc.scheme.units} ")
        self.verdict.show_result(c, empty=not self.doc.scheme.members)
        self.scene.set_classification(c)
        if getattr(self, "_fit_on_result", False):
            self._fit_on_result = False
            self.view.fit()

    def _on_failed(self, rev: int, message: str) -> None:
        self.verdict.show_error(message)
        self.scene.set_classification(None)

    def _on_highlight(self, ids) -> None:
        self.scene.set_highlight(ids)
        s = self.doc.scheme
        self.doc.select([i for i in ids if i in s.nodes], [i for i in ids if i in s.members])

    def verdict_text(self) -> str:
        return self.verdict.verdict_label.text()

    # ------------------------------------------------------------------ files
    def _on_index_changed(self, _index: int) -> None:
        self._update_title()

    def _update_title(self) -> None:
        self.setWindowTitle(f"{self.doc.display_name()}[*] \u2014 kinestat")
        self.setWindowModified(self.doc.is_modified())

    def maybe_save(self) -> bool:
        """True if it is all right to drop the current drawing."""
        if not self.doc.is_modified():
            return True
        r = QMessageBox.question(self, "Unsaved changes",
                                 f"Save the changes to {self.doc.display_name()} first?",
                                 QMessageBox.Save | QMessageBox.Discard | QMessageBox.Cancel, QMessageBox.Save)
        if r == QMessageBox.Save:
            return self.file_save()
        return r == QMessageBox.Discard

    def file_new(self) -> None:
        if self.maybe_save():
            self.doc.replace_scheme(Scheme())
            clear_recovery(self.recovery_path)

    def file_open(self) -> None:
        if not self.maybe_save():
            return
        start = str(self.doc.path.parent) if self.doc.path else ""
        path, _ = QFileDialog.getOpenFileName(self, "Open scheme", start, FILE_FILTER)
        if path:
            self.open_path(Path(path), ask=False)

    def open_path(self, path: Path, *, ask: bool = True, as_example: bool = False) -> bool:
        """Open a scheme file; on a bad file show the message and keep the drawing as it is."""
        if ask and not self.maybe_save():
            return False
        try:
            scheme = load(path)
        except SchemeError as exc:
            self.show_error("Cannot open scheme", f"{Path(path).name}: {exc}")
            return False
        self.doc.replace_scheme(scheme, None if as_example else Path(path))
        if not as_example:
            self._add_recent(Path(path))
        clear_recovery(self.recovery_path)
        self._autosaved_revision = self.doc.revision
        self._fit_soon()
        self._message(f"Opened {Path(path).name}" + (" (example: Save as to keep a copy)" if as_example else ""))
        return True

    def show_error(self, title: str, text: str) -> None:
        QMessageBox.critical(self, title, text)

    def file_save(self) -> bool:
        if self.doc.path is None:
            return self.file_save_as()
        return self.save_to(self.doc.path)

    def file_save_as(self) -> bool:
        start = str(self.doc.path) if self.doc.path else "scheme.json"
        path, _ = QFileDialog.getSaveFileName(self, "Save scheme as", start, FILE_FILTER)
        if not path:
            return False
        if not path.lower().endswith(".json"):
            path += ".json"
        return self.save_to(Path(path))

    def save_to(self, path: Path) -> bool:
        from kinestat.core.io import atomic_write_text

        try:
            self.underlay.relink_for(path)  # the underlay image path is relative to the scheme file's folder
            atomic_write_text(path, dumps(self.doc.scheme))
        except OSError as exc:
            self.show_error("Cannot save", f"{path}: {exc.strerror or exc}")
            return False
        self.doc.set_path(path)
        self.doc.undo_stack.setClean()
        self._add_recent(path)
        clear_recovery(self.recovery_path)
        self._update_title()
        self._message(f"Saved {path.name}")
        return True

    def export(self, kind: str, path: Path | None = None) -> bool:
        if path is None:
            stem = self.doc.path.with_suffix(f".{kind}") if self.doc.path else Path(f"scheme.{kind}")
            name, _ = QFileDialog.getSaveFileName(self, f"Export {kind.upper()}", str(stem),
                                                  f"{kind.upper()} (*.{kind})")
            if not name:
                return False
            path = Path(name)
        c = self.runner.result if self.runner.is_current() else None
        if c is None and self.doc.scheme.members:
            from .analysis_runner import classify_scheme

            try:
                c = classify_scheme(self.doc.scheme)
            except Exception:  # noqa: BLE001
                c = None
        try:
            (dr.save_png if kind == "png" else dr.save_svg)(path, self.doc.scheme, c)
        except OSError as exc:
            self.show_error("Cannot export", f"{path}: {exc}")
            return False
        self._message(f"Exported {path.name}")
        return True

    # ---- recent files
    def recent_files(self) -> list[str]:
        v = self.settings.value("recent", [])
        if isinstance(v, str):
            v = [v]
        return [str(x) for x in (v or [])]

    def _add_recent(self, path: Path) -> None:
        p = str(Path(path).resolve())
        lst = [p] + [x for x in self.recent_files() if x != p]
        self.settings.setValue("recent", lst[:MAX_RECENT])
        self._refresh_recent()

    def _refresh_recent(self) -> None:
        self.recent_menu.clear()
        for p in self.recent_files():
            a = self.recent_menu.addAction(p)
            a.triggered.connect(lambda _=False, p=p: self.open_path(Path(p)))
        self.recent_menu.setEnabled(bool(self.recent_files()))

    # ---- autosave / recovery
    def autosave(self) -> bool:
        """Write the recovery file if there are changes since the last save or autosave."""
        if not self.doc.is_modified():
            clear_recovery(self.recovery_path)
            return False
        if self.doc.revision == self._autosaved_revision and self.recovery_path.exists():
            return False
        try:
            write_recovery(self.recovery_path, self.doc.scheme, self.doc.path)
        except OSError as exc:
            self._message(f"Autosave failed: {exc}")
            return False
        self._autosaved_revision = self.doc.revision
        return True

    def offer_restore(self, ask=None) -> bool:
        """If a recovery file was left behind, offer to restore it; True if restored."""
        if not self.recovery_path.exists():
            return False
        try:
            scheme, source, written = read_recovery(self.recovery_path)
        except SchemeError as exc:
            self._message(f"Recovery file ignored: {exc}")
            clear_recovery(self.recovery_path)
            return False
        if ask is None:
            def ask(text):
                return QMessageBox.question(self, "Restore drawing", text,
                                            QMessageBox.Yes | QMessageBox.No, QMessageBox.Yes) == QMessageBox.Yes
        what = source.name if source else "an unsaved drawing"
        if not ask(f"kinestat did not close normally last time. Restore {what} "
                   f"({len(scheme.members)} members, autosaved {written})?"):
            clear_recovery(self.recovery_path)
            return False
        self.doc.replace_scheme(scheme, source, clean=False)
        self._update_title()
        self._fit_soon()
        self._message("Drawing restored from the recovery file: save it to keep it")
        return True

    # ---- about / first start / close
    def about(self) -> None:
        QMessageBox.about(self, "About kinestat", ABOUT_HTML)

    def first_start(self) -> None:
        """Show the welcome note with the concept-stage caution once per user."""
        if self.settings.value("welcomed", False, type=bool):
            return
        self.settings.setValue("welcomed", True)
        box = QMessageBox(QMessageBox.Information, "Welcome", FIRST_START_HTML, QMessageBox.Ok, self)
        self._welcome = box
        box.open()

    def closeEvent(self, ev):  # noqa: N802
        if not self.maybe_save():
            ev.ignore()
            return
        self.runner.wait_idle(5000)
        clear_recovery(self.recovery_path)
        ev.accept()


def app_instance() -> QApplication:
    return QApplication.instance() or QApplication([])


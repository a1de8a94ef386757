"""The Underlay menu and panel: load, calibrate, move, fade, lock, hide and remove the sketch.

:func:`install_underlay` adds both to a main window and returns the
:class:`~kinestat.app.underlay.UnderlayController` that does the work.
"""
from __future__ import annotations

from pathlib import Path

from PySide6.QtCore import Qt
from PySide6.QtGui import QAction
from PySide6.QtWidgets import (QCheckBox, QDockWidget, QFileDialog, QGridLayout, QHBoxLayout, QLabel,
                               QMenu, QPushButton, QSlider, QVBoxLayout, QWidget)

from . import drawing as dr
from .document import new_gesture
from .underlay import IMAGE_FILTER, UnderlayController


class UnderlayPanel(QWidget):
    """Buttons, opacity slider and lock / show switches for the underlay."""

    def __init__(self, controller: UnderlayController, parent=None):
        super().__init__(parent)
        self.ctl = controller
        self._gesture: int | None = None
        v = QVBoxLayout(self)
        self.status = QLabel()
        self.status.setWordWrap(True)
        self.status.setTextInteractionFlags(Qt.TextSelectableByMouse)
        v.addWidget(self.status)
        grid = QGridLayout()
        self.load_button = QPushButton("Load image\u2026")
        self.scale_button = QPushButton("Set scale")
        self.scale_button.setToolTip("Click two points on the image, then type the real distance between them")
        self.straighten_button = QPushButton("Straighten")
        self.straighten_button.setToolTip("Click two points on a line of the image that should be horizontal")
        self.move_button = QPushButton("Move")
        self.move_button.setToolTip("Drag the image on the canvas")
        for k, b in enumerate((self.load_button, self.scale_button, self.straighten_button, self.move_button)):
            grid.addWidget(b, k // 2, k % 2)
        v.addLayout(grid)
        row = QHBoxLayout()
        row.addWidget(QLabel("Opacity"))
        self.opacity = QSlider(Qt.Horizontal)
        self.opacity.setRange(0, 100)
        self.opacity.setPageStep(10)
        row.addWidget(self.opacity, 1)
        self.opacity_label = QLabel("50 %")
        self.opacity_label.setMinimumWidth(40)
        row.addWidget(self.opacity_label)
        v.addLayout(row)
        row = QHBoxLayout()
        self.lock_box = QCheckBox("Locked")
        self.lock_box.setToolTip("A locked underlay cannot be moved or recalibrated by accident")
        self.show_box = QCheckBox("Shown")
        self.remove_button = QPushButton("Remove")
        row.addWidget(self.lock_box)
        row.addWidget(self.show_box)
        row.addStretch(1)
        row.addWidget(self.remove_button)
        v.addLayout(row)
        note = QLabel("Trace over the sketch with the drawing tools. Hold the camera square to the sheet: "
                      "only scale, rotation and position are calibrated.")
        note.setWordWrap(True)
        note.setStyleSheet(f"color: {dr.PALETTE.muted};")
        v.addWidget(note)
        v.addStretch(1)

        self.scale_button.clicked.connect(lambda: controller.start_pick("scale"))
        self.straighten_button.clicked.connect(lambda: controller.start_pick("straighten"))
        self.move_button.clicked.connect(lambda: controller.start_pick("move"))
        self.remove_button.clicked.connect(controller.remove)
        self.lock_box.toggled.connect(controller.set_locked)
        self.show_box.toggled.connect(controller.set_visible)
        self.opacity.sliderPressed.connect(self._press)
        self.opacity.sliderReleased.connect(self._release)
        self.opacity.valueChanged.connect(self._opacity)
        controller.changed.connect(self.refresh)
        self.refresh()

    def _press(self) -> None:
        self._gesture = new_gesture()

    def _release(self) -> None:
        self._gesture = None

    def _opacity(self, value: int) -> None:
        self.opacity_label.setText(f"{value} %")
        self.ctl.set_opacity(value / 100.0, self._gesture)

    def refresh(self) -> None:
        u = self.ctl.underlay()
        text = self.ctl.describe()
        if self.ctl.missing:
            self.status.setStyleSheet(f"color: {dr.PALETTE.unstable}; font-weight: bold;")
            text = self.ctl.missing[0].upper() + self.ctl.missing[1:]
        else:
            self.status.setStyleSheet("")
        self.status.setText(text)
        has, usable = u is not None, u is not None and not self.ctl.missing
        self.load_button.setText("Relink image\u2026" if has and self.ctl.missing else "Load image\u2026")
        self.load_button.setToolTip("Pick the missing image file again; the calibration is kept"
                                    if has and self.ctl.missing else "Put a sketch (PNG or JPEG) behind the canvas")
        for w in (self.opacity, self.lock_box, self.show_box, self.remove_button):
            w.setEnabled(has)
        for b in (self.scale_button, self.straighten_button, self.move_button):
            b.setEnabled(usable and not u.locked and u.visible)
        for w, val in ((self.lock_box, has and u.locked), (self.show_box, has and u.visible)):
            w.blockSignals(True)
            w.setChecked(bool(val))
            w.blockSignals(False)
        if has and not self.opacity.isSliderDown():
            self.opacity.blockSignals(True)
            self.opacity.setValue(round(u.opacity * 100))
            self.opacity.blockSignals(False)
            self.opacity_label.setText(f"{round(u.opacity * 100)} %")


def install_underlay(win) -> UnderlayController:
    """Add the Underlay menu (before Help) and the Underlay panel to the main window."""
    ctl = UnderlayController(win.doc, win.scene, win.view, win.ctx, message=win._message,
                             set_tool=win.set_tool, parent_widget=win)

    def pick_file(relink: bool) -> None:
        start = str(win.doc.path.parent) if win.doc.path else ""
        name, _ = QFileDialog.getOpenFileName(win, "Relink underlay image" if relink else "Load underlay image",
                                              start, IMAGE_FILTER)
        if name:
            (ctl.relink_image if relink else ctl.load_image)(Path(name))
            if not relink:
                dock.show()
                dock.raise_()

    menu = QMenu("&Underlay", win)
    a_load = menu.addAction("&Load image\u2026")
    a_load.setStatusTip("Put a photographed or scanned sketch (PNG or JPEG) behind the canvas to trace over")
    a_load.triggered.connect(lambda: pick_file(False))
    a_relink = menu.addAction("&Relink image\u2026")
    a_relink.setStatusTip("Pick the underlay's image file again (after it moved), keeping the calibration")
    a_relink.triggered.connect(lambda: pick_file(True))
    menu.addSeparator()
    a_scale = menu.addAction("Set &scale from two points")
    a_scale.setStatusTip("Click two points on the image, then type the real distance between them and Enter")
    a_scale.triggered.connect(lambda: ctl.start_pick("scale"))
    a_straight = menu.addAction("S&traighten from a line")
    a_straight.setStatusTip("Click two points on a line of the image that should be horizontal")
    a_straight.triggered.connect(lambda: ctl.start_pick("straighten"))
    a_move = menu.addAction("&Move image")
    a_move.triggered.connect(lambda: ctl.start_pick("move"))
    menu.addSeparator()
    a_lock = QAction("Loc&k", win, checkable=True)
    a_lock.toggled.connect(ctl.set_locked)
    a_show = QAction("Sho&w", win, checkable=True)
    a_show.toggled.connect(ctl.set_visible)
    menu.addActions([a_lock, a_show])
    a_panel = menu.addAction("Underlay &panel")
    a_remove = menu.addAction("Re&move underlay")
    a_remove.triggered.connect(ctl.remove)

    help_menu = next((a for a in win.menuBar().actions() if a.text().replace("&", "") == "Help"), None)
    if help_menu is not None:
        win.menuBar().insertMenu(help_menu, menu)
    else:
        win.menuBar().addMenu(menu)

    panel = UnderlayPanel(ctl)
    panel.load_button.clicked.connect(lambda: pick_file(bool(ctl.missing and ctl.underlay() is not None)))
    dock = QDockWidget("Underlay", win)
    dock.setObjectName("underlay_dock")
    dock.setWidget(panel)
    dock.setFeatures(QDockWidget.DockWidgetMovable | QDockWidget.DockWidgetFloatable | QDockWidget.DockWidgetClosable)
    win.addDockWidget(Qt.RightDockWidgetArea, dock)
    tab_with = getattr(win, "history_dock", None)
    if tab_with is not None:
        win.tabifyDockWidget(tab_with, dock)
    dock.hide()
    a_panel.triggered.connect(lambda: (dock.show(), dock.raise_()))

    def refresh_menu() -> None:
        u = ctl.underlay()
        usable = u is not None and not ctl.missing
        a_relink.setEnabled(u is not None)
        for a in (a_scale, a_straight, a_move):
            a.setEnabled(usable and not u.locked and u.visible)
        for a, val in ((a_lock, u is not None and u.locked), (a_show, u is not None and u.visible)):
            a.blockSignals(True)
            a.setChecked(bool(val))
            a.blockSignals(False)
        a_lock.setEnabled(u is not None)
        a_show.setEnabled(u is not None)
        a_remove.setEnabled(u is not None)
        if u is not None and not dock.isVisible():
            dock.show()
            dock.raise_()

    ctl.changed.connect(refresh_menu)
    refresh_menu()
    ctl.menu, ctl.panel, ctl.dock = menu, panel, dock
    ctl.actions = {"load": a_load, "relink": a_relink, "scale": a_scale, "straighten": a_straight,
                   "move": a_move, "lock": a_lock, "show": a_show, "remove": a_remove}
    return ctl

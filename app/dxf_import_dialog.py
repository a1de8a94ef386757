"""File > Import DXF and File > Export DXF in the app.

The import reads the drawing once (:func:`open_drawing`), lists its layers in
:class:`DxfImportDialog` with a choice each (beam, bar or skip), the units (from the
drawing header, or asked when the header names none) and the merge tolerance, and shows a
live preview of what :func:`kinestat.core.dxf.scheme_from_dxf` would import and skip, and
why.  Nothing reaches the document until the user presses Import; a broken drawing, or
one with no usable line work, leaves the drawing as it was with a message.

The import becomes one undoable step: into the current document when it is empty, else
into a new (untitled) document after the usual "save changes?" question, so the drawing on
screen is never mixed with the imported one and the file it came from is never
overwritten by it.  Layer choices are remembered per layer name (QSettings) and the
mapping used is kept in the scheme's ``"source"`` block.
"""
from __future__ import annotations

import json
import math
from collections import Counter
from dataclasses import dataclass
from pathlib import Path

from PySide6.QtCore import Qt, QTimer
from PySide6.QtGui import QFont
from PySide6.QtWidgets import (QApplication, QComboBox, QDialog, QDialogButtonBox, QFileDialog, QFormLayout,
                               QHeaderView, QLabel, QLineEdit, QMessageBox, QPlainTextEdit, QTableWidget,
                               QTableWidgetItem, QVBoxLayout)

from kinestat.core.dxf import (BUILTIN_LAYER_KINDS, INSUNITS, LAYER_CHOICES, DxfError, scheme_from_dxf,
                               write_dxf)
from kinestat.core.io import SchemeError
from kinestat.core.model import Scheme

from . import drawing as dr

DXF_FILTER = "DXF drawing (*.dxf);;All files (*)"
#: QSettings key holding {layer name (case-folded): kind}
SETTINGS_KEY = "dxf/layer_kinds"
#: entity types that can become members (other types are skipped whatever the layer's choice)
LINE_WORK = ("LINE", "LWPOLYLINE", "POLYLINE", "ARC")
#: what the kinestat layers hold (their choice is fixed: they are read as kinestat wrote them)
_BUILTIN_WORDS = {"skip": "kinestat marks and notes", "beam": "beam (kinestat layer)", "bar": "bar (kinestat layer)"}


# ---------------------------------------------------------------------------- the drawing
def open_drawing(path: str | Path):
    """Read a DXF file with ezdxf; :class:`DxfError` names the file for anything unreadable."""
    import ezdxf

    p = Path(path)
    try:
        return ezdxf.readfile(str(p))
    except Exception as exc:  # ezdxf raises many kinds for broken files; all mean "not readable"
        msg = str(exc).strip() or type(exc).__name__
        if isinstance(exc, OSError) and not p.exists():
            msg = "no such file"
        raise DxfError(f"file {p.name}: not a readable DXF file ({msg})") from None


@dataclass(frozen=True)
class LayerInfo:
    name: str
    entities: int
    #: entity type -> count, most common first
    types: tuple[tuple[str, int], ...]
    #: "on", "off" or "frozen"
    state: str = "on"

    @property
    def has_line_work(self) -> bool:
        return any(t in LINE_WORK for t, _ in self.types)

    @property
    def builtin(self) -> str | None:
        """The fixed choice of a layer kinestat writes, else None."""
        return BUILTIN_LAYER_KINDS.get(self.name.casefold())

    def auto_kind(self) -> str:
        """What the import does with the layer when nobody chooses: kinestat layers as
        written, layers that are off or frozen skipped, everything else beams."""
        if self.builtin is not None:
            return self.builtin
        return "skip" if self.state != "on" else "beam"

    def describe(self) -> str:
        t = ", ".join(f"{n} {k}" for k, n in self.types[:3]) + (", ..." if len(self.types) > 3 else "")
        return t + ("" if self.state == "on" else f"  (layer {self.state})")


def drawing_layers(doc) -> list[LayerInfo]:
    """The layers the model-space entities use, in order of first use."""
    counts: dict[str, Counter] = {}
    for e in doc.modelspace():
        counts.setdefault(str(e.dxf.get("layer", "0")), Counter())[e.dxftype()] += 1
    out = []
    for name, c in counts.items():
        state = "on"
        if doc.layers.has_entry(name):
            lay = doc.layers.get(name)
            state = "frozen" if lay.is_frozen() else ("off" if lay.is_off() else "on")
        out.append(LayerInfo(name, sum(c.values()), tuple(c.most_common()), state))
    return out


def header_units(doc) -> str | None:
    """The drawing's unit from ``$INSUNITS``, or None when it names none kinestat knows."""
    try:
        return INSUNITS.get(int(doc.header.get("$INSUNITS", 0)))
    except (TypeError, ValueError):
        return None


def layer_mapping(layers: list[LayerInfo], choices: dict[str, str]) -> dict[str, str]:
    """The ``layers`` argument of :func:`scheme_from_dxf` for the dialog's choices: every
    layer by name, except kinestat layers left as they are (so their marks are read)."""
    out = {}
    for info in layers:
        kind = choices.get(info.name, info.auto_kind())
        if info.builtin is not None and kind == info.builtin:
            continue
        if not info.has_line_work and info.builtin is None:
            continue  # nothing to choose: its entities are skipped with their own reason
        out[info.name] = kind
    return out


def remembered_kinds(settings) -> dict[str, str]:
    raw = settings.value(SETTINGS_KEY, "") if settings is not None else ""
    try:
        data = json.loads(raw) if raw else {}
    except (TypeError, ValueError):
        return {}
    return {str(k): v for k, v in data.items() if v in LAYER_CHOICES} if isinstance(data, dict) else {}


def remember_kinds(settings, choices: dict[str, str]) -> None:
    if settings is None:
        return
    data = remembered_kinds(settings)
    data.update({name.casefold(): kind for name, kind in choices.items()})
    settings.setValue(SETTINGS_KEY, json.dumps(data, sort_keys=True))


def parse_tolerance(text: str) -> float | None:
    """None for automatic; raises ValueError with a message for anything but a positive number."""
    t = text.strip()
    if not t or t.lower() in ("auto", "automatic"):
        return None
    try:
        v = float(t.replace(",", "."))
    except ValueError:
        raise ValueError(f'merge tolerance "{t}": not a number (leave it empty for automatic)') from None
    if not math.isfinite(v) or v <= 0:
        raise ValueError(f'merge tolerance "{t}": must be a positive number in drawing units')
    return v


# ---------------------------------------------------------------------------- the dialog
class DxfImportDialog(QDialog):
    """Layers with a kind each, units, merge tolerance and a live preview of the import."""

    def __init__(self, doc, source: str, settings=None, parent=None):
        super().__init__(parent)
        self.setWindowTitle(f"Import DXF \u2014 {source}")
        self.resize(760, 640)
        self.dxf, self.source, self.settings = doc, source, settings
        self.layers = drawing_layers(doc)
        self.header_units = header_units(doc)
        self.scheme: Scheme | None = None
        self.report = None
        self.error: str | None = None
        remembered = remembered_kinds(settings)

        v = QVBoxLayout(self)
        intro = QLabel("Choose what the line work on each layer becomes. Ends closer than the merge tolerance "
                       "become one node; a segment ending on another splits it; arcs become curved members.")
        intro.setWordWrap(True)
        v.addWidget(intro)
        self.table = QTableWidget(len(self.layers), 3)
        self.table.setHorizontalHeaderLabels(["Layer", "Entities", "Import as"])
        self.table.verticalHeader().setVisible(False)
        self.table.setEditTriggers(QTableWidget.NoEditTriggers)
        self.table.setSelectionMode(QTableWidget.NoSelection)
        hh = self.table.horizontalHeader()
        hh.setSectionResizeMode(0, QHeaderView.ResizeToContents)
        hh.setSectionResizeMode(1, QHeaderView.Stretch)
        hh.setSectionResizeMode(2, QHeaderView.ResizeToContents)
        self.combos: dict[str, QComboBox] = {}
        for row, info in enumerate(self.layers):
            self.table.setItem(row, 0, QTableWidgetItem(info.name))
            self.table.setItem(row, 1, QTableWidgetItem(info.describe()))
            combo = QComboBox()
            if info.builtin is not None:
                combo.addItem(_BUILTIN_WORDS[info.builtin], info.builtin)
                combo.setEnabled(False)
            elif not info.has_line_work:
                combo.addItem("no line work", "skip")
                combo.setEnabled(False)
            else:
                for k in LAYER_CHOICES:
                    combo.addItem(k, k)
                kind = remembered.get(info.name.casefold(), info.auto_kind())
                combo.setCurrentIndex(LAYER_CHOICES.index(kind))
                combo.currentIndexChanged.connect(self._schedule)
            self.combos[info.name] = combo
            self.table.setCellWidget(row, 2, combo)
        v.addWidget(self.table, 2)

        form = QFormLayout()
        self.units = QComboBox()
        for u in INSUNITS.values():
            self.units.addItem(u, u)
        if self.header_units:
            self.units.setCurrentIndex(self.units.findData(self.header_units))
            self.units_note = QLabel(f"from the drawing header ({self.header_units})")
        else:
            self.units.setCurrentIndex(self.units.findData("m"))
            self.units_note = QLabel("the drawing does not say which unit it is in: choose it")
            self.units_note.setStyleSheet(f"color: {dr.PALETTE.unstable}; font-weight: bold;")
        self.units.currentIndexChanged.connect(self._schedule)
        form.addRow("Units", self.units)
        form.addRow("", self.units_note)
        self.tol = QLineEdit()
        self.tol.setPlaceholderText("automatic: 0.001 x the median segment length")
        self.tol.textChanged.connect(self._schedule)
        form.addRow("Merge tolerance", self.tol)
        v.addLayout(form)

        v.addWidget(QLabel("What will be imported and what skipped:"))
        self.preview_text = QPlainTextEdit()
        self.preview_text.setReadOnly(True)
        mono = QFont("monospace")
        mono.setStyleHint(QFont.Monospace)
        self.preview_text.setFont(mono)
        v.addWidget(self.preview_text, 3)
        caution = QLabel(dr.CAUTION)
        caution.setWordWrap(True)
        caution.setStyleSheet(f"color: {dr.PALETTE.muted}; font-style: italic;")
        v.addWidget(caution)
        self.buttons = QDialogButtonBox(QDialogButtonBox.Ok | QDialogButtonBox.Cancel)
        self.buttons.button(QDialogButtonBox.Ok).setText("Import")
        self.buttons.accepted.connect(self._accept)
        self.buttons.rejected.connect(self.reject)
        v.addWidget(self.buttons)
        self._timer = QTimer(self)
        self._timer.setSingleShot(True)
        self._timer.setInterval(200)
        self._timer.timeout.connect(self.preview)
        self.preview()

    # -- choices
    def choices(self) -> dict[str, str]:
        return {name: c.currentData() for name, c in self.combos.items()}

    def set_choice(self, layer: str, kind: str) -> None:
        combo = self.combos[layer]
        if not combo.isEnabled():
            raise ValueError(f'layer "{layer}": its choice is fixed ({combo.currentText()})')
        combo.setCurrentIndex(LAYER_CHOICES.index(kind))

    def set_units(self, units: str) -> None:
        self.units.setCurrentIndex(self.units.findData(units))

    def units_given(self) -> str | None:
        u = self.units.currentData()
        return None if u == self.header_units else u

    # -- the import (all or nothing)
    def _schedule(self, *_a) -> None:
        self._timer.start()

    def preview(self) -> bool:
        """Run the import on the choices; True when it would succeed."""
        self._timer.stop()
        self.scheme = self.report = None
        ok_button = self.buttons.button(QDialogButtonBox.Ok)
        try:
            tol = parse_tolerance(self.tol.text())
            scheme, report = scheme_from_dxf(self.dxf, source=self.source, layers=layer_mapping(self.layers, self.choices()),
                                             tol=tol, units=self.units_given(), title=Path(self.source).stem)
        except (ValueError, SchemeError) as exc:  # DxfError is a SchemeError
            self.error = str(exc)
            self.preview_text.setPlainText(f"Cannot import: {exc}\n\nNothing will be imported.")
            ok_button.setEnabled(False)
            return False
        self.error = None
        self.scheme, self.report = scheme, report
        self.preview_text.setPlainText("\n".join(report.lines(limit=None)))
        ok_button.setEnabled(True)
        return True

    def _accept(self) -> None:
        if self.preview():
            self.accept()

    def remember(self) -> None:
        """Keep the choices of the ordinary layers for the next import (QSettings)."""
        remember_kinds(self.settings, {info.name: self.combos[info.name].currentData()
                                       for info in self.layers if self.combos[info.name].isEnabled()})


# ---------------------------------------------------------------------------- window actions
class DxfActions:
    """File > Import DXF\u2026 and File > Export DXF\u2026 for a main window."""

    def __init__(self, win):
        self.win = win
        self.last_report = None
        #: the non-modal summary of the last import
        self.summary: QMessageBox | None = None
        self.import_action = win._action("&Import DXF\u2026", self.import_dxf, tip="Import DXF line work as a scheme")
        self.export_action = win._action("E&xport DXF\u2026", self.export_dxf,
                                         tip="Export the scheme as DXF line work (one layer per member kind)")
        self.actions = [self.import_action, self.export_action]

    def import_dxf(self) -> bool:
        start = str(self.win.doc.path.parent) if self.win.doc.path else ""
        name, _ = QFileDialog.getOpenFileName(self.win, "Import DXF", start, DXF_FILTER)
        return bool(name) and self.import_path(Path(name))

    def import_path(self, path: Path, *, run_dialog=None) -> bool:
        """Import ``path`` through the dialog; ``run_dialog(dialog) -> bool`` replaces
        ``dialog.exec()`` (tests).  False, and the drawing untouched, when anything fails."""
        win = self.win
        path = Path(path)
        QApplication.setOverrideCursor(Qt.WaitCursor)
        try:
            doc = open_drawing(path)
        except DxfError as exc:
            QApplication.restoreOverrideCursor()
            win.show_error("Cannot import DXF", str(exc))
            return False
        QApplication.restoreOverrideCursor()
        dlg = DxfImportDialog(doc, path.name, win.settings, win)
        accepted = run_dialog(dlg) if run_dialog is not None else dlg.exec() == QDialog.Accepted
        if not accepted:
            win._message("DXF import cancelled")
            return False
        if not dlg.preview():  # the choices as they are now, all or nothing
            win.show_error("Cannot import DXF", dlg.error or f"{path.name}: nothing to import")
            return False
        dlg.remember()
        scheme, report = dlg.scheme, dlg.report
        d = win.doc
        if d.scheme.nodes or d.scheme.members:
            # a new document: the drawing on screen is kept (saved or discarded) as the user says
            if not win.maybe_save():
                win._message("DXF import cancelled: the current drawing is kept")
                return False
            d.replace_scheme(Scheme())
        d.commit(f"Import DXF {path.name}", scheme)
        self.last_report = report
        win._fit_soon()
        self._show_summary(path, report)
        win._message(report.lines(limit=0)[0] + f"; {len(report.skipped)} items skipped (see the summary)")
        return True

    def _show_summary(self, path: Path, report) -> None:
        lines = report.lines(limit=None)
        box = self.summary
        if box is None:
            box = QMessageBox(QMessageBox.Information, "DXF imported", "", QMessageBox.Ok, self.win)
            box.setModal(False)
            box.setWindowModality(Qt.NonModal)
            self.summary = box
        box.setText(lines[0])
        k = next((i for i, ln in enumerate(lines) if ln.startswith("Skipped")), len(lines))
        n_skip = len(report.skipped)
        tail = [f"Skipped {n_skip} items: why, item by item, under Show Details." if n_skip else "Skipped nothing."]
        if report.units_from == "assumed":
            tail.append("The drawing names no units: metres assumed.")
        if not report.n_supports:
            tail.append("Line work carries no supports: add them before reading the verdict.")
        box.setInformativeText("\n".join([ln.strip() for ln in lines[1:k]] + tail))
        box.setDetailedText("\n".join(lines))
        box.show()

    def export_dxf(self, path: Path | None = None) -> bool:
        win = self.win
        s = win.doc.scheme
        if not s.members:
            win.show_error("Cannot export DXF", "The scheme has no members: nothing to draw")
            return False
        if path is None:
            stem = win.doc.path.with_suffix(".dxf") if win.doc.path else Path("scheme.dxf")
            name, _ = QFileDialog.getSaveFileName(win, "Export DXF", str(stem), DXF_FILTER)
            if not name:
                return False
            path = Path(name if name.lower().endswith(".dxf") else name + ".dxf")
        try:
            write_dxf(s, path)  # atomic: temporary file + rename
        except (OSError, DxfError) as exc:
            win.show_error("Cannot export DXF", f"{path}: {getattr(exc, 'strerror', None) or exc}")
            return False
        win._message(f"Exported {Path(path).name}: {len(s.members)} members, {len(s.supports)} support marks")
        return True

"""The properties panel: exact values of the selection, each edit one undo step.

Nothing selected: the scheme's title and units.  One node: coordinates, full hinge,
support kind and angle.  One member: kind (beam / bar) and the releases at each end.
Several members: their kind at once.
"""
from __future__ import annotations

import math

from PySide6.QtWidgets import (QCheckBox, QComboBox, QDoubleSpinBox, QFormLayout, QGridLayout, QLabel, QLineEdit,
                               QPushButton, QStackedWidget, QVBoxLayout, QWidget)

from kinestat.core.model import SUPPORT_KINDS, Support

from . import edits

UNITS = ("m", "mm", "cm", "ft", "in")


def _spin(lo=-1e6, hi=1e6, step=0.5, decimals=4) -> QDoubleSpinBox:
    s = QDoubleSpinBox()
    s.setRange(lo, hi)
    s.setDecimals(decimals)
    s.setSingleStep(step)
    s.setKeyboardTracking(False)
    return s


class PropertiesPanel(QWidget):
    def __init__(self, doc, parent=None):
        super().__init__(parent)
        self.doc = doc
        self._updating = False
        lay = QVBoxLayout(self)
        lay.setContentsMargins(10, 6, 10, 6)
        self.heading = QLabel("Scheme")
        self.heading.setStyleSheet("font-weight: 600;")
        lay.addWidget(self.heading)
        self.stack = QStackedWidget()
        lay.addWidget(self.stack)
        lay.addStretch(1)

        # scheme page
        pg = QWidget()
        f = QFormLayout(pg)
        self.title_edit = QLineEdit()
        self.title_edit.setPlaceholderText("untitled scheme")
        self.title_edit.editingFinished.connect(self._on_title)
        self.units_combo = QComboBox()
        self.units_combo.addItems(UNITS)
        self.units_combo.setEditable(True)
        # one step per finished entry, not per keystroke
        self.units_combo.lineEdit().editingFinished.connect(lambda: self._on_units(self.units_combo.currentText()))
        self.units_combo.activated.connect(lambda _i: self._on_units(self.units_combo.currentText()))
        self.counts_label = QLabel()
        f.addRow("Title", self.title_edit)
        f.addRow("Units", self.units_combo)
        f.addRow("Contents", self.counts_label)
        self.page_scheme = self.stack.addWidget(pg)

        # node page
        pg = QWidget()
        f = QFormLayout(pg)
        self.node_x, self.node_y = _spin(), _spin()
        self.node_x.valueChanged.connect(self._on_node_xy)
        self.node_y.valueChanged.connect(self._on_node_xy)
        self.node_hinge = QCheckBox("full hinge (all beam ends released)")
        self.node_hinge.toggled.connect(self._on_hinge)
        self.support_kind = QComboBox()
        self.support_kind.addItems(["none", *SUPPORT_KINDS])
        self.support_kind.currentTextChanged.connect(self._on_support)
        self.support_angle = _spin(-360, 720, 15.0, 2)
        self.support_angle.setSuffix("\u00b0")
        self.support_angle.setWrapping(False)
        self.support_angle.valueChanged.connect(self._on_support)
        self.node_members = QLabel()
        self.node_members.setWordWrap(True)
        f.addRow("x", self.node_x)
        f.addRow("y", self.node_y)
        f.addRow("", self.node_hinge)
        f.addRow("Support", self.support_kind)
        f.addRow("Angle", self.support_angle)
        f.addRow("Members", self.node_members)
        self.page_node = self.stack.addWidget(pg)

        # member page
        pg = QWidget()
        g = QGridLayout(pg)
        self.member_ends = QLabel()
        self.member_kind = QComboBox()
        self.member_kind.addItems(["beam", "bar"])
        self.member_kind.currentTextChanged.connect(self._on_member_kind)
        self.member_length = QLabel()
        g.addWidget(QLabel("Ends"), 0, 0)
        g.addWidget(self.member_ends, 0, 1, 1, 2)
        g.addWidget(QLabel("Kind"), 1, 0)
        g.addWidget(self.member_kind, 1, 1, 1, 2)
        g.addWidget(QLabel("Length"), 2, 0)
        g.addWidget(self.member_length, 2, 1, 1, 2)
        g.addWidget(QLabel("Releases"), 3, 0)
        self.start_label, self.end_label = QLabel("start"), QLabel("end")
        g.addWidget(self.start_label, 3, 1)
        g.addWidget(self.end_label, 3, 2)
        self.release_boxes: dict[tuple[str, str], QCheckBox] = {}
        for row, word in enumerate(("moment", "shear", "axial"), start=4):
            g.addWidget(QLabel(word), row, 0)
            for col, end in ((1, "start"), (2, "end")):
                cb = QCheckBox()
                cb.toggled.connect(lambda on, e=end, w=word: self._on_release(e, w, on))
                self.release_boxes[(end, word)] = cb
                g.addWidget(cb, row, col)
        self.bar_note = QLabel("A bar is pin-ended: it carries axial force only, no releases to set.")
        self.bar_note.setWordWrap(True)
        g.addWidget(self.bar_note, 7, 0, 1, 3)
        self.page_member = self.stack.addWidget(pg)

        # several
        pg = QWidget()
        v = QVBoxLayout(pg)
        self.multi_label = QLabel()
        v.addWidget(self.multi_label)
        self.multi_beam = QPushButton("Make members beams")
        self.multi_bar = QPushButton("Make members bars")
        self.multi_beam.clicked.connect(lambda: self._set_kinds("beam"))
        self.multi_bar.clicked.connect(lambda: self._set_kinds("bar"))
        v.addWidget(self.multi_beam)
        v.addWidget(self.multi_bar)
        self.page_multi = self.stack.addWidget(pg)

        doc.changed.connect(lambda _c: self.refresh())
        doc.selection_changed.connect(self.refresh)
        self.refresh()

    # ------------------------------------------------------------------
    def refresh(self) -> None:
        self._updating = True
        try:
            self._refresh()
        finally:
            self._updating = False

    def _refresh(self) -> None:
        s = self.doc.scheme
        sn, sm = self.doc.selected_nodes, self.doc.selected_members
        units = s.units
        if not sn and not sm:
            self.heading.setText("Scheme")
            self.stack.setCurrentIndex(self.page_scheme)
            if not self.title_edit.hasFocus():
                self.title_edit.setText(s.title)
            self.units_combo.setCurrentText(s.units)
            self.counts_label.setText(f"{len(s.nodes)} nodes, {len(s.members)} members, {len(s.supports)} supports")
        elif len(sn) == 1 and not sm:
            (nid,) = sn
            n = s.nodes[nid]
            self.heading.setText(f"Node {nid}")
            self.stack.setCurrentIndex(self.page_node)
            for spin, v in ((self.node_x, n.x), (self.node_y, n.y)):
                spin.setSuffix(f" {units}")
                spin.setValue(v)
            self.node_hinge.setChecked(n.hinge)
            sup = s.supports.get(nid)
            self.support_kind.setCurrentText(sup.kind if sup else "none")
            self.support_angle.setValue(sup.angle if sup else 90.0)
            self.support_angle.setEnabled(sup is not None)
            self.node_members.setText(", ".join(m.id for m in s.members_at(nid)) or "none (not analysed)")
        elif len(sm) == 1 and not sn:
            (mid,) = sm
            m = s.members[mid]
            self.heading.setText(f"Member {mid}")
            self.stack.setCurrentIndex(self.page_member)
            self.member_ends.setText(f"{m.start} \u2192 {m.end}")
            self.member_kind.setCurrentText(m.kind)
            L = math.dist(s.node_xy(m.start), s.node_xy(m.end))
            self.member_length.setText(f"{L:.4g} {units}" + (f" (chord; rise {m.rise:g})" if m.rise else ""))
            self.start_label.setText(f"at {m.start}")
            self.end_label.setText(f"at {m.end}")
            for (end, word), cb in self.release_boxes.items():
                cb.setChecked(word in (m.releases_start if end == "start" else m.releases_end))
                cb.setEnabled(m.kind == "beam")
            self.bar_note.setVisible(m.kind == "bar")
        else:
            self.heading.setText("Selection")
            self.stack.setCurrentIndex(self.page_multi)
            self.multi_label.setText(f"{len(sn)} node(s), {len(sm)} member(s) selected")
            self.multi_beam.setEnabled(bool(sm))
            self.multi_bar.setEnabled(bool(sm))

    # ------------------------------------------------------------------ edits
    def _on_title(self) -> None:
        if self._updating:
            return
        s = self.doc.scheme
        if self.title_edit.text() != s.title:
            self.doc.commit("Title", s.retitled(self.title_edit.text()))

    def _on_units(self, text: str) -> None:
        if self._updating or not text.strip():
            return
        from dataclasses import replace

        s = self.doc.scheme
        if text.strip() != s.units:
            self.doc.commit("Units", replace(s, units=text.strip()))

    def _one_node(self):
        sn = self.doc.selected_nodes
        return next(iter(sn)) if len(sn) == 1 else None

    def _on_node_xy(self, *_):
        if self._updating:
            return
        nid = self._one_node()
        if nid:
            moved = self.doc.scheme.moved({nid: (self.node_x.value(), self.node_y.value())})
            self.doc.commit("Move node", edits.join_coincident(moved, [nid]))

    def _on_hinge(self, on: bool) -> None:
        if self._updating:
            return
        nid = self._one_node()
        if nid:
            self.doc.commit(f"{'Hinge' if on else 'No hinge'} at {nid}", edits.set_hinge(self.doc.scheme, nid, on))

    def _on_support(self, *_):
        if self._updating:
            return
        nid = self._one_node()
        if not nid:
            return
        kind = self.support_kind.currentText()
        s = self.doc.scheme
        old = s.supports.get(nid)
        if kind == "none":
            sup = None
        elif kind == "custom":
            sup = Support(nid, "custom", self.support_angle.value(), old.fix if old and old.kind == "custom"
                          else ("along",))
        else:
            sup = Support(nid, kind, self.support_angle.value())
        self.doc.commit(f"Support at {nid}", edits.set_support(s, nid, sup))

    def _one_member(self):
        sm = self.doc.selected_members
        return next(iter(sm)) if len(sm) == 1 else None

    def _on_member_kind(self, kind: str) -> None:
        if self._updating:
            return
        mid = self._one_member()
        if mid:
            self.doc.commit(f"Member {mid} {kind}", edits.set_member_kind(self.doc.scheme, mid, kind))

    def _on_release(self, end: str, word: str, on: bool) -> None:
        if self._updating:
            return
        mid = self._one_member()
        if not mid:
            return
        m = self.doc.scheme.members[mid]
        nid = m.start if end == "start" else m.end
        self.doc.commit(f"{word.capitalize()} release {'on' if on else 'off'} at {mid}/{nid}",
                        edits.set_release(self.doc.scheme, mid, nid, word, on))

    def _set_kinds(self, kind: str) -> None:
        s = self.doc.scheme
        for mid in self.doc.selected_members:
            s = edits.set_member_kind(s, mid, kind)
        self.doc.commit(f"Members {kind}", s)


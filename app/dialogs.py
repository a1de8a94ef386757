"""Small dialogs: the generators (frame, truss) and the about / first-start texts."""
from __future__ import annotations

from PySide6.QtWidgets import (QComboBox, QDialog, QDialogButtonBox, QDoubleSpinBox, QFormLayout, QSpinBox,
                               QVBoxLayout, QLabel)

from . import drawing as dr
from .generators import TRUSS_PATTERNS, frame, truss

ABOUT_HTML = f"""
<h3>kinestat</h3>
<p>Sketch a 2D framing scheme of beams, bars, supports, hinges and releases, and see at once whether it
is <b>stable</b>, <b>statically determinate</b> or <b>indeterminate</b>, where the mechanisms are and why a hand
count may mislead.  The verdict comes from the rank of the scheme's equilibrium matrix; the hand count is shown
beside it term by term.</p>
<p><b>Caution.</b> {dr.CAUTION} kinestat checks the form of a scheme (kinematics and redundancy) only; it does
not check strength, stiffness, stability of members, loads or connections.</p>
"""

FIRST_START_HTML = f"""
<h3>Welcome to kinestat</h3>
<p><b>{dr.CAUTION}</b></p>
<p>To start: pick <b>Beam</b> (B) or <b>Bar</b> (T) and click from point to point (Esc ends a chain);
add supports with <b>Pin</b> (P), <b>Roller</b> (R), <b>Fixed</b> (F) or <b>Guided</b> (G); the verdict panel
updates as you draw.  <b>File &gt; Examples</b> has ready-made schemes.</p>
"""

LEGEND_HTML = """
<h3>Symbols</h3>
<ul>
<li>thick line: beam (axial force, shear and moment); thin line with rings at the joints: bar (axial only)</li>
<li>small dot: continuous (rigid) joint; large ring on a node: full hinge</li>
<li>ring just off a joint: moment release at that member end; two strokes across: shear release;
open sleeve: axial release</li>
<li>a hop where members cross: the crossing is <i>not</i> a joint (Ctrl-click while drawing, or
Edit &gt; Join at crossings, joins them)</li>
<li>open purple square: a node no member reaches (left out of the analysis)</li>
<li>dashed vermillion shape with arrows: the first mechanism (scale arbitrary)</li>
<li>verdict marker: circle = determinate, square = indeterminate, triangle = unstable</li>
</ul>
"""


class FrameDialog(QDialog):
    def __init__(self, parent=None, units: str = "m"):
        super().__init__(parent)
        self.setWindowTitle("Insert frame")
        f = QFormLayout()
        self.bays = QSpinBox()
        self.bays.setRange(1, 60)
        self.bays.setValue(2)
        self.storeys = QSpinBox()
        self.storeys.setRange(1, 60)
        self.storeys.setValue(2)
        self.bay = QDoubleSpinBox()
        self.bay.setRange(0.01, 1e5)
        self.bay.setValue(6.0)
        self.bay.setSuffix(f" {units}")
        self.storey = QDoubleSpinBox()
        self.storey.setRange(0.01, 1e5)
        self.storey.setValue(3.5)
        self.storey.setSuffix(f" {units}")
        self.base = QComboBox()
        self.base.addItems(["fixed", "pin", "none"])
        for label, w in (("Bays", self.bays), ("Storeys", self.storeys), ("Bay width", self.bay),
                         ("Storey height", self.storey), ("Base supports", self.base)):
            f.addRow(label, w)
        _finish(self, f)

    def scheme(self):
        return frame(self.bays.value(), self.storeys.value(), self.bay.value(), self.storey.value(),
                     self.base.currentText())


class TrussDialog(QDialog):
    def __init__(self, parent=None, units: str = "m"):
        super().__init__(parent)
        self.setWindowTitle("Insert truss")
        f = QFormLayout()
        self.pattern = QComboBox()
        for key, words in TRUSS_PATTERNS.items():
            self.pattern.addItem(words, key)
        self.span = QDoubleSpinBox()
        self.span.setRange(0.01, 1e5)
        self.span.setValue(12.0)
        self.span.setSuffix(f" {units}")
        self.depth = QDoubleSpinBox()
        self.depth.setRange(0.01, 1e5)
        self.depth.setValue(2.0)
        self.depth.setSuffix(f" {units}")
        self.panels = QSpinBox()
        self.panels.setRange(1, 80)
        self.panels.setValue(6)
        self.supports = QComboBox()
        self.supports.addItems(["pin + roller", "none"])
        for label, w in (("Pattern", self.pattern), ("Span", self.span), ("Depth", self.depth),
                         ("Panels", self.panels), ("Supports", self.supports)):
            f.addRow(label, w)
        _finish(self, f)

    def scheme(self):
        return truss(self.pattern.currentData(), self.span.value(), self.depth.value(), self.panels.value(),
                     self.supports.currentIndex() == 0)


def _finish(dlg: QDialog, form: QFormLayout) -> None:
    v = QVBoxLayout(dlg)
    v.addLayout(form)
    note = QLabel("Inserted at the origin as ordinary members; nodes on existing nodes join them.")
    note.setWordWrap(True)
    v.addWidget(note)
    bb = QDialogButtonBox(QDialogButtonBox.Ok | QDialogButtonBox.Cancel)
    bb.accepted.connect(dlg.accept)
    bb.rejected.connect(dlg.reject)
    v.addWidget(bb)

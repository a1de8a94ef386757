"""The primary-structure view: s releases that leave the scheme stable and determinate.

The engine picks the releases by a column-pivoted QR factorisation of the equilibrium matrix
(P. Businger & G. H. Golub (1965), Numer. Math. 7, 269-276) and re-analyses each choice; the
view draws them on the canvas (a crossed reaction arrow, a hinge ring, an axial sleeve, a
cut bar), numbered as in the list, steps through the alternatives, shows the force-method
state that belongs to the release picked in the list, and hands the released scheme on to
be opened as a drawing of its own (the original is left as it is).
"""
from __future__ import annotations

import math

from PySide6.QtCore import QLineF, QPointF, Qt, Signal
from PySide6.QtGui import QPainter
from PySide6.QtWidgets import QHBoxLayout, QLabel, QListWidget, QListWidgetItem, QPushButton

from kinestat.core.model import Scheme

from . import drawing as dr
from .canvas_overlay import DeviceMap, Overlay, badge
from .insight_panel import InsightPanel
from .redundancy_view import paint_state, paint_state_marks, state_words

LAYER = "primary"


def _arrow(painter: QPainter, tail: QPointF, head: QPointF, colour: str) -> None:
    painter.setPen(dr.pen(colour, 2.0))
    painter.drawLine(QLineF(tail, head))
    ang = math.atan2(head.y() - tail.y(), head.x() - tail.x())
    for da in (2.6, -2.6):
        painter.drawLine(head, head + QPointF(8 * math.cos(ang + da), 8 * math.sin(ang + da)))


def _cross(painter: QPainter, c: QPointF, colour: str, r: float = 5.0) -> None:
    painter.setPen(dr.pen(dr.PALETTE.paper, 5.0))
    painter.drawLine(c + QPointF(-r, -r), c + QPointF(r, r))
    painter.drawLine(c + QPointF(-r, r), c + QPointF(r, -r))
    painter.setPen(dr.pen(colour, 2.0))
    painter.drawLine(c + QPointF(-r, -r), c + QPointF(r, r))
    painter.drawLine(c + QPointF(-r, r), c + QPointF(r, -r))


def paint_release(painter: QPainter, T: DeviceMap, scheme: Scheme, rel, number: int, chosen: bool) -> None:
    """One release of a primary structure, drawn where it acts, with its number."""
    pal = dr.PALETTE
    colour = pal.mechanism
    if rel.kind == "reaction":
        sup = scheme.supports.get(rel.item)
        if rel.item not in scheme.nodes:
            return
        p = T.map(*scheme.node_xy(rel.item))
        if rel.detail == "rotation" or sup is None:
            painter.setPen(dr.pen(colour, 2.0))
            painter.setBrush(Qt.NoBrush)
            painter.drawArc(int(p.x() - 16), int(p.y() - 16), 32, 32, 20 * 16, 230 * 16)
            _cross(painter, p + QPointF(0, -16), colour)
            tag = p + QPointF(24, -22)
        else:
            ang = math.radians(sup.angle + (90.0 if rel.detail == "across" else 0.0))
            d = QPointF(math.cos(ang), -math.sin(ang))  # screen direction of the reaction
            if d.y() > 0.3:  # keep the arrow clear of the ground hatching below the node
                d = -d
            # off to the side when a member runs along the arrow
            side = QPointF(0.0, 0.0)
            for m in scheme.members_at(rel.item):
                if m.start in scheme.nodes and m.end in scheme.nodes:
                    _, into = T.end_direction(scheme, m, rel.item)
                    if math.cos(into - math.atan2(d.y(), d.x())) > 0.94:
                        side = QPointF(-d.y(), d.x()) * 14
                        if side.x() < 0:
                            side = -side
                        break
            tail, head = p + side + d * 50, p + side + d * 12
            _arrow(painter, tail, head, colour)
            _cross(painter, p + side + d * 31, colour)
            tag = tail + d * 12
        badge(painter, tag, str(number), colour, fill=pal.paper if not chosen else None)
        return
    m = scheme.members.get(rel.item)
    if m is None or m.start not in scheme.nodes or m.end not in scheme.nodes:
        return
    if rel.kind == "cut":
        _, ang = T.member_mid(scheme, m)
        p = T.member_at(scheme, m, 0.35)  # off the midpoint, where crossing diagonals hop
        u = QPointF(math.cos(ang), math.sin(ang))
        n = QPointF(-u.y(), u.x())
        painter.setPen(dr.pen(pal.paper, 7.0))
        painter.drawLine(QLineF(p - u * 5, p + u * 5))
        painter.setPen(dr.pen(colour, 2.0))
        for s in (-5, 5):
            painter.drawLine(QLineF(p + u * s - n * 8, p + u * s + n * 8))
        badge(painter, p + n * 20, str(number), colour, fill=pal.paper if not chosen else None)
        return
    node = m.start if rel.detail == "start" else m.end
    at, direction = T.end_direction(scheme, m, node)
    existing = m.releases_at(node)
    painter.save()
    painter.translate(at)
    words = {"moment"} if rel.kind == "hinge" else {"axial"}
    dr.draw_releases(painter, words, direction, pal, colour,
                     start=dr.RELEASE_OFFSET + (13.0 if existing else 0.0) + 4.0)
    painter.restore()
    off = dr.RELEASE_OFFSET + (13.0 if existing else 0.0) + 8.0
    u = QPointF(math.cos(direction), math.sin(direction))
    n = QPointF(-u.y(), u.x())
    if n.y() > 0:
        n = -n
    badge(painter, at + u * off + n * 16, str(number), colour, fill=pal.paper if not chosen else None)


class PrimaryView(InsightPanel):
    """Panel: the releases of the current primary structure and the alternatives."""

    error_title = "Could not find a primary structure"

    #: a :class:`kinestat.core.primary.PrimaryStructure` to open as a new drawing
    open_requested = Signal(object)

    def __init__(self, doc, overlay: Overlay, parent=None):
        super().__init__(doc, overlay, parent)
        self.index = 0
        lay = self.box
        row = QHBoxLayout()
        self.prev_button = QPushButton("\u25c0 Previous")
        self.next_button = QPushButton("Next \u25b6")
        self.prev_button.clicked.connect(lambda: self.step(-1))
        self.next_button.clicked.connect(lambda: self.step(1))
        self.which_label = QLabel("")
        self.which_label.setAlignment(Qt.AlignCenter)
        row.addWidget(self.prev_button)
        row.addWidget(self.which_label, 1)
        row.addWidget(self.next_button)
        lay.addLayout(row)
        self.list = QListWidget()
        self.list.setWordWrap(True)
        self.list.currentRowChanged.connect(lambda _r: self._apply_overlay())
        lay.addWidget(self.list, 1)
        self.state_label = QLabel("")
        self.state_label.setWordWrap(True)
        lay.addWidget(self.state_label)
        self.open_button = QPushButton("Open the primary structure as a new drawing")
        self.open_button.setToolTip("A new window with the released scheme (one undoable step from a copy "
                                    "of this drawing); this drawing is not changed")
        self.open_button.clicked.connect(self._on_open)
        lay.addWidget(self.open_button)
        note = QLabel("Pick a release in the list to see the state of self-stress it frees "
                      "(the force-method redundant).")
        note.setWordWrap(True)
        note.setStyleSheet(f"color: {dr.PALETTE.muted}; font-size: 9pt;")
        lay.addWidget(note)
        self.show_result(None)

    # ------------------------------------------------------------------ results
    def structures(self) -> list:
        return self.result.structures() if self.result is not None else []

    def current(self):
        lst = self.structures()
        return lst[self.index] if 0 <= self.index < len(lst) else None

    def set_pending(self) -> None:
        if self.result is not None:
            self.status_label.setText("updating\u2026")
        self._enable()
        self.overlay.refresh()

    def show_result(self, res, revision: int | None = None) -> None:
        """Show a :class:`~.insight_runner.PrimaryResultView` (None: nothing to show)."""
        keep = self.current()
        self.take(res, revision)
        self.index = 0
        if res is None:
            self.summary_label.setText(self.empty_words("an indeterminate scheme to see a primary structure"))
        else:
            r = res.result
            if r.primary is None or not r.primary.releases:
                self.summary_label.setText(r.note[:1].upper() + r.note[1:] if r.note else "No primary structure.")
            else:
                s = r.self_stress
                self.summary_label.setText(f"Degree of indeterminacy {s}: {s} release"
                                           f"{'s leave' if s != 1 else ' leaves'} a stable, statically "
                                           "determinate scheme")
                self.status_label.setText("Every choice listed has been re-analysed: no mechanism, no "
                                          "state of self-stress.")
                if keep is not None:  # stay on the same choice when it is still offered
                    for k, ps in enumerate(self.structures()):
                        if ps.key() == keep.key():
                            self.index = k
        self._fill()

    def refill(self) -> None:
        self._fill()

    def _fill(self) -> None:
        ps = self.current()
        self.list.blockSignals(True)
        self.list.clear()
        n = len(self.structures())
        if ps is None:
            self.which_label.setText("")
        else:
            self.which_label.setText(f"Choice {self.index + 1} of {n} ({ps.preference})")
            for k, rel in enumerate(ps.releases):
                it = QListWidgetItem(f"{k + 1}. {rel.description}")
                it.setData(Qt.UserRole, k)
                self.list.addItem(it)
        self.list.setCurrentRow(-1)
        self.list.blockSignals(False)
        self._enable()
        self._apply_overlay()

    def _enable(self) -> None:
        n = len(self.structures())
        ok = self.current() is not None and not self.is_stale()
        self.prev_button.setEnabled(n > 1 and self.index > 0)
        self.next_button.setEnabled(n > 1 and self.index < n - 1)
        self.open_button.setEnabled(ok)

    def step(self, delta: int) -> None:
        """Go to the next (or previous) alternative."""
        n = len(self.structures())
        if n:
            self.index = min(max(self.index + delta, 0), n - 1)
            self._fill()

    def _on_open(self) -> None:
        ps = self.current()
        if ps is not None and not self.is_stale():
            self.open_requested.emit(ps)

    def set_visible_on_canvas(self, on: bool) -> None:
        self.shown = on
        self._apply_overlay()

    # ------------------------------------------------------------------ canvas
    def chosen_state(self):
        ps = self.current()
        k = self.list.currentRow()
        if ps is None or not 0 <= k < len(ps.states):
            return None
        return ps.states[k]

    def _apply_overlay(self) -> None:
        st = self.chosen_state()
        self.state_label.setText(f"Freed state: {state_words(st)}" if st is not None else "")
        if not self.shown or self.current() is None:
            self.overlay.clear(LAYER)
            return
        self.overlay.set_painters(LAYER, self._paint_under, self._paint_over)

    def _paint_under(self, painter: QPainter, T: DeviceMap, scheme: Scheme) -> None:
        st = self.chosen_state()
        if st is not None:
            paint_state(painter, T, scheme, st, 90 if self.is_stale() else 255)

    def _paint_over(self, painter: QPainter, T: DeviceMap, scheme: Scheme) -> None:
        ps = self.current()
        st = self.chosen_state()
        if st is not None:
            paint_state_marks(painter, T, scheme, st)
        chosen = self.list.currentRow()
        if self.is_stale():
            painter.setOpacity(0.4)
        for k, rel in enumerate(ps.releases):
            paint_release(painter, T, scheme, rel, k + 1, k == chosen)

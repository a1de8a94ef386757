"""The remedies list for an unstable scheme.

Each remedy is a single change the engine has verified by re-analysis (a bar in an unbraced
panel, a restraint, a hinge made rigid, a node moved off a line), ranked by how many
mechanisms it removes and how small it is.  Hovering one previews it on the canvas (the
items it adds or changes, in the preview colour); applying it is one undoable edit, after
which the verdict follows.  The smallest set that removes every mechanism can be applied
in one step too.
"""
from __future__ import annotations

import math

from PySide6.QtCore import QLineF, QPointF, Qt, Signal
from PySide6.QtGui import QBrush, QColor, QPainter
from PySide6.QtWidgets import QHBoxLayout, QLabel, QListWidget, QListWidgetItem, QPushButton

from kinestat.core.model import Scheme

from . import drawing as dr
from .canvas_overlay import DeviceMap, Overlay, text_label
from .document import diff
from .insight_panel import InsightPanel

LAYER = "remedy"


class HoverList(QListWidget):
    """A list that reports the item under the mouse, and None when the mouse leaves."""

    hovered = Signal(object)

    def __init__(self, parent=None):
        super().__init__(parent)
        self.setMouseTracking(True)
        self.itemEntered.connect(self.hovered.emit)

    def leaveEvent(self, ev):  # noqa: N802
        self.hovered.emit(None)
        super().leaveEvent(ev)


class Preview:
    """What a remedy changes, as seen from the current drawing."""

    def __init__(self, current: Scheme, after: Scheme, description: str):
        self.after = after
        self.description = description
        self.change = diff(current, after)
        self.moved = {nid: after.node_xy(nid) for nid, (b, a) in self.change.nodes.items()
                      if b is not None and a is not None and (b.x, b.y) != (a.x, a.y)}

    def points(self) -> list[tuple[float, float]]:
        pts = list(self.moved.values())
        for nid in list(self.change.nodes) + list(self.change.supports):
            if nid in self.after.nodes:
                pts.append(self.after.node_xy(nid))
        for mid, (b, a) in self.change.members.items():
            m = a or b
            for nid in (m.start, m.end):
                if nid in self.after.nodes:
                    pts.append(self.after.node_xy(nid))
        return pts

    def paint_under(self, painter: QPainter, T: DeviceMap, scheme: Scheme) -> None:
        pal = dr.PALETTE
        after = self.after
        for mid, (before, m) in self.change.members.items():
            if m is None:  # removed: struck through on the drawing
                if before is not None and before.start in scheme.nodes and before.end in scheme.nodes:
                    painter.setPen(dr.pen(pal.mechanism, 4.0, Qt.DashLine))
                    painter.drawPath(T.member_path(scheme, before))
                continue
            if m.start not in after.nodes or m.end not in after.nodes:
                continue
            new = before is None
            beam = m.kind == "beam"
            painter.setPen(dr.pen(pal.preview, (5.0 if beam else 4.0) if not new else 4.0,
                                  Qt.DashLine if new else Qt.SolidLine, alpha=255 if new else 170))
            painter.drawPath(T.member_path(after, m))
        # members that follow a moved node: their new place, dashed
        if self.moved:
            painter.setPen(dr.pen(pal.preview, 2.2, Qt.DashLine))
            for m in after.members.values():
                if (m.start in self.moved or m.end in self.moved) and m.id not in self.change.members:
                    painter.drawPath(T.member_path(after, m))

    def paint_over(self, painter: QPainter, T: DeviceMap, scheme: Scheme) -> None:
        pal = dr.PALETTE
        after = self.after
        for mid, (_b, m) in self.change.members.items():
            if m is None or m.start not in after.nodes or m.end not in after.nodes:
                continue
            for nid, words in ((m.start, m.releases_start), (m.end, m.releases_end)):
                if words:
                    at, direction = T.end_direction(after, m, nid)
                    painter.save()
                    painter.translate(at)
                    dr.draw_releases(painter, words, direction, pal, pal.preview)
                    painter.restore()
        for nid, (b, a) in self.change.nodes.items():
            if a is None or b is None:
                continue
            p = T.map(a.x, a.y)
            if nid in self.moved:
                q = T.map(b.x, b.y)
                painter.setPen(dr.pen(pal.preview, 1.6))
                painter.drawLine(QLineF(q, p))
                ang = math.atan2(p.y() - q.y(), p.x() - q.x())
                for da in (2.6, -2.6):
                    painter.drawLine(p, p + QPointF(7 * math.cos(ang + da), 7 * math.sin(ang + da)))
            if b.hinge != a.hinge or nid in self.moved:
                painter.save()
                painter.translate(p)
                painter.setPen(Qt.NoPen)
                painter.setBrush(QBrush(QColor(pal.paper)))
                if b.hinge and not a.hinge:
                    painter.drawEllipse(QPointF(0, 0), dr.HINGE_R + 1.6, dr.HINGE_R + 1.6)
                dr.draw_node(painter, dr.node_glyph(after, nid), pal, pal.preview)
                painter.setPen(dr.pen(pal.preview, 1.4))
                painter.setBrush(Qt.NoBrush)
                painter.drawEllipse(QPointF(0, 0), 10, 10)
                painter.restore()
        for nid, (_b, sup) in self.change.supports.items():
            if sup is None or nid not in after.nodes:
                continue
            painter.save()
            painter.translate(T.map(*after.node_xy(nid)))
            dr.draw_support(painter, sup.kind, sup.angle, pal, pal.preview, fixes=sup.fix)
            painter.restore()
        pts = self.points()
        if pts:
            x = sum(p[0] for p in pts) / len(pts)
            y = max(p[1] for p in pts)
            text_label(painter, T.map(x, y) + QPointF(-60, -46), "preview: " + self.description, pal.preview)


class RemediesPanel(InsightPanel):
    """Panel: the verified remedies, preview on hover, apply as one undoable edit."""

    error_title = "Could not look for remedies"

    #: a message for the status bar
    message = Signal(str)

    def __init__(self, doc, overlay: Overlay, parent=None):
        super().__init__(doc, overlay, parent)
        self.preview: Preview | None = None
        self.hovered_row = -1
        lay = self.box
        self.list = HoverList()
        self.list.setWordWrap(True)
        self.list.setAlternatingRowColors(True)
        self.list.hovered.connect(self._on_hovered)
        self.list.currentRowChanged.connect(lambda _r: self._update_preview())
        self.list.itemDoubleClicked.connect(lambda it: self.apply(self.list.row(it)))
        lay.addWidget(self.list, 1)
        row = QHBoxLayout()
        self.apply_button = QPushButton("Apply")
        self.apply_button.setToolTip("Make the picked change (one undoable edit)")
        self.apply_button.clicked.connect(lambda: self.apply(self.list.currentRow()))
        self.smallest_button = QPushButton("Apply the smallest set")
        self.smallest_button.setToolTip("Make every change of the smallest set that removes all mechanisms "
                                        "(one undoable edit)")
        self.smallest_button.clicked.connect(self.apply_smallest)
        row.addWidget(self.apply_button)
        row.addWidget(self.smallest_button, 1)
        lay.addLayout(row)
        self.smallest_label = QLabel("")
        self.smallest_label.setWordWrap(True)
        lay.addWidget(self.smallest_label)
        self.show_result(None)

    # ------------------------------------------------------------------ results
    def remedies(self) -> list:
        return list(self.result.result.remedies) if self.result is not None else []

    def set_pending(self) -> None:
        if self.result is not None:
            self.status_label.setText("updating\u2026")
        self._set_preview(None)
        self._enable()

    def show_result(self, res, revision: int | None = None) -> None:
        """Show a :class:`~.insight_runner.RemedyResultView` (None: nothing to show)."""
        self.take(res, revision)
        if res is None:
            self.summary_label.setText(self.empty_words("an unstable scheme to see remedies"))
        else:
            r = res.result
            m = r.mechanisms
            if m == 0:
                self.summary_label.setText("The scheme is stable: nothing to fix.")
            else:
                self.summary_label.setText(f"Unstable: {m} mechanism{'s' if m != 1 else ''}. "
                                           f"{len(r.remedies)} verified change{'s' if len(r.remedies) != 1 else ''}")
                self.status_label.setText("Hover a change to preview it on the canvas; double-click it or "
                                          "press Apply to make it (one undoable edit).")
        self._fill()

    def refill(self) -> None:
        self._fill()

    def _fill(self) -> None:
        self.list.blockSignals(True)
        self.list.clear()
        for k, rem in enumerate(self.remedies()):
            left = rem.mechanisms_after
            it = QListWidgetItem(f"{rem.description}\n    removes {rem.mechanisms_removed} mechanism"
                                 f"{'s' if rem.mechanisms_removed != 1 else ''}"
                                 + (" \u2014 stable after it" if left == 0 else f" ({left} left)")
                                 + (f"; {rem.self_stress_after} state{'s' if rem.self_stress_after != 1 else ''}"
                                    " of self-stress after it" if rem.self_stress_after else ""))
            it.setData(Qt.UserRole, k)
            self.list.addItem(it)
        self.list.blockSignals(False)
        small = self.result.result.smallest_set if self.result is not None else None
        if small is not None:
            words = "; ".join(c.description for c in small.changes)
            self.smallest_label.setText(f"Smallest set ({len(small.changes)} change"
                                        f"{'s' if len(small.changes) != 1 else ''}, re-analysed: no mechanism "
                                        f"left): {words}")
            self.smallest_button.setText(f"Apply the smallest set ({len(small.changes)})")
        else:
            self.smallest_label.setText("")
            self.smallest_button.setText("Apply the smallest set")
        self.hovered_row = -1
        self._set_preview(None)
        self._enable()

    def _enable(self) -> None:
        ok = self.result is not None and not self.is_stale()
        self.apply_button.setEnabled(ok and bool(self.remedies()))
        self.smallest_button.setEnabled(ok and self.result.result.smallest_set is not None)

    # ------------------------------------------------------------------ preview and apply
    def _on_hovered(self, item) -> None:
        self.hovered_row = self.list.row(item) if item is not None else -1
        self._update_preview()

    def _update_preview(self) -> None:
        """Preview the hovered remedy, else the picked one, else nothing."""
        k = self.hovered_row if self.hovered_row >= 0 else self.list.currentRow()
        rems = self.remedies()
        if not (0 <= k < len(rems)) or self.is_stale():
            self._set_preview(None)
            return
        if self.preview is not None and self.preview.after is rems[k].scheme:
            return
        self._set_preview(Preview(self.doc.scheme, rems[k].scheme, rems[k].description))

    def _set_preview(self, p: Preview | None) -> None:
        self.preview = p
        if p is None or not self.shown:
            self.overlay.clear(LAYER)
            return
        self.overlay.set_painters(LAYER, p.paint_under, p.paint_over)
        self.overlay.refresh(p.points())

    def set_visible_on_canvas(self, on: bool) -> None:
        self.shown = on
        if not on:
            self.overlay.clear(LAYER)
        else:
            self._update_preview()

    def apply(self, k: int) -> bool:
        """Make remedy k as one undoable edit; False if there is none or the list is out of date."""
        rems = self.remedies()
        if not (0 <= k < len(rems)) or self.is_stale():
            return False
        rem = rems[k]
        self._set_preview(None)
        done = self.doc.commit(f"Remedy: {rem.description}", rem.scheme)
        if done:
            self.message.emit(f"Applied: {rem.description} (undo to take it back)")
        return done

    def apply_smallest(self) -> bool:
        small = self.result.result.smallest_set if self.result is not None else None
        if small is None or self.is_stale():
            return False
        self._set_preview(None)
        n = len(small.changes)
        done = self.doc.commit(f"Remedies: {n} change{'s' if n != 1 else ''}", small.scheme)
        if done:
            self.message.emit(f"Applied the smallest set ({n} change{'s' if n != 1 else ''}; undo to take it back)")
        return done

"""The redundancy view: where the indeterminacy lives.

Members are shaded by their redundancy value (the diagonal of the redundancy matrix of
M. von Scheven, E. Ramm & M. Bischoff (2021), Int. J. Solids Struct. 213, 41-49, summed over
a member's internal forces) with a legend; the value shows on hover.  Members and support
restraints whose removal leaves a mechanism are marked with the unstable triangle.  A state
picker shows one state of self-stress at a time (Pellegrino & Calladine 1986): its members,
tension solid, compression dashed, bending only dotted, and the reactions it takes.
"""
from __future__ import annotations

import math

from PySide6.QtCore import QLineF, QPointF, QRectF, Qt
from PySide6.QtGui import QBrush, QColor, QFont, QLinearGradient, QPainter, QPainterPath, QPolygonF
from PySide6.QtWidgets import (QAbstractItemView, QCheckBox, QComboBox, QHeaderView, QLabel, QSizePolicy,
                               QTableWidget, QTableWidgetItem, QWidget)

from kinestat.core.model import Scheme

from . import drawing as dr
from .canvas_overlay import (DeviceMap, Overlay, add_scene_polyline, badge, ramp_colour, ramp_width, text_label,
                             unstable_markers)
from .insight_panel import InsightPanel

LAYER = "redundancy"
#: a force below this (states are scaled to a largest entry of 1) is no force
FORCE_EPS = 1e-9
#: shading steps: members of one step are drawn as one path
SHADES = 24


#: tops the shading scale can have (a bar holds at most 1, a beam up to 3)
SCALE_TOPS = (0.1, 0.2, 0.25, 0.5, 1.0, 1.5, 2.0, 2.5, 3.0)


def scale_top(values) -> float:
    """Top of the shading scale: the smallest of :data:`SCALE_TOPS` at or above the largest
    value, so that a scheme whose redundancy is spread thin still shows its differences."""
    mx = max(values, default=0.0)
    return next((t for t in SCALE_TOPS if mx <= t + 1e-9), math.ceil(mx))


def state_style(state, member_id: str) -> str:
    """How a member takes part in a state: tension, compression, bending (moments only) or ''."""
    f = state.forces.get(member_id)
    if not f:
        return ""
    n = f.get("N", 0.0)
    if n > FORCE_EPS:
        return "tension"
    if n < -FORCE_EPS:
        return "compression"
    return "bending" if any(abs(v) > FORCE_EPS for v in f.values()) else ""


def state_words(state) -> str:
    """Members by sign and the reactions of one state, in words."""
    groups = {"tension": [], "compression": [], "bending": []}
    for mid in state.forces:
        st = state_style(state, mid)
        if st:
            groups[st].append(mid)
    names = {"tension": "tension", "compression": "compression", "bending": "moments only"}
    parts = [f"{names[k]}: {', '.join(v)}" for k, v in groups.items() if v]
    if state.reactions:
        parts.append("reactions at " + ", ".join(state.reactions))
    return "; ".join(parts) or "no forces"


def _state_pen(style: str, alpha: int = 255):
    pal = dr.PALETTE
    if style == "tension":
        return dr.pen(pal.selection, 5.0, alpha=alpha)
    if style == "compression":
        return dr.pen(pal.mechanism, 5.0, Qt.DashLine, alpha=alpha)
    return dr.pen(pal.warning, 4.0, Qt.DotLine, alpha=alpha)


def paint_state(painter: QPainter, T: DeviceMap, scheme: Scheme, state, alpha: int = 255) -> None:
    """One state of self-stress on the canvas (lines under the joints)."""
    for mid in state.forces:
        m = scheme.members.get(mid)
        st = state_style(state, mid)
        if m is None or not st or m.start not in scheme.nodes or m.end not in scheme.nodes:
            continue
        painter.setPen(_state_pen(st, alpha))
        painter.drawPath(T.member_path(scheme, m))


def paint_state_marks(painter: QPainter, T: DeviceMap, scheme: Scheme, state) -> None:
    """Signs at the members of a state and rings at the supports whose reactions it takes."""
    pal = dr.PALETTE
    for mid in state.forces:
        m = scheme.members.get(mid)
        st = state_style(state, mid)
        if m is None or not st or m.start not in scheme.nodes or m.end not in scheme.nodes:
            continue
        mid_pt = T.member_at(scheme, m, 0.3)  # not halfway: crossing diagonals share their midpoint
        if st == "tension":
            badge(painter, mid_pt, "+", pal.selection)
        elif st == "compression":
            badge(painter, mid_pt, "\u2212", pal.mechanism)
        else:
            badge(painter, mid_pt, "M", pal.warning)
    for nid in state.reactions:
        if nid in scheme.nodes:
            p = T.map(*scheme.node_xy(nid))
            painter.setPen(dr.pen(pal.ink, 2.0))
            painter.setBrush(Qt.NoBrush)
            painter.drawEllipse(p, 11, 11)


class RedundancyLegend(QWidget):
    """The shading scale (or the state key) of the canvas."""

    def __init__(self, parent=None):
        super().__init__(parent)
        self.top = 1.0
        self.mode = "values"
        self.setMinimumHeight(64)
        self.setSizePolicy(QSizePolicy.Expanding, QSizePolicy.Fixed)

    def set_mode(self, mode: str, top: float = 1.0) -> None:
        self.mode, self.top = mode, top
        self.update()

    def paintEvent(self, ev):  # noqa: N802
        pal = dr.PALETTE
        p = QPainter(self)
        p.setRenderHint(QPainter.Antialiasing)
        f = QFont()
        f.setPixelSize(11)
        p.setFont(f)
        w = self.width() - 24
        if self.mode == "values":
            x0, y0 = 12.0, 8.0
            g = QLinearGradient(x0, 0, x0 + w, 0)
            for k in range(11):
                g.setColorAt(k / 10, ramp_colour(k / 10))
            p.setPen(Qt.NoPen)
            p.setBrush(QBrush(g))
            # a wedge: the line on the canvas widens with the value too
            p.drawPolygon(QPolygonF([QPointF(x0, y0 + 8), QPointF(x0 + w, y0), QPointF(x0 + w, y0 + 12),
                                     QPointF(x0, y0 + 10)]))
            p.setPen(dr.pen(pal.ink))
            for t in (0.0, 0.5, 1.0):
                x = x0 + t * w
                p.drawLine(QPointF(x, y0 + 13), QPointF(x, y0 + 17))
                al = Qt.AlignLeft if t == 0 else (Qt.AlignRight if t == 1 else Qt.AlignHCenter)
                p.drawText(QRectF(x - 40 if t else x, y0 + 17, 40 if t in (0.0, 1.0) else 80, 14),
                           al | Qt.AlignTop, f"{t * self.top:g}")
            y = y0 + 36
            dr.draw_verdict_marker(p, "unstable", QPointF(x0 + 6, y + 6), 6)
            p.setPen(dr.pen(pal.ink))
            p.drawText(QRectF(x0 + 18, y - 1, w - 18, 14), Qt.AlignLeft | Qt.AlignVCenter,
                       "critical: removing it leaves a mechanism")
        else:
            x0, y = 12.0, 10.0
            for k, (style, words) in enumerate((("tension", "tension"), ("compression", "compression"),
                                                ("bending", "moments only"))):
                xx = x0 + k * (w / 3)
                p.setPen(_state_pen(style))
                p.drawLine(QPointF(xx, y + 6), QPointF(xx + 36, y + 6))
                p.setPen(dr.pen(pal.ink))
                p.drawText(QRectF(xx + 42, y - 1, w / 3 - 42, 14), Qt.AlignLeft | Qt.AlignVCenter, words)
            p.setPen(dr.pen(pal.ink, 2.0))
            p.drawEllipse(QPointF(x0 + 8, y + 30), 7, 7)
            p.drawText(QRectF(x0 + 22, y + 23, w - 22, 14), Qt.AlignLeft | Qt.AlignVCenter,
                       "support whose reaction the state takes")
        p.end()


def _num_item(value: float) -> QTableWidgetItem:
    it = QTableWidgetItem()
    it.setData(Qt.DisplayRole, round(float(value), 3))
    it.setTextAlignment(Qt.AlignRight | Qt.AlignVCenter)
    return it


class RedundancyView(InsightPanel):
    """The panel of the redundancy view; it paints the canvas through an :class:`Overlay`."""

    error_title = "Could not work out the redundancy"

    def __init__(self, doc, overlay: Overlay, parent=None):
        super().__init__(doc, overlay, parent)
        self.state_index = -1
        self.hover_member: str | None = None
        self.top = 1.0
        #: (scheme, result, shading paths) of the last paint
        self._shades = None
        lay = self.box
        self.show_box = QCheckBox("Shade the canvas")
        self.show_box.setChecked(True)
        self.show_box.toggled.connect(self._on_show_toggled)
        lay.addWidget(self.show_box)
        self.legend = RedundancyLegend()
        lay.addWidget(self.legend)
        self.state_combo = QComboBox()
        self.state_combo.setSizeAdjustPolicy(QComboBox.AdjustToMinimumContentsLengthWithIcon)
        self.state_combo.currentIndexChanged.connect(self._on_state_changed)
        lay.addWidget(self.state_combo)
        self.state_label = QLabel("")
        self.state_label.setWordWrap(True)
        self.state_label.setTextInteractionFlags(Qt.TextSelectableByMouse)
        lay.addWidget(self.state_label)
        self.table = QTableWidget(0, 3)
        self.table.setHorizontalHeaderLabels(["Item", "Redundancy", "If removed"])
        self.table.verticalHeader().setVisible(False)
        self.table.setEditTriggers(QAbstractItemView.NoEditTriggers)
        self.table.setSelectionBehavior(QAbstractItemView.SelectRows)
        self.table.setSelectionMode(QAbstractItemView.SingleSelection)
        self._size_columns()
        self.table.itemSelectionChanged.connect(self._on_row_selected)
        lay.addWidget(self.table, 1)
        self.show_result(None)

    # ------------------------------------------------------------------ results
    def set_pending(self) -> None:
        if self.result is not None:
            self.status_label.setText("updating\u2026 (shading shows the last result)")
        self.overlay.refresh()

    def refill(self) -> None:
        self._clear()

    def _clear(self) -> None:
        self.table.setRowCount(0)
        self.state_combo.blockSignals(True)
        self.state_combo.clear()
        self.state_combo.blockSignals(False)
        self.state_combo.setEnabled(False)
        self.state_label.setText("")
        self.overlay.clear(LAYER)

    def show_result(self, res, revision: int | None = None) -> None:
        """Show a :class:`~.insight_runner.RedundancyResult` (None: nothing to show)."""
        self.take(res, revision)
        self.hover_member = None
        if res is None:
            self.summary_label.setText(self.empty_words("an indeterminate scheme to see where its redundancy lives"))
            self._clear()
            return
        red, c = res.redundancy, res.classification
        if red is None:
            self.summary_label.setText(res.note or "Redundancy not computed.")
            self._clear()
            return
        s = red.self_stress
        words = {"determinate": "Statically determinate: no member carries redundancy",
                 "indeterminate": f"Indeterminate to degree {s}: the redundancy below sums to {red.total:.3g}",
                 "unstable": f"Unstable ({c.mechanisms} mechanism{'s' if c.mechanisms != 1 else ''})"
                             + (f"; {s} state{'s' if s != 1 else ''} of self-stress, redundancy sums to "
                                f"{red.total:.3g}" if s else "")}
        self.summary_label.setText(words.get(c.verdict, c.summary()))
        crit = res.criticality
        n_crit = len(crit.critical_members()) if crit else 0
        n_rc = len(crit.critical_restraints()) if crit else 0
        self.status_label.setText(f"{n_crit} critical member{'s' if n_crit != 1 else ''}, "
                                  f"{n_rc} critical support restraint{'s' if n_rc != 1 else ''} "
                                  "(removing one leaves a mechanism). Hover a member for its value.")
        self.top = scale_top(red.members.values())
        self._fill_states(red)
        self._fill_table(res)
        self._apply_overlay()

    def _fill_states(self, red) -> None:
        combo = self.state_combo
        combo.blockSignals(True)
        combo.clear()
        combo.addItem("Redundancy of each member (shading)")
        for k, st in enumerate(red.states):
            names = ", ".join(st.members[:6]) + (", \u2026" if len(st.members) > 6 else "")
            combo.addItem(f"State {k + 1} of {len(red.states)}: {names}")
        if 0 <= self.state_index < len(red.states):
            combo.setCurrentIndex(self.state_index + 1)
        else:
            self.state_index = -1
            combo.setCurrentIndex(0)
        combo.setEnabled(bool(red.states))
        combo.blockSignals(False)
        self._update_state_words()

    def _fill_table(self, res) -> None:
        red, crit = res.redundancy, res.criticality
        rows = []
        for mid, v in red.members.items():
            chk = crit.members.get(mid) if crit else None
            rows.append(("member", mid, mid, v, chk))
        if crit:
            for key, chk in crit.restraints.items():
                node, word = key.split(":", 1)
                rows.append(("restraint", key, f"{node} {word}", None, chk))
        rows.sort(key=lambda r: (r[0] != "member", -(r[3] or 0.0), r[1]))
        t = self.table
        t.blockSignals(True)
        t.setUpdatesEnabled(False)
        hh = t.horizontalHeader()
        # sized to the contents once, not on every cell (that is quadratic in the rows)
        for col in range(3):
            hh.setSectionResizeMode(col, QHeaderView.Fixed)
        t.setRowCount(0)
        t.setRowCount(len(rows))
        for k, (kind, key, label, v, chk) in enumerate(rows):
            name = QTableWidgetItem(label if kind == "member" else f"{label} (support)")
            name.setData(Qt.UserRole, (kind, key))
            t.setItem(k, 0, name)
            t.setItem(k, 1, _num_item(v) if v is not None else QTableWidgetItem("rigid"))
            status = chk.status if chk else ""
            st = QTableWidgetItem(("\u25b2 " if status == "critical" else "") + status)
            if chk is not None:
                st.setToolTip(chk.description)
                name.setToolTip(chk.description)
            if status == "critical":
                st.setForeground(QColor(dr.PALETTE.unstable))
            t.setItem(k, 2, st)
        self._size_columns()
        t.setUpdatesEnabled(True)
        t.blockSignals(False)

    def _size_columns(self) -> None:
        hh = self.table.horizontalHeader()
        hh.setSectionResizeMode(0, QHeaderView.ResizeToContents)
        hh.setSectionResizeMode(1, QHeaderView.ResizeToContents)
        hh.setSectionResizeMode(2, QHeaderView.Stretch)

    # ------------------------------------------------------------------ interaction
    def _on_show_toggled(self, on: bool) -> None:
        self.shown = on
        self._apply_overlay()

    def set_visible_on_canvas(self, on: bool) -> None:
        """The view's dock was shown or hidden."""
        self.shown = on and self.show_box.isChecked()
        self._apply_overlay()

    def _on_state_changed(self, index: int) -> None:
        self.state_index = index - 1
        self._update_state_words()
        self._apply_overlay()

    def select_state(self, k: int) -> None:
        """Show state k (0-based) of self-stress; -1 for the shading."""
        self.state_combo.setCurrentIndex(k + 1)

    def current_state(self):
        red = self.result.redundancy if self.result is not None else None
        if red is None or not 0 <= self.state_index < len(red.states):
            return None
        return red.states[self.state_index]

    def _update_state_words(self) -> None:
        st = self.current_state()
        if st is None:
            self.state_label.setText("")
            self.legend.set_mode("values", self.top)
            return
        self.state_label.setText(state_words(st))
        self.legend.set_mode("state")

    def _on_row_selected(self) -> None:
        items = self.table.selectedItems()
        if not items:
            return
        kind, key = self.table.item(items[0].row(), 0).data(Qt.UserRole)
        if kind == "member":
            self.doc.select(members=[key])
        else:
            self.doc.select(nodes=[key.split(":", 1)[0]])

    def hover_at(self, x: float, y: float, index, tol: float) -> str | None:
        """Words for the member under model point (x, y) (``index``: a snapping index of the
        current scheme), or None; remembered for the canvas label."""
        res = self.result
        hit = None
        if res is not None and res.redundancy is not None and self.shown:
            hit = index.nearest_member(x, y, tol)
        mid = hit[0] if hit else None
        if mid != self.hover_member:
            self.hover_member = mid
            self.overlay.refresh()
        if mid is None:
            return None
        return self.member_words(mid)

    def member_words(self, mid: str) -> str | None:
        res = self.result
        red = res.redundancy
        if mid not in red.members:
            return None
        v = red.members[mid]
        detail = red.members_detail.get(mid, {})
        parts = [f"member {mid}: redundancy {v:.3f}"]
        if len(detail) > 1:
            parts.append("(" + ", ".join(f"{k} {d:.3f}" for k, d in detail.items()) + ")")
        chk = res.criticality.members.get(mid) if res.criticality else None
        if chk is not None:
            parts.append("\n" + chk.description)
        if self.is_stale():
            parts.append("\n(last result: the drawing has changed since)")
        return " ".join(parts)

    # ------------------------------------------------------------------ canvas
    def _apply_overlay(self) -> None:
        res = self.result
        if not self.shown or res is None or res.redundancy is None:
            self.overlay.clear(LAYER)
            return
        self.overlay.set_painters(LAYER, self._paint_under, self._paint_over)

    def _paint_under(self, painter: QPainter, T: DeviceMap, scheme: Scheme) -> None:
        alpha = 90 if self.is_stale() else 255
        st = self.current_state()
        if st is not None:
            paint_state(painter, T, scheme, st, alpha)
            return
        painter.setTransform(T.world)  # scene coordinates, cosmetic pens
        for k, (lines, path) in sorted(self._shade_paths(scheme).items()):
            t = k / SHADES
            painter.setPen(dr.pen(ramp_colour(t).name(), ramp_width(t), alpha=alpha))
            if lines:
                painter.drawLines(lines)
            if not path.isEmpty():
                painter.drawPath(path)

    def _shade_paths(self, scheme: Scheme) -> dict[int, tuple[list[QLineF], QPainterPath]]:
        """Member lines in scene coordinates, one batch per shading step (kept until the
        drawing or the result changes): straight members as lines, arcs as a path."""
        if self._shades is not None and self._shades[0] is scheme and self._shades[1] is self.result:
            return self._shades[2]
        red = self.result.redundancy
        out: dict[int, tuple[list[QLineF], QPainterPath]] = {}
        for mid, v in red.members.items():
            m = scheme.members.get(mid)
            if m is None or m.start not in scheme.nodes or m.end not in scheme.nodes:
                continue
            k = min(SHADES, max(0, round(v / self.top * SHADES)))
            lines, path = out.setdefault(k, ([], QPainterPath()))
            if m.rise:
                add_scene_polyline(path, scheme, m)
            else:
                (x0, y0), (x1, y1) = scheme.node_xy(m.start), scheme.node_xy(m.end)
                lines.append(QLineF(x0, -y0, x1, -y1))
        self._shades = (scheme, self.result, out)
        return out

    def _paint_over(self, painter: QPainter, T: DeviceMap, scheme: Scheme) -> None:
        pal = dr.PALETTE
        res = self.result
        st = self.current_state()
        if st is not None:
            paint_state_marks(painter, T, scheme, st)
        elif res.criticality is not None:
            marks = []
            for mid in res.criticality.critical_members():
                m = scheme.members.get(mid)
                if m is None or m.start not in scheme.nodes or m.end not in scheme.nodes:
                    continue
                p, ang = T.member_mid(scheme, m)
                # beside the line, on its upper/left side
                nx, ny = math.sin(ang), -math.cos(ang)
                if ny > 0:
                    nx, ny = -nx, -ny
                marks.append(QPointF(p.x() + 10 * nx, p.y() + 10 * ny))
            for key in res.criticality.critical_restraints():
                nid = key.split(":", 1)[0]
                if nid in scheme.nodes:
                    p = T.map(*scheme.node_xy(nid))
                    marks.append(QPointF(p.x() + 16, p.y() - 14))
            unstable_markers(painter, marks)
        mid = self.hover_member
        if mid is not None and mid in scheme.members and res.redundancy is not None:
            m = scheme.members[mid]
            painter.setPen(dr.pen(pal.warning, 10.0, alpha=120))  # not a blue: the shading is blue
            painter.drawPath(T.member_path(scheme, m))
            p, _ = T.member_mid(scheme, m)
            v = res.redundancy.members.get(mid)
            if v is not None:
                text_label(painter, p + QPointF(14, -34), f"{mid}: {v:.3f}")  # above: the tooltip opens below

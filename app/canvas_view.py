"""The canvas view: zoom about the cursor, pan, grid, the tool overlay, typed entry.

Mouse and key events go to the active tool (:mod:`.tools`) with model coordinates.
Digits typed on the canvas collect in an entry shown at the cursor ("length[,angle]" while
drawing, an angle for supports); Enter hands the text to the tool.
"""
from __future__ import annotations

import math

from PySide6.QtCore import QLineF, QPointF, QRectF, Qt, Signal
from PySide6.QtGui import QColor, QFont, QPainter
from PySide6.QtWidgets import QFrame, QGraphicsView

from . import drawing as dr
from .canvas_scene import to_model

#: capture distance for snapping and picking, in pixels
SNAP_PX = 9.0
_ENTRY_CHARS = set("0123456789.,-<@ ")
#: zoom limits in pixels per model unit (the scene spans 2e5 units: keep scroll ranges in int range)
MIN_ZOOM, MAX_ZOOM = 0.05, 2000.0


class CanvasView(QGraphicsView):
    #: model x, y under the cursor
    cursor_moved = Signal(float, float)
    zoom_changed = Signal(float)

    def __init__(self, scene, parent=None):
        super().__init__(scene, parent)
        self._scene = scene  # keep the scene alive with the view
        self.tool = None
        self.grid_on = True
        self.grid = 0.5
        self.snap_on = True
        self.entry = ""
        self._pan_from: QPointF | None = None
        self._space = False
        self.cursor_model: tuple[float, float] | None = None
        self.setRenderHint(QPainter.Antialiasing, True)
        self.setRenderHint(QPainter.TextAntialiasing, True)
        self.setViewportUpdateMode(QGraphicsView.FullViewportUpdate)
        self.setCacheMode(QGraphicsView.CacheBackground)
        self.setTransformationAnchor(QGraphicsView.AnchorUnderMouse)
        # the drawing stays put under the cursor when a dock (e.g. the motion strip) appears or
        # goes while the user is drawing: the view keeps its top-left corner on resize
        self.setResizeAnchor(QGraphicsView.NoAnchor)
        self.setHorizontalScrollBarPolicy(Qt.ScrollBarAlwaysOff)
        self.setVerticalScrollBarPolicy(Qt.ScrollBarAlwaysOff)
        self.setFrameShape(QFrame.NoFrame)
        self.setMouseTracking(True)
        self.setFocusPolicy(Qt.StrongFocus)
        self.setSceneRect(QRectF(-1e5, -1e5, 2e5, 2e5))
        self.setDragMode(QGraphicsView.NoDrag)
        self.set_scale(60.0)
        self.centerOn(QPointF(5, -3))

    # ------------------------------------------------------------------ zoom / pan
    def px_per_unit(self) -> float:
        return self.transform().m11()

    def units_per_px(self) -> float:
        return 1.0 / self.px_per_unit()

    def tolerance(self) -> float:
        return SNAP_PX * self.units_per_px()

    def set_scale(self, px_per_unit: float) -> None:
        px_per_unit = min(max(px_per_unit, MIN_ZOOM), MAX_ZOOM)
        self.resetTransform()
        self.scale(px_per_unit, px_per_unit)
        self.scene().set_units_per_px(1.0 / px_per_unit)
        self.zoom_changed.emit(px_per_unit)

    def zoom_by(self, factor: float, at: QPointF | None = None) -> None:
        """Zoom by ``factor`` keeping the scene point under ``at`` (viewport pixels) in place."""
        new = min(max(self.px_per_unit() * factor, MIN_ZOOM), MAX_ZOOM)
        factor = new / self.px_per_unit()
        centre_px = QPointF(self.viewport().rect().center())
        at = centre_px if at is None else QPointF(at)
        s0 = self.px_per_unit()
        c0 = self.mapToScene(self.viewport().rect().center())
        target = QPointF(c0.x() + (at.x() - centre_px.x()) / s0, c0.y() + (at.y() - centre_px.y()) / s0)
        anchor = self.transformationAnchor()
        self.setTransformationAnchor(QGraphicsView.NoAnchor)
        self.scale(factor, factor)
        self.setTransformationAnchor(anchor)
        self.centerOn(QPointF(target.x() - (at.x() - centre_px.x()) / new, target.y() - (at.y() - centre_px.y()) / new))
        self.scene().set_units_per_px(1.0 / new)
        self.zoom_changed.emit(new)
        self.viewport().update()

    def fit(self) -> None:
        r = self.scene().model_rect()
        vp = self.viewport().rect()
        if r.width() <= 0 and r.height() <= 0:
            return
        m = 70.0
        sx = (vp.width() - 2 * m) / max(r.width(), 1e-6)
        sy = (vp.height() - 2 * m) / max(r.height(), 1e-6)
        self.set_scale(min(sx, sy))
        self.centerOn(r.center())

    def pan_pixels(self, dx: float, dy: float) -> None:
        s = self.px_per_unit()
        c = self.mapToScene(self.viewport().rect().center())
        self.centerOn(QPointF(c.x() - dx / s, c.y() - dy / s))

    # ------------------------------------------------------------------ events -> tool
    def _model(self, ev) -> tuple[float, float]:
        return to_model(self.mapToScene(ev.position().toPoint()))

    def mousePressEvent(self, ev):  # noqa: N802
        if ev.button() == Qt.MiddleButton or (ev.button() == Qt.LeftButton and self._space):
            self._pan_from = ev.position()
            self.viewport().setCursor(Qt.ClosedHandCursor)
            return
        if self.tool is not None:
            x, y = self._model(ev)
            self.tool.press(ev, x, y)
            self.viewport().update()

    def mouseMoveEvent(self, ev):  # noqa: N802
        if self._pan_from is not None:
            d = ev.position() - self._pan_from
            self._pan_from = ev.position()
            self.pan_pixels(d.x(), d.y())
            return
        x, y = self._model(ev)
        self.cursor_model = (x, y)
        self.cursor_moved.emit(x, y)
        if self.tool is not None:
            self.tool.move(ev, x, y)
        self.viewport().update()

    def mouseReleaseEvent(self, ev):  # noqa: N802
        if self._pan_from is not None and ev.button() in (Qt.MiddleButton, Qt.LeftButton):
            self._pan_from = None
            self.viewport().unsetCursor()
            if self.tool is not None:
                self.viewport().setCursor(self.tool.cursor)
            return
        if self.tool is not None:
            x, y = self._model(ev)
            self.tool.release(ev, x, y)
            self.viewport().update()

    def mouseDoubleClickEvent(self, ev):  # noqa: N802
        if self.tool is not None and hasattr(self.tool, "double_click"):
            self.tool.double_click(ev, *self._model(ev))
            return
        self.mousePressEvent(ev)

    def leaveEvent(self, ev):  # noqa: N802
        self.cursor_model = None
        if self.tool is not None:
            self.tool.leave()
        self.viewport().update()
        super().leaveEvent(ev)

    def wheelEvent(self, ev):  # noqa: N802
        if self.tool is not None and not (ev.modifiers() & Qt.ControlModifier) and self.tool.wheel(ev):
            self.viewport().update()
            return
        steps = ev.angleDelta().y() / 120.0
        if steps:
            self.zoom_by(1.18 ** steps, ev.position())

    def keyPressEvent(self, ev):  # noqa: N802
        key, text = ev.key(), ev.text()
        if key == Qt.Key_Space and not ev.isAutoRepeat() and not self.entry:
            self._space = True
            self.viewport().setCursor(Qt.OpenHandCursor)
            return
        if self.entry and key in (Qt.Key_Return, Qt.Key_Enter):
            text_in, self.entry = self.entry, ""
            if self.tool is not None:
                self.tool.typed(text_in.strip())
            self.viewport().update()
            return
        if self.entry and key == Qt.Key_Backspace:
            self.entry = self.entry[:-1]
            self.viewport().update()
            return
        if self.entry and key == Qt.Key_Escape:
            self.entry = ""
            self.viewport().update()
            return
        if text and text in _ENTRY_CHARS and (text not in " ,<@" or self.entry) and self.tool is not None \
                and self.tool.accepts_entry() and not (ev.modifiers() & (Qt.ControlModifier | Qt.AltModifier)):
            self.entry += text
            self.viewport().update()
            return
        if self.tool is not None and self.tool.key(ev):
            self.viewport().update()
            return
        super().keyPressEvent(ev)

    def keyReleaseEvent(self, ev):  # noqa: N802
        if ev.key() == Qt.Key_Space and not ev.isAutoRepeat():
            self._space = False
            self.viewport().unsetCursor()
            if self.tool is not None:
                self.viewport().setCursor(self.tool.cursor)
            return
        super().keyReleaseEvent(ev)

    # ------------------------------------------------------------------ painting
    def drawBackground(self, painter, rect):  # noqa: N802
        pal = dr.PALETTE
        painter.fillRect(rect, QColor(pal.paper))
        if not self.grid_on or self.grid <= 0:
            return
        s = self.px_per_unit()
        step = self.grid
        while step * s < 7:
            step *= 5
        major = step * 5
        painter.save()
        painter.setRenderHint(QPainter.Antialiasing, False)
        for spacing, colour in ((step, pal.grid_minor), (major, pal.grid_major)):
            if spacing * s < 7:
                continue
            painter.setPen(dr.pen(colour, 1.0))
            k0, k1 = math.floor(rect.left() / spacing), math.ceil(rect.right() / spacing)
            lines = [QLineF(k * spacing, rect.top(), k * spacing, rect.bottom()) for k in range(k0, k1 + 1)]
            k0, k1 = math.floor(rect.top() / spacing), math.ceil(rect.bottom() / spacing)
            lines += [QLineF(rect.left(), k * spacing, rect.right(), k * spacing) for k in range(k0, k1 + 1)]
            painter.drawLines(lines)
        painter.setPen(dr.pen(pal.axis, 1.2))
        if rect.top() <= 0 <= rect.bottom():
            painter.drawLine(QPointF(rect.left(), 0), QPointF(rect.right(), 0))
        if rect.left() <= 0 <= rect.right():
            painter.drawLine(QPointF(0, rect.top()), QPointF(0, rect.bottom()))
        painter.restore()

    def drawForeground(self, painter, rect):  # noqa: N802
        painter.save()
        painter.resetTransform()
        if self.tool is not None:
            self.tool.paint_overlay(painter, self)
        if self.entry:
            self._paint_entry(painter)
        self._paint_scale_bar(painter)
        painter.restore()

    def map_model(self, x: float, y: float) -> QPointF:
        """Model point -> viewport pixel (float)."""
        p = self.mapFromScene(QPointF(x, -y))
        return QPointF(p)

    def _paint_entry(self, painter) -> None:
        pal = dr.PALETTE
        label = self.tool.entry_label() if self.tool is not None else ""
        text = f"{label} {self.entry}\u2502   Enter to apply, Esc to clear"
        f = QFont()
        f.setPixelSize(13)
        painter.setFont(f)
        w = painter.fontMetrics().horizontalAdvance(text) + 16
        r = QRectF(12, self.viewport().height() - 70, w, 24)
        painter.setPen(dr.pen(pal.selection, 1.2))
        painter.setBrush(QColor("#ffffff"))
        painter.drawRoundedRect(r, 4, 4)
        painter.setPen(dr.pen(pal.ink))
        painter.drawText(r.adjusted(8, 0, -8, 0), Qt.AlignVCenter | Qt.AlignLeft, text)

    def _paint_scale_bar(self, painter) -> None:
        pal = dr.PALETTE
        s = self.px_per_unit()
        units = self.scene().doc.scheme.units
        target = 110.0 / s
        mag = 10 ** math.floor(math.log10(target))
        length = next(k * mag for k in (5, 2, 1) if k * mag <= target) if target > 0 else 1.0
        px = length * s
        h = self.viewport().height()
        x0, y0 = self.viewport().width() - px - 24, h - 22
        painter.setPen(dr.pen(pal.ink, 1.4))
        painter.drawLine(QPointF(x0, y0), QPointF(x0 + px, y0))
        for x in (x0, x0 + px):
            painter.drawLine(QPointF(x, y0 - 4), QPointF(x, y0 + 4))
        f = QFont()
        f.setPixelSize(12)
        painter.setFont(f)
        painter.drawText(QRectF(x0 - 40, y0 - 20, px + 80, 14), Qt.AlignCenter, f"{length:g} {units}")

"""Canvas items, one per model object and keyed by its id.

Items hold an id and drawing state (selected, highlighted) only; the model stays in the
Document.  Node, support, release and crossing items ignore the view's zoom (symbols keep
their pixel size); member and mechanism items live in scene units with cosmetic pens.
Scene coordinates are model coordinates with y flipped: scene (x, -y).
"""
from __future__ import annotations

import math

from PySide6.QtCore import QPointF, QRectF, Qt
from PySide6.QtGui import QColor, QPainterPath, QPen
from PySide6.QtWidgets import (QGraphicsEllipseItem, QGraphicsItem, QGraphicsPathItem, QGraphicsRectItem,
                               QGraphicsSimpleTextItem)

from kinestat.core.model import arc_points

from . import drawing as dr

Z_MODE, Z_MEMBER, Z_HOP, Z_RELEASE, Z_SUPPORT, Z_NODE = 5, 10, 11, 12, 15, 20


def to_scene(x: float, y: float) -> QPointF:
    return QPointF(x, -y)


class _Stateful:
    """Selected / highlighted flags; ``_style`` redraws the item for them."""

    selected = False
    highlighted = False

    def set_state(self, selected: bool | None = None, highlighted: bool | None = None) -> None:
        if selected is not None:
            self.selected = selected
        if highlighted is not None:
            self.highlighted = highlighted
        self._style()

    def _style(self) -> None:
        self.update()


class MemberItem(_Stateful, QGraphicsPathItem):
    """A member's centre line.  Painted by Qt itself (no Python per frame); a halo child
    appears only while the member is selected or highlighted."""

    def __init__(self, member_id: str):
        super().__init__()
        self.member_id = member_id
        self.kind = "beam"
        self.selected = False
        self.highlighted = False
        self._halo: QGraphicsPathItem | None = None
        self.setZValue(Z_MEMBER)
        self.setAcceptedMouseButtons(Qt.NoButton)
        self._style()

    def set_geometry(self, pa, pb, rise: float, kind: str) -> None:
        pts = arc_points(pa, pb, rise) if rise else [pa, pb]
        path = QPainterPath(to_scene(*pts[0]))
        for p in pts[1:]:
            path.lineTo(to_scene(*p))
        self.setPath(path)
        if self._halo is not None:
            self._halo.setPath(path)
        if kind != self.kind:
            self.kind = kind
            self._style()


    def _style(self) -> None:
        pal = dr.PALETTE
        beam = self.kind == "beam"
        colour = pal.selection if self.selected else (pal.ink if beam else pal.bar_ink)
        self.setPen(dr.pen(colour, dr.BEAM_W if beam else dr.BAR_W))
        if self.selected or self.highlighted:
            if self._halo is None:
                self._halo = QGraphicsPathItem(self.path(), self)
                self._halo.setFlag(QGraphicsItem.ItemStacksBehindParent, True)
            self._halo.setPen(dr.pen(pal.warning, 9.0) if self.highlighted else dr.pen(pal.hover, 6.0, alpha=90))
        elif self._halo is not None:
            self._halo.setParentItem(None)
            if self.scene() is not None:
                self.scene().removeItem(self._halo)
            self._halo = None

    def set_pad(self, pad: float) -> None:
        """Kept for the scene's zoom bookkeeping (Qt pads a path item's bounds itself)."""


class _PixelItem(_Stateful, QGraphicsItem):
    """An item drawn in device pixels at its position (ignores zoom)."""

    extent = 12.0

    def __init__(self):
        super().__init__()
        self.setFlag(QGraphicsItem.ItemIgnoresTransformations, True)
        self.setAcceptedMouseButtons(Qt.NoButton)
        self.selected = False
        self.highlighted = False

    def boundingRect(self) -> QRectF:  # noqa: N802
        e = self.extent
        return QRectF(-e, -e, 2 * e, 2 * e)



def _glyph_path(glyph: str) -> QPainterPath:
    path = QPainterPath()
    if glyph == "free":
        path.addRect(QRectF(-3.5, -3.5, 7, 7))
    else:
        r = {"hinge": dr.HINGE_R, "pin": dr.PIN_R}.get(glyph, dr.NODE_R)
        path.addEllipse(QPointF(0, 0), r, r)
    return path


class NodeItem(_Stateful, QGraphicsPathItem):
    """A joint symbol in pixels (dot, ring, hinge ring, open square), painted by Qt itself."""

    def __init__(self, node_id: str):
        super().__init__()
        self.node_id = node_id
        self.glyph = ""
        self.label: str | None = None
        self.selected = False
        self.highlighted = False
        self._ring: QGraphicsRectItem | None = None
        self._spot: QGraphicsEllipseItem | None = None
        self._text: QGraphicsSimpleTextItem | None = None
        self.setFlag(QGraphicsItem.ItemIgnoresTransformations, True)
        self.setAcceptedMouseButtons(Qt.NoButton)
        self.setZValue(Z_NODE)
        self.set_glyph("rigid", None)

    def set_glyph(self, glyph: str, label: str | None) -> None:
        if glyph != self.glyph:
            self.glyph = glyph
            self.setPath(_glyph_path(glyph))
            self._style()
        if label != self.label:
            self.label = label
            if label and self._text is None:
                self._text = QGraphicsSimpleTextItem(self)
                self._text.setBrush(QColor(dr.PALETTE.muted))
                self._text.setPos(6, -20)
            if self._text is not None:
                self._text.setText(label or "")
                self._text.setVisible(bool(label))


    def _style(self) -> None:
        pal = dr.PALETTE
        ink = pal.selection if self.selected else pal.ink
        if self.glyph == "rigid":
            self.setPen(QPen(Qt.NoPen))
            self.setBrush(QColor(ink))
        elif self.glyph == "free":
            self.setPen(dr.pen(pal.selection if self.selected else pal.free_node, 1.5))
            self.setBrush(Qt.NoBrush)
        else:
            self.setPen(dr.pen(ink, 1.5 if self.glyph == "hinge" else 1.3))
            self.setBrush(QColor(pal.paper))
        if self.selected and self._ring is None:
            self._ring = QGraphicsRectItem(QRectF(-7, -7, 14, 14), self)
            self._ring.setPen(dr.pen(pal.selection, 1.6))
        if self._ring is not None:
            self._ring.setVisible(self.selected)
        if self.highlighted and self._spot is None:
            self._spot = QGraphicsEllipseItem(QRectF(-9, -9, 18, 18), self)
            self._spot.setFlag(QGraphicsItem.ItemStacksBehindParent, True)
            self._spot.setPen(QPen(Qt.NoPen))
            self._spot.setBrush(QColor(pal.warning))
        if self._spot is not None:
            self._spot.setVisible(self.highlighted)


class SupportItem(_PixelItem):
    extent = 2.2 * dr.SUPPORT

    def __init__(self, node_id: str):
        super().__init__()
        self.node_id = node_id
        self.kind = "pin"
        self.angle = 90.0
        self.fixes: tuple[str, ...] = ()
        self.setZValue(Z_SUPPORT)

    def paint(self, painter, option, widget=None) -> None:
        pal = dr.PALETTE
        dr.draw_support(painter, self.kind, self.angle, pal, pal.selection if self.selected else None,
                        fixes=self.fixes)


class ReleaseItem(_PixelItem):
    extent = 45.0

    def __init__(self, member_id: str, node_id: str):
        super().__init__()
        self.member_id, self.node_id = member_id, node_id
        self.words: frozenset[str] = frozenset()
        self.direction = 0.0
        self.setZValue(Z_RELEASE)

    def paint(self, painter, option, widget=None) -> None:
        dr.draw_releases(painter, self.words, self.direction, dr.PALETTE,
                         dr.PALETTE.selection if self.selected else None)


class HopItem(_PixelItem):
    """An unjoined crossing: the upper member hops over."""

    extent = 10.0

    def __init__(self, direction: float, kind: str):
        super().__init__()
        self.direction, self.kind = direction, kind
        self.setZValue(Z_HOP)

    def paint(self, painter, option, widget=None) -> None:
        pal = dr.PALETTE
        beam = self.kind == "beam"
        dr.draw_hop(painter, self.direction, pal, pal.ink if beam else pal.bar_ink, dr.BEAM_W if beam else dr.BAR_W)


class ModeItem(QGraphicsItem):
    """The first mechanism mode as a static displaced shape (dashed), over the drawing."""

    def __init__(self):
        super().__init__()
        self.scheme = None
        self.displaced: dict[str, tuple[float, float]] = {}
        self.rect = QRectF()
        self.setZValue(Z_MODE)
        self.setAcceptedMouseButtons(Qt.NoButton)

    def set_shape(self, scheme, displaced: dict[str, tuple[float, float]]) -> None:
        self.prepareGeometryChange()
        self.scheme, self.displaced = scheme, displaced
        pts = [to_scene(*p) for p in displaced.values()] + [to_scene(*scheme.node_xy(n)) for n in displaced]
        if pts:
            xs, ys = [p.x() for p in pts], [p.y() for p in pts]
            pad = 0.05 * scheme.size() + 1.0
            self.rect = QRectF(min(xs) - pad, min(ys) - pad, max(xs) - min(xs) + 2 * pad, max(ys) - min(ys) + 2 * pad)
        else:
            self.rect = QRectF()
        self.update()

    def boundingRect(self) -> QRectF:  # noqa: N802
        return self.rect

    def paint(self, painter, option, widget=None) -> None:
        if not self.displaced or self.scheme is None:
            return
        t = painter.worldTransform()
        painter.save()
        painter.resetTransform()
        # model -> device through the scene transform (model y up = scene -y)
        T = dr.ModelTransform(1.0, 0.0, 0.0)
        T.map = lambda x, y: t.map(QPointF(x, -y))  # type: ignore[method-assign]
        dr.paint_mode_shape(painter, self.scheme, self.displaced, T)
        painter.restore()


def screen_direction(pa, pb) -> float:
    """Screen angle (y down) from model point pa towards pb."""
    return math.atan2(-(pb[1] - pa[1]), pb[0] - pa[0])


"""Canvas items, one per model object and keyed by its id.

Items hold an id and drawing state (selected, highlighted) only; the model stays in the
Document.  Node, support, release and crossing items ignore the view's zoom (symbols keep
their pixel size); member and mechanism items live in scene units with cosmetic pens.
Scene coordinates are model coordinates with y flipped: scene (x, -y).
"""
from __future__ import annotations

import math

from PySide6.QtCore import QPointF, QRectF, Qt
from PySide6.QtGui import QColor, QPainterPath
from PySide6.QtWidgets import QGraphicsItem

from kinestat.core.model import arc_points

from . import drawing as dr

Z_MODE, Z_MEMBER, Z_HOP, Z_RELEASE, Z_SUPPORT, Z_NODE = 5, 10, 11, 12, 15, 20


def to_scene(x: float, y: float) -> QPointF:
    return QPointF(x, -y)


class MemberItem(QGraphicsItem):
    def __init__(self, member_id: str):
        super().__init__()
        self.member_id = member_id
        self.kind = "beam"
        self.path = QPainterPath()
        self.selected = False
        self.highlighted = False
        #: pixel padding in scene units (set by the scene from the zoom)
        self.pad = 0.1
        self.setZValue(Z_MEMBER)

    def set_geometry(self, pa, pb, rise: float, kind: str) -> None:
        self.prepareGeometryChange()
        pts = arc_points(pa, pb, rise) if rise else [pa, pb]
        path = QPainterPath(to_scene(*pts[0]))
        for p in pts[1:]:
            path.lineTo(to_scene(*p))
        self.path = path
        self.kind = kind
        self.update()

    def set_pad(self, pad: float) -> None:
        self.prepareGeometryChange()
        self.pad = pad

    def boundingRect(self) -> QRectF:  # noqa: N802 - Qt's name
        r = self.path.boundingRect()
        return r.adjusted(-self.pad, -self.pad, self.pad, self.pad)

    def paint(self, painter, option, widget=None) -> None:
        pal = dr.PALETTE
        if self.highlighted:
            painter.setPen(dr.pen(pal.warning, 9.0))
            painter.drawPath(self.path)
        if self.selected:
            halo = dr.pen(pal.hover, 6.0)
            c = halo.color()
            c.setAlpha(90)
            halo.setColor(c)
            painter.setPen(halo)
            painter.drawPath(self.path)
        colour = pal.selection if self.selected else (pal.ink if self.kind == "beam" else pal.bar_ink)
        painter.setPen(dr.pen(colour, dr.BEAM_W if self.kind == "beam" else dr.BAR_W))
        painter.drawPath(self.path)


class _PixelItem(QGraphicsItem):
    """An item drawn in device pixels at its position (ignores zoom)."""

    extent = 12.0

    def __init__(self):
        super().__init__()
        self.setFlag(QGraphicsItem.ItemIgnoresTransformations, True)
        self.selected = False
        self.highlighted = False

    def boundingRect(self) -> QRectF:  # noqa: N802
        e = self.extent
        return QRectF(-e, -e, 2 * e, 2 * e)


class NodeItem(_PixelItem):
    extent = 11.0

    def __init__(self, node_id: str):
        super().__init__()
        self.node_id = node_id
        self.glyph = "rigid"
        self.label: str | None = None
        self.setZValue(Z_NODE)

    def boundingRect(self) -> QRectF:  # noqa: N802
        r = super().boundingRect()
        if self.label:
            r = r.united(QRectF(4, -22, 9 * len(self.label) + 8, 18))
        return r

    def paint(self, painter, option, widget=None) -> None:
        pal = dr.PALETTE
        if self.highlighted:
            painter.setPen(Qt.NoPen)
            painter.setBrush(QColor(pal.warning))
            painter.drawEllipse(QPointF(0, 0), 9, 9)
        if self.selected:
            painter.setPen(dr.pen(pal.selection, 1.6))
            painter.setBrush(Qt.NoBrush)
            painter.drawRect(QRectF(-7, -7, 14, 14))
        dr.draw_node(painter, self.glyph, pal, pal.selection if self.selected else None)
        if self.label:
            painter.setPen(dr.pen(pal.muted))
            painter.drawText(QPointF(7, -7), self.label)


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


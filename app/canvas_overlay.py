"""Overlays that views paint over the canvas without touching the canvas items.

An :class:`Overlay` owns two scene items: ``under`` sits just above the member lines (for
shading members) and ``over`` above the joints and supports (for markers, symbols and
labels).  Views register named painters; a painter gets the QPainter (in device pixels) and
a :class:`DeviceMap` from model coordinates to device pixels.  The scheme painted is
always the document's current one, so shading follows a drag until the next result arrives.
"""
from __future__ import annotations

import math
from typing import Callable

from PySide6.QtCore import QPointF, QRectF, Qt
from PySide6.QtGui import QBrush, QColor, QFont, QPainter, QPainterPath
from PySide6.QtWidgets import QGraphicsItem

from kinestat.core.model import Scheme, arc_points

from . import drawing as dr
from .canvas_items import Z_MEMBER, Z_NODE

Z_UNDER = Z_MEMBER + 0.5
Z_OVER = Z_NODE + 5

Painter = Callable[[QPainter, "DeviceMap", Scheme], None]


class DeviceMap:
    """Model (x, y up) -> device pixels through the painter's scene transform."""

    def __init__(self, world):
        self.world = world
        #: device pixels per model unit
        self.scale = math.hypot(world.m11(), world.m12()) or 1.0

    def map(self, x: float, y: float) -> QPointF:
        return self.world.map(QPointF(x, -y))

    def member_points(self, scheme: Scheme, member, positions=None) -> list[QPointF]:
        xy = (lambda n: positions.get(n, scheme.node_xy(n))) if positions else scheme.node_xy
        pa, pb = xy(member.start), xy(member.end)
        pts = arc_points(pa, pb, member.rise) if member.rise else [pa, pb]
        return [self.map(*p) for p in pts]

    def member_path(self, scheme: Scheme, member, positions=None) -> QPainterPath:
        pts = self.member_points(scheme, member, positions)
        path = QPainterPath(pts[0])
        for p in pts[1:]:
            path.lineTo(p)
        return path

    def member_mid(self, scheme: Scheme, member) -> tuple[QPointF, float]:
        """Device point halfway along the member and the screen direction there (radians)."""
        pts = self.member_points(scheme, member)
        if len(pts) == 2:
            a, b = pts
        else:
            k = len(pts) // 2
            a, b = pts[k - 1], pts[k]
        mid = pts[len(pts) // 2] if len(pts) > 2 else QPointF((a.x() + b.x()) / 2, (a.y() + b.y()) / 2)
        return mid, math.atan2(b.y() - a.y(), b.x() - a.x())

    def member_at(self, scheme: Scheme, member, frac: float) -> QPointF:
        """Device point at fraction ``frac`` of the member's length from its start."""
        pts = self.member_points(scheme, member)
        seg = [math.hypot(b.x() - a.x(), b.y() - a.y()) for a, b in zip(pts, pts[1:])]
        goal = frac * sum(seg)
        for (a, b), d in zip(zip(pts, pts[1:]), seg):
            if goal <= d and d > 0:
                u = goal / d
                return QPointF(a.x() + u * (b.x() - a.x()), a.y() + u * (b.y() - a.y()))
            goal -= d
        return pts[-1]

    def end_direction(self, scheme: Scheme, member, node_id: str) -> tuple[QPointF, float]:
        """Device point of a member end and the screen direction from it into the member."""
        pts = self.member_points(scheme, member)
        if node_id == member.end:
            pts = pts[::-1]
        a, b = pts[0], pts[1]
        return a, math.atan2(b.y() - a.y(), b.x() - a.x())


class _Layer(QGraphicsItem):
    def __init__(self, overlay: "Overlay", z: float):
        super().__init__()
        self.overlay = overlay
        self.painters: dict[str, Painter] = {}
        self._rect = QRectF()
        self.setZValue(z)
        self.setAcceptedMouseButtons(Qt.NoButton)

    def boundingRect(self) -> QRectF:  # noqa: N802
        return self._rect

    def set_rect(self, r: QRectF) -> None:
        if r != self._rect:
            self.prepareGeometryChange()
            self._rect = r

    def paint(self, painter, option, widget=None) -> None:
        if not self.painters:
            return
        scheme = self.overlay.doc.scheme
        T = DeviceMap(painter.worldTransform())
        painter.save()
        painter.resetTransform()
        painter.setRenderHint(QPainter.Antialiasing, True)
        for fn in list(self.painters.values()):
            painter.save()
            fn(painter, T, scheme)
            painter.restore()
        painter.restore()


class Overlay:
    """The two overlay layers of one canvas scene, shared by the views."""

    def __init__(self, scene):
        self.scene = scene
        self.doc = scene.doc
        self.under = _Layer(self, Z_UNDER)
        self.over = _Layer(self, Z_OVER)
        scene.addItem(self.under)
        scene.addItem(self.over)
        self.doc.changed.connect(lambda _c=None: self.refresh())
        self.refresh()

    def set_painters(self, name: str, under: Painter | None = None, over: Painter | None = None) -> None:
        """Register (or replace) a view's painters; None removes that layer's painter."""
        for layer, fn in ((self.under, under), (self.over, over)):
            if fn is None:
                layer.painters.pop(name, None)
            else:
                layer.painters[name] = fn
        self.refresh()

    def clear(self, name: str) -> None:
        self.set_painters(name)

    def active(self, name: str) -> bool:
        return name in self.under.painters or name in self.over.painters

    def refresh(self, extra_points=()) -> None:
        """Bounds follow the drawing (with room for pixel-sized symbols), then repaint."""
        s = self.doc.scheme
        x0, y0, x1, y1 = dr.scheme_bounds(s, extra=extra_points)
        pad = 0.25 * s.size() + 80.0 * getattr(self.scene, "units_per_px", 0.02)
        r = QRectF(QPointF(x0 - pad, -y1 - pad), QPointF(x1 + pad, -y0 + pad))
        for layer in (self.under, self.over):
            layer.set_rect(r)
            layer.update()


def add_scene_polyline(path: QPainterPath, scheme: Scheme, member) -> None:
    """Append a member's centre line to ``path`` in scene coordinates (model y flipped)."""
    pa, pb = scheme.node_xy(member.start), scheme.node_xy(member.end)
    pts = arc_points(pa, pb, member.rise) if member.rise else [pa, pb]
    path.moveTo(pts[0][0], -pts[0][1])
    for x, y in pts[1:]:
        path.lineTo(x, -y)


# ---------------------------------------------------------------------- shared symbols
_MARKERS: dict = {}


def unstable_markers(painter: QPainter, centres, size: float = 15.0) -> None:
    """The unstable-verdict triangle of :func:`.drawing.draw_verdict_marker` at many device
    points: drawn once into a pixmap and stamped (hundreds of critical members stay cheap)."""
    from .verdict_panel import marker_pixmap

    dpr = max(1.0, float(painter.device().devicePixelRatioF())) if painter.device() else 1.0
    pm = _MARKERS.get((size, dpr))
    if pm is None:
        pm = _MARKERS[(size, dpr)] = marker_pixmap("unstable", int(size), dpr)
    h = size / 2
    for c in centres:
        painter.drawPixmap(QPointF(c.x() - h, c.y() - h), pm)


def ramp_colour(t: float, pal: dr.Palette = dr.PALETTE) -> QColor:
    """Sequential colour for t in [0, 1]: light grey-blue -> sky blue -> blue -> ink.

    Built from the Okabe-Ito palette; lightness falls monotonically, so the order reads
    without telling hues apart.
    """
    stops = ((0.0, pal.axis), (0.45, pal.hover), (0.8, pal.selection), (1.0, pal.ink))
    t = min(max(float(t), 0.0), 1.0)
    for (t0, c0), (t1, c1) in zip(stops, stops[1:]):
        if t <= t1:
            u = 0.0 if t1 == t0 else (t - t0) / (t1 - t0)
            a, b = QColor(c0), QColor(c1)
            return QColor(round(a.red() + u * (b.red() - a.red())), round(a.green() + u * (b.green() - a.green())),
                          round(a.blue() + u * (b.blue() - a.blue())))
    return QColor(stops[-1][1])


def ramp_width(t: float) -> float:
    """Line width (pixels) for t in [0, 1]: width carries the value as well as colour."""
    return 2.0 + 5.0 * min(max(float(t), 0.0), 1.0)


def badge(painter: QPainter, centre: QPointF, text: str, colour: str, *, fill: str | None = None,
          size: float = 9.0) -> None:
    """A small round label (a release number, a force sign) with paper-coloured text."""
    f = QFont()
    f.setPixelSize(int(size * 1.25))
    f.setBold(True)
    painter.setFont(f)
    w = max(2 * size, painter.fontMetrics().horizontalAdvance(text) + 8)
    r = QRectF(centre.x() - w / 2, centre.y() - size, w, 2 * size)
    painter.setPen(dr.pen(colour, 1.2))
    painter.setBrush(QBrush(QColor(fill or colour)))
    painter.drawRoundedRect(r, size, size)
    painter.setPen(dr.pen(dr.PALETTE.paper if fill is None else colour))
    painter.drawText(r, Qt.AlignCenter, text)


def text_label(painter: QPainter, at: QPointF, text: str, colour: str | None = None, max_width: int = 520) -> None:
    """Text on a paper-coloured box, its top-left corner at ``at`` (moved inside the device,
    the text elided to ``max_width`` pixels)."""
    pal = dr.PALETTE
    f = QFont()
    f.setPixelSize(12)
    painter.setFont(f)
    fm = painter.fontMetrics()
    text = fm.elidedText(text, Qt.ElideRight, max_width)
    w, h = fm.horizontalAdvance(text) + 10, fm.height() + 4
    x, y = at.x(), at.y()
    dev = painter.device()
    if dev is not None:
        dw = dev.width() / max(1.0, dev.devicePixelRatioF())
        dh = dev.height() / max(1.0, dev.devicePixelRatioF())
        x = min(max(x, 4.0), dw - w - 4.0)
        y = min(max(y, 4.0), dh - h - 4.0)
    r = QRectF(x, y, w, h)
    c = QColor(pal.paper)
    c.setAlpha(235)
    painter.setPen(dr.pen(colour or pal.muted, 1.0))
    painter.setBrush(QBrush(c))
    painter.drawRoundedRect(r, 3, 3)
    painter.setPen(dr.pen(colour or pal.ink))
    painter.drawText(r, Qt.AlignCenter, text)


def faded(colour: str | QColor, stale: bool, alpha: int = 90) -> QColor:
    c = QColor(colour)
    if stale:
        c.setAlpha(alpha)
    return c

"""Tool icons painted with the same symbol functions as the drawing (crisp at any DPI)."""
from __future__ import annotations

from PySide6.QtCore import QLineF, QPointF, QRectF, Qt
from PySide6.QtGui import QIcon, QPainter, QPixmap, QPolygonF

from . import drawing as dr


def _paint(name: str, p: QPainter, s: float) -> None:
    pal = dr.PALETTE
    ink = pal.ink
    c = QPointF(s / 2, s / 2)
    if name == "select":
        p.setPen(dr.pen(ink, 1.3))
        p.setBrush(Qt.white)
        p.drawPolygon(QPolygonF([QPointF(7, 4), QPointF(7, 22), QPointF(11.5, 17.5), QPointF(15, 25),
                                 QPointF(18, 23.5), QPointF(14.5, 16.5), QPointF(21, 16)]))
    elif name in ("beam", "bar"):
        p.setPen(dr.pen(ink, 3.0 if name == "beam" else 1.6))
        p.drawLine(QLineF(5, 23, 23, 7))
        for q in (QPointF(5, 23), QPointF(23, 7)):
            p.save()
            p.translate(q)
            dr.draw_node(p, "rigid" if name == "beam" else "pin", pal)
            p.restore()
    elif name in ("pin", "roller", "fixed", "guided"):
        p.setPen(dr.pen(ink, 2.4))
        p.drawLine(QLineF(s / 2, 2, s / 2, 9))
        p.save()
        p.translate(s / 2, 9)
        dr.draw_support(p, name, 90.0, pal, size=9.5)
        p.restore()
    elif name == "hinge":
        p.setPen(dr.pen(ink, 2.6))
        p.drawLine(QLineF(3, 20, s / 2, s / 2))
        p.drawLine(QLineF(s / 2, s / 2, 25, 20))
        p.translate(c)
        dr.draw_node(p, "hinge", pal)
    elif name in ("end_hinge", "shear", "axial"):
        p.setPen(dr.pen(ink, 2.6))
        p.drawLine(QLineF(4, 18, 25, 18))
        p.drawLine(QLineF(4, 6, 4, 18))
        p.translate(QPointF(4, 18))
        dr.draw_releases(p, {{"end_hinge": "moment"}.get(name, name)}, 0.0, pal, start=9)
    elif name == "delete":
        p.setPen(dr.pen(pal.mechanism, 2.6))
        p.drawLine(QLineF(8, 8, 20, 20))
        p.drawLine(QLineF(8, 20, 20, 8))
    elif name == "pan":
        p.setPen(dr.pen(ink, 1.8))
        for a, b in ((QPointF(14, 4), QPointF(14, 24)), (QPointF(4, 14), QPointF(24, 14))):
            p.drawLine(QLineF(a, b))
        for tip, d1, d2 in ((QPointF(14, 4), QPointF(-3, 3), QPointF(3, 3)), (QPointF(14, 24), QPointF(-3, -3), QPointF(3, -3)),
                            (QPointF(4, 14), QPointF(3, -3), QPointF(3, 3)), (QPointF(24, 14), QPointF(-3, -3), QPointF(-3, 3))):
            p.drawLine(QLineF(tip, tip + d1))
            p.drawLine(QLineF(tip, tip + d2))
    elif name == "fit":
        p.setPen(dr.pen(ink, 1.6))
        for x, y, dx, dy in ((4, 4, 1, 1), (24, 4, -1, 1), (4, 24, 1, -1), (24, 24, -1, -1)):
            p.drawLine(QLineF(x, y, x + 6 * dx, y))
            p.drawLine(QLineF(x, y, x, y + 6 * dy))
        p.drawRect(QRectF(10, 10, 8, 8))
    elif name == "grid":
        p.setPen(dr.pen(pal.muted, 1.2))
        for k in (7, 14, 21):
            p.drawLine(QLineF(k, 4, k, 24))
            p.drawLine(QLineF(4, k, 24, k))


def icon(name: str, size: int = 28) -> QIcon:
    ic = QIcon()
    for dpr in (1.0, 2.0):
        pm = QPixmap(int(size * dpr), int(size * dpr))
        pm.setDevicePixelRatio(dpr)
        pm.fill(Qt.transparent)
        p = QPainter(pm)
        p.setRenderHint(QPainter.Antialiasing)
        _paint(name, p, size)
        p.end()
        ic.addPixmap(pm)
    return ic

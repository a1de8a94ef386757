"""The mechanism drawn over the canvas at one position of its path: overlay items only.

:class:`MotionOverlay` owns a few scene items (one path item per rigid body in its own
colour, one for the members that stay still, one for the traced paths of the moving
joints, and one item that paints the moving joints and supports, the body tags and the
instant centres).  Showing it fades the document's own items to a ghost of the drawn shape;
it never touches the document.

:func:`paint_marks` paints joints, supports, tags and instant centres through any
model-to-device mapping, so the PNG export draws exactly what the canvas shows.
"""
from __future__ import annotations

import math
from typing import Callable

import numpy as np
from PySide6.QtCore import QLineF, QObject, QPointF, QRectF, Qt, QTimer
from PySide6.QtGui import QBrush, QColor, QFont, QFontMetricsF, QPainter, QPainterPath, QPen, QPolygonF
from PySide6.QtWidgets import QGraphicsItem, QGraphicsPathItem

from kinestat.core.model import Scheme, arc_points

from . import drawing as dr
from .motion_data import MotionData
from .qt_compat import keep_none_alive

keep_none_alive()

#: opacity of the document's items while the motion is shown (the drawn shape as a ghost)
GHOST_OPACITY = 0.22
#: body colours: the palette's colour-blind-safe hues (bodies are also tagged B1, B2 ...)
BODY_COLOURS = (dr.PALETTE.selection, dr.PALETTE.determinate, dr.PALETTE.free_node, dr.PALETTE.warning,
                dr.PALETTE.hover, dr.PALETTE.mechanism)
BODY_W = 3.4
#: joints whose traced paths are drawn (the ones that travel furthest)
MAX_TRAILS = 60
#: bodies tagged on the canvas (beyond this only their colours tell them apart)
MAX_TAGS = 40
LINEARISED_BANNER = ("LINEARISED \u2014 infinitesimal mechanism: the amplitude has no physical meaning "
                     "(the scheme locks at second order; not a finite path)")
Z_TRAILS, Z_STILL, Z_BODY, Z_MARKS = 24, 25, 26, 28

Mapper = Callable[[float, float], QPointF]


def body_colour(i: int) -> str:
    return BODY_COLOURS[i % len(BODY_COLOURS)]


def node_glyphs(scheme: Scheme) -> dict[str, str]:
    """Joint symbol of every node (as :func:`drawing.node_glyph`), in one pass over the members."""
    kinds: dict[str, set[str]] = {}
    for m in scheme.members.values():
        kinds.setdefault(m.start, set()).add(m.kind)
        kinds.setdefault(m.end, set()).add(m.kind)
    out = {}
    for nid, n in scheme.nodes.items():
        k = kinds.get(nid)
        out[nid] = "hinge" if n.hinge else ("free" if not k else ("pin" if k == {"bar"} else "rigid"))
    return out


class Lines:
    """Member centre lines at one frame, mapped by ``X = ox + sx x, Y = oy + sy y``: straight
    members as one batch of lines, curved ones as polylines.  (One QPainterPath of hundreds of
    sub-paths costs some 50 ms to stroke with a pen wider than a pixel; a batch of lines
    costs under one.)"""

    def __init__(self, scheme: Scheme, data: MotionData, k: int, members, sx=1.0, ox=0.0, sy=-1.0, oy=0.0):
        P = data.P[k]
        straight = [mid for mid in members if not scheme.members[mid].rise]
        curved = [mid for mid in members if scheme.members[mid].rise]
        ab = np.array([data.member_nodes[mid] for mid in straight], int).reshape(-1, 2)
        A, B = P[ab[:, 0]], P[ab[:, 1]]
        seg = np.column_stack([ox + sx * A[:, 0], oy + sy * A[:, 1], ox + sx * B[:, 0], oy + sy * B[:, 1]])
        self.segments = seg
        self.lines = [QLineF(*row) for row in seg.tolist()]
        self.polylines = []
        pts_all = [seg[:, :2], seg[:, 2:]]
        for mid in curved:
            a, b = data.member_nodes[mid]
            pts = np.array(arc_points(tuple(P[a]), tuple(P[b]), scheme.members[mid].rise, 16))
            pts = np.column_stack([ox + sx * pts[:, 0], oy + sy * pts[:, 1]])
            pts_all.append(pts)
            self.polylines.append(QPolygonF([QPointF(x, y) for x, y in pts.tolist()]))
        allp = np.concatenate(pts_all) if pts_all else np.zeros((0, 2))
        if len(allp):
            lo, hi = allp.min(axis=0), allp.max(axis=0)
            self.rect = QRectF(lo[0], lo[1], hi[0] - lo[0], hi[1] - lo[1])
        else:
            self.rect = QRectF()

    def paint(self, p: QPainter, pen: QPen) -> None:
        flat = QPen(pen)
        flat.setCapStyle(Qt.FlatCap)
        p.setPen(flat)
        if self.lines:
            p.drawLines(self.lines)
        if self.polylines:
            p.setPen(pen)
            for poly in self.polylines:
                p.drawPolyline(poly)


class LinesItem(QGraphicsItem):
    """Member lines in scene units with a cosmetic pen (a body, or the members that stay still)."""

    def __init__(self, z: float):
        super().__init__()
        self.geometry: Lines | None = None
        self.pen = dr.pen(dr.PALETTE.ink)
        self._rect = QRectF()
        self.setZValue(z)
        self.setAcceptedMouseButtons(Qt.NoButton)

    def set_lines(self, geometry: Lines) -> None:
        self.prepareGeometryChange()
        self.geometry = geometry
        # a little room for the pen (cosmetic: the width is in pixels, the rect in scene units)
        pad = 1e-3 * max(geometry.rect.width(), geometry.rect.height(), 1e-6)
        self._rect = geometry.rect.adjusted(-pad, -pad, pad, pad)
        self.update()

    def set_pen(self, pen: QPen) -> None:
        self.pen = pen
        self.update()

    def boundingRect(self) -> QRectF:  # noqa: N802
        return self._rect

    def paint(self, painter, option, widget=None) -> None:
        if self.geometry is not None:
            self.geometry.paint(painter, self.pen)


# ---------------------------------------------------------------------- shared painting
def draw_tag(p: QPainter, at: QPointF, text: str, colour: str, area: QRectF | None = None,
             centred: bool = False) -> None:
    """A small boxed label with its lower-left corner (or its centre) at ``at``, kept inside
    ``area`` if given."""
    fm = QFontMetricsF(p.font())
    w, h = fm.horizontalAdvance(text) + 8, fm.height() + 2
    box = QRectF(at.x() - w / 2, at.y() - h / 2, w, h) if centred else QRectF(at.x(), at.y() - h, w, h)
    if area is not None:
        box.moveLeft(min(max(box.left(), area.left() + 4), area.right() - w - 4))
        box.moveTop(min(max(box.top(), area.top() + 4), area.bottom() - h - 4))
    p.setPen(dr.pen(colour, 1.0))
    p.setBrush(QBrush(QColor("#ffffff")))
    p.drawRoundedRect(box, 3, 3)
    ink = QColor(colour)
    if ink.lightnessF() > 0.45:
        ink = ink.darker(160)
    p.setPen(dr.pen(ink.name()))
    p.drawText(box, int(Qt.AlignCenter), text)


def draw_centre(p: QPainter, q: QPointF, colour: str) -> None:
    """An instant centre: a ring with a cross through it."""
    p.setPen(dr.pen(colour, 1.6))
    p.setBrush(QBrush(QColor("#ffffff")))
    p.drawEllipse(q, 5.0, 5.0)
    p.drawLine(q + QPointF(-10, 0), q + QPointF(10, 0))
    p.drawLine(q + QPointF(0, -10), q + QPointF(0, 10))


def draw_arrow(p: QPainter, a: QPointF, b: QPointF, colour: str, width: float = 1.6) -> None:
    p.setPen(dr.pen(colour, width))
    p.drawLine(a, b)
    ang = math.atan2(b.y() - a.y(), b.x() - a.x())
    for da in (2.6, -2.6):
        p.drawLine(b, b + QPointF(8 * math.cos(ang + da), 8 * math.sin(ang + da)))


def edge_point(area: QRectF, inside: QPointF, target: QPointF, inset: float = 22.0) -> QPointF:
    """Where the line from ``inside`` towards ``target`` leaves ``area`` shrunk by ``inset``."""
    r = area.adjusted(inset, inset, -inset, -inset)
    dx, dy = target.x() - inside.x(), target.y() - inside.y()
    t = 1.0
    if dx:
        t = min(t, ((r.right() if dx > 0 else r.left()) - inside.x()) / dx)
    if dy:
        t = min(t, ((r.bottom() if dy > 0 else r.top()) - inside.y()) / dy)
    t = max(t, 0.0)
    return QPointF(inside.x() + t * dx, inside.y() + t * dy)


class _Anchors:
    """Per body: the member whose midpoint carries the body tag (its longest)."""

    def __init__(self, scheme: Scheme, data: MotionData):
        P = data.P[data.start]
        self.members = []
        for b in data.bodies:
            def length(mid):
                a, c = data.member_nodes[mid]
                return float(np.hypot(*(P[c] - P[a])))
            self.members.append(max(b.members, key=lambda mid: (length(mid), mid)))


def paint_marks(p: QPainter, scheme: Scheme, data: MotionData, k: int, to_device: Mapper, area: QRectF,
                glyphs: dict[str, str], anchors: _Anchors, scale: float = 1.0) -> None:
    """Moving joints and supports, body tags and instant centres at frame ``k`` (device pixels)."""
    pal = dr.PALETTE
    P = data.P[k]
    p.save()
    p.setRenderHint(QPainter.Antialiasing, True)
    # every support and joint at its position in this frame (the ghost shows where they were drawn)
    for nid, sup in scheme.supports.items():
        i = data.node_index.get(nid)
        if i is None:
            continue
        p.save()
        p.translate(to_device(float(P[i, 0]), float(P[i, 1])))
        p.scale(scale, scale)
        dr.draw_support(p, sup.kind, sup.angle, pal, fixes=sup.fix)
        p.restore()
    r_dot, r_pin, r_hinge = dr.NODE_R * scale, dr.PIN_R * scale, dr.HINGE_R * scale
    p.setPen(Qt.NoPen)
    p.setBrush(QBrush(QColor(pal.ink)))
    rings = []
    for i, nid in enumerate(data.node_ids):
        g = glyphs.get(nid, "free")
        q = to_device(float(P[i, 0]), float(P[i, 1]))
        if g == "rigid":
            p.drawEllipse(q, r_dot, r_dot)
        elif g in ("pin", "hinge"):
            rings.append((q, r_hinge if g == "hinge" else r_pin))
    p.setPen(dr.pen(pal.ink, 1.4 * scale))
    p.setBrush(QBrush(QColor(pal.paper)))
    for q, r in rings:
        p.drawEllipse(q, r, r)
    # tags and instant centres
    font = QFont()
    font.setPixelSize(int(round(11 * scale)))
    font.setBold(True)
    p.setFont(font)
    for j, b in enumerate(data.bodies[:MAX_TAGS]):
        colour = body_colour(j)
        a, c = data.member_nodes[anchors.members[j]]
        mid = (to_device(float(P[a, 0]), float(P[a, 1])) + to_device(float(P[c, 0]), float(P[c, 1]))) / 2
        if not area.contains(mid):  # the body has moved out of view: point to it
            e = edge_point(area, area.center(), mid)
            L = math.hypot(mid.x() - area.center().x(), mid.y() - area.center().y()) or 1.0
            u = QPointF((mid.x() - area.center().x()) / L, (mid.y() - area.center().y()) / L)
            tail = e - 30 * u
            draw_arrow(p, tail, e, colour, 2.0)
            draw_tag(p, tail - 16 * u, f"{b.label} off view", colour, area, centred=True)
            continue
        draw_tag(p, mid + QPointF(6 * scale, -6 * scale), b.label, colour)
        cx, cy = b.centres[k]
        if np.isfinite(cx):
            q = to_device(float(cx), float(cy))
            if area.adjusted(6, 6, -6, -6).contains(q):
                draw_centre(p, q, colour)
                draw_tag(p, q + QPointF(8 * scale, -7 * scale), f"I{j + 1}", colour)
            else:
                e = edge_point(area, mid, q)
                L = math.hypot(q.x() - mid.x(), q.y() - mid.y()) or 1.0
                u = QPointF((q.x() - mid.x()) / L, (q.y() - mid.y()) / L)
                tail = e - 26 * u
                draw_arrow(p, tail, e, colour)
                draw_tag(p, tail - 16 * u, f"I{j + 1} off view ({cx:.4g}, {cy:.4g})", colour, area, centred=True)
        else:
            dx, dy = b.directions[k]
            if np.isfinite(dx):
                a0 = mid + QPointF(10 * scale, 12 * scale)
                tip = a0 + QPointF(34 * scale * dx, -34 * scale * dy)
                draw_arrow(p, a0, tip, colour, 2.0 * scale)
                draw_tag(p, a0 + QPointF(-6 * scale, 30 * scale), f"I{j + 1} at infinity: translates", colour)
    if data.linearised:
        font.setPixelSize(int(round(12 * scale)))
        p.setFont(font)
        fm = QFontMetricsF(font)
        text = LINEARISED_BANNER
        w = min(fm.horizontalAdvance(text) + 20, area.width() - 24)
        box = QRectF(area.left() + 12, area.top() + 10, w, fm.height() + 10)
        p.setPen(dr.pen(pal.mechanism, 1.5))
        p.setBrush(QBrush(QColor("#fff4e5")))
        p.drawRoundedRect(box, 4, 4)
        p.setPen(dr.pen(pal.ink))
        p.drawText(box.adjusted(8, 0, -8, 0), int(Qt.AlignVCenter | Qt.AlignLeft),
                   fm.elidedText(text, Qt.ElideRight, box.width() - 16))
    p.restore()


def _scene_point(x: float, y: float) -> QPointF:
    return QPointF(x, -y)


def trail_path(data: MotionData, to_point, limit: int = MAX_TRAILS) -> QPainterPath:
    """The traced paths of the joints that travel furthest (at most ``limit`` of them)."""
    path = QPainterPath()
    if data.frames < 2:
        return path
    steps = np.linalg.norm(np.diff(data.P, axis=0), axis=2).sum(axis=0)
    order = [i for i in np.argsort(-steps, kind="stable") if data.moving_nodes[i]][:limit]
    for i in order:
        pts = data.P[:, i]
        path.moveTo(to_point(float(pts[0, 0]), float(pts[0, 1])))
        for x, y in pts[1:]:
            path.lineTo(to_point(float(x), float(y)))
    return path


# ---------------------------------------------------------------------- canvas items
class MarksItem(QGraphicsItem):
    """Paints :func:`paint_marks` in viewport pixels; covers the whole scene so that centres
    far off the drawing still get their edge arrows."""

    def __init__(self, overlay: "MotionOverlay"):
        super().__init__()
        self.overlay = overlay
        self.setZValue(Z_MARKS)
        self.setAcceptedMouseButtons(Qt.NoButton)

    def boundingRect(self) -> QRectF:  # noqa: N802
        return QRectF(-1e5, -1e5, 2e5, 2e5)

    def paint(self, painter, option, widget=None) -> None:
        ov = self.overlay
        if ov.data is None:
            return
        t = painter.worldTransform()
        painter.save()
        painter.resetTransform()
        dev = painter.device()
        area = QRectF(0, 0, dev.width(), dev.height())
        paint_marks(painter, ov.scheme, ov.data, ov.frame, lambda x, y: t.map(QPointF(x, -y)), area,
                    ov.glyphs, ov.anchors)
        painter.restore()


class MotionOverlay(QObject):
    """The animated mechanism on the canvas.  ``set_data`` then ``set_frame``; ``set_shown``
    fades the document's items (ghost) and shows the overlay, or puts everything back."""

    def __init__(self, scene, parent=None):
        super().__init__(parent)
        self.scene = scene
        self.scheme: Scheme | None = None
        self.data: MotionData | None = None
        self.frame = 0
        self.shown = False
        self.glyphs: dict[str, str] = {}
        self.anchors: _Anchors | None = None
        self.body_items: list[LinesItem] = []
        self._lines: dict[int, list[Lines]] = {}
        self.still_item = LinesItem(Z_STILL)
        self.trail_item = QGraphicsPathItem()
        self.trail_item.setZValue(Z_TRAILS)
        self.trail_item.setPen(dr.pen(dr.PALETTE.mechanism, 1.0, Qt.DotLine, alpha=170))
        self.marks_item = MarksItem(self)
        for it in (self.still_item, self.trail_item, self.marks_item):
            it.setAcceptedMouseButtons(Qt.NoButton)
            it.setVisible(False)
            scene.addItem(it)
        self._reghost = QTimer(self)
        self._reghost.setSingleShot(True)
        self._reghost.setInterval(250)
        self._reghost.timeout.connect(self._apply_ghost)
        scene.doc.changed.connect(self._on_doc_changed)

    # ------------------------------------------------------------------ data
    def set_data(self, scheme: Scheme | None, data: MotionData | None) -> None:
        for it in self.body_items:
            self.scene.removeItem(it)
        self.body_items = []
        self._lines = {}
        self.scheme, self.data = scheme, data
        if data is None or scheme is None:
            self.set_shown(False)
            return
        self.glyphs = node_glyphs(scheme)
        self.anchors = _Anchors(scheme, data)
        for j, _b in enumerate(data.bodies):
            it = LinesItem(Z_BODY)
            it.set_pen(dr.pen(body_colour(j), BODY_W, Qt.DashLine if data.linearised else Qt.SolidLine))
            it.setVisible(self.shown)
            self.scene.addItem(it)
            self.body_items.append(it)
        beams = [mid for mid in data.still_members if scheme.members[mid].kind == "beam"]
        self.still_item.set_pen(dr.pen(dr.PALETTE.bar_ink if len(beams) < len(data.still_members) else dr.PALETTE.ink,
                                       1.6))
        self.still_item.set_lines(Lines(scheme, data, data.start, data.still_members))
        self.trail_item.setPath(trail_path(data, _scene_point))
        self.frame = -1
        self.set_frame(data.start)

    def set_frame(self, k: int) -> None:
        d = self.data
        if d is None:
            return
        k = int(min(max(k, 0), d.frames - 1))
        if k == self.frame:
            return
        self.frame = k
        lines = self._lines.get(k)
        if lines is None:
            lines = [Lines(self.scheme, d, k, b.members) for b in d.bodies]
            self._lines[k] = lines
        for it, geo in zip(self.body_items, lines):
            it.set_lines(geo)
        self.marks_item.update()

    # ------------------------------------------------------------------ ghost
    def set_shown(self, on: bool) -> None:
        on = bool(on) and self.data is not None
        self.shown = on
        for it in [self.still_item, self.trail_item, self.marks_item, *self.body_items]:
            it.setVisible(on)
        self._apply_ghost()

    def _document_items(self):
        sc = self.scene
        for d in (sc.member_items, sc.node_items, sc.support_items, sc.release_items):
            yield from d.values()
        yield from sc.hop_items

    def _apply_ghost(self) -> None:
        alpha = GHOST_OPACITY if self.shown else 1.0
        for it in self._document_items():
            if it.opacity() != alpha:
                it.setOpacity(alpha)
        # the static first-mode sketch would only compete with the animation
        self.scene.mode_item.setVisible(not self.shown)

    def _on_doc_changed(self, _change) -> None:
        if self.shown:
            self._apply_ghost()
            self._reghost.start()  # crossings are redrawn a little later

    # ------------------------------------------------------------------ for tests and export
    def body_points(self, j: int) -> list[tuple[float, float]]:
        """Model points of body ``j`` as drawn: start and end of each straight member's line, in
        the body's member order (curved members are drawn as polylines after them)."""
        out = []
        for ln in self.body_items[j].geometry.lines:
            out += [(ln.x1(), -ln.y1()), (ln.x2(), -ln.y2())]
        return out

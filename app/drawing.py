"""How a scheme looks, on any QPainter: canvas items, PNG/SVG export, the headless render.

Two layers:

* symbol functions (:func:`draw_support`, :func:`draw_node`, :func:`draw_releases` ...) draw
  one symbol in device pixels around the painter's origin; the canvas items call them;
* :func:`paint_scheme` paints a whole scheme (members, joints, supports, releases, the
  first mechanism shape, the verdict caption and the concept-stage caution) into a rectangle
  of any paint device.  Reports and motion strips build on it: ``positions`` draws the
  scheme with its nodes elsewhere (a displaced frame) and ``transform`` keeps several frames
  on one scale.

The palette is the Okabe-Ito colour-blind-safe set on a paper-white ground; verdicts also
differ by marker shape, never by colour alone.
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from functools import lru_cache
from typing import Iterable, Mapping

from PySide6.QtCore import QLineF, QPointF, QRectF, Qt
from PySide6.QtGui import QBrush, QColor, QFont, QPainter, QPainterPath, QPen, QPolygonF

from kinestat.core.model import Scheme, arc_points

from .qt_compat import keep_none_alive

keep_none_alive()

CAUTION = ("Concept-stage check only, not structural design: local codes and a licensed "
           "engineer govern.")


@dataclass(frozen=True)
class Palette:
    paper: str = "#fbfaf6"
    grid_minor: str = "#e9ecf0"
    grid_major: str = "#d5dbe3"
    axis: str = "#b9c3cf"
    ink: str = "#1d2733"          # beams, supports, text
    bar_ink: str = "#3d4a5a"      # bars
    muted: str = "#6b7785"        # hatching, notes
    selection: str = "#0072b2"    # Okabe-Ito blue
    hover: str = "#56b4e9"        # sky blue
    mechanism: str = "#d55e00"    # vermillion
    warning: str = "#e69f00"      # orange
    preview: str = "#0072b2"
    free_node: str = "#cc79a7"    # reddish purple: a node no member reaches
    determinate: str = "#009e73"  # bluish green
    indeterminate: str = "#0072b2"
    unstable: str = "#d55e00"


PALETTE = Palette()

#: symbol sizes in device-independent pixels
NODE_R = 2.6
PIN_R = 3.2
HINGE_R = 4.6
SUPPORT = 15.0
RELEASE_OFFSET = 10.0
BEAM_W = 2.2
BAR_W = 1.3


@lru_cache(maxsize=512)
def _pen(colour: str, width: float, style, cosmetic: bool, alpha: int) -> QPen:
    c = QColor(colour)
    if alpha < 255:
        c.setAlpha(alpha)
    p = QPen(c, width, style, Qt.RoundCap, Qt.RoundJoin)
    p.setCosmetic(cosmetic)
    return p


def pen(colour: str, width: float = 1.0, style=Qt.SolidLine, cosmetic: bool = True, alpha: int = 255) -> QPen:
    """A round-capped pen (cosmetic by default: width in device pixels); a fresh copy of a cached one."""
    return QPen(_pen(colour, float(width), style, cosmetic, alpha))


def verdict_colour(verdict: str | None, pal: Palette = PALETTE) -> str:
    return {"unstable": pal.unstable, "determinate": pal.determinate,
            "indeterminate": pal.indeterminate}.get(verdict or "", pal.muted)


# ---------------------------------------------------------------------- symbols (pixel frame)
def draw_hatch(p: QPainter, x0: float, x1: float, y: float, depth: float, colour: str) -> None:
    """Ground hatching below the line y from x0 to x1 (pixel frame, y down)."""
    p.setPen(pen(colour, 1.0))
    n = max(3, int((x1 - x0) / 4.5))
    for k in range(n + 1):
        x = x0 + (x1 - x0) * k / n
        p.drawLine(QLineF(x, y, x - depth, y + depth))


def draw_support(p: QPainter, kind: str, angle: float, pal: Palette = PALETTE, colour: str | None = None,
                 size: float = SUPPORT, fixes: Iterable[str] = ()) -> None:
    """A support symbol at the origin, ground on the side opposite the reaction ``angle``.

    ``angle`` is in degrees counter-clockwise from +x in model axes (y up), as in the file.
    """
    ink = colour or pal.ink
    s = size
    p.save()
    p.rotate(90.0 - angle)
    p.setBrush(QBrush(QColor(pal.paper)))
    p.setPen(pen(ink, 1.4))
    if kind == "pin":
        p.drawPolygon(QPolygonF([QPointF(0, 0), QPointF(-0.75 * s, s), QPointF(0.75 * s, s)]))
        p.drawLine(QLineF(-1.05 * s, s, 1.05 * s, s))
        draw_hatch(p, -1.0 * s, 1.0 * s, s, 0.35 * s, pal.muted)
    elif kind == "roller":
        h, r = 0.72 * s, 0.16 * s
        p.drawPolygon(QPolygonF([QPointF(0, 0), QPointF(-0.65 * s, h), QPointF(0.65 * s, h)]))
        for cx in (-0.36 * s, 0.36 * s):
            p.drawEllipse(QPointF(cx, h + r), r, r)
        g = h + 2 * r
        p.setPen(pen(ink, 1.4))
        p.drawLine(QLineF(-1.05 * s, g, 1.05 * s, g))
        draw_hatch(p, -1.0 * s, 1.0 * s, g, 0.35 * s, pal.muted)
    elif kind == "fixed":
        p.setPen(pen(ink, 2.6))
        p.drawLine(QLineF(-0.9 * s, 0, 0.9 * s, 0))
        draw_hatch(p, -0.85 * s, 0.85 * s, 0, 0.45 * s, pal.muted)
    elif kind == "guided":
        h, r = 0.55 * s, 0.16 * s
        p.drawRect(QRectF(-0.6 * s, 0, 1.2 * s, h))
        for cx in (-0.36 * s, 0.36 * s):
            p.drawEllipse(QPointF(cx, h + r), r, r)
        g = h + 2 * r
        p.drawLine(QLineF(-1.05 * s, g, 1.05 * s, g))
        draw_hatch(p, -1.0 * s, 1.0 * s, g, 0.35 * s, pal.muted)
    else:  # custom: a box with the restraint initials
        p.drawRect(QRectF(-0.8 * s, 0, 1.6 * s, 0.9 * s))
        f = QFont()
        f.setPixelSize(max(7, int(0.55 * s)))
        p.setFont(f)
        p.drawText(QRectF(-0.8 * s, 0, 1.6 * s, 0.9 * s), Qt.AlignCenter,
                   "".join(w[0].upper() for w in fixes) or "?")
    p.restore()


def draw_node(p: QPainter, glyph: str, pal: Palette = PALETTE, colour: str | None = None) -> None:
    """A joint at the origin: ``rigid`` (dot), ``pin`` (small ring: bars only),
    ``hinge`` (full hinge: larger ring), ``free`` (no member reaches it: open square)."""
    ink = colour or pal.ink
    if glyph == "hinge":
        p.setPen(pen(ink, 1.5))
        p.setBrush(QBrush(QColor(pal.paper)))
        p.drawEllipse(QPointF(0, 0), HINGE_R, HINGE_R)
    elif glyph == "pin":
        p.setPen(pen(ink, 1.3))
        p.setBrush(QBrush(QColor(pal.paper)))
        p.drawEllipse(QPointF(0, 0), PIN_R, PIN_R)
    elif glyph == "free":
        p.setPen(pen(colour or pal.free_node, 1.5))
        p.setBrush(Qt.NoBrush)
        p.drawRect(QRectF(-3.5, -3.5, 7, 7))
    else:
        p.setPen(Qt.NoPen)
        p.setBrush(QBrush(QColor(ink)))
        p.drawEllipse(QPointF(0, 0), NODE_R, NODE_R)


def draw_releases(p: QPainter, words: Iterable[str], direction: float, pal: Palette = PALETTE,
                  colour: str | None = None, start: float = RELEASE_OFFSET) -> None:
    """Release marks at one member end, just off the joint at the origin.

    ``direction`` is the screen angle (radians, y down) from the joint into the member.
    moment: a ring on the member; shear: two strokes across it; axial: a sleeve around it.
    """
    ink = colour or pal.ink
    p.save()
    p.rotate(math.degrees(direction))
    off = start
    for w in ("moment", "shear", "axial"):
        if w not in words:
            continue
        if w == "moment":
            p.setPen(pen(ink, 1.4))
            p.setBrush(QBrush(QColor(pal.paper)))
            p.drawEllipse(QPointF(off, 0), 3.6, 3.6)
            off += 9
        elif w == "shear":
            p.setPen(pen(pal.paper, 4.0))
            p.drawLine(QLineF(off - 2, 0, off + 2, 0))
            p.setPen(pen(ink, 1.4))
            p.drawLine(QLineF(off - 2, -5, off - 2, 5))
            p.drawLine(QLineF(off + 2, -5, off + 2, 5))
            off += 10
        elif w == "axial":
            p.setPen(pen(ink, 1.3))
            p.setBrush(Qt.NoBrush)
            p.drawRect(QRectF(off - 4, -3.2, 10, 6.4))
            off += 13
    p.restore()


def draw_hop(p: QPainter, direction: float, pal: Palette = PALETTE, colour: str | None = None,
             width: float = BEAM_W) -> None:
    """A crossing that is NOT a joint: the upper member hops over the lower one at the origin."""
    ink = colour or pal.ink
    p.save()
    p.rotate(math.degrees(direction))
    p.setPen(pen(pal.paper, width + 5))
    p.drawLine(QLineF(-5.5, 0, 5.5, 0))
    path = QPainterPath(QPointF(-5.5, 0))
    path.cubicTo(QPointF(-5.5, -7), QPointF(5.5, -7), QPointF(5.5, 0))
    p.setPen(pen(ink, width))
    p.setBrush(Qt.NoBrush)
    p.drawPath(path)
    p.restore()


def draw_verdict_marker(p: QPainter, verdict: str | None, centre: QPointF, r: float, pal: Palette = PALETTE) -> None:
    """Shape + colour: circle = determinate, square = indeterminate, triangle = unstable."""
    c = QColor(verdict_colour(verdict, pal))
    p.save()
    p.setPen(Qt.NoPen)
    p.setBrush(QBrush(c))
    x, y = centre.x(), centre.y()
    if verdict == "determinate":
        p.drawEllipse(centre, r, r)
    elif verdict == "indeterminate":
        p.drawRect(QRectF(x - r * 0.9, y - r * 0.9, 1.8 * r, 1.8 * r))
    elif verdict == "unstable":
        p.drawPolygon(QPolygonF([QPointF(x, y - r * 1.1), QPointF(x - r * 1.1, y + r * 0.9),
                                 QPointF(x + r * 1.1, y + r * 0.9)]))
        p.setPen(pen(pal.paper, max(1.2, r * 0.28)))
        p.drawLine(QLineF(x, y - r * 0.45, x, y + r * 0.2))
        p.drawPoint(QPointF(x, y + r * 0.55))
    else:
        p.setBrush(Qt.NoBrush)
        p.setPen(pen(pal.muted, 1.5))
        p.drawEllipse(centre, r, r)
    p.restore()


def node_glyph(scheme: Scheme, node_id: str) -> str:
    n = scheme.nodes[node_id]
    if n.hinge:
        return "hinge"
    kinds = [m.kind for m in scheme.members_at(node_id)]
    if not kinds:
        return "free"
    return "pin" if all(k == "bar" for k in kinds) else "rigid"


# ---------------------------------------------------------------------- results
def verdict_of(c) -> str | None:
    return getattr(c, "verdict", None) if c is not None else None


def summary_of(c) -> str:
    if c is None:
        return ""
    try:
        return c.summary()
    except Exception:  # noqa: BLE001 - a summary must never stop a drawing
        return str(getattr(c, "verdict", ""))


def first_mode(c):
    """The first mechanism mode of an unstable result (internal ones before rigid-body ones)."""
    if c is None or verdict_of(c) != "unstable":
        return None
    modes = list(getattr(c, "modes", None) or [])
    return modes[0] if modes else None


def mode_amplitude(scheme: Scheme) -> float:
    """Drawing amplitude of a normalised mode shape (max |d| = 1): a tenth of the scheme's size."""
    return 0.1 * scheme.size()


def hand_count_line(c) -> str:
    cnt = getattr(c, "count", None)
    if cnt is None:
        return ""
    formula = str(getattr(cnt, "formula", ""))
    value = getattr(cnt, "value", "")
    return f"Hand count: {formula}" if formula.rstrip().endswith(f"= {value}") else f"Hand count: {formula} = {value}"


# ---------------------------------------------------------------------- whole scheme
class ModelTransform:
    """Model (x, y up) -> device (X, Y down): X = ox + s x, Y = oy - s y."""

    def __init__(self, scale: float, ox: float, oy: float):
        self.scale, self.ox, self.oy = scale, ox, oy

    def map(self, x: float, y: float) -> QPointF:
        return QPointF(self.ox + self.scale * x, self.oy - self.scale * y)

    @classmethod
    def fit(cls, bounds: tuple[float, float, float, float], rect: QRectF, margin: float) -> "ModelTransform":
        x0, y0, x1, y1 = bounds
        w, h = max(x1 - x0, 1e-9), max(y1 - y0, 1e-9)
        aw, ah = max(rect.width() - 2 * margin, 10), max(rect.height() - 2 * margin, 10)
        s = min(aw / w, ah / h)
        if x1 - x0 < 1e-9 and y1 - y0 < 1e-9:
            s = 40.0
        cx, cy = (x0 + x1) / 2, (y0 + y1) / 2
        return cls(s, rect.center().x() - s * cx, rect.center().y() + s * cy)


def scheme_bounds(scheme: Scheme, positions: Mapping[str, tuple[float, float]] | None = None,
                  extra: Iterable[tuple[float, float]] = ()) -> tuple[float, float, float, float]:
    pts = [positions.get(n.id, (n.x, n.y)) if positions else (n.x, n.y) for n in scheme.nodes.values()]
    pts += list(extra)
    for m in scheme.members.values():
        if m.rise:
            pts += arc_points(scheme.node_xy(m.start), scheme.node_xy(m.end), m.rise, 8)
    if not pts:
        return (-1.0, -1.0, 1.0, 1.0)
    xs, ys = [p[0] for p in pts], [p[1] for p in pts]
    return (min(xs), min(ys), max(xs), max(ys))


def _member_polyline(scheme, m, xy) -> list[tuple[float, float]]:
    pa, pb = xy(m.start), xy(m.end)
    return arc_points(pa, pb, m.rise) if m.rise else [pa, pb]


def paint_scheme(painter: QPainter, scheme: Scheme, classification=None, rect: QRectF | None = None, *,
                 positions: Mapping[str, tuple[float, float]] | None = None,
                 transform: ModelTransform | None = None, pal: Palette = PALETTE,
                 show_mode: bool = True, caption: bool = True, caution: bool = True,
                 show_ids: bool = False, highlight: Iterable[str] = (), crossings: bool = True,
                 background: bool = True) -> ModelTransform:
    """Paint ``scheme`` (and its verdict) into ``rect`` of the painter's device; returns the
    model-to-device transform used, so that later frames can be drawn on the same scale."""
    from .edits import crossings as find_crossings  # shapely only when painting

    if rect is None:
        dev = painter.device()
        rect = QRectF(0, 0, dev.width(), dev.height())
    painter.save()
    painter.setRenderHint(QPainter.Antialiasing, True)
    painter.setRenderHint(QPainter.TextAntialiasing, True)
    if background:
        painter.fillRect(rect, QColor(pal.paper))
    base = max(11.0, min(rect.width(), rect.height()) / 55)
    font = QFont()
    font.setPixelSize(int(base))
    painter.setFont(font)
    line_h = base * 1.45
    band = 0.0
    if caption:
        band += line_h * (2 if classification is not None or not scheme.members else 1) + base * 0.8
    if caution:
        band += line_h
    title_h = line_h * 1.3 if scheme.title and caption else 0.0
    draw_rect = QRectF(rect.left(), rect.top() + title_h, rect.width(), rect.height() - band - title_h)

    mode = first_mode(classification) if show_mode else None
    amp = mode_amplitude(scheme)
    xy = (lambda n: positions.get(n, scheme.node_xy(n))) if positions else scheme.node_xy
    disp: dict[str, tuple[float, float]] = {}
    if mode is not None:
        for nid, (dx, dy) in (getattr(mode, "displacements", {}) or {}).items():
            if nid in scheme.nodes:
                x, y = xy(nid)
                disp[nid] = (x + amp * dx, y + amp * dy)
    if transform is None:
        transform = ModelTransform.fit(scheme_bounds(scheme, positions, disp.values()), draw_rect,
                                       margin=max(36.0, 0.08 * min(draw_rect.width(), draw_rect.height())))
    T = transform
    hl = set(highlight)
    k = max(1.0, base / 9.5)  # symbols and line weights grow with large outputs

    def poly(points):
        return QPolygonF([T.map(x, y) for x, y in points])

    # highlight halos under everything
    if hl:
        painter.setPen(pen(QColor(pal.warning).lighter(115).name(), 9.0))
        for m in scheme.members.values():
            if m.id in hl:
                painter.drawPolyline(poly(_member_polyline(scheme, m, xy)))
        painter.setBrush(QBrush(QColor(pal.warning)))
        painter.setPen(Qt.NoPen)
        for nid in scheme.nodes:
            if nid in hl:
                painter.drawEllipse(T.map(*xy(nid)), 8, 8)

    # members
    for m in scheme.members.values():
        painter.setPen(pen(pal.ink if m.kind == "beam" else pal.bar_ink, k * (BEAM_W if m.kind == "beam" else BAR_W)))
        painter.drawPolyline(poly(_member_polyline(scheme, m, xy)))
    if crossings and not positions:
        for x, y, _under, over in find_crossings(scheme):
            om = scheme.members[over]
            a, b = T.map(*xy(om.start)), T.map(*xy(om.end))
            painter.save()
            painter.translate(T.map(x, y))
            painter.scale(k, k)
            draw_hop(painter, math.atan2(b.y() - a.y(), b.x() - a.x()), pal,
                     pal.ink if om.kind == "beam" else pal.bar_ink, BEAM_W if om.kind == "beam" else BAR_W)
            painter.restore()

    # release marks
    for m in scheme.members.values():
        for nid, words in ((m.start, m.releases_start), (m.end, m.releases_end)):
            if not words:
                continue
            pts = _member_polyline(scheme, m, xy)
            if nid == m.end:
                pts = pts[::-1]
            a, b = T.map(*pts[0]), T.map(*pts[1])
            painter.save()
            painter.translate(a)
            painter.scale(k, k)
            draw_releases(painter, words, math.atan2(b.y() - a.y(), b.x() - a.x()), pal)
            painter.restore()

    # supports, then joints on top
    for s in scheme.supports.values():
        if s.node not in scheme.nodes:
            continue
        painter.save()
        painter.translate(T.map(*xy(s.node)))
        painter.scale(k, k)
        draw_support(painter, s.kind, s.angle, pal, fixes=s.fix)
        painter.restore()
    for nid in scheme.nodes:
        painter.save()
        painter.translate(T.map(*xy(nid)))
        painter.scale(k, k)
        draw_node(painter, node_glyph(scheme, nid), pal)
        painter.restore()
    if show_ids:
        painter.setPen(pen(pal.muted))
        small = QFont(font)
        small.setPixelSize(max(9, int(base * 0.8)))
        painter.setFont(small)
        for nid in scheme.nodes:
            painter.drawText(T.map(*xy(nid)) + QPointF(6, -6), nid)
        for m in scheme.members.values():
            pts = _member_polyline(scheme, m, xy)
            mx, my = pts[len(pts) // 2] if len(pts) > 2 else ((pts[0][0] + pts[1][0]) / 2, (pts[0][1] + pts[1][1]) / 2)
            painter.drawText(T.map(mx, my) + QPointF(4, 12), m.id)
        painter.setFont(font)

    # first mechanism shape
    if disp:
        paint_mode_shape(painter, scheme, disp, T, pal, xy, k)

    # title, caption, caution
    painter.setPen(pen(pal.ink))
    if title_h:
        bold = QFont(font)
        bold.setBold(True)
        painter.setFont(bold)
        painter.drawText(QRectF(rect.left() + base, rect.top() + base * 0.4, rect.width() - 2 * base, line_h),
                         Qt.AlignLeft | Qt.AlignVCenter, scheme.title)
        painter.setFont(font)
    y = rect.bottom() - band + base * 0.4
    if caption:
        painter.setPen(pen(pal.grid_major, 1.0))
        painter.drawLine(QLineF(rect.left() + base, y, rect.right() - base, y))
        y += base * 0.4
        if not scheme.members:
            words, verdict = "Draw members to start", None
        elif classification is None:
            words, verdict = "Not analysed", None
        else:
            words, verdict = summary_of(classification), verdict_of(classification)
        draw_verdict_marker(painter, verdict, QPointF(rect.left() + base * 1.6, y + line_h / 2), base * 0.45, pal)
        bold = QFont(font)
        bold.setBold(True)
        painter.setFont(bold)
        painter.setPen(pen(pal.ink))
        text = words + ("   (dashed: first mechanism, scale arbitrary)" if disp else "")
        painter.drawText(QRectF(rect.left() + base * 2.6, y, rect.width() - base * 3.6, line_h),
                         Qt.AlignLeft | Qt.AlignVCenter, text)
        painter.setFont(font)
        y += line_h
        if classification is not None and scheme.members:
            painter.drawText(QRectF(rect.left() + base * 2.6, y, rect.width() - base * 3.6, line_h),
                             Qt.AlignLeft | Qt.AlignVCenter, hand_count_line(classification))
            y += line_h
    if caution:
        painter.setPen(pen(pal.muted))
        small = QFont(font)
        small.setPixelSize(max(9, int(base * 0.85)))
        small.setItalic(True)
        painter.setFont(small)
        painter.drawText(QRectF(rect.left() + base, y, rect.width() - 2 * base, line_h),
                         Qt.AlignLeft | Qt.AlignVCenter, CAUTION)
    painter.restore()
    return T


def paint_mode_shape(painter: QPainter, scheme: Scheme, displaced: Mapping[str, tuple[float, float]],
                     T: ModelTransform, pal: Palette = PALETTE, xy=None, k: float = 1.0) -> None:
    """The displaced shape (dashed) with the moving nodes' paths (thin arrows)."""
    xy = xy or scheme.node_xy
    dash = pen(pal.mechanism, 1.8 * k, Qt.DashLine)
    painter.setPen(dash)
    painter.setBrush(Qt.NoBrush)
    still = 1e-6 * scheme.size()
    for m in scheme.members.values():
        a = displaced.get(m.start, xy(m.start))
        b = displaced.get(m.end, xy(m.end))
        if math.dist(a, xy(m.start)) <= still and math.dist(b, xy(m.end)) <= still:
            continue  # a member that does not move is not drawn again
        painter.drawLine(T.map(*a), T.map(*b))
    thin = pen(pal.mechanism, 1.0 * k)
    for nid, (x1, y1) in displaced.items():
        x0, y0 = xy(nid)
        p0, p1 = T.map(x0, y0), T.map(x1, y1)
        if QLineF(p0, p1).length() < 3:
            continue
        painter.setPen(thin)
        painter.drawLine(p0, p1)
        ang = math.atan2(p1.y() - p0.y(), p1.x() - p0.x())
        for da in (2.6, -2.6):
            painter.drawLine(p1, p1 + QPointF(6 * k * math.cos(ang + da), 6 * k * math.sin(ang + da)))
        painter.setBrush(QBrush(QColor(pal.paper)))
        painter.setPen(pen(pal.mechanism, 1.4 * k))
        painter.drawEllipse(p1, 2.6 * k, 2.6 * k)
        painter.setBrush(Qt.NoBrush)


# ---------------------------------------------------------------------- files
def render_image(scheme: Scheme, classification=None, width: int = 1600, height: int = 1000,
                 dpr: float = 1.0, **kw):
    """A QImage of the scheme with its verdict (needs a Q(Gui)Application)."""
    from PySide6.QtGui import QImage

    img = QImage(int(width * dpr), int(height * dpr), QImage.Format_ARGB32_Premultiplied)
    img.setDevicePixelRatio(dpr)
    img.fill(QColor(PALETTE.paper))
    p = QPainter(img)
    paint_scheme(p, scheme, classification, QRectF(0, 0, width, height), **kw)
    p.end()
    return img


def save_png(path, scheme: Scheme, classification=None, width: int = 1600, height: int = 1000, **kw) -> None:
    """Write a PNG atomically (temporary file + rename)."""
    from kinestat.core.io import atomic_target

    img = render_image(scheme, classification, width, height, **kw)
    with atomic_target(path) as tmp:
        if not img.save(tmp, "PNG"):
            raise OSError(f"cannot write PNG to {path}")


def save_svg(path, scheme: Scheme, classification=None, width: int = 1600, height: int = 1000, **kw) -> None:
    """Write an SVG drawing atomically."""
    from PySide6.QtCore import QSize
    from PySide6.QtSvg import QSvgGenerator

    from kinestat.core.io import atomic_target

    with atomic_target(path) as tmp:
        gen = QSvgGenerator()
        gen.setFileName(tmp)
        gen.setSize(QSize(width, height))
        gen.setViewBox(QRectF(0, 0, width, height))
        gen.setTitle(scheme.title or "kinestat scheme")
        gen.setDescription(CAUTION)
        p = QPainter(gen)
        paint_scheme(p, scheme, classification, QRectF(0, 0, width, height), **kw)
        p.end()
        del p, gen  # the generator closes its file when it is destroyed

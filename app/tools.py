"""Canvas tools: mouse and key events (in model coordinates) -> Document edits.

Tools never touch items or the model directly: they build an edit with :mod:`.edits` and
commit it on the Document.  Each tool has a name, a key and a tooltip
(:data:`TOOL_SPECS`); the main window turns these into actions.
"""
from __future__ import annotations

import math
import re
from dataclasses import dataclass

from PySide6.QtCore import QPointF, QRectF, Qt
from PySide6.QtGui import QColor, QFont, QPolygonF

from kinestat.core.model import Scheme, Support

from . import drawing as dr
from . import edits
from .document import new_gesture
from .snapping import Snap, SnapIndex


@dataclass(frozen=True)
class ToolSpec:
    name: str
    label: str
    key: str
    tip: str


TOOL_SPECS = [
    ToolSpec("select", "Select / move", "V", "Click or box-select (Shift adds); drag nodes or members to move them"),
    ToolSpec("beam", "Beam", "B", "Draw beams click by click (carry moment); Esc ends the chain; Shift keeps 0/45/90 deg; "
                                   "type a length[,angle] and Enter; Ctrl-click joins at crossings"),
    ToolSpec("bar", "Bar", "T", "Draw pin-ended bars (axial force only), click by click; same keys as Beam"),
    ToolSpec("pin", "Pin support", "P", "Click a node: pin support (fixes both translations). [ ] or wheel turn it by 15 deg; type an angle"),
    ToolSpec("roller", "Roller support", "R", "Click a node: roller (fixes one translation). [ ] or wheel turn it by 15 deg; type an angle"),
    ToolSpec("fixed", "Fixed support", "F", "Click a node: fixed support (both translations and rotation)"),
    ToolSpec("guided", "Guided support", "G", "Click a node: guided support (one translation and rotation; slides across)"),
    ToolSpec("hinge", "Hinge at node", "H", "Click a node to put a full hinge there (every beam end released) or take it off"),
    ToolSpec("end_hinge", "Hinge at member end", "E", "Click a beam near one end: moment release at that end only"),
    ToolSpec("shear", "Shear release", "S", "Click a beam near one end: shear release at that end"),
    ToolSpec("axial", "Axial release", "A", "Click a beam near one end: axial release at that end"),
    ToolSpec("delete", "Delete", "D", "Click a member, node or support symbol to delete it"),
    ToolSpec("pan", "Pan", "M", "Drag to pan (also: middle button, or hold Space)"),
]


class ToolContext:
    """What tools share: the document, the view, a message line and tool settings."""

    def __init__(self, doc, view, message=lambda text: None):
        self.doc, self.view, self.message = doc, view, message
        self.support_angle = 90.0
        self._index: SnapIndex | None = None

    def index(self) -> SnapIndex:
        s = self.doc.scheme
        if self._index is None or self._index.scheme is not s:
            self._index = SnapIndex(s)
        return self._index

    def snap(self, x, y, *, index=None, anchor=None, ortho=False) -> Snap:
        v = self.view
        idx = index or self.index()
        if not v.snap_on:
            # nodes and members do not attract; the grid still does while it is shown
            grid = v.grid if v.grid_on else None
            if ortho and anchor is not None:
                return SnapIndex(Scheme()).snap(x, y, 0.0, grid=grid, anchor=anchor, ortho=True)
            if grid:
                return Snap(round(x / grid) * grid, round(y / grid) * grid, "grid")
            return Snap(x, y, "free")
        return idx.snap(x, y, v.tolerance(), grid=v.grid if v.grid_on else None, anchor=anchor, ortho=ortho)


def resolve_point(scheme, snap: Snap):
    """A node for a snapped point: the node itself, a split of the member, or a new node."""
    if snap.kind == "node" and snap.target in scheme.nodes:
        return scheme, snap.target
    hit = edits.node_at(scheme, snap.x, snap.y)
    if hit:
        return scheme, hit
    if snap.kind in ("member", "midpoint") and snap.target in scheme.members:
        return edits.split_member(scheme, snap.target, snap.x, snap.y)
    return edits.add_node(scheme, snap.x, snap.y)


def _fmt(v: float) -> str:
    return f"{v:.3f}".rstrip("0").rstrip(".") if abs(v) < 1e6 else f"{v:g}"


class Tool:
    name = ""
    cursor = Qt.ArrowCursor

    def __init__(self, ctx: ToolContext):
        self.ctx = ctx
        self.hover: Snap | None = None

    @property
    def doc(self):
        return self.ctx.doc

    @property
    def view(self):
        return self.ctx.view

    def activate(self) -> None:
        self.view.viewport().setCursor(self.cursor)
        self.ctx.message(self.hint())

    def deactivate(self) -> None:
        self.cancel()

    def hint(self) -> str:
        spec = next((t for t in TOOL_SPECS if t.name == self.name), None)
        return spec.tip if spec else ""

    def cancel(self) -> None:
        self.hover = None

    def press(self, ev, x, y) -> None: ...

    def move(self, ev, x, y) -> None: ...

    def release(self, ev, x, y) -> None: ...

    def leave(self) -> None:
        self.hover = None

    def key(self, ev) -> bool:
        if ev.key() == Qt.Key_Escape:
            self.cancel()
            return True
        return False

    def wheel(self, ev) -> bool:
        return False

    def accepts_entry(self) -> bool:
        return False

    def entry_label(self) -> str:
        return ""

    def typed(self, text: str) -> bool:
        return False

    def paint_overlay(self, painter, view) -> None:
        if self.hover is not None:
            paint_snap_marker(painter, view.map_model(self.hover.x, self.hover.y), self.hover.kind)


def paint_snap_marker(painter, p: QPointF, kind: str) -> None:
    pal = dr.PALETTE
    painter.setPen(dr.pen(pal.selection, 1.5))
    painter.setBrush(Qt.NoBrush)
    r = 6.0
    if kind == "node":
        painter.drawRect(QRectF(p.x() - r, p.y() - r, 2 * r, 2 * r))
    elif kind == "midpoint":
        painter.drawPolygon(QPolygonF([QPointF(p.x(), p.y() - r), QPointF(p.x() - r, p.y() + r * 0.8),
                                       QPointF(p.x() + r, p.y() + r * 0.8)]))
    elif kind == "member":
        painter.drawLine(QPointF(p.x() - r, p.y() - r), QPointF(p.x() + r, p.y() + r))
        painter.drawLine(QPointF(p.x() - r, p.y() + r), QPointF(p.x() + r, p.y() - r))
    elif kind == "grid":
        painter.drawLine(QPointF(p.x() - r, p.y()), QPointF(p.x() + r, p.y()))
        painter.drawLine(QPointF(p.x(), p.y() - r), QPointF(p.x(), p.y() + r))
    else:
        painter.drawEllipse(p, 2.5, 2.5)


def paint_label(painter, p: QPointF, text: str, colour: str | None = None) -> None:
    """A small boxed read-out next to the cursor."""
    pal = dr.PALETTE
    f = QFont()
    f.setPixelSize(12)
    painter.setFont(f)
    fm = painter.fontMetrics()
    w, h = fm.horizontalAdvance(text) + 12, fm.height() + 6
    r = QRectF(p.x() + 14, p.y() + 14, w, h)
    painter.setPen(dr.pen(pal.grid_major, 1.0))
    c = QColor("#ffffff")
    c.setAlpha(235)
    painter.setBrush(c)
    painter.drawRoundedRect(r, 3, 3)
    painter.setPen(dr.pen(colour or pal.ink))
    painter.drawText(r, Qt.AlignCenter, text)


# ====================================================================== select / move
class SelectTool(Tool):
    name = "select"

    def __init__(self, ctx):
        super().__init__(ctx)
        self._press: tuple[float, float] | None = None
        self._box: tuple[float, float, float, float] | None = None
        self._drag = None  # dict with gesture, start positions, grab node, index

    def cancel(self) -> None:
        if self._drag is not None and self._drag["moved"]:
            self.doc.move_nodes(self._drag["start"], gesture=self._drag["gesture"])
        self._drag = None
        self._box = None
        self._press = None
        self.hover = None

    def press(self, ev, x, y) -> None:
        if ev.button() != Qt.LeftButton:
            return
        shift = bool(ev.modifiers() & Qt.ShiftModifier)
        doc = self.doc
        hit = self.ctx.index().pick(x, y, self.view.tolerance())
        self._press = (x, y)
        if hit is None:
            self._box = (x, y, x, y)
            return
        kind, hid = hit
        if kind == "node":
            if shift:
                doc.select(nodes=[hid], toggle=True)
            elif hid not in doc.selected_nodes:
                doc.select(nodes=[hid])
        else:
            if shift:
                doc.select(members=[hid], toggle=True)
            elif hid not in doc.selected_members:
                doc.select(members=[hid])
        s = doc.scheme
        moving = set(doc.selected_nodes)
        for mid in doc.selected_members:
            moving |= {s.members[mid].start, s.members[mid].end}
        if kind == "node":
            grab = hid
            if hid not in moving:
                return
        else:
            m = s.members[hid]
            if hid not in doc.selected_members:
                return
            grab = min((m.start, m.end), key=lambda n: math.dist(s.node_xy(n), (x, y)))
        self._drag = {
            "gesture": new_gesture(),
            "start": {n: s.node_xy(n) for n in moving},
            "grab": grab,
            "offset": (s.node_xy(grab)[0] - x, s.node_xy(grab)[1] - y),
            "index": SnapIndex(s, exclude_nodes=moving),
            "moved": False,
            "snap": None,
        }

    def move(self, ev, x, y) -> None:
        if self._drag is not None and ev.buttons() & Qt.LeftButton:
            d = self._drag
            gx0, gy0 = d["start"][d["grab"]]
            ortho = bool(ev.modifiers() & Qt.ShiftModifier)
            tx, ty = x + d["offset"][0], y + d["offset"][1]
            if not d["moved"] and math.hypot(tx - gx0, ty - gy0) < 3 * self.view.units_per_px():
                return
            snap = self.ctx.snap(tx, ty, index=d["index"], anchor=(gx0, gy0), ortho=ortho)
            d["snap"] = snap
            dx, dy = snap.x - gx0, snap.y - gy0
            d["moved"] = True
            self.doc.move_nodes({n: (px + dx, py + dy) for n, (px, py) in d["start"].items()}, gesture=d["gesture"])
            self.hover = snap if snap.kind in ("node", "member", "midpoint") else None
            return
        if self._box is not None and ev.buttons() & Qt.LeftButton:
            self._box = (self._box[0], self._box[1], x, y)
            return
        hit = self.ctx.index().pick(x, y, self.view.tolerance())
        self.hover = None
        if hit is not None and hit[0] == "node":
            nx, ny = self.doc.scheme.node_xy(hit[1])
            self.hover = Snap(nx, ny, "node", hit[1])

    def release(self, ev, x, y) -> None:
        if ev.button() != Qt.LeftButton:
            return
        shift = bool(ev.modifiers() & Qt.ShiftModifier)
        if self._drag is not None:
            d, self._drag = self._drag, None
            snap = d["snap"]
            if d["moved"] and snap is not None and len(d["start"]) == 1:
                self._join_on_drop(d["grab"], snap, d["gesture"])
            elif d["moved"]:
                self.doc.commit("Move nodes", edits.join_coincident(self.doc.scheme, d["start"]), gesture=d["gesture"])
            self.hover = None
            return
        if self._box is not None:
            x0, y0, _, _ = self._box
            self._box = None
            if math.hypot(x - x0, y - y0) < 3 * self.view.units_per_px():
                if not shift:
                    self.doc.clear_selection()
                return
            nodes, members = self.ctx.index().in_box(x0, y0, x, y)
            self.doc.select(nodes, members, add=shift)

    def _join_on_drop(self, nid: str, snap: Snap, gesture: int) -> None:
        """A node dropped on another node merges with it; dropped on a member, joins it there."""
        s = self.doc.scheme
        if snap.kind == "node" and snap.target in s.nodes and snap.target != nid:
            self.doc.commit("Move node", edits.merge_nodes(s, keep=snap.target, drop=nid), gesture=gesture)
            self.ctx.message(f"Node {nid} joined to node {snap.target}")
        elif snap.kind in ("member", "midpoint") and snap.target in s.members:
            s2, new = edits.split_member(s, snap.target, snap.x, snap.y)
            if new != nid:
                s2 = edits.merge_nodes(s2, keep=new, drop=nid)
            self.doc.commit("Move node", s2, gesture=gesture)
            self.ctx.message(f"Node joined to member {snap.target}")
        else:
            self.doc.commit("Move node", edits.join_coincident(s, [nid]), gesture=gesture)

    def key(self, ev) -> bool:
        if ev.key() in (Qt.Key_Delete, Qt.Key_Backspace):
            delete_selection(self.doc)
            return True
        return super().key(ev)

    def paint_overlay(self, painter, view) -> None:
        super().paint_overlay(painter, view)
        if self._box is not None:
            x0, y0, x1, y1 = self._box
            a, b = view.map_model(x0, y0), view.map_model(x1, y1)
            c = QColor(dr.PALETTE.selection)
            c.setAlpha(28)
            painter.setBrush(c)
            painter.setPen(dr.pen(dr.PALETTE.selection, 1.0, Qt.DashLine))
            painter.drawRect(QRectF(a, b).normalized())
        if self._drag is not None and self._drag["moved"]:
            g = self._drag["grab"]
            if g in self.doc.scheme.nodes:
                x, y = self.doc.scheme.node_xy(g)
                paint_label(painter, view.map_model(x, y), f"x = {_fmt(x)}  y = {_fmt(y)} {self.doc.scheme.units}")


def delete_selection(doc) -> bool:
    if not doc.selected_nodes and not doc.selected_members:
        return False
    n, m = len(doc.selected_nodes), len(doc.selected_members)
    return doc.commit(f"Delete {n + m} item{'s' if n + m != 1 else ''}",
                      edits.delete(doc.scheme, doc.selected_nodes, doc.selected_members))


# ====================================================================== members
_ENTRY_SPLIT = re.compile(r"\s*[,<\s]\s*")


def parse_entry(text: str) -> list[float]:
    """'4' -> [4]; '4,30' / '4<30' / '4 30' -> [4, 30]; raises ValueError otherwise."""
    text = text.strip().lstrip("@")
    parts = [p for p in _ENTRY_SPLIT.split(text) if p]
    if not 1 <= len(parts) <= 2:
        raise ValueError(text)
    return [float(p) for p in parts]


class MemberTool(Tool):
    """Click-click chains of beams or bars."""

    cursor = Qt.CrossCursor

    def __init__(self, ctx, kind: str):
        super().__init__(ctx)
        self.kind = kind
        self.name = kind
        self.anchor: Snap | None = None
        self._crossing_preview: list[tuple[float, float]] = []
        self._ortho = False

    def cancel(self) -> None:
        self.anchor = None
        self.hover = None
        self._crossing_preview = []

    def accepts_entry(self) -> bool:
        return True

    def entry_label(self) -> str:
        return "length[,angle]:" if self.anchor else "start x,y:"

    def _snap(self, ev, x, y) -> Snap:
        self._ortho = bool(ev.modifiers() & Qt.ShiftModifier)
        a = (self.anchor.x, self.anchor.y) if self.anchor else None
        return self.ctx.snap(x, y, anchor=a, ortho=self._ortho and a is not None)

    def move(self, ev, x, y) -> None:
        self.hover = self._snap(ev, x, y)
        self._crossing_preview = self._crossings_to(self.hover) if self.anchor else []

    def _crossings_to(self, snap: Snap) -> list[tuple[float, float]]:
        import shapely

        idx = self.ctx.index()
        if idx.tree is None or (snap.x, snap.y) == (self.anchor.x, self.anchor.y):
            return []
        seg = shapely.LineString([(self.anchor.x, self.anchor.y), (snap.x, snap.y)])
        out = []
        ends = {(self.anchor.x, self.anchor.y), (snap.x, snap.y)}
        tol = self.view.tolerance() * 0.5
        for k in idx.tree.query(seg, predicate="intersects").tolist():
            inter = seg.intersection(idx.lines[k])
            if inter.geom_type != "Point":
                continue
            if any(math.dist(e, (inter.x, inter.y)) <= tol for e in ends):
                continue
            out.append((float(inter.x), float(inter.y)))
        return out

    def press(self, ev, x, y) -> None:
        if ev.button() == Qt.RightButton:
            self.cancel()
            return
        if ev.button() != Qt.LeftButton:
            return
        snap = self._snap(ev, x, y)
        join = bool(ev.modifiers() & Qt.ControlModifier)
        self.place(snap, join=join)

    def place(self, snap: Snap, join: bool = False) -> str | None:
        """Put the next point of the chain at ``snap``; returns the new member id (if one)."""
        if self.anchor is None:
            self.anchor = snap
            self.ctx.message(f"{self.kind.capitalize()} from ({_fmt(snap.x)}, {_fmt(snap.y)}): click the next point, "
                             "or type length[,angle] and Enter; Esc ends")
            return None
        if math.hypot(snap.x - self.anchor.x, snap.y - self.anchor.y) <= 1e-9 * max(1.0, self.doc.scheme.size()):
            return None
        s = self.doc.scheme
        a_snap = self.anchor
        if a_snap.kind == "node" and a_snap.target not in s.nodes:
            a_snap = Snap(a_snap.x, a_snap.y, "free")
        if a_snap.kind in ("member", "midpoint") and a_snap.target not in s.members:
            # the member was split meanwhile: find the piece again
            hit = SnapIndex(s).nearest_member(a_snap.x, a_snap.y, 1e-9 * max(1.0, s.size()) * 10)
            a_snap = Snap(a_snap.x, a_snap.y, "member", hit[0]) if hit else Snap(a_snap.x, a_snap.y, "free")
        s, a = resolve_point(s, a_snap)
        e_snap = snap
        if e_snap.kind in ("member", "midpoint") and e_snap.target in s.members:
            # the start may have split the same member: snap against the current pieces
            hit = SnapIndex(s).nearest_member(e_snap.x, e_snap.y, 1e-6 * max(1.0, s.size()))
            e_snap = Snap(e_snap.x, e_snap.y, "member", hit[0]) if hit else Snap(e_snap.x, e_snap.y, "free")
        s, b = resolve_point(s, e_snap)
        s, mid = edits.add_member(s, a, b, self.kind)
        if mid is None:
            return None
        if join:
            s = edits.join_crossings(s, [mid])
        self.doc.commit(f"Draw {self.kind}", s)
        bx, by = self.doc.scheme.node_xy(b)
        self.anchor = Snap(bx, by, "node", b)
        self._crossing_preview = []
        cr = edits.crossings(self.doc.scheme, [m for m in self.doc.scheme.members if m == mid])
        if cr and not join:
            self.ctx.message(f"{self.kind.capitalize()} {mid} crosses {len(cr)} member(s) without a joint "
                             "(drawn as a hop); Ctrl-click or Edit > Join at crossings joins them")
        else:
            self.ctx.message(f"{self.kind.capitalize()} {mid} drawn; click on, or Esc to end the chain")
        return mid

    def typed(self, text: str) -> bool:
        try:
            vals = parse_entry(text)
        except ValueError:
            self.ctx.message(f"Cannot read {text!r}: type a length, or length,angle (degrees)")
            return False
        if self.anchor is None:
            if len(vals) != 2:
                self.ctx.message("Type the start point as x,y")
                return False
            x, y = vals
            hit = edits.node_at(self.doc.scheme, x, y)
            self.place(Snap(x, y, "node", hit) if hit else Snap(x, y, "free"))
            return True
        length = vals[0]
        if len(vals) == 2:
            ang = math.radians(vals[1])
        elif self.hover is not None and (self.hover.x, self.hover.y) != (self.anchor.x, self.anchor.y):
            ang = math.atan2(self.hover.y - self.anchor.y, self.hover.x - self.anchor.x)
        else:
            ang = 0.0
        if length <= 0:
            self.ctx.message("A member needs a positive length")
            return False
        x = self.anchor.x + length * math.cos(ang)
        y = self.anchor.y + length * math.sin(ang)
        x, y = round(x, 12), round(y, 12)
        hit = edits.node_at(self.doc.scheme, x, y, tol=1e-9 * max(1.0, self.doc.scheme.size()))
        if hit:
            snap = Snap(*self.doc.scheme.node_xy(hit), "node", hit)
        else:
            on = self.ctx.index().nearest_member(x, y, 1e-9 * max(1.0, self.doc.scheme.size()))
            snap = Snap(x, y, "member", on[0]) if on else Snap(x, y, "free")
        self.place(snap)
        return True

    def paint_overlay(self, painter, view) -> None:
        pal = dr.PALETTE
        if self.anchor is not None and self.hover is not None:
            a = view.map_model(self.anchor.x, self.anchor.y)
            b = view.map_model(self.hover.x, self.hover.y)
            painter.setPen(dr.pen(pal.preview, dr.BEAM_W if self.kind == "beam" else dr.BAR_W, Qt.DashLine))
            painter.drawLine(a, b)
            for cx, cy in self._crossing_preview:
                c = view.map_model(cx, cy)
                painter.setPen(dr.pen(pal.free_node, 1.5))
                painter.setBrush(Qt.NoBrush)
                painter.drawEllipse(c, 6, 6)
            dx, dy = self.hover.x - self.anchor.x, self.hover.y - self.anchor.y
            L = math.hypot(dx, dy)
            ang = math.degrees(math.atan2(dy, dx)) if L else 0.0
            text = f"L = {_fmt(L)} {self.doc.scheme.units}   angle {ang:.1f}\u00b0"
            if self._crossing_preview:
                text += f"   crosses {len(self._crossing_preview)} (not joined; Ctrl joins)"
            paint_label(painter, b, text)
        super().paint_overlay(painter, view)


# ====================================================================== supports
class SupportTool(Tool):
    cursor = Qt.PointingHandCursor

    def __init__(self, ctx, kind: str):
        super().__init__(ctx)
        self.kind = kind
        self.name = kind

    def accepts_entry(self) -> bool:
        return True

    def entry_label(self) -> str:
        return "support angle (deg):"

    def _target(self, x, y) -> Snap | None:
        idx = self.ctx.index()
        tol = self.view.tolerance()
        n = idx.nearest_node(x, y, tol * 1.6)
        if n:
            return Snap(*self.doc.scheme.node_xy(n[0]), "node", n[0])
        snap = self.ctx.snap(x, y)
        return snap if snap.kind in ("member", "midpoint") else None

    def move(self, ev, x, y) -> None:
        self.hover = self._target(x, y)

    def press(self, ev, x, y) -> None:
        if ev.button() != Qt.LeftButton:
            return
        t = self._target(x, y)
        if t is None:
            self.ctx.message("Click a node (or a point on a member) to place the support")
            return
        s, nid = resolve_point(self.doc.scheme, t)
        old = s.supports.get(nid)
        sup = Support(nid, self.kind, self.ctx.support_angle)
        if old == sup:
            return
        self.doc.commit(f"{self.kind.capitalize()} support at {nid}", edits.set_support(s, nid, sup))
        self.ctx.message(f"{self.kind.capitalize()} support at node {nid}, angle {self.ctx.support_angle:g} deg")

    def rotate(self, steps: int) -> None:
        self.ctx.support_angle = (self.ctx.support_angle + 15.0 * steps) % 360.0
        self.ctx.message(f"Support angle {self.ctx.support_angle:g} deg (reaction direction, counter-clockwise from +x)")

    def key(self, ev) -> bool:
        if ev.key() in (Qt.Key_BracketRight, Qt.Key_Plus):
            self.rotate(1)
            return True
        if ev.key() in (Qt.Key_BracketLeft, Qt.Key_Minus):
            self.rotate(-1)
            return True
        return super().key(ev)

    def wheel(self, ev) -> bool:
        d = ev.angleDelta().y()
        if d:
            self.rotate(1 if d > 0 else -1)
        return True

    def typed(self, text: str) -> bool:
        try:
            (a,) = parse_entry(text)
        except ValueError:
            self.ctx.message(f"Cannot read {text!r}: type an angle in degrees")
            return False
        self.ctx.support_angle = a % 360.0
        self.ctx.message(f"Support angle {self.ctx.support_angle:g} deg")
        return True

    def paint_overlay(self, painter, view) -> None:
        super().paint_overlay(painter, view)
        pos = None
        if self.hover is not None:
            pos = view.map_model(self.hover.x, self.hover.y)
        elif view.cursor_model is not None:
            pos = view.map_model(*view.cursor_model)
        if pos is None:
            return
        painter.save()
        painter.setOpacity(0.6)
        painter.translate(pos)
        dr.draw_support(painter, self.kind, self.ctx.support_angle, dr.PALETTE, dr.PALETTE.preview)
        painter.restore()
        paint_label(painter, pos + QPointF(0, 18), f"{self.kind}  {self.ctx.support_angle:g}\u00b0   [ ] or wheel: turn")


# ====================================================================== hinges and releases
class HingeTool(Tool):
    name = "hinge"
    cursor = Qt.PointingHandCursor

    def move(self, ev, x, y) -> None:
        n = self.ctx.index().nearest_node(x, y, self.view.tolerance() * 1.5)
        self.hover = Snap(*self.doc.scheme.node_xy(n[0]), "node", n[0]) if n else None

    def press(self, ev, x, y) -> None:
        if ev.button() != Qt.LeftButton:
            return
        n = self.ctx.index().nearest_node(x, y, self.view.tolerance() * 1.5)
        if not n:
            self.ctx.message("Click a node to put a hinge there or take it off")
            return
        nid = n[0]
        on = not self.doc.scheme.nodes[nid].hinge
        self.doc.commit(f"{'Hinge' if on else 'No hinge'} at {nid}", edits.set_hinge(self.doc.scheme, nid, on))
        self.ctx.message(f"Full hinge at node {nid} {'on' if on else 'off'}")


class EndReleaseTool(Tool):
    """Toggle a release word at the member end nearest the click."""

    cursor = Qt.PointingHandCursor
    WORD_NAMES = {"moment": "Hinge (moment release)", "shear": "Shear release", "axial": "Axial release"}

    def __init__(self, ctx, word: str, name: str):
        super().__init__(ctx)
        self.word, self.name = word, name
        self._end: tuple[str, str] | None = None

    def _find(self, x, y):
        m = self.ctx.index().nearest_member(x, y, self.view.tolerance() * 1.5)
        if not m:
            return None
        end = edits.end_near(self.doc.scheme, m[0], x, y)
        return (m[0], end) if end else None

    def move(self, ev, x, y) -> None:
        self._end = self._find(x, y)
        self.hover = None

    def press(self, ev, x, y) -> None:
        if ev.button() != Qt.LeftButton:
            return
        found = self._find(x, y)
        if found is None:
            self.ctx.message("Click a beam near the end you want to release")
            return
        mid, nid = found
        s = self.doc.scheme
        m = s.members[mid]
        if m.kind == "bar":
            self.ctx.message(f"Member {mid} is a bar: pin-ended already, releases apply to beams only")
            return
        on = self.word not in m.releases_at(nid)
        self.doc.commit(f"{self.WORD_NAMES[self.word]} {'on' if on else 'off'} at {mid}/{nid}",
                        edits.set_release(s, mid, nid, self.word, on))
        self.ctx.message(f"{self.WORD_NAMES[self.word]} {'on' if on else 'off'} at the {nid} end of member {mid}")

    def paint_overlay(self, painter, view) -> None:
        if self._end is None:
            return
        mid, nid = self._end
        s = self.doc.scheme
        if mid not in s.members or nid not in s.nodes:
            return
        m = s.members[mid]
        a = view.map_model(*s.node_xy(nid))
        b = view.map_model(*s.node_xy(m.other_end(nid)))
        ang = math.atan2(b.y() - a.y(), b.x() - a.x())
        painter.save()
        painter.translate(a)
        dr.draw_releases(painter, {self.word}, ang, dr.PALETTE, dr.PALETTE.preview)
        painter.restore()
        paint_label(painter, a, f"{self.WORD_NAMES[self.word]}: {mid} at {nid}")


# ====================================================================== delete, pan
class DeleteTool(Tool):
    name = "delete"
    cursor = Qt.PointingHandCursor

    def _find(self, x, y):
        tol = self.view.tolerance()
        s = self.doc.scheme
        idx = self.ctx.index()
        n = idx.nearest_node(x, y, tol)
        if n:
            return ("node", n[0])
        # a support symbol sits on the ground side of its node
        upp = self.view.units_per_px()
        for sup in s.supports.values():
            nx, ny = s.node_xy(sup.node)
            a = math.radians(sup.angle)
            cx, cy = nx - math.cos(a) * dr.SUPPORT * upp, ny - math.sin(a) * dr.SUPPORT * upp
            if math.hypot(x - cx, y - cy) <= dr.SUPPORT * upp:
                return ("support", sup.node)
        m = idx.nearest_member(x, y, tol)
        if m:
            return ("member", m[0])
        return None

    def move(self, ev, x, y) -> None:
        f = self._find(x, y)
        self.hover = None
        self._found = f

    def press(self, ev, x, y) -> None:
        if ev.button() != Qt.LeftButton:
            return
        f = self._find(x, y)
        if f is None:
            return
        kind, fid = f
        s = self.doc.scheme
        if kind == "support":
            self.doc.commit(f"Remove support at {fid}", s.without_support(fid))
        elif kind == "node":
            self.doc.commit(f"Delete node {fid}", edits.delete(s, [fid], []))
        else:
            self.doc.commit(f"Delete member {fid}", edits.delete(s, [], [fid]))
        self.ctx.message(f"Deleted {kind} {fid}")

    def paint_overlay(self, painter, view) -> None:
        f = getattr(self, "_found", None)
        if not f:
            return
        kind, fid = f
        s = self.doc.scheme
        pal = dr.PALETTE
        if kind in ("node", "support") and fid in s.nodes:
            p = view.map_model(*s.node_xy(fid))
            paint_label(painter, p, f"delete {kind} {fid}", pal.mechanism)
        elif kind == "member" and fid in s.members:
            m = s.members[fid]
            a, b = view.map_model(*s.node_xy(m.start)), view.map_model(*s.node_xy(m.end))
            painter.setPen(dr.pen(pal.mechanism, 4.0))
            painter.drawLine(a, b)
            paint_label(painter, (a + b) / 2, f"delete member {fid}", pal.mechanism)


class PanTool(Tool):
    name = "pan"
    cursor = Qt.OpenHandCursor

    def __init__(self, ctx):
        super().__init__(ctx)
        self._last = None

    def press(self, ev, x, y) -> None:
        self._last = ev.position()
        self.view.viewport().setCursor(Qt.ClosedHandCursor)

    def move(self, ev, x, y) -> None:
        if self._last is not None and ev.buttons():
            d = ev.position() - self._last
            self._last = ev.position()
            self.view.pan_pixels(d.x(), d.y())

    def release(self, ev, x, y) -> None:
        self._last = None
        self.view.viewport().setCursor(self.cursor)


def make_tools(ctx: ToolContext) -> dict[str, Tool]:
    return {
        "select": SelectTool(ctx),
        "beam": MemberTool(ctx, "beam"),
        "bar": MemberTool(ctx, "bar"),
        "pin": SupportTool(ctx, "pin"),
        "roller": SupportTool(ctx, "roller"),
        "fixed": SupportTool(ctx, "fixed"),
        "guided": SupportTool(ctx, "guided"),
        "hinge": HingeTool(ctx),
        "end_hinge": EndReleaseTool(ctx, "moment", "end_hinge"),
        "shear": EndReleaseTool(ctx, "shear", "shear"),
        "axial": EndReleaseTool(ctx, "axial", "axial"),
        "delete": DeleteTool(ctx),
        "pan": PanTool(ctx),
    }

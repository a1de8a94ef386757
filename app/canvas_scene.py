"""The canvas scene: items keyed by model ids, kept in step with the Document.

``doc.changed(change)`` updates only the items whose ids the change names (and the
members at moved nodes); ``None`` rebuilds everything.  Unjoined crossings are drawn as
hops; the first mechanism shape and warning highlights are overlays set from outside.
"""
from __future__ import annotations

from PySide6.QtCore import QPointF, QRectF, QTimer
from PySide6.QtWidgets import QGraphicsScene

from kinestat.core.model import arc_points

from . import drawing as dr
from .canvas_items import HopItem, MemberItem, ModeItem, NodeItem, ReleaseItem, SupportItem, screen_direction, to_scene
from .edits import crossings


def to_model(p: QPointF) -> tuple[float, float]:
    return (p.x(), -p.y())


class CanvasScene(QGraphicsScene):
    def __init__(self, doc, parent=None):
        super().__init__(parent if parent is not None else doc)
        # items move all the time (drags) and picking is done on the model: no BSP index
        self.setItemIndexMethod(QGraphicsScene.NoIndex)
        self.doc = doc
        self.node_items: dict[str, NodeItem] = {}
        self.member_items: dict[str, MemberItem] = {}
        self.support_items: dict[str, SupportItem] = {}
        self.release_items: dict[tuple[str, str], ReleaseItem] = {}
        self.hop_items: list[HopItem] = []
        self.highlighted: set[str] = set()
        self.show_ids = False
        self.show_mode = True
        self.classification = None
        self.units_per_px = 0.02
        self._at_node: dict[str, set[str]] = {}
        self.mode_item = ModeItem()
        self.addItem(self.mode_item)
        # crossings are recomputed shortly after edits (not on every drag frame)
        self._cross_timer = QTimer(self)
        self._cross_timer.setSingleShot(True)
        self._cross_timer.setInterval(150)
        self._cross_timer.timeout.connect(self.update_crossings)
        doc.changed.connect(self._on_changed)
        doc.selection_changed.connect(self._on_selection_changed)
        self.rebuild()

    # ------------------------------------------------------------------ sync with the model
    def rebuild(self) -> None:
        for d in (self.node_items, self.member_items, self.support_items, self.release_items):
            for it in d.values():
                self.removeItem(it)
            d.clear()
        s = self.doc.scheme
        self._at_node = {nid: set() for nid in s.nodes}
        for m in s.members.values():
            self._at_node.setdefault(m.start, set()).add(m.id)
            self._at_node.setdefault(m.end, set()).add(m.id)
        for mid in s.members:
            self._update_member(mid)
        for nid in s.nodes:
            self._update_node(nid)
        for nid in s.supports:
            self._update_support(nid)
        self.update_crossings()
        self._on_selection_changed()
        self.set_classification(self.classification if s.members else None)

    def _on_changed(self, change) -> None:
        if change is None:
            self.rebuild()
            return
        s = self.doc.scheme
        nodes = set(change.nodes)
        members = set(change.members)
        for mid, (before, after) in change.members.items():
            for m, add in ((before, False), (after, True)):
                if m is None:
                    continue
                for nid in (m.start, m.end):
                    (self._at_node.setdefault(nid, set()).add if add else self._at_node.setdefault(nid, set()).discard)(mid)
                    nodes.add(nid)
        for nid in list(nodes):
            members |= self._at_node.get(nid, set())
        for mid in members:
            self._update_member(mid)
        for nid in nodes:
            self._update_node(nid)
            if nid not in s.nodes:
                self._at_node.pop(nid, None)
        for nid in set(change.supports) | (nodes & (set(s.supports) | set(self.support_items))):
            self._update_support(nid)
        self._cross_timer.start()

    def _update_member(self, mid: str) -> None:
        s = self.doc.scheme
        m = s.members.get(mid)
        it = self.member_items.get(mid)
        for nid_end in list(k for k in self.release_items if k[0] == mid):
            if m is None or nid_end[1] not in (m.start, m.end) or not m.releases_at(nid_end[1]):
                self.removeItem(self.release_items.pop(nid_end))
        if m is None:
            if it is not None:
                self.removeItem(self.member_items.pop(mid))
            return
        if it is None:
            it = MemberItem(mid)
            self.member_items[mid] = it
            self.addItem(it)
            if mid in self.doc.selected_members or mid in self.highlighted:
                it.set_state(mid in self.doc.selected_members, mid in self.highlighted)
        pa, pb = s.node_xy(m.start), s.node_xy(m.end)
        it.set_geometry(pa, pb, m.rise, m.kind)
        pts = arc_points(pa, pb, m.rise, 8) if m.rise else [pa, pb]
        for nid, words, a, b in ((m.start, m.releases_start, pts[0], pts[1]), (m.end, m.releases_end, pts[-1], pts[-2])):
            if not words:
                continue
            key = (mid, nid)
            r = self.release_items.get(key)
            if r is None:
                r = ReleaseItem(mid, nid)
                self.release_items[key] = r
                self.addItem(r)
            r.words = words
            r.direction = screen_direction(a, b)
            r.selected = mid in self.doc.selected_members
            r.setPos(to_scene(*a))
            r.update()

    def _update_node(self, nid: str) -> None:
        s = self.doc.scheme
        n = s.nodes.get(nid)
        it = self.node_items.get(nid)
        if n is None:
            if it is not None:
                self.removeItem(self.node_items.pop(nid))
            return
        if it is None:
            it = NodeItem(nid)
            self.node_items[nid] = it
            self.addItem(it)
            if nid in self.doc.selected_nodes or nid in self.highlighted:
                it.set_state(nid in self.doc.selected_nodes, nid in self.highlighted)
        glyph = "hinge" if n.hinge else None
        if glyph is None:
            kinds = {s.members[mid].kind for mid in self._at_node.get(nid, ()) if mid in s.members}
            glyph = "free" if not kinds else ("pin" if kinds == {"bar"} else "rigid")
        it.set_glyph(glyph, nid if self.show_ids else None)
        it.setPos(to_scene(n.x, n.y))

    def _update_support(self, nid: str) -> None:
        s = self.doc.scheme
        sup = s.supports.get(nid) if nid in s.nodes else None
        it = self.support_items.get(nid)
        if sup is None:
            if it is not None:
                self.removeItem(self.support_items.pop(nid))
            return
        if it is None:
            it = SupportItem(nid)
            self.support_items[nid] = it
            self.addItem(it)
        it.kind, it.angle, it.fixes = sup.kind, sup.angle, sup.fix
        it.selected = nid in self.doc.selected_nodes
        it.setPos(to_scene(*s.node_xy(nid)))
        it.update()

    def update_crossings(self) -> None:
        for h in self.hop_items:
            self.removeItem(h)
        self.hop_items = []
        s = self.doc.scheme
        for x, y, _under, over in crossings(s):
            m = s.members[over]
            h = HopItem(screen_direction(s.node_xy(m.start), s.node_xy(m.end)), m.kind)
            h.setPos(to_scene(x, y))
            self.addItem(h)
            self.hop_items.append(h)

    # ------------------------------------------------------------------ state from outside
    def _on_selection_changed(self) -> None:
        sn, sm = self.doc.selected_nodes, self.doc.selected_members
        for items, chosen in ((self.node_items, sn), (self.support_items, sn), (self.member_items, sm)):
            for key, it in items.items():
                if it.selected != (key in chosen):
                    it.set_state(selected=key in chosen)
        for (mid, _), it in self.release_items.items():
            if it.selected != (mid in sm):
                it.set_state(selected=mid in sm)

    def set_highlight(self, ids) -> None:
        """Highlight nodes and members by id (warnings); empty to clear."""
        old, self.highlighted = self.highlighted, set(ids)
        for key in old ^ self.highlighted:
            it = self.node_items.get(key) or self.member_items.get(key)
            if it is not None:
                it.set_state(highlighted=key in self.highlighted)

    def set_show_ids(self, on: bool) -> None:
        self.show_ids = on
        for nid in self.node_items:
            self._update_node(nid)

    def set_units_per_px(self, u: float) -> None:
        """The view's zoom changed: member items pad their bounds by a few pixels."""
        if abs(u - self.units_per_px) <= 1e-12 * u:
            return
        self.units_per_px = u
        for it in self.member_items.values():
            it.set_pad(6 * u)

    def set_classification(self, c) -> None:
        """Show the first mechanism shape of an unstable result (or nothing)."""
        self.classification = c
        mode = dr.first_mode(c) if self.show_mode else None
        s = self.doc.scheme
        disp = {}
        if mode is not None:
            amp = dr.mode_amplitude(s)
            for nid, (dx, dy) in mode.displacements.items():
                if nid in s.nodes:
                    x, y = s.node_xy(nid)
                    disp[nid] = (x + amp * dx, y + amp * dy)
        self.mode_item.set_shape(s, disp)

    def set_show_mode(self, on: bool) -> None:
        self.show_mode = on
        self.set_classification(self.classification)

    def model_rect(self) -> QRectF:
        """Scene rectangle of the drawing (for fit to view)."""
        s = self.doc.scheme
        under = getattr(self, "underlay_item", None)  # app/underlay.py: a shown sketch is fitted too
        under = under.sceneBoundingRect() if under is not None and under.isVisible() else None
        if not s.nodes:
            return under if under is not None else QRectF(-1, -6, 12, 8)
        x0, y0, x1, y1 = dr.scheme_bounds(s, extra=self.mode_item.displaced.values())
        r = QRectF(QPointF(x0, -y1), QPointF(x1, -y0))
        return r if under is None else r.united(under)


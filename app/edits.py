"""Scheme edits as pure functions (no Qt): each takes a :class:`Scheme` and returns a new one.

The canvas tools and the panels build an edit here and hand the result to
``Document.commit``, which turns it into one undoable change.  Geometry (where members
cross, where a point lies along a member) uses shapely.
"""
from __future__ import annotations

import math
from dataclasses import replace
from typing import Iterable

import shapely
from shapely.geometry import LineString, Point

from kinestat.core.model import Member, Node, Scheme, Support, arc_points


def member_line(scheme: Scheme, m: Member, positions=None) -> LineString:
    """The member's centre line (a polyline for a curved member)."""
    pa = positions[m.start] if positions and m.start in positions else scheme.node_xy(m.start)
    pb = positions[m.end] if positions and m.end in positions else scheme.node_xy(m.end)
    return LineString(arc_points(pa, pb, m.rise) if m.rise else [pa, pb])


def node_tolerance(scheme: Scheme) -> float:
    """Distance under which two points count as one (relative to the scheme's size)."""
    return 1e-9 * max(scheme.size(), 1.0)


def add_node(scheme: Scheme, x: float, y: float) -> tuple[Scheme, str]:
    nid = scheme.new_id("N")
    return scheme.with_node(Node(nid, float(x), float(y))), nid


def node_at(scheme: Scheme, x: float, y: float, tol: float | None = None) -> str | None:
    """The id of a node at (x, y), if any."""
    tol = node_tolerance(scheme) if tol is None else tol
    for n in scheme.nodes.values():
        if abs(n.x - x) <= tol and abs(n.y - y) <= tol:
            return n.id
    return None


def _sub_rise(m: Member, chord_full: float, chord_part: float) -> float:
    """Mid-ordinate of a piece of a circular-arc member with the given chord (same circle)."""
    if not m.rise:
        return 0.0
    r = (chord_full ** 2 / 4 + m.rise ** 2) / (2 * abs(m.rise))
    s = r - math.sqrt(max(r * r - chord_part ** 2 / 4, 0.0))
    return math.copysign(s, m.rise)


def split_member(scheme: Scheme, member_id: str, x: float, y: float) -> tuple[Scheme, str]:
    """Split a member at the point of it nearest (x, y); returns the scheme and the new node id.

    The first piece keeps the member's id and its start releases, the second piece gets
    a new id and the end releases; the new joint is continuous (no releases).
    """
    m = scheme.members[member_id]
    line = member_line(scheme, m)
    p = line.interpolate(line.project(Point(x, y)))
    px, py = float(p.x), float(p.y)
    for nid in (m.start, m.end):
        nx, ny = scheme.node_xy(nid)
        if math.hypot(nx - px, ny - py) <= node_tolerance(scheme) * 10:
            return scheme, nid
    scheme, nid = add_node(scheme, px, py)
    a, b = scheme.node_xy(m.start), scheme.node_xy(m.end)
    full = math.dist(a, b)
    first = replace(m, end=nid, releases_end=frozenset(), rise=_sub_rise(m, full, math.dist(a, (px, py))))
    second_id = scheme.new_id("M")
    second = replace(m, id=second_id, start=nid, releases_start=frozenset(),
                     rise=_sub_rise(m, full, math.dist((px, py), b)))
    return scheme.with_member(first).with_member(second), nid


def add_member(scheme: Scheme, a: str, b: str, kind: str = "beam") -> tuple[Scheme, str | None]:
    """A new member between two existing nodes (None if they are the same node)."""
    if a == b:
        return scheme, None
    mid = scheme.new_id("M")
    return scheme.with_member(Member(mid, a, b, kind)), mid


def crossings(scheme: Scheme, member_ids: Iterable[str] | None = None) -> list[tuple[float, float, str, str]]:
    """Points where two members cross without sharing a node there: (x, y, under, over).

    ``over`` is the member later in the scheme (drawn with a hop on the canvas).  With
    ``member_ids`` only crossings involving those members are listed.
    """
    ids = list(scheme.members)
    if len(ids) < 2:
        return []
    lines = [member_line(scheme, scheme.members[i]) for i in ids]
    tree = shapely.STRtree(lines)
    order = {mid: k for k, mid in enumerate(ids)}
    wanted = set(ids if member_ids is None else member_ids)
    tol = node_tolerance(scheme) * 1e3
    out = []
    left, right = tree.query(lines, predicate="intersects")
    for i, j in zip(left.tolist(), right.tolist()):
        if i >= j:
            continue
        mi, mj = scheme.members[ids[i]], scheme.members[ids[j]]
        if ids[i] not in wanted and ids[j] not in wanted:
            continue
        inter = lines[i].intersection(lines[j])
        pts = []
        if inter.geom_type == "Point":
            pts = [inter]
        elif inter.geom_type == "MultiPoint":
            pts = list(inter.geoms)
        for p in pts:
            if any(math.dist(scheme.node_xy(n), (p.x, p.y)) <= tol for n in (mi.start, mi.end, mj.start, mj.end)):
                continue  # meets at an end: a joint or a touch, not a crossing
            under, over = (ids[i], ids[j]) if order[ids[i]] < order[ids[j]] else (ids[j], ids[i])
            out.append((float(p.x), float(p.y), under, over))
    return out


def join_crossings(scheme: Scheme, member_ids: Iterable[str] | None = None) -> Scheme:
    """Join members where they cross (split both and share a new node), as asked by the user.

    With ``member_ids`` only the crossings of those members (and of their pieces) are joined.
    """
    track = None if member_ids is None else set(member_ids)
    for _ in range(10000):
        found = crossings(scheme, track)
        if not found:
            return scheme
        x, y, under, over = found[0]
        before = set(scheme.members)
        scheme, nid = split_member(scheme, under, x, y)
        if track is not None and under in track:
            track |= set(scheme.members) - before
        before = set(scheme.members)
        scheme = _split_through(scheme, over, x, y, nid)
        if track is not None and over in track:
            track |= set(scheme.members) - before
    return scheme


def _split_through(scheme: Scheme, member_id: str, x: float, y: float, nid: str) -> Scheme:
    """Split ``member_id`` at (x, y) and put the new joint onto the existing node ``nid``."""
    scheme, tmp = split_member(scheme, member_id, x, y)
    if tmp == nid:
        return scheme
    return merge_nodes(scheme, keep=nid, drop=tmp)


def merge_nodes(scheme: Scheme, keep: str, drop: str) -> Scheme:
    """Put node ``drop`` onto ``keep``: its members re-attach, members that collapse go.

    A support on ``drop`` moves to ``keep`` if ``keep`` has none; a full hinge on either stays.
    """
    if keep == drop:
        return scheme
    kn, dn = scheme.nodes[keep], scheme.nodes[drop]
    members = {}
    for m in scheme.members.values():
        if drop in (m.start, m.end):
            m = replace(m, start=keep if m.start == drop else m.start, end=keep if m.end == drop else m.end)
            if m.start == m.end:
                continue
        members[m.id] = m
    supports = {k: v for k, v in scheme.supports.items() if k != drop}
    if drop in scheme.supports and keep not in scheme.supports:
        supports[keep] = replace(scheme.supports[drop], node=keep)
    nodes = {k: v for k, v in scheme.nodes.items() if k != drop}
    nodes[keep] = replace(kn, hinge=kn.hinge or dn.hinge)
    return replace(scheme, nodes=nodes, members=members, supports=supports)


def join_coincident(scheme: Scheme, node_ids: Iterable[str]) -> Scheme:
    """Merge each of ``node_ids`` into another node at the same place, if there is one
    (a member never ends up with both ends at one point)."""
    for nid in list(node_ids):
        if nid not in scheme.nodes:
            continue
        x, y = scheme.node_xy(nid)
        tol = node_tolerance(scheme) * 10
        other = next((n.id for n in scheme.nodes.values()
                      if n.id != nid and abs(n.x - x) <= tol and abs(n.y - y) <= tol), None)
        if other is not None:
            scheme = merge_nodes(scheme, keep=other, drop=nid)
    return scheme


def delete(scheme: Scheme, node_ids: Iterable[str] = (), member_ids: Iterable[str] = ()) -> Scheme:
    """Delete members and nodes (with their members and supports); nodes left with nothing go too."""
    node_ids, member_ids = set(node_ids), set(member_ids)
    gone = {m.id for m in scheme.members.values() if m.id in member_ids or m.start in node_ids or m.end in node_ids}
    touched = {n for mid in gone for n in (scheme.members[mid].start, scheme.members[mid].end)}
    out = scheme.without_members(gone)
    used = {n for m in out.members.values() for n in (m.start, m.end)}
    orphans = {n for n in touched if n not in used}
    return out.without_nodes(node_ids | orphans)


def set_support(scheme: Scheme, node_id: str, support: Support | None) -> Scheme:
    if support is None:
        return scheme.without_support(node_id)
    return scheme.with_support(replace(support, node=node_id))


def set_hinge(scheme: Scheme, node_id: str, on: bool) -> Scheme:
    return scheme.with_node(replace(scheme.nodes[node_id], hinge=bool(on)))


def set_release(scheme: Scheme, member_id: str, node_id: str, word: str, on: bool) -> Scheme:
    """Set or clear one release word at the end of ``member_id`` that sits on ``node_id``.

    Only beams take releases (a bar is pin-ended already); asking for one on a bar turns the
    member into a beam first, so the end keeps its meaning.
    """
    m = scheme.members[member_id]
    field_ = "releases_start" if node_id == m.start else "releases_end"
    words = set(getattr(m, field_))
    words = words | {word} if on else words - {word}
    m = replace(m, **{field_: frozenset(words)})
    return scheme.with_member(m)


def set_member_kind(scheme: Scheme, member_id: str, kind: str) -> Scheme:
    m = scheme.members[member_id]
    if kind == "bar":
        m = replace(m, kind="bar", releases_start=frozenset(), releases_end=frozenset(), rise=0.0)
    else:
        m = replace(m, kind=kind)
    return scheme.with_member(m)


def insert(scheme: Scheme, part: Scheme, dx: float = 0.0, dy: float = 0.0) -> tuple[Scheme, list[str], list[str]]:
    """Add the nodes, members and supports of ``part`` (shifted) under fresh ids.

    Nodes of ``part`` that land on existing nodes are joined to them.
    Returns the scheme and the new node and member ids.
    """
    ids: dict[str, str] = {}
    new_nodes, new_members = [], []
    for n in part.nodes.values():
        x, y = n.x + dx, n.y + dy
        hit = node_at(scheme, x, y, tol=1e-9 * max(scheme.size(), part.size(), 1.0))
        if hit:
            ids[n.id] = hit
            continue
        scheme, nid = add_node(scheme, x, y)
        if n.hinge:
            scheme = set_hinge(scheme, nid, True)
        ids[n.id] = nid
        new_nodes.append(nid)
    for m in part.members.values():
        mid = scheme.new_id("M")
        scheme = scheme.with_member(replace(m, id=mid, start=ids[m.start], end=ids[m.end]))
        new_members.append(mid)
    for s in part.supports.values():
        scheme = scheme.with_support(replace(s, node=ids[s.node]))
    return scheme, new_nodes, new_members


def end_near(scheme: Scheme, member_id: str, x: float, y: float, reach: float = 0.4) -> str | None:
    """The end node of a member that (x, y) is near: within ``reach`` of the length from it."""
    m = scheme.members[member_id]
    line = member_line(scheme, m)
    if line.length == 0:
        return None
    t = line.project(Point(x, y), normalized=True)
    if t <= reach:
        return m.start
    if t >= 1 - reach:
        return m.end
    return None

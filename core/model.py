"""The scheme model: nodes, members, supports of a 2D framing scheme.

Everything here is an immutable value.  A :class:`Scheme` is never edited in place: the
``with_*`` / ``without_*`` methods return a new scheme, which is what the app's undo stack
and the background analysis rely on (a snapshot can be handed to another thread as is).

Ids are strings chosen by the user or generated (``N1``, ``M1``...).  Supports are keyed by
the node they act on (at most one support per node).
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field, replace
from typing import Iterable, Mapping

#: Member kinds: a beam carries axial force, shear and moment; a bar is a pin-ended
#: two-force member (axial force only).
MEMBER_KINDS = ("beam", "bar")
#: Release words allowed at a member end.
RELEASE_WORDS = ("moment", "shear", "axial")
#: Support kinds.
SUPPORT_KINDS = ("pin", "roller", "fixed", "guided", "custom")
#: Restraint words of a custom support, in the support's own frame.
FIX_WORDS = ("along", "across", "rotation")

#: What each named support kind fixes, in its own frame (``along`` = the ``angle``
#: direction, ``across`` = 90 degrees counter-clockwise from it).
SUPPORT_FIXES: dict[str, tuple[str, ...]] = {
    "pin": ("along", "across"),
    "roller": ("along",),
    "fixed": ("along", "across", "rotation"),
    "guided": ("along", "rotation"),
}


@dataclass(frozen=True)
class Node:
    id: str
    x: float
    y: float
    #: a full hinge: every beam end at this node is moment-released
    hinge: bool = False


@dataclass(frozen=True)
class Member:
    id: str
    start: str
    end: str
    kind: str = "beam"
    releases_start: frozenset[str] = frozenset()
    releases_end: frozenset[str] = frozenset()
    #: signed mid-ordinate of a circular arc through the ends (positive to the left
    #: walking from start to end); 0 for a straight member
    rise: float = 0.0
    #: relative axial stiffness EA (any consistent unit; only ratios matter)
    axial_stiffness: float = 1.0
    #: relative bending stiffness as EI / (EA * Lref^2), dimensionless, so that the
    #: redundancy distribution does not depend on the drawing units; None = default
    bending_stiffness: float | None = None

    def releases_at(self, node_id: str) -> frozenset[str]:
        if node_id == self.start:
            return self.releases_start
        if node_id == self.end:
            return self.releases_end
        raise KeyError(node_id)

    def other_end(self, node_id: str) -> str:
        return self.end if node_id == self.start else self.start


@dataclass(frozen=True)
class Support:
    node: str
    kind: str = "pin"
    #: degrees counter-clockwise from +x
    angle: float = 90.0
    #: only for ``kind == "custom"``
    fix: tuple[str, ...] = ()

    @property
    def fixes(self) -> tuple[str, ...]:
        """Restraints in the support's frame, in canonical order."""
        words = self.fix if self.kind == "custom" else SUPPORT_FIXES[self.kind]
        return tuple(w for w in FIX_WORDS if w in words)

    def directions(self) -> list[tuple[float, float]]:
        """Unit vectors of the restrained translations (reaction directions)."""
        a = math.radians(self.angle)
        out = []
        if "along" in self.fixes:
            out.append((math.cos(a), math.sin(a)))
        if "across" in self.fixes:
            out.append((-math.sin(a), math.cos(a)))
        return out

    @property
    def fixes_rotation(self) -> bool:
        return "rotation" in self.fixes


@dataclass(frozen=True)
class Scheme:
    """A 2D framing scheme.  Treat as immutable: use the ``with_*`` methods."""

    nodes: Mapping[str, Node] = field(default_factory=dict)
    members: Mapping[str, Member] = field(default_factory=dict)
    supports: Mapping[str, Support] = field(default_factory=dict)
    title: str = ""
    units: str = "m"
    #: optional top-level blocks kept verbatim on load/save (``notes``, ``expected``,
    #: ``underlay`` ...)
    extra: Mapping[str, object] = field(default_factory=dict)

    # ------------------------------------------------------------------ queries
    def node_xy(self, node_id: str) -> tuple[float, float]:
        n = self.nodes[node_id]
        return (n.x, n.y)

    def members_at(self, node_id: str) -> list[Member]:
        return [m for m in self.members.values() if node_id in (m.start, m.end)]

    def connected_node_ids(self) -> list[str]:
        """Nodes reached by at least one member, in model order."""
        used = {m.start for m in self.members.values()} | {m.end for m in self.members.values()}
        return [nid for nid in self.nodes if nid in used]

    def size(self) -> float:
        """Diagonal of the bounding box of the nodes (1.0 for an empty or point scheme)."""
        if not self.nodes:
            return 1.0
        xs = [n.x for n in self.nodes.values()]
        ys = [n.y for n in self.nodes.values()]
        d = math.hypot(max(xs) - min(xs), max(ys) - min(ys))
        return d if d > 0 else 1.0

    def new_id(self, prefix: str) -> str:
        """A fresh id ``prefix<k>`` not used by any node or member."""
        taken = set(self.nodes) | set(self.members)
        k = 1
        while f"{prefix}{k}" in taken:
            k += 1
        return f"{prefix}{k}"

    # ------------------------------------------------------------------ edits
    def with_node(self, node: Node) -> "Scheme":
        nodes = dict(self.nodes)
        nodes[node.id] = node
        return replace(self, nodes=nodes)

    def with_nodes(self, nodes: Iterable[Node]) -> "Scheme":
        d = dict(self.nodes)
        for n in nodes:
            d[n.id] = n
        return replace(self, nodes=d)

    def moved(self, positions: Mapping[str, tuple[float, float]]) -> "Scheme":
        """Scheme with the given nodes moved to new coordinates."""
        d = dict(self.nodes)
        for nid, (x, y) in positions.items():
            d[nid] = replace(d[nid], x=float(x), y=float(y))
        return replace(self, nodes=d)

    def with_member(self, member: Member) -> "Scheme":
        members = dict(self.members)
        members[member.id] = member
        return replace(self, members=members)

    def with_support(self, support: Support) -> "Scheme":
        supports = dict(self.supports)
        supports[support.node] = support
        return replace(self, supports=supports)

    def without_support(self, node_id: str) -> "Scheme":
        supports = {k: v for k, v in self.supports.items() if k != node_id}
        return replace(self, supports=supports)

    def without_members(self, member_ids: Iterable[str]) -> "Scheme":
        drop = set(member_ids)
        return replace(self, members={k: v for k, v in self.members.items() if k not in drop})

    def without_nodes(self, node_ids: Iterable[str]) -> "Scheme":
        """Remove nodes with their members and supports."""
        drop = set(node_ids)
        return replace(
            self,
            nodes={k: v for k, v in self.nodes.items() if k not in drop},
            members={k: v for k, v in self.members.items() if v.start not in drop and v.end not in drop},
            supports={k: v for k, v in self.supports.items() if k not in drop},
        )

    def retitled(self, title: str) -> "Scheme":
        return replace(self, title=title)


def arc_end_angle(chord: float, rise: float) -> float:
    """Angle (radians) between the chord and the end tangent of a circular arc.

    For an arc of chord length ``chord`` and signed mid-ordinate ``rise`` the tangent at
    the start is the chord direction turned by ``+angle`` (counter-clockwise) and at the
    end by ``-angle``: ``angle = 2 atan(2 rise / chord)`` (elementary circle geometry).
    """
    if chord <= 0:
        return 0.0
    return 2.0 * math.atan2(2.0 * rise, chord)


def arc_points(p0: tuple[float, float], p1: tuple[float, float], rise: float, n: int = 24) -> list[tuple[float, float]]:
    """Points along the member (a straight line when ``rise == 0``), for drawing."""
    (x0, y0), (x1, y1) = p0, p1
    L = math.hypot(x1 - x0, y1 - y0)
    if rise == 0 or L == 0:
        return [p0, p1]
    tx, ty = (x1 - x0) / L, (y1 - y0) / L
    nx, ny = -ty, tx
    # circle through the ends with sagitta `rise`
    R = (L * L / 4 + rise * rise) / (2 * abs(rise))
    mx, my = (x0 + x1) / 2, (y0 + y1) / 2
    sgn = 1.0 if rise > 0 else -1.0
    # centre lies on the normal, on the opposite side of the bulge
    cx, cy = mx - sgn * nx * (R - abs(rise)), my - sgn * ny * (R - abs(rise))
    a0 = math.atan2(y0 - cy, x0 - cx)
    a1 = math.atan2(y1 - cy, x1 - cx)
    am = math.atan2(my + sgn * ny * abs(rise) - cy, mx + sgn * nx * abs(rise) - cx)
    # choose the sweep that passes through the bulge point
    def _sweep(a_from: float, a_to: float, ccw: bool) -> float:
        d = (a_to - a_from) % (2 * math.pi)
        return d if ccw else d - 2 * math.pi
    for ccw in (True, False):
        s = _sweep(a0, a1, ccw)
        sm = _sweep(a0, am, ccw)
        if (ccw and 0 <= sm <= s) or (not ccw and s <= sm <= 0):
            break
    return [(cx + R * math.cos(a0 + s * k / n), cy + R * math.sin(a0 + s * k / n)) for k in range(n + 1)]

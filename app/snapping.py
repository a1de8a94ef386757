"""Snapping and picking in model coordinates (no Qt).

A :class:`SnapIndex` is built once per scheme state (or once per drag, leaving out the
dragged nodes) and answers: where does the cursor snap to (a node, a member midpoint, a
point along a member, a grid point), and what is under the cursor.  Nearest points and
box queries use shapely (``STRtree``, ``line_locate_point``); node look-ups are numpy.
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Iterable

import numpy as np
import shapely
from shapely.geometry import Point, box

from kinestat.core.model import Scheme

from .edits import member_line

#: snap kinds, strongest first
SNAP_KINDS = ("node", "midpoint", "member", "grid", "free")
#: nodes attract from further away than members do (a click near a corner means the corner)
NODE_REACH = 1.6


@dataclass(frozen=True)
class Snap:
    x: float
    y: float
    #: one of :data:`SNAP_KINDS`
    kind: str = "free"
    #: node id (kind "node") or member id (kinds "midpoint", "member")
    target: str | None = None


def ortho_direction(dx: float, dy: float) -> float:
    """The multiple of 45 degrees nearest the direction (dx, dy), in radians."""
    a = math.atan2(dy, dx)
    return round(a / (math.pi / 4)) * (math.pi / 4)


class SnapIndex:
    """Snapping targets of one scheme state."""

    def __init__(self, scheme: Scheme, exclude_nodes: Iterable[str] = ()):
        self.scheme = scheme
        ex = set(exclude_nodes)
        self.node_ids = [nid for nid in scheme.nodes if nid not in ex]
        self.node_xy = (np.array([scheme.node_xy(n) for n in self.node_ids], dtype=float)
                        if self.node_ids else np.zeros((0, 2)))
        self.member_ids = [m.id for m in scheme.members.values() if m.start not in ex and m.end not in ex]
        self.lines = [member_line(scheme, scheme.members[mid]) for mid in self.member_ids]
        self.tree = shapely.STRtree(self.lines) if self.lines else None
        if self.lines:
            self.mid_xy = np.array([[p.x, p.y] for p in (ln.interpolate(0.5, normalized=True) for ln in self.lines)])
        else:
            self.mid_xy = np.zeros((0, 2))

    # ------------------------------------------------------------------ queries
    def nearest_node(self, x: float, y: float, tol: float) -> tuple[str, float] | None:
        if not len(self.node_xy):
            return None
        d = np.hypot(self.node_xy[:, 0] - x, self.node_xy[:, 1] - y)
        k = int(np.argmin(d))
        return (self.node_ids[k], float(d[k])) if d[k] <= tol else None

    def nearest_member(self, x: float, y: float, tol: float) -> tuple[str, float, float, float] | None:
        """(member id, distance, nearest x, nearest y) within ``tol``."""
        if self.tree is None:
            return None
        p = Point(x, y)
        hits = self.tree.query(p.buffer(tol))
        best = None
        for k in hits.tolist():
            ln = self.lines[k]
            d = ln.distance(p)
            if d <= tol and (best is None or d < best[1]):
                q = ln.interpolate(ln.project(p))
                best = (self.member_ids[k], float(d), float(q.x), float(q.y))
        return best

    def pick(self, x: float, y: float, tol: float) -> tuple[str, str] | None:
        """What is under the cursor: ("node", id) before ("member", id)."""
        n = self.nearest_node(x, y, tol * NODE_REACH)
        if n:
            return ("node", n[0])
        m = self.nearest_member(x, y, tol)
        if m:
            return ("member", m[0])
        return None

    def in_box(self, x0: float, y0: float, x1: float, y1: float) -> tuple[list[str], list[str]]:
        """Nodes inside the box and members lying wholly inside it."""
        lo_x, hi_x = sorted((x0, x1))
        lo_y, hi_y = sorted((y0, y1))
        nodes = []
        if len(self.node_xy):
            inside = ((self.node_xy[:, 0] >= lo_x) & (self.node_xy[:, 0] <= hi_x)
                      & (self.node_xy[:, 1] >= lo_y) & (self.node_xy[:, 1] <= hi_y))
            nodes = [self.node_ids[k] for k in np.nonzero(inside)[0].tolist()]
        members = []
        if self.tree is not None:
            hits = self.tree.query(box(lo_x, lo_y, hi_x, hi_y), predicate="contains")
            members = [self.member_ids[k] for k in sorted(hits.tolist())]
        return nodes, members

    # ------------------------------------------------------------------ snapping
    def snap(self, x: float, y: float, tol: float, *, grid: float | None = None,
             anchor: tuple[float, float] | None = None, ortho: bool = False) -> Snap:
        """Where the cursor at (x, y) lands.

        ``tol`` is the capture distance in model units (a few pixels at the current zoom);
        with ``ortho`` and an ``anchor`` the point is kept on the 0/45/90-degree ray from it.
        """
        if ortho and anchor is not None:
            return self._snap_ortho(x, y, tol, grid, anchor)
        n = self.nearest_node(x, y, tol * NODE_REACH)
        if n:
            nx, ny = self.scheme.node_xy(n[0])
            return Snap(nx, ny, "node", n[0])
        if len(self.mid_xy):
            d = np.hypot(self.mid_xy[:, 0] - x, self.mid_xy[:, 1] - y)
            k = int(np.argmin(d))
            if d[k] <= tol:
                return Snap(float(self.mid_xy[k, 0]), float(self.mid_xy[k, 1]), "midpoint", self.member_ids[k])
        m = self.nearest_member(x, y, tol)
        if m:
            mid, _, qx, qy = m
            if grid:
                gx, gy = round(x / grid) * grid, round(y / grid) * grid
                ln = self.lines[self.member_ids.index(mid)]
                if ln.distance(Point(gx, gy)) <= 1e-9 * max(grid, 1.0) and math.hypot(gx - x, gy - y) <= tol:
                    return Snap(gx, gy, "member", mid)
            return Snap(qx, qy, "member", mid)
        if grid:
            return Snap(round(x / grid) * grid, round(y / grid) * grid, "grid")
        return Snap(x, y, "free")

    def _snap_ortho(self, x, y, tol, grid, anchor) -> Snap:
        ax, ay = anchor
        a = ortho_direction(x - ax, y - ay)
        ux, uy = math.cos(a), math.sin(a)
        if abs(ux) < 1e-12:
            ux = 0.0
        if abs(uy) < 1e-12:
            uy = 0.0
        t = (x - ax) * ux + (y - ay) * uy
        px, py = ax + t * ux, ay + t * uy
        # a node on the ray near the cursor
        n = self.nearest_node(px, py, tol)
        if n:
            nx, ny = self.scheme.node_xy(n[0])
            if abs((nx - ax) * uy - (ny - ay) * ux) <= tol * 1e-6 + 1e-9 * max(1.0, abs(t)):
                return Snap(nx, ny, "node", n[0])
        # a member the ray crosses near the cursor
        m = self.nearest_member(px, py, tol)
        if m:
            ln = self.lines[self.member_ids.index(m[0])]
            far = max(self.scheme.size(), abs(t)) * 4 + 1
            ray = shapely.LineString([(ax, ay), (ax + far * ux, ay + far * uy)])
            inter = ray.intersection(ln)
            if inter.geom_type == "Point" and math.hypot(inter.x - px, inter.y - py) <= tol:
                return Snap(float(inter.x), float(inter.y), "member", m[0])
        if grid:
            step = grid * (math.sqrt(2.0) if ux and uy else 1.0)
            t = round(t / step) * step
            return Snap(ax + t * ux, ay + t * uy, "grid")
        return Snap(px, py, "free")

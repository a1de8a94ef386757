"""Small named schemes used by several tests (built in code, coordinates in metres).

Each builder returns a Scheme.  The expected (m, s) of each is given where the test uses it,
with its source.
"""
from __future__ import annotations

from kinestat.core.model import Member, Node, Scheme, Support


def build(nodes, members, supports=(), hinges=(), title="") -> Scheme:
    """nodes: {id: (x, y)}; members: [(id, a, b, kind, rel_start, rel_end)] (kind/rels optional);
    supports: [(node, kind, angle, fix)] (angle, fix optional)."""
    ns = {k: Node(k, float(x), float(y), k in hinges) for k, (x, y) in nodes.items()}
    ms = {}
    for spec in members:
        mid, a, b, *rest = spec
        kind = rest[0] if rest else "bar"
        rs = frozenset(rest[1]) if len(rest) > 1 else frozenset()
        re_ = frozenset(rest[2]) if len(rest) > 2 else frozenset()
        rise = rest[3] if len(rest) > 3 else 0.0
        ms[mid] = Member(mid, a, b, kind, rs, re_, rise)
    ss = {}
    for spec in supports:
        node, kind, *rest = spec
        angle = rest[0] if rest else 90.0
        fix = tuple(rest[1]) if len(rest) > 1 else ()
        ss[node] = Support(node, kind, angle, fix)
    return Scheme(ns, ms, ss, title)


def bars(pairs):
    return [(f"b{k}", a, b, "bar") for k, (a, b) in enumerate(pairs)]


def beams(pairs):
    return [(f"c{k}", a, b, "beam") for k, (a, b) in enumerate(pairs)]


TRI = {"A": (0, 0), "B": (4, 0), "C": (2, 3)}
SQ = {"A": (0, 0), "B": (4, 0), "C": (4, 3), "D": (0, 3)}
PORTAL = {"A": (0, 0), "B": (0, 3), "C": (4, 3), "D": (4, 0)}


def strip_truss(panels: int, width=1.0, depth=0.8, cut_every: int = 0) -> Scheme:
    """A triangulated strip: two chords, verticals and one diagonal per panel; pin + roller."""
    nodes = {}
    for i in range(panels + 1):
        nodes[f"b{i}"] = (i * width, 0.0)
        nodes[f"t{i}"] = (i * width, depth)
    pairs = []
    for i in range(panels):
        pairs += [(f"b{i}", f"b{i+1}"), (f"t{i}", f"t{i+1}")]
        if not (cut_every and i % cut_every == cut_every // 2):
            pairs.append((f"b{i}", f"t{i+1}"))
    for i in range(panels + 1):
        pairs.append((f"b{i}", f"t{i}"))
    return build(nodes, bars(pairs), [("b0", "pin"), (f"b{panels}", "roller")])


def rigid_frame(bays: int, storeys: int, bay=6.0, storey=3.5) -> Scheme:
    """A rigid-jointed frame with fixed feet."""
    nodes = {f"n{i}_{j}": (i * bay, j * storey) for i in range(bays + 1) for j in range(storeys + 1)}
    pairs = []
    for i in range(bays + 1):
        for j in range(storeys):
            pairs.append((f"n{i}_{j}", f"n{i}_{j+1}"))
    for j in range(1, storeys + 1):
        for i in range(bays):
            pairs.append((f"n{i}_{j}", f"n{i+1}_{j}"))
    return build(nodes, beams(pairs), [(f"n{i}_0", "fixed") for i in range(bays + 1)])

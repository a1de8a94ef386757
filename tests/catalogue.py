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


def strip_truss(panels: int, width=1.0, depth=0.8, cut_every: int = 0, missing=()) -> Scheme:
    """A triangulated strip: two chords, verticals and one diagonal per panel; pin + roller.

    ``missing``: panel indices whose diagonal is left out (each one leaves that panel a
    mechanism)."""
    nodes = {}
    for i in range(panels + 1):
        nodes[f"b{i}"] = (i * width, 0.0)
        nodes[f"t{i}"] = (i * width, depth)
    pairs = []
    for i in range(panels):
        pairs += [(f"b{i}", f"b{i+1}"), (f"t{i}", f"t{i+1}")]
        if not (cut_every and i % cut_every == cut_every // 2) and i not in missing:
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


# --------------------------------------------------------------------------------------------
# Worked classics (ids as in the methods reference, section 2.5); expected values live in the
# tests beside their sources.  Node ids A, B, C ... ; member ids b* (bars) and c* (beams).

def _tri(supports):
    return build(TRI, bars([("A", "B"), ("B", "C"), ("C", "A")]), supports)


def _square(diagonals):
    pairs = [("A", "B"), ("B", "C"), ("C", "D"), ("D", "A")] + list(diagonals)
    return build(SQ, bars(pairs), [("A", "pin"), ("B", "roller")])


def _panel_truss(diagonals):
    """3 panels of 3 x 3, bottom nodes A..D, top nodes E..H; pin at A, roller at D."""
    nodes = {"A": (0, 0), "B": (3, 0), "C": (6, 0), "D": (9, 0),
             "E": (0, 3), "F": (3, 3), "G": (6, 3), "H": (9, 3)}
    pairs = [("A", "B"), ("B", "C"), ("C", "D"), ("E", "F"), ("F", "G"), ("G", "H"),
             ("A", "E"), ("B", "F"), ("C", "G"), ("D", "H")] + list(diagonals)
    return build(nodes, bars(pairs), [("A", "pin"), ("D", "roller")])


def _portal(supports, hinges=(), beam_rel=((), ()), extra=()):
    members = [("c1", "A", "B", "beam"), ("c2", "B", "C", "beam", *beam_rel), ("c3", "C", "D", "beam")]
    return build(PORTAL, members + list(extra), supports, hinges=hinges)


def _ring(supports):
    pairs = [("A", "B"), ("B", "C"), ("C", "D"), ("D", "A")]
    return build(SQ, beams(pairs), supports)


CLASSICS = {
    # trusses
    "T1": lambda: _tri([("A", "pin"), ("B", "roller")]),
    "T2": lambda: _square([("A", "C")]),
    "T3": lambda: _square([("A", "C"), ("B", "D")]),
    "T4": lambda: _square([]),
    "T5": lambda: build({"A": (0, 0), "B": (2, 0), "C": (4, 0)}, bars([("A", "B"), ("B", "C")]),
                        [("A", "pin"), ("C", "pin")]),
    "T6": lambda: build({"A": (0, 0), "B": (2, 0), "C": (4, 0), "D": (6, 0)},
                        bars([("A", "B"), ("B", "C"), ("C", "D")]), [("A", "pin"), ("D", "pin")]),
    "T7": lambda: _tri([("A", "roller"), ("B", "roller"), ("C", "roller")]),
    "T8": lambda: _tri([("A", "pin"), ("B", "roller", 0.0)]),
    # reaction n = (sin 30, cos 30): 60 degrees from +x
    "T9": lambda: _tri([("A", "pin"), ("B", "roller", 60.0)]),
    "T10": lambda: _tri([]),
    "T11": lambda: build({"A": (0, 0), "B": (2, 0), "C": (4, 0)}, bars([("A", "B"), ("B", "C"), ("A", "C")]),
                         [("A", "pin"), ("C", "roller")]),
    "T12": lambda: _panel_truss([("A", "F"), ("B", "G"), ("C", "H")]),
    # middle diagonal moved into the left panel: left doubly braced, middle empty
    "T13": lambda: _panel_truss([("A", "F"), ("B", "E"), ("C", "H")]),
    # frames
    "F1": lambda: build({"A": (0, 0), "B": (4, 0)}, beams([("A", "B")]), [("A", "fixed")]),
    "F2": lambda: build({"A": (0, 0), "B": (4, 0)}, beams([("A", "B")]), [("A", "fixed"), ("B", "roller")]),
    "F3": lambda: _portal([("A", "fixed"), ("D", "fixed")]),
    "F4": lambda: _portal([("A", "pin"), ("D", "pin")]),
    "F5": lambda: build({**PORTAL, "E": (2, 3)},
                        beams([("A", "B"), ("B", "E"), ("E", "C"), ("C", "D")]),
                        [("A", "pin"), ("D", "pin")], hinges=("E",)),
    "F6": lambda: _portal([("A", "pin"), ("D", "pin")], beam_rel=(("moment",), ("moment",))),
    "F7": lambda: build({"A": (0, 0), "B": (4, 0), "C": (8, 0)}, beams([("A", "B"), ("B", "C")]),
                        [("A", "pin"), ("B", "roller"), ("C", "roller")]),
    "F8": lambda: build({"A": (0, 0), "B": (4, 0), "C": (8, 0)}, beams([("A", "B"), ("B", "C")]),
                        [("A", "roller"), ("B", "roller"), ("C", "roller")]),
    "F9": lambda: _ring([]),
    "F10": lambda: _ring([("A", "pin"), ("B", "roller")]),
    "F11": lambda: build({"O": (0, 0), "A": (-4, 0), "B": (4, 0), "C": (0, -3)},
                         beams([("A", "O"), ("B", "O"), ("C", "O")]),
                         [("A", "fixed"), ("B", "fixed"), ("C", "fixed")], hinges=("O",)),
    "F12": lambda: build({"A": (0, 0), "B": (2, 0), "C": (4, 0)}, beams([("A", "B"), ("B", "C")]),
                         [("A", "pin"), ("C", "pin")], hinges=("B",)),
    "F13": lambda: build({"A": (0, 0), "B": (2, 0), "C": (4, 0)},
                         [("c1", "A", "B", "beam", (), ("shear",)), ("c2", "B", "C", "beam")],
                         [("A", "fixed"), ("C", "roller")]),
    "F14": lambda: build({"A": (0, 0), "B": (2, 0), "C": (4, 0)},
                         [("c1", "A", "B", "beam", (), ("shear",)), ("c2", "B", "C", "beam")],
                         [("A", "fixed")]),
    "F15": lambda: _portal([("A", "fixed"), ("D", "fixed")], beam_rel=((), ("axial",))),
    "F16": lambda: _portal([("A", "pin"), ("D", "pin")], extra=[("b1", "A", "C", "bar")]),
}


def classic(name: str) -> Scheme:
    """One of :data:`CLASSICS` by id, titled with its id."""
    return CLASSICS[name]().retitled(name)


def two_span_beam() -> Scheme:
    """Continuous beam over three supports (pin + 2 rollers); same as F7."""
    return classic("F7")


def two_bay_portal() -> Scheme:
    """Two-bay rigid portal, bays 4 m, height 3 m, three fixed feet."""
    nodes = {"A": (0, 0), "B": (0, 3), "C": (4, 3), "D": (4, 0), "E": (8, 3), "F": (8, 0)}
    return build(nodes, beams([("A", "B"), ("B", "C"), ("C", "D"), ("C", "E"), ("E", "F")]),
                 [("A", "fixed"), ("D", "fixed"), ("F", "fixed")])


def linkage(points, links="beam", hinged=True) -> Scheme:
    """An open chain of links between two ground pins at the first and last point.

    ``links`` "beam": beams joined at hinged nodes; "bar": pin-ended bars.  Node ids A, B, ...
    """
    ids = [chr(ord("A") + k) for k in range(len(points))]
    nodes = dict(zip(ids, points))
    pairs = list(zip(ids[:-1], ids[1:]))
    members = beams(pairs) if links == "beam" else bars(pairs)
    hinges = ids[1:-1] if (hinged and links == "beam") else ()
    return build(nodes, members, [(ids[0], "pin"), (ids[-1], "pin")], hinges=hinges)


# --------------------------------------------------------------------------------------------
# Small random schemes with exact small-integer geometry (for exact-arithmetic cross-checks
# and property tests).  Direction cosines of inclined members may be irrational; support
# angles are multiples of 15 degrees or the angles of a 3-4-5 triangle, and curved members
# have chords of rational length, so an exact reference can be built with sympy.

import math as _math
import random as _random

from kinestat.core.model import FIX_WORDS as _FIX_WORDS

ANGLE_345 = _math.degrees(_math.atan2(3, 4))   # cos = 4/5, sin = 3/5
ANGLE_435 = _math.degrees(_math.atan2(4, 3))   # cos = 3/5, sin = 4/5
SUPPORT_ANGLES = (0.0, 90.0, 180.0, 270.0, -90.0, 45.0, 135.0, 30.0, 60.0, 120.0, 150.0,
                  ANGLE_345, ANGLE_435, 180.0 + ANGLE_345)
SUPPORT_KIND_LIST = ("pin", "roller", "fixed", "guided", "custom")
FAMILIES = ("grid", "line", "parallel", "concurrent", "frame", "tri345")


def _random_points(rng: _random.Random, family: str, n: int) -> list[tuple[int, int]]:
    if family == "line":
        direction = rng.choice([(1, 0), (0, 1), (1, 1), (4, 3), (2, -1)])
        ks = rng.sample(range(0, 6), n)
        return [(k * direction[0], k * direction[1]) for k in ks]
    if family == "tri345":
        pool = [(0, 0), (4, 0), (4, 3), (0, 3), (8, 0), (8, 3), (4, 6), (0, 6), (8, 6)]
        return rng.sample(pool, n)
    pool = [(x, y) for x in range(5) for y in range(4)]
    return rng.sample(pool, n)


def random_scheme(rng: _random.Random, family: str | None = None) -> Scheme:
    """A small random scheme: 2-6 nodes on integer points, bars and beams, hinges, end
    releases, every support kind.  Node ids A, B, ...; members m1, m2 ...; never a member
    whose ends coincide; members may share their end nodes (a doubled member)."""
    family = family or rng.choice(FAMILIES)
    n = rng.randint(2, 6 if family != "line" else 5)
    pts = _random_points(rng, family, n)
    ids = [chr(ord("A") + k) for k in range(n)]
    p_beam = 0.85 if family == "frame" else rng.choice([0.0, 0.3, 0.6, 1.0])
    p_rel = 0.25 if family == "frame" else 0.1
    hinges = {i for i in ids if rng.random() < (0.3 if family == "frame" else 0.15)}
    order = ids[:]
    rng.shuffle(order)
    pairs = [(order[k], rng.choice(order[:k])) for k in range(1, n)]          # a spanning tree
    for _ in range(rng.randint(0, 2 * n)):
        a, b = rng.sample(ids, 2)
        if (a, b) in pairs or (b, a) in pairs:
            if rng.random() > 0.1:
                continue
        pairs.append((a, b))
    xy = dict(zip(ids, pts))
    members = []
    for k, (a, b) in enumerate(pairs, start=1):
        if rng.random() < p_beam:
            rs = [w for w in ("moment", "shear", "axial") if rng.random() < p_rel]
            re_ = [w for w in ("moment", "shear", "axial") if rng.random() < p_rel]
            (x0, y0), (x1, y1) = xy[a], xy[b]
            L2 = (x1 - x0) ** 2 + (y1 - y0) ** 2
            L = _math.isqrt(L2)
            rise = 0.0
            if L * L == L2 and rng.random() < 0.2:          # rational chord: exact arc tangents
                rise = L * rng.choice([0.25, -0.25, 0.5, -0.125, 0.375])
            members.append((f"m{k}", a, b, "beam", rs, re_, rise))
        else:
            members.append((f"m{k}", a, b, "bar"))
    n_sup = min(n, rng.choice([0, 1, 2, 2, 3, 3, 4]))
    sup_nodes = rng.sample(ids, n_sup)
    supports = []
    if family == "parallel":
        ang = rng.choice(SUPPORT_ANGLES)
        supports = [(nid, "roller", ang) for nid in sup_nodes]
    elif family == "concurrent" and n >= 2:
        # a pin and a roller whose reaction line passes through the pin
        a, b = rng.sample(ids, 2)
        (x0, y0), (x1, y1) = xy[a], xy[b]
        ang = _math.degrees(_math.atan2(y0 - y1, x0 - x1))
        supports = [(a, "pin"), (b, "roller", ang)]
        others = [i for i in ids if i not in (a, b)]
        if others and rng.random() < 0.4:
            supports.append((rng.choice(others), rng.choice(SUPPORT_KIND_LIST[:2]), rng.choice(SUPPORT_ANGLES)))
    else:
        for nid in sup_nodes:
            kind = rng.choice(SUPPORT_KIND_LIST)
            ang = rng.choice(SUPPORT_ANGLES)
            fix = [w for w in _FIX_WORDS if rng.random() < 0.5] if kind == "custom" else []
            supports.append((nid, kind, ang, fix))
    return build(xy, members, supports, hinges=hinges, title=f"random {family}")


def rich_scheme() -> Scheme:
    """A scheme using every field of the file format (hinge, all release words, rise, stiffness,
    every support kind with angles, custom fix, the optional top-level blocks)."""
    nodes = {"A": Node("A", 0.0, 0.0), "B": Node("B", 3.25, 4.5, True), "C": Node("C", -7.125, 1e-3),
             "D": Node("D", 2.0, -1.0)}
    members = {
        "c1": Member("c1", "A", "B", "beam", frozenset({"moment", "shear"}), frozenset({"axial"}), 0.75, 2.5, 0.01),
        "b1": Member("b1", "B", "C", "bar"),
        "c2": Member("c2", "C", "A", "beam", rise=-1.5),
        "c3": Member("c3", "A", "D", "beam"),
    }
    supports = {"A": Support("A", "fixed", 90.0), "C": Support("C", "custom", 33.3, ("across", "rotation")),
                "B": Support("B", "roller", -15.0), "D": Support("D", "guided", 0.0)}
    extra = {"notes": "a scheme with every feature", "expected": {"verdict": "unstable"},
             "source": "test", "underlay": {"image": "sketches/plan.png", "scale": 0.01, "origin": [-2.0, 9.5]}}
    return Scheme(nodes, members, supports, "round trip", "mm", extra)

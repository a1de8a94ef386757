"""Linkages traced on their exact constraints, checked against closed-form kinematics:
Freudenstein's equation, Grashof's condition, analytic toggle angles, Gruebler-Kutzbach
mobility and the Aronhold-Kennedy theorem."""
from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st

from kinestat.core.bodies import canonical_modes, collinearity, relative_centre, rigid_pieces
from kinestat.core.classify import classify
from kinestat.core.constraints import ConstraintModel, null_space
from kinestat.core.io import load
from kinestat.core.model import Member, Node, Scheme, Support
from kinestat.core.motion import trace

DATA = Path(__file__).parent / "data"


# ---------------------------------------------------------------- closed-form four-bar
def freudenstein_residual(a, b, c, d, th2, th4):
    """K1 cos th4 - K2 cos th2 + K3 - cos(th2 - th4) (Freudenstein 1955; Norton ch. 4 form)."""
    K1, K2, K3 = d / a, d / c, (a * a - b * b + c * c + d * d) / (2 * a * c)
    return K1 * math.cos(th4) - K2 * math.cos(th2) + K3 - math.cos(th2 - th4)


def freudenstein_th4(a, b, c, d, th2, sign):
    """Half-angle solution of Freudenstein's equation; sign -1 / +1 picks the two assemblies
    (Freudenstein 1955; Norton, Design of Machinery, ch. 4)."""
    K1, K2, K3 = d / a, d / c, (a * a - b * b + c * c + d * d) / (2 * a * c)
    A = math.cos(th2) - K1 - K2 * math.cos(th2) + K3
    B = -2 * math.sin(th2)
    C = K1 - (K2 + 1) * math.cos(th2) + K3
    return 2 * math.atan2(-B + sign * math.sqrt(B * B - 4 * A * C), 2 * A)


def four_bar(a, b, c, d, th2_deg, sign=-1) -> Scheme:
    """Crank O2A = a, coupler AB = b, rocker O4B = c, ground O2O4 = d along +x; bars, pinned feet."""
    th2 = math.radians(th2_deg)
    th4 = freudenstein_th4(a, b, c, d, th2, sign)
    A = (a * math.cos(th2), a * math.sin(th2))
    B = (d + c * math.cos(th4), c * math.sin(th4))
    nodes = {"O2": Node("O2", 0.0, 0.0), "A": Node("A", *A), "B": Node("B", *B), "O4": Node("O4", float(d), 0.0)}
    members = {"crank": Member("crank", "O2", "A", "bar"), "coupler": Member("coupler", "A", "B", "bar"),
               "rocker": Member("rocker", "O4", "B", "bar")}
    return Scheme(nodes, members, {"O2": Support("O2", "pin"), "O4": Support("O4", "pin")})


def _angles(frame, d):
    (ax, ay), (bx, by) = frame["A"], frame["B"]
    return math.atan2(ay, ax), math.atan2(by, bx - d)


def _wrap(x):
    return (x + math.pi) % (2 * math.pi) - math.pi


def _check_frames(path, scheme, a, b, c, d):
    """Every frame: Freudenstein's equation, bar lengths, fixed pivots (Freudenstein 1955)."""
    size = scheme.size()
    for f in path.frames:
        th2, th4 = _angles(f, d)
        assert abs(freudenstein_residual(a, b, c, d, th2, th4)) < 1e-9
        for m in scheme.members.values():
            L0 = math.dist(scheme.node_xy(m.start), scheme.node_xy(m.end))
            assert abs(math.dist(f[m.start], f[m.end]) - L0) < 1e-9 * size
        assert f["O2"] == pytest.approx((0.0, 0.0), abs=1e-12)
        assert f["O4"] == pytest.approx((d, 0.0), abs=1e-12)


# ---------------------------------------------------------------- Freudenstein / Grashof
def test_drawn_crank_rocker_matches_the_worked_positions():
    # K1 worked values: a, b, c, d = 2, 7, 9, 6 at th2 = 30 deg, open: th4 = 117.2861 deg,
    # B = (1.87410, 7.99856) (Freudenstein 1955 in the common textbook form)
    s = load(DATA / "kin_crank_rocker.json")
    assert s.node_xy("B") == pytest.approx((1.87410, 7.99856), abs=1e-5)
    th4 = math.degrees(math.atan2(s.nodes["B"].y, s.nodes["B"].x - 6))
    assert th4 == pytest.approx(117.2861, abs=1e-4)


@pytest.mark.parametrize("file", ["kin_crank_rocker.json", "kin_crank_rocker_crossed.json"])
def test_crank_rocker_frames_satisfy_freudenstein_and_turn_fully(file):
    # Grashof 1883: s + l = 2 + 9 < 6 + 7 with the shortest link as crank -> crank-rocker
    s = load(DATA / file)
    p = trace(s)
    assert p.motion == "finite"
    assert p.ended == {"forward": "full cycle", "backward": "full cycle"}
    _check_frames(p, s, 2, 7, 9, 6)
    # one full turn of the crank, monotonic, back to the drawn position
    th2 = np.unwrap([_angles(f, 6)[0] for f in p.frames])
    assert abs(abs(th2[-1] - th2[0]) - 2 * math.pi) < 1e-9
    assert np.all(np.diff(th2) > 0) or np.all(np.diff(th2) < 0)
    assert p.frames[-1] == p.frames[0]
    assert p.residual < 1e-9


@pytest.mark.parametrize("th2", [0.0, 47.0, 123.0, 181.0, 266.0, 333.0])
@pytest.mark.parametrize("sign", [-1, +1])
def test_grashof_crank_drawn_at_any_angle_returns_after_a_full_turn(th2, sign):
    # Grashof 1883 (crank-rocker 2, 7, 9, 6): the crank turns fully on either assembly branch,
    # and the branch is kept all the way round (th4 from the same Freudenstein root)
    s = four_bar(2, 7, 9, 6, th2, sign)
    p = trace(s)
    assert p.ended["forward"] == "full cycle"
    assert p.frames[-1] == p.frames[0]
    _check_frames(p, s, 2, 7, 9, 6)
    for f in p.frames:
        t2, t4 = _angles(f, 6)
        assert abs(_wrap(t4 - freudenstein_th4(2, 7, 9, 6, t2, sign))) < 1e-8


def _segment_distance(p, q, r, s):
    """Shortest distance between segments pq and rs (elementary geometry)."""
    p, q, r, s = map(np.asarray, (p, q, r, s))

    def point_seg(x, a, b):
        t = np.clip((x - a) @ (b - a) / ((b - a) @ (b - a)), 0.0, 1.0)
        return float(np.linalg.norm(a + t * (b - a) - x))

    def cross(u, v):
        return u[0] * v[1] - u[1] * v[0]

    d1, d2 = cross(q - p, r - p), cross(q - p, s - p)
    d3, d4 = cross(s - r, p - r), cross(s - r, q - r)
    if d1 * d2 < 0 and d3 * d4 < 0:
        return 0.0
    return min(point_seg(p, r, s), point_seg(q, r, s), point_seg(r, p, q), point_seg(s, p, q))


def test_double_crank_turns_fully_and_its_cranks_collide_in_one_plane():
    # Grashof 1883: shortest link is the ground (ground 2, cranks 6 and 9, coupler 7) -> drag
    # link, both cranks turn fully (members in separate layers: no clash test)
    a, b, c, d = 6, 7, 9, 2
    s = four_bar(a, b, c, d, 40.0)
    p = trace(s, clash=False)
    assert p.ended["forward"] == "full cycle"
    _check_frames(p, s, a, b, c, d)
    # in one plane the two cranks must cross somewhere on the turn: the tracer stops at the
    # touching position (elementary geometry: segment distance 0 there, > 0 before)
    q = trace(s)
    assert "clash" in q.ended.values()
    end = q.frames[-1] if q.ended["forward"] == "clash" else q.frames[0]
    assert _segment_distance(end["O2"], end["A"], end["O4"], end["B"]) < 1e-6 * s.size()
    inner = q.frames[1:-1]
    assert all(_segment_distance(f["O2"], f["A"], f["O4"], f["B"]) > 0 for f in inner)


def test_non_grashof_linkage_stops_at_the_analytic_toggle_angles():
    # non-Grashof (input 6, coupler 7, output 8, ground 10): 6 + 10 > 7 + 8 (Grashof 1883);
    # the input limit is where coupler and output are in line, |O4 A| = b + c:
    # th2_max = arccos((a^2 + d^2 - (b + c)^2) / (2 a d)) = 137.8736 deg (methods K6, closed form)
    a, b, c, d = 6, 7, 8, 10
    s = load(DATA / "kin_triple_rocker.json")
    p = trace(s)
    assert p.ended == {"forward": "dead centre", "backward": "dead centre"}
    assert p.driver == "crank"
    _check_frames(p, s, a, b, c, d)
    lim = math.degrees(math.acos((a * a + d * d - (b + c) ** 2) / (2 * a * d)))
    assert lim == pytest.approx(137.8736, abs=1e-4)
    ends = sorted(math.degrees(_angles(f, d)[0]) for f in (p.frames[0], p.frames[-1]))
    assert ends[0] == pytest.approx(-lim, abs=1e-7)
    assert ends[1] == pytest.approx(lim, abs=1e-7)
    for f in (p.frames[0], p.frames[-1]):
        # coupler and output collinear at the dead centre
        assert math.dist(f["A"], f["O4"]) == pytest.approx(b + c, abs=1e-9)
    # between the ends the input never goes past the limit
    th2 = [abs(math.degrees(_angles(f, d)[0])) for f in p.frames]
    assert max(th2) <= lim + 1e-7


# ---------------------------------------------------------------- Gruebler-Kutzbach
# (file, links n including the ground, simple pin joints j1); M = 3 (n - 1) - 2 j1
LINKAGES = [
    ("kin_four_bar_beams.json", 4, 4),   # four-bar: M = 9 - 8 = 1
    ("kin_five_bar.json", 5, 5),         # five-bar: M = 12 - 10 = 2
    ("kin_six_bar.json", 6, 7),          # Stephenson six-bar: M = 15 - 14 = 1
    ("kin_watt_six_bar.json", 6, 7),     # Watt six-bar: M = 15 - 14 = 1
]


@pytest.mark.parametrize("file,n,j1", LINKAGES)
def test_gruebler_kutzbach_mobility_equals_mechanism_count(file, n, j1):
    # Gruebler-Kutzbach criterion for planar linkages (Gruebler 1883/1917, Kutzbach 1929)
    M = 3 * (n - 1) - 2 * j1
    s = load(DATA / file)
    assert classify(s).mechanisms == M
    nul = null_space(ConstraintModel(s))
    assert nul.m == M and nul.s == 0
    p = trace(s)
    assert p.motion == "finite" and len(p.modes) == M
    # the traced path keeps every member length (rigid links)
    for f in p.frames:
        for m in s.members.values():
            assert math.dist(f[m.start], f[m.end]) == pytest.approx(math.dist(s.node_xy(m.start), s.node_xy(m.end)),
                                                                    abs=1e-9 * s.size())


def test_beam_four_bar_turns_its_crank_fully():
    # the same Grashof crank-rocker built from beams and hinges (2, 7, 9, 6 at 75 deg)
    s = load(DATA / "kin_four_bar_beams.json")
    p = trace(s)
    assert p.ended["forward"] == "full cycle"
    _check_frames(p, s, 2, 7, 9, 6)


# ---------------------------------------------------------------- instant centres
def _line_intersection(p1, p2, p3, p4):
    """Intersection of line p1p2 with line p3p4 (Cramer's rule)."""
    (x1, y1), (x2, y2), (x3, y3), (x4, y4) = p1, p2, p3, p4
    den = (x1 - x2) * (y3 - y4) - (y1 - y2) * (x3 - x4)
    a, b = x1 * y2 - y1 * x2, x3 * y4 - y3 * x4
    return ((a * (x3 - x4) - (x1 - x2) * b) / den, (a * (y3 - y4) - (y1 - y2) * b) / den)


def test_coupler_instant_centre_is_where_the_rocker_lines_meet():
    # Aronhold-Kennedy: the coupler's centre I13 lies on both lines O2A and O4B;
    # worked values (methods I1): I13 = (4.623155, 2.669180), I24 = (1.711754, 0),
    # w3/w2 = -0.599097, w4/w2 = -0.399173
    s = load(DATA / "kin_crank_rocker.json")
    p = trace(s, steps=1)
    by = {b.members: b for b in p.bodies}
    coupler = by[("coupler",)]
    expected = _line_intersection(s.node_xy("O2"), s.node_xy("A"), s.node_xy("O4"), s.node_xy("B"))
    assert coupler.centre == pytest.approx(expected, abs=1e-9)
    assert coupler.centre == pytest.approx((4.623155, 2.669180), abs=1e-5)
    crank, rocker = by[("crank",)], by[("rocker",)]
    assert crank.centre == pytest.approx((0.0, 0.0), abs=1e-12)   # a pin is a centre (Kennedy)
    assert rocker.centre == pytest.approx((6.0, 0.0), abs=1e-12)
    assert coupler.field.omega / crank.field.omega == pytest.approx(-0.599097, abs=1e-6)
    assert rocker.field.omega / crank.field.omega == pytest.approx(-0.399173, abs=1e-6)
    I24, _ = relative_centre(crank.field, rocker.field, s.size())
    assert I24 == pytest.approx(_line_intersection(s.node_xy("O2"), s.node_xy("O4"), s.node_xy("A"),
                                                   s.node_xy("B")), abs=1e-9)
    assert I24 == pytest.approx((1.711754, 0.0), abs=1e-5)


def test_three_centres_of_any_three_bodies_are_collinear():
    # Aronhold-Kennedy theorem, all four triples of {ground, crank, coupler, rocker}, along the path
    s = load(DATA / "kin_crank_rocker.json")
    model = ConstraintModel(s)
    p = trace(s, steps=40)
    for f in p.frames[::7]:
        moved = s.moved(f)
        mm = ConstraintModel(moved)
        nul = null_space(mm)
        pieces, _ = rigid_pieces(mm, mm.q0, canonical_modes(mm, nul.mech_basis)[0].q)
        fields = [None] + [pc.field for pc in pieces]
        assert len(fields) == 4
        for i in range(4):
            for j in range(i + 1, 4):
                for k in range(j + 1, 4):
                    trio = [relative_centre(fields[i], fields[j], s.size()),
                            relative_centre(fields[j], fields[k], s.size()),
                            relative_centre(fields[i], fields[k], s.size())]
                    assert collinearity(trio) < 1e-9
    assert model.residual(model.q0) < 1e-15


def test_crank_rocker_drawn_rotated_shifted_and_in_millimetres_turns_fully():
    # the same Grashof crank-rocker (2, 7, 9, 6) in millimetres, turned by 37 deg and moved:
    # the verdict and the full turn do not depend on units or placement (Grashof 1883)
    base = four_bar(2, 7, 9, 6, 140.0)
    ang = math.radians(37.0)
    c, s_ = math.cos(ang), math.sin(ang)

    def place(x, y):
        return (1000 * (c * x - s_ * y) + 25_000.0, 1000 * (s_ * x + c * y) - 12_000.0)

    s = Scheme({k: Node(k, *place(n.x, n.y)) for k, n in base.nodes.items()}, base.members, base.supports)
    p = trace(s)
    assert p.ended["forward"] == "full cycle" and p.frames[-1] == p.frames[0]
    assert p.residual < 1e-9
    for f in p.frames:
        # back to the linkage's own frame, then Freudenstein's equation (Freudenstein 1955)
        loc = {}
        for k, (x, y) in f.items():
            x, y = (x - 25_000.0) / 1000, (y + 12_000.0) / 1000
            loc[k] = (c * x + s_ * y, -s_ * x + c * y)
        th2, th4 = _angles(loc, 6)
        assert abs(freudenstein_residual(2, 7, 9, 6, th2, th4)) < 1e-9


@settings(max_examples=12, deadline=None)
@given(st.floats(1.0, 3.0), st.floats(4.0, 9.0), st.floats(4.0, 9.0), st.floats(4.0, 9.0),
       st.floats(0.0, 359.0), st.sampled_from([-1, 1]))
def test_random_grashof_crank_rockers_turn_fully(a, b, c, d, th2, sign):
    # Grashof 1883: crank a the shortest link and a + l < p + q -> the crank turns fully,
    # every frame satisfies Freudenstein's equation (Freudenstein 1955)
    lengths = sorted([a, b, c, d])
    assume(a == lengths[0] and lengths[0] + lengths[3] < lengths[1] + lengths[2] - 0.3)
    s = four_bar(a, b, c, d, th2, sign)
    p = trace(s)
    assert p.ended["forward"] == "full cycle"
    assert p.frames[-1] == p.frames[0]
    _check_frames(p, s, a, b, c, d)

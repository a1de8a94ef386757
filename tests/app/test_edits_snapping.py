"""Scheme edits, snapping and undoable changes, checked against plain geometry (exact
arithmetic where it matters)."""
from __future__ import annotations

import math
from fractions import Fraction

import pytest

from kinestat.app import edits
from kinestat.app.snapping import SnapIndex, ortho_direction
from kinestat.core.model import Member, Node, Scheme, Support


def square_with_diagonals() -> Scheme:
    s = Scheme()
    for nid, x, y in (("A", 0, 0), ("B", 4, 0), ("C", 4, 4), ("D", 0, 4)):
        s = s.with_node(Node(nid, x, y))
    for mid, a, b in (("ab", "A", "B"), ("bc", "B", "C"), ("cd", "C", "D"), ("da", "D", "A"),
                      ("ac", "A", "C"), ("bd", "B", "D")):
        s = s.with_member(Member(mid, a, b, "bar"))
    return s


def test_crossing_of_square_diagonals_is_at_the_centre():
    # the diagonals of a square bisect each other (Euclid I): one crossing at (2, 2), and the
    # sides meet only at shared corners, which are joints, not crossings
    found = edits.crossings(square_with_diagonals())
    assert len(found) == 1
    x, y, under, over = found[0]
    assert (x, y) == (2.0, 2.0) and {under, over} == {"ac", "bd"} and over == "bd"


def test_join_crossings_splits_both_members_at_one_new_node():
    s = edits.join_crossings(square_with_diagonals())
    centre = edits.node_at(s, 2, 2)
    assert centre is not None
    assert sorted(m.id for m in s.members_at(centre)) == sorted(["ac", "bd", *[m for m in s.members if m.startswith("M")]])
    assert len(s.members) == 8 and edits.crossings(s) == []
    # the total length of the bars is unchanged by the split: 4 x 4 + 2 x 4 sqrt 2
    total = sum(math.dist(s.node_xy(m.start), s.node_xy(m.end)) for m in s.members.values())
    assert total == pytest.approx(16 + 8 * math.sqrt(2), rel=1e-12)


def test_split_keeps_end_releases_on_the_right_pieces():
    s = Scheme().with_node(Node("A", 0, 0)).with_node(Node("B", 6, 0))
    s = s.with_member(Member("m", "A", "B", "beam", frozenset({"moment"}), frozenset({"shear"})))
    s2, nid = edits.split_member(s, "m", 2.0, 0.3)  # nearest point on the member: (2, 0)
    assert s2.node_xy(nid) == (2.0, 0.0)
    first = s2.members["m"]
    (second,) = [m for m in s2.members.values() if m.id != "m"]
    assert (first.start, first.end, second.start, second.end) == ("A", nid, nid, "B")
    assert first.releases_start == {"moment"} and not first.releases_end
    assert second.releases_end == {"shear"} and not second.releases_start


def test_split_of_a_curved_member_keeps_the_circle():
    # chord 8, rise 2: radius R = (c^2/4 + f^2) / (2 f) = (16 + 4) / 4 = 5 (sagitta formula)
    s = Scheme().with_node(Node("A", -4, 0)).with_node(Node("B", 4, 0))
    s = s.with_member(Member("arc", "A", "B", "beam", rise=2.0))
    s2, nid = edits.split_member(s, "arc", 0.0, 5.0)
    x, y = s2.node_xy(nid)
    # the crown of the arc: centre (0, -3), radius 5 -> (0, 2)
    assert (x, y) == pytest.approx((0.0, 2.0), abs=1e-3)
    half = math.dist((-4, 0), (x, y))
    R = Fraction(5)
    sag = float(R) - math.sqrt(float(R * R) - half * half / 4)
    for m in s2.members.values():
        assert m.rise == pytest.approx(sag, rel=1e-6)


def test_merge_nodes_moves_support_and_drops_collapsed_members():
    s = Scheme().with_node(Node("A", 0, 0)).with_node(Node("B", 1, 0)).with_node(Node("C", 2, 0))
    s = s.with_member(Member("ab", "A", "B")).with_member(Member("bc", "B", "C"))
    s = s.with_support(Support("B", "pin"))
    s2 = edits.merge_nodes(s, keep="A", drop="B")
    assert "B" not in s2.nodes and "ab" not in s2.members
    assert s2.members["bc"].start == "A" and s2.supports["A"].kind == "pin"


def test_join_coincident_merges_a_node_dropped_on_another():
    s = Scheme().with_node(Node("A", 0, 0)).with_node(Node("B", 3, 0)).with_node(Node("C", 3, 4))
    s = s.with_member(Member("ab", "A", "B")).with_member(Member("bc", "B", "C"))
    s = s.moved({"C": (0.0, 0.0)})
    s2 = edits.join_coincident(s, ["C"])
    assert "C" not in s2.nodes and s2.members["bc"].end == "A"


def test_delete_removes_nodes_left_with_nothing_only():
    s = Scheme().with_node(Node("A", 0, 0)).with_node(Node("B", 1, 0)).with_node(Node("C", 2, 0))
    s = s.with_node(Node("F", 5, 5))  # a free node that was already there
    s = s.with_member(Member("ab", "A", "B")).with_member(Member("bc", "B", "C"))
    s2 = edits.delete(s, member_ids=["bc"])
    assert set(s2.nodes) == {"A", "B", "F"}
    s3 = edits.delete(s, node_ids=["B"])
    assert set(s3.nodes) == {"F"} and not s3.members


def test_end_near_uses_the_part_of_the_member():
    s = Scheme().with_node(Node("A", 0, 0)).with_node(Node("B", 10, 0)).with_member(Member("m", "A", "B"))
    assert edits.end_near(s, "m", 1.0, 0.1) == "A"
    assert edits.end_near(s, "m", 9.5, -0.1) == "B"
    assert edits.end_near(s, "m", 5.0, 0.0) is None


def test_insert_joins_nodes_landing_on_existing_ones():
    a = Scheme().with_node(Node("A", 0, 0)).with_node(Node("B", 2, 0)).with_member(Member("m", "A", "B"))
    part = Scheme().with_node(Node("p", 2, 0)).with_node(Node("q", 2, 2)).with_member(Member("k", "p", "q"))
    s, new_nodes, new_members = edits.insert(a, part)
    assert len(new_nodes) == 1 and len(new_members) == 1
    (mid,) = new_members
    assert s.members[mid].start == "B"


# ---------------------------------------------------------------------- snapping
def test_snap_priority_node_midpoint_member_grid():
    s = Scheme().with_node(Node("A", 0, 0)).with_node(Node("B", 4, 0)).with_member(Member("m", "A", "B"))
    idx = SnapIndex(s)
    assert idx.snap(0.05, 0.04, 0.2, grid=0.5).kind == "node"
    mid = idx.snap(2.1, 0.05, 0.2, grid=0.5)
    assert (mid.kind, mid.x, mid.y) == ("midpoint", 2.0, 0.0)
    on = idx.snap(3.13, 0.1, 0.2, grid=None)
    assert on.kind == "member" and (on.x, on.y) == pytest.approx((3.13, 0.0))
    on_grid = idx.snap(3.02, 0.1, 0.2, grid=0.5)  # the grid point on the member wins
    assert (on_grid.kind, on_grid.x, on_grid.y) == ("member", 3.0, 0.0)
    g = idx.snap(1.26, 1.74, 0.2, grid=0.5)
    assert (g.kind, g.x, g.y) == ("grid", 1.5, 1.5)


def test_ortho_direction_and_ray_snap():
    assert ortho_direction(1.0, 0.3) == 0.0
    assert ortho_direction(1.0, 0.9) == pytest.approx(math.pi / 4)
    assert ortho_direction(-0.1, -1.0) == pytest.approx(-math.pi / 2)
    idx = SnapIndex(Scheme())
    p = idx.snap(2.9, 3.2, 0.2, grid=1.0, anchor=(0.0, 0.0), ortho=True)
    # 45 degrees on a unit grid: lengths in steps of sqrt 2 land on grid points
    assert (p.x, p.y) == pytest.approx((3.0, 3.0))


def test_box_selects_nodes_inside_and_members_wholly_inside():
    s = square_with_diagonals()
    nodes, members = SnapIndex(s).in_box(-1, -1, 5, 1)
    assert set(nodes) == {"A", "B"} and members == ["ab"]


def test_pick_prefers_nodes():
    s = square_with_diagonals()
    idx = SnapIndex(s)
    assert idx.pick(0.05, 0.05, 0.3) == ("node", "A")
    assert idx.pick(2.0, 0.1, 0.3) == ("member", "ab")
    assert idx.pick(1.0, 2.0, 0.3) is None

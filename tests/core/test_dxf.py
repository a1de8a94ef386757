"""DXF line work in and out.  Every drawing here is built by the test with ezdxf."""
from __future__ import annotations

import json
import math

import ezdxf
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from kinestat.core.dxf import (
    LAYER_BAR,
    LAYER_BEAM,
    LAYER_HINGE,
    LAYER_NOTE,
    LAYER_SUPPORT,
    DxfError,
    dxf_text,
    read_dxf,
    scheme_to_dxf,
    write_dxf,
)
from kinestat.core.io import dumps, loads
from kinestat.core.model import Member, Node, Scheme, Support, arc_points


# ----------------------------------------------------------------------- helpers
def new_doc(insunits: int = 6):
    doc = ezdxf.new("R2010")
    doc.header["$INSUNITS"] = insunits
    return doc, doc.modelspace()


def read(doc, tmp_path, name="drawing.dxf", **kw):
    path = tmp_path / name
    doc.saveas(path)
    return read_dxf(path, **kw)


def node_at(scheme: Scheme, x: float, y: float, tol: float = 1e-6) -> str:
    hits = [n.id for n in scheme.nodes.values() if math.hypot(n.x - x, n.y - y) <= tol]
    assert len(hits) == 1, f"expected one node at ({x}, {y}), found {hits}"
    return hits[0]


def ends(scheme: Scheme) -> set[frozenset[str]]:
    return {frozenset((m.start, m.end)) for m in scheme.members.values()}


def sagitta(r: float, chord: float) -> float:
    # sagitta of a circular segment: s = R - sqrt(R^2 - (c/2)^2) (elementary geometry)
    return r - math.sqrt(r * r - chord * chord / 4)


def mid_of_member(scheme: Scheme, m: Member) -> tuple[float, float]:
    pts = arc_points(scheme.node_xy(m.start), scheme.node_xy(m.end), m.rise, n=2)
    return pts[1]


def reasons(report) -> list[str]:
    return [s.reason for s in report.skipped]


# ----------------------------------------------------------------------- straight line work
def test_portal_frame_from_lines(tmp_path):
    doc, msp = new_doc(insunits=4)  # $INSUNITS 4 = millimetres (DXF reference)
    msp.add_line((0, 0), (0, 4000), dxfattribs={"layer": "FRAME"})
    msp.add_line((0, 4000), (6000, 4000), dxfattribs={"layer": "FRAME"})
    msp.add_line((6000, 4000), (6000, 0), dxfattribs={"layer": "FRAME"})
    s, r = read(doc, tmp_path)
    # counted by hand: three lines meeting end to end -> 4 nodes, 3 members
    assert (len(s.nodes), len(s.members)) == (4, 3)
    a, b, c, d = (node_at(s, *p) for p in ((0, 0), (0, 4000), (6000, 4000), (6000, 0)))
    assert ends(s) == {frozenset((a, b)), frozenset((b, c)), frozenset((c, d))}
    assert {m.kind for m in s.members.values()} == {"beam"}
    assert all(m.rise == 0 for m in s.members.values())
    assert s.units == "mm" and r.units_from == "header"
    assert r.skipped == [] and r.n_members == 3 and r.n_nodes == 4
    assert r.layer_kinds == {"FRAME": "beam"}
    # the imported scheme is a valid scheme file
    assert loads(dumps(s)).members == s.members


def test_ends_within_the_tolerance_merge_and_beyond_stay_apart(tmp_path):
    doc, msp = new_doc()
    msp.add_line((0, 0), (0, 4))
    msp.add_line((0.004, 4.003), (6, 4))  # 5 mm off: merged with tol 10 mm
    msp.add_line((6.02, 4), (6, 0))  # 20 mm off: a separate node
    s, r = read(doc, tmp_path, tol=0.01)
    # counted by hand: 6 ends, one pair closer than the tolerance -> 5 nodes; the snap is hypot(4, 3) mm
    assert len(s.nodes) == 5 and len(s.members) == 3
    node_at(s, 0, 4)  # one node where two ends nearly met
    assert r.snapped_points == 1 and r.largest_snap == pytest.approx(0.005, rel=1e-9)
    assert r.tolerance == 0.01 and r.tolerance_from == "given"


def test_default_tolerance_follows_the_median_segment_length(tmp_path):
    doc, msp = new_doc()
    for k in range(5):
        msp.add_line((k * 2.0, 0), (k * 2.0 + 2.0, 0))
    s, r = read(doc, tmp_path)
    # the documented default: 0.001 x the median segment length (2)
    assert r.tolerance == pytest.approx(2e-3)
    assert len(s.members) == 5 and len(s.nodes) == 6


def test_a_segment_ending_on_another_splits_it(tmp_path):
    doc, msp = new_doc()
    msp.add_line((0, 0), (10, 0))
    msp.add_line((4, 0), (4, 3))  # T onto the inside of the first line
    msp.add_line((7, 5), (7, 0.0005))  # ends within the tolerance of the line
    s, r = read(doc, tmp_path, tol=0.001)
    # counted by hand: the long line splits in three at x = 4 and x = 7, plus the two lines ending on it
    assert len(s.members) == 5 and len(s.nodes) == 6
    n0, n4, n7, n10 = node_at(s, 0, 0), node_at(s, 4, 0), node_at(s, 7, 0.0005), node_at(s, 10, 0)
    assert {frozenset((n0, n4)), frozenset((n4, n7)), frozenset((n7, n10))} <= ends(s)
    assert r.splits == 2
    imported = {i.handle: i.members for i in r.imported}
    assert sorted(len(v) for v in imported.values()) == [1, 1, 3]


def test_crossing_lines_are_not_joined(tmp_path):
    # two members crossing without an end at the crossing are not connected there (common practice)
    doc, msp = new_doc()
    msp.add_line((0, 0), (4, 4))
    msp.add_line((0, 4), (4, 0))
    s, _ = read(doc, tmp_path)
    assert len(s.members) == 2 and len(s.nodes) == 4


def test_duplicate_and_overlapping_lines(tmp_path):
    doc, msp = new_doc()
    first = msp.add_line((0, 0), (10, 0))
    msp.add_line((10, 0), (0, 0))  # the same line drawn backwards
    msp.add_line((5, 0), (15, 0))  # overlaps the second half
    s, r = read(doc, tmp_path)
    # pieces 0-5, 5-10, 10-15; the repeated 0-5 / 5-10 pieces are skipped as duplicates
    assert sorted(round(abs(s.nodes[m.end].x - s.nodes[m.start].x), 9) for m in s.members.values()) == [5, 5, 5]
    dups = [x for x in r.skipped if x.reason.startswith("duplicate of")]
    # counted by hand: both pieces of the backwards line and the 5-10 piece of the third repeat the first
    assert len(dups) == 3 and all(x.reason.startswith(f"duplicate of #{first.dxf.handle} ") for x in dups)


def test_closed_polyline_and_old_style_polylines(tmp_path):
    doc, msp = new_doc()
    msp.add_lwpolyline([(0, 0), (4, 0), (4, 3), (0, 3)], close=True)
    msp.add_polyline2d([(10, 0), (12, 0), (12, 2)])
    msp.add_polyline3d([(20, 0, 0), (22, 0, 1), (22, 2, 1)])  # z is ignored: the scheme is plane
    s, r = read(doc, tmp_path)
    # one member per segment, the closing one included (DXF reference: closed flag 1)
    assert len(s.members) == 4 + 2 + 2
    assert len(s.nodes) == 4 + 3 + 3
    node_at(s, 22, 2)
    assert r.skipped == []


# ----------------------------------------------------------------------- arcs
@pytest.mark.parametrize("r,a0,a1", [(5.0, 0.0, 90.0), (3.0, 30.0, 200.0), (12.5, 350.0, 20.0), (2.0, 0.0, 180.0)])
def test_arc_rise_is_the_sagitta_with_the_right_sign(tmp_path, r, a0, a1):
    doc, msp = new_doc()
    cx, cy = 1.5, -2.0
    msp.add_arc((cx, cy), r, a0, a1)
    s, _ = read(doc, tmp_path)
    assert len(s.members) == 1
    m = next(iter(s.members.values()))
    p0 = s.node_xy(m.start)
    assert p0 == pytest.approx((cx + r * math.cos(math.radians(a0)), cy + r * math.sin(math.radians(a0))))
    chord = math.dist(s.node_xy(m.start), s.node_xy(m.end))
    assert abs(m.rise) == pytest.approx(sagitta(r, chord), rel=1e-9, abs=1e-12)
    # an ARC runs counter-clockwise, so it bulges to the right of start -> end: negative rise
    assert m.rise < 0
    # and the member's drawn midpoint is the arc's midpoint (centre + R at the middle angle)
    am = math.radians(a0 + ((a1 - a0) % 360) / 2)
    assert mid_of_member(s, m) == pytest.approx((cx + r * math.cos(am), cy + r * math.sin(am)), abs=1e-9)


def test_arc_with_a_downward_extrusion_is_mirrored(tmp_path):
    doc, msp = new_doc()
    arc = msp.add_arc((2, 1), 4, 10, 80, dxfattribs={"extrusion": (0, 0, -1)})
    # ezdxf's own object-coordinate handling gives the ends and the middle in world coordinates
    ocs = arc.ocs()
    want_mid = ocs.to_wcs((2 + 4 * math.cos(math.radians(45)), 1 + 4 * math.sin(math.radians(45)), 0))
    want_ends = {(round(p.x, 9), round(p.y, 9)) for p in (arc.start_point, arc.end_point)}
    s, _ = read(doc, tmp_path)
    m = next(iter(s.members.values()))
    got_ends = {tuple(round(v, 9) for v in s.node_xy(m.start)), tuple(round(v, 9) for v in s.node_xy(m.end))}
    assert got_ends == want_ends
    assert mid_of_member(s, m) == pytest.approx((want_mid[0], want_mid[1]), abs=1e-9)
    assert abs(m.rise) == pytest.approx(sagitta(4, math.dist(*[s.node_xy(n) for n in (m.start, m.end)])), rel=1e-9)


@pytest.mark.parametrize("bulge", [0.25, -0.25, 1.0, -1.0, 0.7])
def test_polyline_bulge(tmp_path, bulge):
    # DXF reference: bulge = tan(included angle / 4), positive = counter-clockwise;
    # sagitta = bulge * chord / 2 (from s = R (1 - cos(theta/2)), c = 2 R sin(theta/2))
    doc, msp = new_doc()
    msp.add_lwpolyline([(0, 0, bulge), (6, 0, 0)], format="xyb")
    s, _ = read(doc, tmp_path)
    m = next(iter(s.members.values()))
    assert s.node_xy(m.start) == (0.0, 0.0) and s.node_xy(m.end) == (6.0, 0.0)
    assert m.rise == pytest.approx(-bulge * 6 / 2, rel=1e-12)
    # counter-clockwise from (0,0) to (6,0) passes below the chord
    assert (mid_of_member(s, m)[1] < 0) == (bulge > 0)


def test_more_than_a_half_circle_is_split(tmp_path):
    doc, msp = new_doc()
    theta = 4 * math.atan(2.0)  # bulge 2: about 253.7 degrees
    msp.add_lwpolyline([(0, 0, 2.0), (4, 0, 0)], format="xyb")
    s, r = read(doc, tmp_path)
    assert len(s.members) == 2 and len(s.nodes) == 3
    R = 4 / (2 * math.sin(theta / 2))
    for m in s.members.values():
        c = math.dist(s.node_xy(m.start), s.node_xy(m.end))
        assert c == pytest.approx(2 * R * math.sin(theta / 4))  # chord of half the angle
        assert abs(m.rise) == pytest.approx(sagitta(R, c), rel=1e-9)
        assert abs(m.rise) <= c / 2
    assert any("split into 2 members" in n for n in r.notes)


def test_full_circle_arc_becomes_a_ring_of_two_halves(tmp_path):
    # a half circle has rise = radius (sagitta with chord = diameter)
    doc, msp = new_doc()
    msp.add_arc((0, 0), 2, 0, 360)
    s, _ = read(doc, tmp_path)
    assert len(s.members) == 2 and len(s.nodes) == 2
    for m in s.members.values():
        assert abs(m.rise) == pytest.approx(2.0)  # semicircles: rise = radius


def test_a_line_ending_on_an_arc_splits_the_arc(tmp_path):
    doc, msp = new_doc()
    msp.add_arc((0, 0), 5, 0, 180)
    top = (0.0, 5.0)
    msp.add_line(top, (0, 0))
    s, r = read(doc, tmp_path)
    assert r.splits == 1 and len(s.members) == 3
    t = node_at(s, *top)
    halves = [m for m in s.members.values() if m.rise]
    assert len(halves) == 2 and all(t in (m.start, m.end) for m in halves)
    for m in halves:
        assert abs(m.rise) == pytest.approx(sagitta(5, math.dist(s.node_xy(m.start), s.node_xy(m.end))), rel=1e-9)


# ----------------------------------------------------------------------- units and layers
def test_units_from_header_given_or_assumed(tmp_path):
    doc, msp = new_doc(insunits=2)  # 2 = feet
    msp.add_line((0, 0), (20, 0))
    s, r = read(doc, tmp_path)
    assert s.units == "ft" and r.units_from == "header"
    s, r = read(doc, tmp_path, units="in")
    assert s.units == "in" and r.units_from == "given" and any("header says ft" in n for n in r.notes)
    doc0, msp0 = new_doc(insunits=0)
    msp0.add_line((0, 0), (20, 0))
    s, r = read(doc0, tmp_path, name="unitless.dxf")
    assert s.units == "m" and r.units_from == "assumed"
    assert any("assumed" in line for line in r.lines())
    with pytest.raises(DxfError, match='units: unknown unit "furlong"'):
        read(doc0, tmp_path, name="unitless.dxf", units="furlong")


def test_layer_mapping(tmp_path):
    doc, msp = new_doc()
    doc.layers.add("Bracing")
    doc.layers.add("Hidden").off()
    msp.add_line((0, 0), (4, 0), dxfattribs={"layer": "FRAME"})
    msp.add_line((0, 0), (4, 3), dxfattribs={"layer": "Bracing"})
    msp.add_line((0, 3), (4, 3), dxfattribs={"layer": "GRID"})
    msp.add_arc((2, 0), 2, 0, 180, dxfattribs={"layer": "Bracing"})
    hidden = msp.add_line((0, 1), (4, 1), dxfattribs={"layer": "Hidden"})
    s, r = read(doc, tmp_path, layers={"BRACING": "bar", "grid": "skip"})
    kinds = sorted(m.kind for m in s.members.values())
    assert kinds == ["bar", "beam"]
    assert r.layer_kinds["Bracing"] == "bar" and r.layer_kinds["FRAME"] == "beam"
    assert any('layer "GRID" is mapped to skip' in x for x in reasons(r))
    assert any("a bar is straight" in x for x in reasons(r))
    assert any(x.handle == hidden.dxf.handle and "is off" in x.reason for x in r.skipped)
    # naming the hidden layer imports it; "*" sets every other layer
    s, r = read(doc, tmp_path, layers={"Hidden": "beam", "*": "bar", "Bracing": "skip"})
    assert sorted(m.kind for m in s.members.values()) == ["bar", "bar", "beam"]
    s, r = read(doc, tmp_path, layers={"NOPE": "bar"})
    assert r.unused_mapping == ["NOPE"]
    with pytest.raises(DxfError, match='layer mapping "FRAME": unknown choice "truss"'):
        read(doc, tmp_path, layers={"FRAME": "truss"})


# ----------------------------------------------------------------------- what is skipped and why
def test_zero_length_and_too_short_segments_are_skipped(tmp_path):
    # counted by hand: 1 line + 2 of the 3 polyline segments survive
    doc, msp = new_doc()
    msp.add_line((0, 0), (5, 0))
    z = msp.add_line((5, 0), (5, 0))
    poly = msp.add_lwpolyline([(0, 2), (3, 2), (3, 2), (3, 5)])
    short = msp.add_line((5, 0), (5, 0.0004))
    s, r = read(doc, tmp_path, tol=0.001)
    assert len(s.members) == 3
    by = {(x.handle, x.part): x.reason for x in r.skipped}
    assert by[(z.dxf.handle, None)] == "zero length"
    assert by[(poly.dxf.handle, 2)] == "zero length"
    assert "shorter" in by[(short.dxf.handle, None)]


def test_entities_far_away_are_skipped(tmp_path):
    # the documented rule: a group whose gap to the main group exceeds 10 x the main group's size
    doc, msp = new_doc()
    msp.add_line((0, 0), (0, 4))
    msp.add_line((0, 4), (6, 4))
    near = msp.add_line((9, 0), (9, 4))  # a second frame close by is kept
    stray = msp.add_line((1e6, 1e6), (1e6 + 3, 1e6))
    stray_pl = msp.add_lwpolyline([(-5e5, 0), (-5e5, 2), (-5e5 + 1, 2)])
    s, r = read(doc, tmp_path)
    assert len(s.members) == 3
    far = {x.handle for x in r.skipped if x.reason.startswith("far away")}
    assert far == {stray.dxf.handle, stray_pl.dxf.handle}
    assert near.dxf.handle in {i.handle for i in r.imported}
    assert max(n.x for n in s.nodes.values()) == 9


def test_absurd_coordinates_are_skipped_not_a_crash(tmp_path):
    # beyond 1e15 the spacing of doubles (IEEE 754) exceeds 0.1 unit: not usable line work
    doc, msp = new_doc()
    msp.add_line((0, 0), (5, 0))
    huge = msp.add_line((1e300, 0), (-1e300, 1))
    pl = msp.add_lwpolyline([(0, 0, 0), (5e299, 5e299, 1e10), (1e300, 1, 0)], format="xyb")
    s, r = read(doc, tmp_path)
    by = {(x.handle, x.part): x.reason for x in r.skipped}
    assert "beyond" in by[(huge.dxf.handle, None)]
    assert "beyond" in by[(pl.dxf.handle, 1)] and "beyond" in by[(pl.dxf.handle, 2)]
    assert len(s.members) == 1
    assert all(abs(n.x) <= 1e15 for n in s.nodes.values())


def test_unsupported_entities_are_listed_with_reasons(tmp_path):
    doc, msp = new_doc()
    msp.add_line((0, 0), (5, 0))
    circle = msp.add_circle((1, 1), 0.2)
    spline = msp.add_spline([(0, 0), (1, 2), (3, 1), (4, 0)])
    text = msp.add_text("PORTAL A")
    ell = msp.add_ellipse((2, 2), major_axis=(1, 0), ratio=0.5)
    blk = doc.blocks.new("DOOR")
    blk.add_line((0, 0), (1, 0))
    ins = msp.add_blockref("DOOR", (2, 2))
    tilted = msp.add_arc((0, 0), 1, 0, 90, dxfattribs={"extrusion": (1, 0, 0)})
    s, r = read(doc, tmp_path)
    assert len(s.members) == 1
    by = {x.handle: x.reason for x in r.skipped}
    assert "circle" in by[circle.dxf.handle]
    assert "SPLINE curves are not supported" in by[spline.dxf.handle]
    assert "annotation" in by[text.dxf.handle]
    assert "ELLIPSE" in by[ell.dxf.handle]
    assert '"DOOR"' in by[ins.dxf.handle] and "explode" in by[ins.dxf.handle]
    assert "x-y plane" in by[tilted.dxf.handle]
    text_lines = "\n".join(r.lines())
    assert f"#{circle.dxf.handle} CIRCLE" in text_lines and "Skipped 6 items" in text_lines


# ----------------------------------------------------------------------- bad files: all or nothing
@pytest.mark.parametrize("content", [b"", b"hello, this is not a drawing\n", bytes(range(256)) * 4,
                                     b"0\nSECTION\n2\nENTITIES\n0\nLINE\n10\nabc\n"])
def test_broken_files_raise_a_clear_error(tmp_path, content):
    p = tmp_path / "broken.dxf"
    p.write_bytes(content)
    with pytest.raises(DxfError, match="file broken.dxf: not a readable DXF file"):
        read_dxf(p)


def test_truncated_files_raise_a_clear_error(tmp_path):
    doc, msp = new_doc()
    msp.add_line((0, 0), (5, 0))
    msp.add_lwpolyline([(0, 0, 0.3), (3, 3, 0), (6, 0, 0)], format="xyb")
    path = tmp_path / "whole.dxf"
    doc.saveas(path)
    text = path.read_text()
    cut = tmp_path / "cut.dxf"
    for frac in (0.1, 0.3, 0.5, 0.7, 0.9, 0.99):
        cut.write_text(text[: int(len(text) * frac)])
        with pytest.raises(DxfError, match="cut.dxf"):
            read_dxf(cut)


def test_missing_file(tmp_path):
    with pytest.raises(DxfError, match="nowhere.dxf: not a readable DXF file \\(no such file\\)"):
        read_dxf(tmp_path / "nowhere.dxf")


def test_empty_drawing_and_drawing_without_line_work(tmp_path):
    doc, _ = new_doc()
    with pytest.raises(DxfError, match="no line work to import"):
        read(doc, tmp_path, name="empty.dxf")
    doc, msp = new_doc()
    msp.add_text("NOTES ONLY")
    msp.add_line((1, 1), (1, 1))
    with pytest.raises(DxfError, match="no line work to import.*skipped 2 items"):
        read(doc, tmp_path, name="notes.dxf")


def test_a_bad_number_names_the_entity_layer_and_field(tmp_path):
    doc, msp = new_doc()
    msp.add_line((0, 0), (5, 0), dxfattribs={"layer": "FRAME"})
    bad = msp.add_line((0, 0), (float("nan"), 3), dxfattribs={"layer": "FRAME"})
    with pytest.raises(DxfError) as err:
        read(doc, tmp_path)
    msg = str(err.value)
    assert f"entity #{bad.dxf.handle} (LINE on layer \"FRAME\")" in msg and 'field "end.x"' in msg
    doc, msp = new_doc()
    pl = msp.add_lwpolyline([(0, 0, float("inf")), (5, 0, 0)], format="xyb")
    with pytest.raises(DxfError, match=f'#{pl.dxf.handle} .*field "vertex 1.bulge"'):
        read(doc, tmp_path)


# ----------------------------------------------------------------------- export and round trips
def sample_scheme() -> Scheme:
    nodes = [Node("A", 0, 0), Node("B", 0, 4), Node("C", 6, 4, hinge=True), Node("D", 12, 4), Node("E", 12, 0),
             Node("F", 6, 0), Node("G", 20, 0)]
    members = [Member("M1", "A", "B"), Member("M2", "B", "C", rise=1.2), Member("M3", "C", "D", rise=-0.8),
               Member("M4", "D", "E"), Member("M5", "A", "C", kind="bar"), Member("M6", "F", "C", kind="bar"),
               Member("M7", "E", "F", rise=3.0)]  # M7 is a half circle
    supports = [Support("A", "pin"), Support("E", "roller", angle=120.0), Support("F", "fixed", angle=0.0),
                Support("G", "custom", angle=45.0, fix=("across", "rotation"))]
    return Scheme({n.id: n for n in nodes}, {m.id: m for m in members}, {s.node: s for s in supports},
                  title="Test portal", units="mm")


def assert_same_scheme(a: Scheme, b: Scheme, tol: float) -> None:
    """Every node, member (ends, kind, signed rise) and support of ``a`` is in ``b``."""
    assert len(b.nodes) == len(a.nodes) and len(b.members) == len(a.members)
    where = {nid: node_at(b, n.x, n.y, tol) for nid, n in a.nodes.items()}
    for n in a.nodes.values():
        assert b.nodes[where[n.id]].hinge == n.hinge
    got = {}
    for m in b.members.values():
        got.setdefault(frozenset((m.start, m.end)), []).append(m)
    for m in a.members.values():
        cands = got.get(frozenset((where[m.start], where[m.end])), [])
        want = m.rise

        def signed(c: Member) -> float:
            return c.rise if c.start == where[m.start] else -c.rise

        assert any(c.kind == m.kind and abs(signed(c) - want) <= tol for c in cands), m
    assert len(b.supports) == len(a.supports)
    for s in a.supports.values():
        t = b.supports[where[s.node]]
        assert (t.kind, t.fixes) == (s.kind, s.fixes)
        assert (t.angle - s.angle) % 360 == pytest.approx(0, abs=1e-9) or (t.angle - s.angle) % 360 == pytest.approx(360)


def test_export_layers_entities_and_caution(tmp_path):
    s = sample_scheme()
    doc = scheme_to_dxf(s)
    msp = doc.modelspace()
    lines = msp.query("LINE")
    arcs = msp.query("ARC")
    assert {(e.dxf.layer, e.dxftype()) for e in lines} == {(LAYER_BEAM, "LINE"), (LAYER_BAR, "LINE")}
    assert len(lines) == 4 and len(arcs) == 3 and {e.dxf.layer for e in arcs} == {LAYER_BEAM}
    inserts = msp.query("INSERT")
    assert sorted(e.dxf.name for e in inserts if e.dxf.layer == LAYER_SUPPORT) == [
        "KINESTAT_CUSTOM_ACROSS_ROTATION", "KINESTAT_FIXED", "KINESTAT_PIN", "KINESTAT_ROLLER"]
    assert [tuple(e.dxf.insert)[:2] for e in inserts if e.dxf.layer == LAYER_HINGE] == [(6.0, 4.0)]
    assert doc.header["$INSUNITS"] == 4
    notes = [e.text for e in msp.query("MTEXT") if e.dxf.layer == LAYER_NOTE]
    assert len(notes) == 1 and "not structural design" in notes[0] and "licensed engineer" in notes[0]
    # ARC radius follows the intersecting chords theorem R = (c^2/4 + s^2) / (2 s)
    for e in arcs:
        assert e.dxf.radius in [pytest.approx((36 / 4 + r * r) / (2 * r)) for r in (1.2, 0.8)] + [pytest.approx(3.0)]
    path = tmp_path / "out.dxf"
    write_dxf(s, path)
    assert ezdxf.readfile(path).modelspace().query("ARC")  # a readable file


def test_round_trip_keeps_members_nodes_kinds_supports_and_hinges(tmp_path):
    s = sample_scheme()
    path = tmp_path / "portal.dxf"
    write_dxf(s, path)
    back, r = read_dxf(path)
    assert_same_scheme(s, back, r.tolerance)
    assert back.units == "mm"
    assert all(x.layer not in (LAYER_BEAM, LAYER_BAR) for x in r.skipped)  # only labels and the note


def test_round_trip_keeps_a_node_no_member_reaches(tmp_path):
    s = sample_scheme()
    s = s.with_node(Node("Z", 3, 9))
    write_dxf(s, tmp_path / "z.dxf")
    back, r = read_dxf(tmp_path / "z.dxf")
    assert_same_scheme(s, back, r.tolerance)


grid_edges = [((i, j), (i + di, j + dj)) for i in range(4) for j in range(3)
              for di, dj in ((1, 0), (0, 1), (1, 1)) if i + di < 4 and j + dj < 3]


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.lists(st.tuples(st.sampled_from(grid_edges), st.sampled_from(["beam", "bar"]),
                          st.floats(-0.3, 0.3)), min_size=1, max_size=12, unique_by=lambda t: t[0]),
       st.sampled_from([0.5, 3.0, 4000.0]), st.floats(-1e4, 1e4), st.floats(-1e4, 1e4),
       st.lists(st.sampled_from(["pin", "roller", "fixed", "guided"]), max_size=3), st.booleans())
def test_round_trip_property(tmp_path_factory, edges, spacing, ox, oy, sup_kinds, hinge):
    # grid-cell edges never pass through another grid point, and arcs of rise <= 0.3 chord keep
    # clear of them, so the drawing has no T-junction the scheme does not have
    nodes, members = {}, {}
    for k, ((p, q), kind, f) in enumerate(edges):
        for g in (p, q):
            nid = f"N{g[0]}_{g[1]}"
            nodes.setdefault(nid, Node(nid, ox + spacing * g[0], oy + spacing * g[1]))
        chord = spacing * math.hypot(q[0] - p[0], q[1] - p[1])
        rise = 0.0 if kind == "bar" or abs(f) < 0.05 else f * chord
        members[f"M{k}"] = Member(f"M{k}", f"N{p[0]}_{p[1]}", f"N{q[0]}_{q[1]}", kind, rise=rise)
    ids = list(nodes)
    supports = {ids[i]: Support(ids[i], kd, angle=30.0 * i + 90) for i, kd in enumerate(sup_kinds) if i < len(ids)}
    if hinge:
        nodes[ids[-1]] = Node(ids[-1], nodes[ids[-1]].x, nodes[ids[-1]].y, hinge=True)
    s = Scheme(nodes, members, supports, units="m")
    path = tmp_path_factory.mktemp("rt") / "s.dxf"
    write_dxf(s, path)
    back, r = read_dxf(path)
    assert_same_scheme(s, back, r.tolerance)


# ----------------------------------------------------------------------- the command line
def _cli(argv):
    from kinestat.app.cli import main

    return main(["convert", *argv])


def test_cli_dxf_to_json_prints_the_report(tmp_path, capsys):
    doc, msp = new_doc(insunits=4)
    msp.add_line((0, 0), (0, 3000), dxfattribs={"layer": "COL"})
    msp.add_line((0, 3000), (5000, 3000), dxfattribs={"layer": "BEAM"})
    msp.add_line((0, 0), (5000, 3000), dxfattribs={"layer": "BRACE"})
    msp.add_text("NOTE")
    doc.saveas(tmp_path / "in.dxf")
    out = tmp_path / "out.json"
    assert _cli([str(tmp_path / "in.dxf"), "-o", str(out), "--layer", "BRACE=bar", "--tol", "1"]) == 0
    printed = capsys.readouterr().out
    assert "Imported 3 members, 3 nodes" in printed and 'layer "BRACE": 1 member as bar' in printed
    assert "TEXT on layer" in printed and "merge tolerance: 1 mm (given)" in printed
    s = loads(out.read_text())
    assert sorted(m.kind for m in s.members.values()) == ["bar", "beam", "beam"] and s.units == "mm"
    assert json.loads(out.read_text())["source"]["from"] == "dxf"


def test_cli_json_to_dxf(tmp_path, capsys):
    src = tmp_path / "s.json"
    src.write_text(dumps(sample_scheme()))
    out = tmp_path / "s.dxf"
    assert _cli([str(src), "-o", str(out)]) == 0
    assert "7 members (4 LINE, 3 ARC), 4 support marks, 1 hinge marks" in capsys.readouterr().out
    back, r = read_dxf(out)
    assert_same_scheme(sample_scheme(), back, r.tolerance)


@pytest.mark.parametrize("argv,needle", [
    (["{d}/broken.dxf", "-o", "{d}/o.json"], "broken.dxf: not a readable DXF file"),
    (["{d}/good.dxf", "-o", "{d}/o.json", "--layer", "FRAME"], '--layer "FRAME": expected NAME=KIND'),
    (["{d}/good.dxf", "-o", "{d}/o.json", "--layer", "FRAME=truss"], 'unknown kind "truss"'),
    (["{d}/good.dxf", "-o", "{d}/o.json", "--layer", "FRAM=bar"], '--layer "FRAM": no entity in good.dxf'),
    (["{d}/good.dxf", "-o", "{d}/o.json", "--tol", "-1"], '--tol "-1": must be a positive number'),
    (["{d}/good.dxf", "-o", "{d}/o.json", "--tol", "x"], '--tol "x": not a number'),
    (["{d}/good.dxf", "-o", "{d}/o.json", "--units", "parsec"], 'unknown unit "parsec"'),
    (["{d}/good.dxf", "-o", "{d}/o.dxf"], "give an output ending in .json"),
    (["{d}/bad.json", "-o", "{d}/o.dxf"], 'member "M1": field "end": unknown node "Q"'),
    (["{d}/good.txt", "-o", "{d}/o.json"], "unknown input type .txt"),
    (["{d}/good.dxf", "-o", "{d}/no/such/dir/o.json"], "cannot be written"),
])
def test_cli_bad_input_gives_one_line_and_no_file(tmp_path, capsys, argv, needle):
    d = tmp_path
    (d / "broken.dxf").write_text("0\nSECTION\n2\nENTITIES\n0\nLINE\n")
    doc, msp = new_doc()
    msp.add_line((0, 0), (5, 0), dxfattribs={"layer": "FRAME"})
    doc.saveas(d / "good.dxf")
    (d / "good.txt").write_text("x")
    (d / "bad.json").write_text(json.dumps({"format": "kinestat-scheme", "version": 1,
                                            "nodes": [{"id": "P", "x": 0, "y": 0}],
                                            "members": [{"id": "M1", "start": "P", "end": "Q"}]}))
    before = sorted(p.name for p in d.iterdir())
    rc = _cli([a.format(d=d) for a in argv])
    err = capsys.readouterr().err
    assert rc != 0
    assert err.count("\n") == 1 and needle in err and err.startswith("kinestat convert: ")
    assert sorted(p.name for p in d.iterdir()) == before  # nothing written, no temporary left


def test_cli_failed_import_leaves_an_existing_output_untouched(tmp_path, capsys):
    out = tmp_path / "o.json"
    out.write_text("previous contents")
    (tmp_path / "empty.dxf").write_text("")
    assert _cli([str(tmp_path / "empty.dxf"), "-o", str(out)]) == 2
    assert out.read_text() == "previous contents"

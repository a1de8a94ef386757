"""Finite or infinitesimal: the second-order test on the constraint Hessian, confirmed by
tracing (Calladine & Pellegrino 1991; Connelly & Whiteley 1996)."""
from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest

from catalogue import build, classic
from kinestat.core.bodies import canonical_modes, rigid_pieces
from kinestat.core.classify import classify
from kinestat.core.constraints import ConstraintModel, null_space
from kinestat.core.io import load
from kinestat.core.motion import trace
from kinestat.core.secondorder import PROBE_STEPS, assess, motion_kind, probe

DATA = Path(__file__).parent / "data"


def _stress_scaled(model, nul, row_label, value):
    """The (single) self-stress scaled so that the row ``row_label`` carries ``value``."""
    assert nul.stress_basis.shape[1] == 1
    w = nul.stress_basis[:, 0]
    k = model.rows.index(row_label)
    return w * (value / w[k])


def _point_velocity(model, nid, components):
    """q-space motion of a point node with the given physical velocity (bars: q is x / lref)."""
    d = np.zeros(model.n)
    e = model.entities[model.node_entity[nid]]
    assert e.kind == "point"
    d[e.offset:e.offset + 2] = np.asarray(components) / model.lref
    return d


# ---------------------------------------------------------------- product forces
def test_collinear_pins_product_force_equals_the_hand_value():
    # Calladine & Pellegrino 1991: Q = sum t_k / L_k |dv_k|^2; two bars of length 2 in unit
    # tension, middle node moving (0, 1): Q = 1/2 + 1/2 = 1 > 0 -> first-order infinitesimal
    s = load(DATA / "kin_collinear_pins.json")
    model = ConstraintModel(s)
    nul = null_space(model)
    assert (nul.m, nul.s) == (1, 1)
    w = _stress_scaled(model, nul, ("link", "left", ""), 1.0)
    d = _point_velocity(model, "B", (0.0, 1.0))
    assert np.abs(model.jac(model.q0) @ d).max() < 1e-15      # a first-order mechanism
    Q = model.lref * float(w @ model.second(model.q0, d))
    assert Q == pytest.approx(1.0, abs=1e-12)
    v = assess(s)
    assert v.motion == "infinitesimal" and v.blocked_order == 2


def test_three_collinear_bars_form_has_eigenvalues_half_and_three_halves():
    # Calladine & Pellegrino 1991 on the chain (0,0)..(6,0), bars 2, unit tension:
    # Q(v1, v2) = (v1^2 + (v2 - v1)^2 + v2^2) / 2 -> [[1, -1/2], [-1/2, 1]], eigenvalues 1/2, 3/2
    s = load(DATA / "kin_collinear_chain.json")
    model = ConstraintModel(s)
    nul = null_space(model)
    assert (nul.m, nul.s) == (2, 1)
    w = _stress_scaled(model, nul, ("link", "b1", ""), 1.0)
    d1 = _point_velocity(model, "B", (0.0, 1.0))
    d2 = _point_velocity(model, "C", (0.0, 1.0))
    H = np.array([[model.lref * float(w @ model.bilinear(model.q0, a, b)) for b in (d1, d2)] for a in (d1, d2)])
    assert H == pytest.approx(np.array([[1.0, -0.5], [-0.5, 1.0]]), abs=1e-12)
    assert np.linalg.eigvalsh(H) == pytest.approx([0.5, 1.5], abs=1e-12)
    assert assess(s).motion == "infinitesimal"


@pytest.mark.parametrize("variant", ["hinge", "end releases"])
def test_flat_three_hinged_arch_of_beams_has_the_same_product_force(variant):
    # the frame counterpart: thrust H = 1 in the springings, crown moving (0, 1): the body-model
    # second-order term equals the bar value H (1/L1 + 1/L2) = 1 (Calladine & Pellegrino 1991)
    if variant == "hinge":
        s = load(DATA / "kin_flat_arch.json")
    else:
        s = build({"A": (0, 0), "B": (2, 0), "C": (4, 0)},
                  [("left", "A", "B", "beam", (), ("moment",)), ("right", "B", "C", "beam")],
                  [("A", "pin"), ("C", "pin")])
    model = ConstraintModel(s)
    nul = null_space(model)
    assert (nul.m, nul.s) == (1, 1)
    w = _stress_scaled(model, nul, ("ground", "A", "across"), 1.0)   # unit horizontal reaction at A
    d = nul.mech_basis[:, 0]
    vB = model.attachment_velocities(model.q0, d)[model.node_att["B"]] * model.lref
    d = d / vB[1]
    assert abs(vB[0] / vB[1]) < 1e-12
    Q = model.lref * float(w @ model.second(model.q0, d))
    assert abs(Q) == pytest.approx(1.0, abs=1e-12)
    assert assess(s).motion == "infinitesimal"


# ---------------------------------------------------------------- infinitesimal cases
def test_reaction_lines_meeting_at_one_point_give_an_infinitesimal_rotation_about_it():
    # concurrent reactions leave a rotation about the meeting point (2, 1) (P&C 1986 split;
    # instant centre, Kennedy) which the supports block at second order (Connelly & Whiteley 1996)
    s = load(DATA / "kin_concurrent_rollers.json")
    v = assess(s)
    # s = 3 (closed welded triangle, closed-loop rule) + 1 (three concurrent reactions)
    assert (v.m, v.s) == (1, 4)
    assert v.motion == "infinitesimal"
    model = ConstraintModel(s)
    nul = null_space(model)
    modes = canonical_modes(model, nul.mech_basis)
    assert [md.kind for md in modes] == ["rigid-body"]
    pieces, still = rigid_pieces(model, model.q0, modes[0].q)
    assert len(pieces) == 1 and not still
    assert pieces[0].centre == pytest.approx((2.0, 1.0), abs=1e-9)
    # tracing confirms: the best corrector residual grows like h^2 (second-order block)
    r1, r2 = v.probe
    assert r2 / r1 == pytest.approx((PROBE_STEPS[1] / PROBE_STEPS[0]) ** 2, rel=0.05)


def test_reaction_line_through_the_pin_blocks_at_second_order():
    # T8: pin at (0,0) and a roller whose reaction line passes through it: rotation about the
    # pin (methods I2: centre (0, 0)), blocked at second order (Connelly & Whiteley 1996)
    s = classic("T8")
    v = assess(s)
    assert v.motion == "infinitesimal"
    model = ConstraintModel(s)
    pieces, _ = rigid_pieces(model, model.q0, v.nullity.mech_basis[:, 0])
    assert pieces[0].centre == pytest.approx((0.0, 0.0), abs=1e-12)


def test_conic_k33_is_prestress_stable():
    # Bolker & Roth 1980: K3,3 on a conic (six points on a circle) flexes infinitesimally,
    # and its one self-stress stiffens the flex (Connelly & Whiteley 1996: prestress stable)
    ang = [10, 70, 130, 200, 250, 320]
    pts = {str(i): (math.cos(math.radians(a)), math.sin(math.radians(a))) for i, a in enumerate(ang)}
    pairs = [(str(a), str(b)) for a in (0, 2, 4) for b in (1, 3, 5)]
    x0, x1 = np.array(pts["0"]), np.array(pts["1"])
    normal = math.degrees(math.atan2(*(x1 - x0)[::-1])) + 90.0
    s = build(pts, [(f"b{k}", a, b, "bar") for k, (a, b) in enumerate(pairs)],
              [("0", "pin"), ("1", "roller", normal)])
    v = assess(s)
    assert (v.m, v.s) == (1, 1)
    assert v.motion == "infinitesimal"
    assert v.reason.startswith("a state of self-stress stiffens")


def test_infinitesimal_mechanism_is_shown_linearised_never_traced():
    s = load(DATA / "kin_collinear_pins.json")
    p = trace(s)
    assert p.motion == "infinitesimal" and p.linearised
    assert "linearised" in p.note and "no physical meaning" in p.note
    assert p.residual is None
    # frames are the drawn position plus multiples of the mode: second differences vanish
    ys = np.array([f["B"][1] for f in p.frames])
    assert np.abs(np.diff(ys, 2)).max() < 1e-12
    assert p.frames[p.start]["B"] == pytest.approx((2.0, 0.0), abs=1e-15)
    xs = np.array([f["B"][0] for f in p.frames])
    assert np.abs(xs - 2.0).max() < 1e-15     # the linearised mode of B is vertical


# ---------------------------------------------------------------- finite cases
def test_parallel_rollers_let_the_panel_slide_finitely():
    # three parallel reactions (methods I3): omega = 0, translation along (1, 0), finite
    s = load(DATA / "kin_parallel_rollers.json")
    v = assess(s)
    assert (v.m, v.s) == (1, 1) and v.motion == "finite"
    p = trace(s)
    assert p.bodies[0].centre is None
    assert np.abs(p.bodies[0].direction) == pytest.approx((1.0, 0.0), abs=1e-12)
    assert p.ended == {"forward": "limit", "backward": "limit"}
    for f in p.frames:
        dx = f["A"][0] - 0.0
        for nid in "ABC":
            x0, y0 = s.node_xy(nid)
            assert f[nid][1] == pytest.approx(y0, abs=1e-12)
            assert f[nid][0] - x0 == pytest.approx(dx, abs=1e-12)
    assert max(abs(f["A"][0]) for f in p.frames) > s.size()
    assert p.residual < 1e-9


def test_portal_with_four_hinges_sways_as_a_parallelogram():
    # sway mechanism (common practice): columns turn about the feet by the same angle, the
    # beam translates and stays level (elementary geometry of the parallelogram)
    s = load(DATA / "kin_portal_four_hinges.json")
    v = assess(s)
    assert (v.m, v.s) == (1, 0) and v.motion == "finite"
    p = trace(s)
    by = {b.members: b for b in p.bodies}
    assert by[("beam",)].centre is None
    assert np.abs(by[("beam",)].direction) == pytest.approx((1.0, 0.0), abs=1e-12)
    assert by[("col_left",)].centre == pytest.approx((0.0, 0.0), abs=1e-12)
    assert by[("col_right",)].centre == pytest.approx((4.0, 0.0), abs=1e-12)
    for f in p.frames:
        phi = math.atan2(f["B"][0], f["B"][1])
        assert f["B"] == pytest.approx((3 * math.sin(phi), 3 * math.cos(phi)), abs=1e-9)
        assert f["C"] == pytest.approx((4 + 3 * math.sin(phi), 3 * math.cos(phi)), abs=1e-9)
    assert p.residual < 1e-9


def test_change_point_has_the_two_branch_tangents_of_the_null_cone():
    # flattened parallelogram A(0,0) B(1,0) C(3,0) D(2,0) (Grashof equality, change point):
    # Q(vB, vC) = 1.5 vB^2 - vB vC - 0.5 vC^2 is indefinite; its null cone gives the
    # parallelogram branch vC/vB = +1 and the anti-parallelogram branch vC/vB = -3
    # (Connelly & Whiteley 1996; roots of 0.5 r^2 + r - 1.5 = 0)
    s = load(DATA / "kin_change_point.json")
    v = assess(s)
    assert (v.m, v.s) == (2, 1) and v.motion == "finite"
    model = ConstraintModel(s)
    ratios = []
    for d in v.directions:
        vel = model.attachment_velocities(model.q0, d)
        ratios.append(vel[model.node_att["C"]][1] / vel[model.node_att["B"]][1])
    assert sorted(ratios) == pytest.approx([-3.0, 1.0], abs=1e-9)
    p = trace(s)
    assert p.motion == "finite" and p.residual < 1e-9
    for f in p.frames:
        for m in s.members.values():
            assert math.dist(f[m.start], f[m.end]) == pytest.approx(math.dist(s.node_xy(m.start), s.node_xy(m.end)),
                                                                    abs=1e-9)


def test_self_stress_away_from_the_moving_part_leaves_it_finite():
    # methods S5: a four-bar beside a separately stressed node: H = 0, tracing shows finite
    s = build({"A": (0, 0), "B": (1, 2), "C": (5, 3), "D": (6, 0), "E": (11, 2), "F": (10, 0), "G": (12, 0),
               "H": (11, 4)},
              [("b1", "A", "B", "bar"), ("b2", "B", "C", "bar"), ("b3", "C", "D", "bar"),
               ("b4", "E", "F", "bar"), ("b5", "E", "G", "bar"), ("b6", "E", "H", "bar")],
              [("A", "pin"), ("D", "pin"), ("F", "pin"), ("G", "pin"), ("H", "pin")])
    v = assess(s)
    assert (v.m, v.s) == (1, 1)
    assert all(np.abs(H).max() < 1e-12 for H in v.forms)
    assert v.motion == "finite"
    assert max(v.probe) < 1e-12


def _cross(u, v):
    return u[0] * v[1] - u[1] * v[0]


def test_dixon_k33_flexes_finitely():
    # Dixon 1899 type I: K3,3 with its classes on two perpendicular lines flexes
    # (a_i^2 + t, b_j^2 - t keeps every a_i^2 + b_j^2): the classes stay on two perpendicular
    # lines while the shape really changes
    pts = {"0": (1, 0), "2": (2, 0), "4": (-1.5, 0), "1": (0, 1), "3": (0, 2), "5": (0, -1)}
    pairs = [(a, b) for a in "024" for b in "135"]
    s = build(pts, [(f"b{k}", a, b, "bar") for k, (a, b) in enumerate(pairs)], [("0", "pin"), ("1", "roller", 0.0)])
    v = assess(s)
    assert (v.m, v.s) == (1, 1) and v.motion == "finite"
    p = trace(s, steps=30)
    assert p.residual < 1e-9
    moved = False
    for f in p.frames:
        P = {k: np.array(f[k]) for k in pts}
        ux, uy = P["2"] - P["0"], P["3"] - P["1"]
        assert abs(_cross(ux, P["4"] - P["0"])) < 1e-9          # x-class collinear
        assert abs(_cross(uy, P["5"] - P["1"])) < 1e-9          # y-class collinear
        assert abs(ux @ uy) < 1e-9 * np.linalg.norm(ux) * np.linalg.norm(uy)   # lines stay perpendicular
        for a, b in pairs:
            assert math.dist(f[a], f[b]) == pytest.approx(math.dist(pts[a], pts[b]), abs=1e-9)
        moved |= abs(math.dist(f["0"], f["2"]) - 1.0) > 1e-3    # a non-bar distance changes
    assert moved


def test_cantilever_with_a_shear_release_slides_finitely():
    # F14: the outer segment slides across the release at B and stays parallel (sliding sleeve,
    # common practice): B and C move together, straight across the member
    s = classic("F14")
    p = trace(s)
    assert p.motion == "finite"
    for f in p.frames:
        assert f["A"] == pytest.approx((0.0, 0.0), abs=1e-12)
        assert f["B"][0] == pytest.approx(2.0, abs=1e-12)
        assert f["C"][0] == pytest.approx(4.0, abs=1e-12)
        assert f["C"][1] == pytest.approx(f["B"][1], abs=1e-12)
    assert max(abs(f["C"][1]) for f in p.frames) > 1.0


# ---------------------------------------------------------------- the check verdict
@pytest.mark.parametrize("name,expected", [
    ("T1", "none"),            # determinate (Maxwell 1864)
    ("F3", "none"),            # fixed portal, indeterminate
    ("T4", "finite"),          # unbraced panel, s = 0 (Asimow & Roth 1978)
    ("T5", "infinitesimal"),   # collinear bars (Calladine & Pellegrino 1991)
    ("T6", "infinitesimal"),   # collinear chain (Calladine & Pellegrino 1991)
    ("T7", "finite"),          # parallel reactions: finite slide
    ("T8", "infinitesimal"),   # reaction line through the pin
    ("T10", "finite"),         # free body: rigid-body motions
    ("T13", "finite"),         # empty panel shears although another panel is doubly braced
    ("F6", "finite"),          # portal with four hinges
    ("F8", "finite"),          # beam on three parallel rollers
    ("F12", "infinitesimal"),  # flat three-hinged arch
    ("F14", "finite"),         # shear release
])
def test_motion_kind_for_the_check_command(name, expected):
    s = classic(name)
    c = classify(s)
    assert motion_kind(s, c) == expected
    assert motion_kind(s) == expected


def test_probe_separates_exact_motion_from_blocked_motion():
    # a finite motion is followed to rounding level; a blocked one leaves an h^2 residual
    fin = ConstraintModel(load(DATA / "kin_crank_rocker.json"))
    d = null_space(fin).mech_basis[:, 0]
    assert max(probe(fin, d)) < 1e-13
    inf = ConstraintModel(load(DATA / "kin_collinear_pins.json"))
    d = null_space(inf).mech_basis[:, 0]
    r1, r2 = probe(inf, d)
    assert r1 > 1e-7 and r2 / r1 == pytest.approx(6.25, rel=0.05)

"""The rigid-body constraint model: (m, s) against the node model and published values,
exact derivatives, and the Newton projection.

The body model and the node (equilibrium-matrix) model are two formulations of the same
kinematics (Nikravesh 1988; Haug 1989): their (m, s) must agree on every scheme.
"""
from __future__ import annotations

import random
from pathlib import Path

import numpy as np
import pytest
import sympy as sp_

from catalogue import CLASSICS, build, classic, random_scheme
from kinestat.core.assemble import assemble
from kinestat.core.constraints import ConstraintModel, null_space
from kinestat.core.io import load

DATA = Path(__file__).parent / "data"

# (m, s) of the worked classics, with their sources (methods reference, section 2.5)
EXPECTED = {
    "T1": (0, 0),   # Maxwell 1864: 3 + 3 - 6 = 0, triangulated (common practice)
    "T3": (0, 1),   # Maxwell 1864: 6 + 3 - 8 = 1 (common practice)
    "T4": (1, 0),   # Maxwell 1864: 4 + 3 - 8 = -1, unbraced panel shears (common practice)
    "T5": (1, 1),   # Pellegrino & Calladine 1986: collinear bars
    "T6": (2, 1),   # Pellegrino & Calladine 1986: three collinear bars
    "T7": (1, 1),   # common practice: parallel reactions
    "T8": (1, 1),   # common practice: reaction line through the pin
    "T10": (3, 0),  # Pellegrino & Calladine 1986: a free body has 3 rigid-body motions
    "T13": (1, 1),  # Calladine 1978: count 0 hides a mechanism and a self-stress
    "F3": (0, 3),   # closed-loop rule (from memory): fixed portal 3 * 1 - 0
    "F4": (0, 1),   # closed-loop rule (from memory): pinned portal 3 * 1 - 2
    "F5": (0, 0),   # common practice: three-hinged portal
    "F6": (1, 0),   # common practice: four hinges give a sway mechanism
    "F9": (3, 3),   # from memory: free closed ring, 3 inside, 3 rigid-body motions
    "F10": (0, 3),  # closed-loop rule (from memory): ring on pin + roller, 3 * 2 - 3
    "F11": (0, 4),  # from memory (n - 1 hinge rule): 9 + 9 - 12 - 2 = 4
    "F12": (1, 1),  # common practice: flat three-hinged arch
    "F13": (0, 0),  # from memory: shear release is one equation of condition
    "F14": (1, 0),  # from memory: cantilever with a shear release slides
    "F15": (0, 2),  # from memory: axial release is one equation of condition
    "F16": (0, 2),  # from memory: pinned portal plus one diagonal bar
}


def _numeric_rank(M) -> int:
    """Rank by SVD with a relative cut-off well inside the gap (common practice)."""
    M = M.toarray() if hasattr(M, "toarray") else np.asarray(M)
    if M.size == 0:
        return 0
    sv = np.linalg.svd(M, compute_uv=False)
    return int(np.count_nonzero(sv > 1e-9 * max(sv.max(), 1.0)))


def _node_model_ms(scheme):
    A = assemble(scheme).A
    r = _numeric_rank(A)
    return A.shape[0] - r, A.shape[1] - r


@pytest.mark.parametrize("name", sorted(EXPECTED))
def test_body_model_matches_published_counts(name):
    scheme = classic(name)
    nul = null_space(ConstraintModel(scheme))
    assert (nul.m, nul.s) == EXPECTED[name]


@pytest.mark.parametrize("name", sorted(CLASSICS))
def test_body_model_equals_node_model_on_classics(name):
    # two formulations of the same kinematics (Nikravesh 1988; Haug 1989)
    scheme = classic(name)
    nul = null_space(ConstraintModel(scheme))
    assert (nul.m, nul.s) == _node_model_ms(scheme)


@pytest.mark.parametrize("path", sorted(p.name for p in DATA.glob("kin_*.json") if "bad" not in p.name))
def test_body_model_equals_node_model_on_examples(path):
    scheme = load(DATA / path)
    nul = null_space(ConstraintModel(scheme))
    assert (nul.m, nul.s) == _node_model_ms(scheme)


def test_body_model_equals_node_model_on_random_schemes():
    # property: same (m, s) on 300 random schemes of every family (Nikravesh 1988 / Haug 1989)
    rng = random.Random(20240611)
    for _ in range(300):
        scheme = random_scheme(rng)
        model = ConstraintModel(scheme)
        J = model.jac(model.q0)
        r = _numeric_rank(J) if model.r else 0
        body = (model.n - r, model.r - r + model.internal_self_stress())
        assert body == _node_model_ms(scheme), scheme.title


def test_gruebler_count_is_rows_minus_unknowns():
    # Gruebler-Kutzbach / Chebychev: s - m = rows - 3 N_bodies - 2 N_points (rank-nullity)
    rng = random.Random(5)
    for _ in range(100):
        scheme = random_scheme(rng)
        model = ConstraintModel(scheme)
        nul = null_space(model)
        assert nul.s - nul.m == model.r + model.internal_self_stress() - model.n


def _messy_frame():
    # every row type: pin, link, slide along and across, angle, ground, body points on arcs
    return build({"A": (0, 0), "B": (0, 3), "C": (4, 3), "D": (4, 0), "E": (2, 3), "F": (6, 2)},
                 [("c1", "A", "B", "beam"), ("b1", "B", "E", "beam", ("shear",), ()),
                  ("b2", "E", "C", "beam", (), (), 0.5), ("c2", "C", "D", "beam", (), ("axial",)),
                  ("x", "C", "F", "bar"), ("y", "F", "D", "beam", ("moment", "shear"), ())],
                 [("A", "fixed"), ("D", "roller", 30.0), ("F", "guided", 10.0)], hinges=("E",))


def test_jacobian_and_second_derivative_match_the_definition():
    # definition of the derivative: Richardson-extrapolated difference quotients of Phi itself
    model = ConstraintModel(_messy_frame())
    rng = np.random.default_rng(1)
    q = model.q0 + 0.1 * rng.standard_normal(model.n)
    d = rng.standard_normal(model.n)
    t = sp_.Symbol("t")
    eps = 1e-6
    J = model.jac(q).toarray()
    def fd1(h):
        return (model.phi(q + h * d) - model.phi(q - h * d)) / (2 * h)
    rich1 = (4 * fd1(eps) - fd1(2 * eps)) / 3
    assert np.allclose(J @ d, rich1, atol=1e-8)
    def fd2(h):
        return (model.phi(q + h * d) - 2 * model.phi(q) + model.phi(q - h * d)) / h ** 2
    rich2 = (4 * fd2(1e-3) - fd2(2e-3)) / 3
    assert np.allclose(model.second(q, d), rich2, atol=1e-6)
    # exact arithmetic (sympy) for a link row along the attachment velocities
    link_rows = [k for k, (kind, *_rest) in enumerate(model.rows) if kind == "link"]
    assert link_rows
    a, b, ell, rr = model._link
    P = model.attachment_positions(q)
    dP = model.attachment_velocities(q, d)
    g = sp_.Matrix(P[a[0]]) + t * sp_.Matrix(dP[a[0]]) - sp_.Matrix(P[b[0]]) - t * sp_.Matrix(dP[b[0]])
    expr = (g.dot(g) - ell[0] ** 2) / (2 * ell[0])
    assert abs(float(sp_.diff(expr, t).subs(t, 0)) - (J @ d)[rr[0]]) < 1e-9


def test_second_derivative_is_a_quadratic_form():
    # polarisation identity of a quadratic form: Q(x + y) + Q(x - y) = 2 Q(x) + 2 Q(y)
    model = ConstraintModel(_messy_frame())
    rng = np.random.default_rng(2)
    q = model.q0 + 0.05 * rng.standard_normal(model.n)
    x, y = rng.standard_normal(model.n), rng.standard_normal(model.n)
    lhs = model.second(q, x + y) + model.second(q, x - y)
    rhs = 2 * model.second(q, x) + 2 * model.second(q, y)
    assert np.allclose(lhs, rhs, atol=1e-12)
    assert np.allclose(model.second(q, 3 * x), 9 * model.second(q, x), atol=1e-11)


def test_drawn_position_satisfies_the_constraints():
    for name in CLASSICS:
        model = ConstraintModel(classic(name))
        assert model.residual(model.q0) < 1e-14
        pos = model.node_positions(model.q0)
        for nid, n in model.scheme.nodes.items():
            assert pos[nid] == pytest.approx((n.x, n.y), abs=1e-12)


def test_projection_returns_to_the_constraint_surface_and_keeps_lengths():
    # a perturbed four-bar is pulled back onto Phi = 0: bar lengths restored (definition)
    scheme = load(DATA / "kin_crank_rocker.json")
    model = ConstraintModel(scheme)
    rng = np.random.default_rng(3)
    y, ok, _, _ = model.project(model.q0 + 0.05 * rng.standard_normal(model.n))
    assert ok
    pos = model.node_positions(y)
    for m in scheme.members.values():
        L0 = np.hypot(*(np.subtract(scheme.node_xy(m.end), scheme.node_xy(m.start))))
        L = np.hypot(*(np.subtract(pos[m.end], pos[m.start])))
        assert abs(L - L0) < 1e-12 * scheme.size()
    assert pos["O2"] == pytest.approx((0.0, 0.0), abs=1e-12)
    assert pos["O4"] == pytest.approx((6.0, 0.0), abs=1e-12)


def test_closed_rigid_loop_counts_three_self_stresses_without_rows():
    # a welded ring is one body: its 3 redundancies are carried by the loop count (closed-loop rule)
    model = ConstraintModel(classic("F9"))
    assert model.rigid_loops() == 1
    assert model.r == 0 and model.n == 3

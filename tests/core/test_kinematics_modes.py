"""The canonical mode basis: same picture whatever the numbering, rigid-body modes first,
orthonormal, and the same space as the engine's mechanisms (Pellegrino & Calladine 1986)."""
from __future__ import annotations

import random
from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest

from catalogue import build, classic
from kinestat.core.bodies import canonical_modes
from kinestat.core.classify import classify
from kinestat.core.constraints import ConstraintModel, null_space
from kinestat.core.io import load
from kinestat.core.model import Member, Node, Scheme, Support
from kinestat.core.motion import trace

DATA = Path(__file__).parent / "data"


def _modes(scheme):
    model = ConstraintModel(scheme)
    return model, canonical_modes(model, null_space(model).mech_basis)


def _renumbered(scheme: Scheme, seed: int) -> tuple[Scheme, dict[str, str]]:
    """Same scheme with new node ids, shuffled node and member order, and members reversed."""
    rng = random.Random(seed)
    ids = list(scheme.nodes)
    new = {nid: f"n{k}" for k, nid in enumerate(rng.sample(ids, len(ids)))}
    nodes = {new[n.id]: Node(new[n.id], n.x, n.y, n.hinge) for n in scheme.nodes.values()}
    nodes = dict(rng.sample(list(nodes.items()), len(nodes)))
    members = {}
    for m in rng.sample(list(scheme.members.values()), len(scheme.members)):
        if rng.random() < 0.5:
            members[m.id] = replace(m, start=new[m.end], end=new[m.start], releases_start=m.releases_end,
                                    releases_end=m.releases_start, rise=-m.rise)
        else:
            members[m.id] = replace(m, start=new[m.start], end=new[m.end])
    supports = {new[k]: replace(s, node=new[k]) for k, s in scheme.supports.items()}
    return Scheme(nodes, members, supports), new


SCHEMES = {
    "five-bar": lambda: load(DATA / "kin_five_bar.json"),
    "portal sway": lambda: load(DATA / "kin_portal_four_hinges.json"),
    "parallel rollers": lambda: load(DATA / "kin_parallel_rollers.json"),
    "free triangle": lambda: classic("T10"),
    "unbraced square on rollers": lambda: build({"A": (0, 0), "B": (4, 0), "C": (4, 3), "D": (0, 3)},
                                                [("b1", "A", "B", "bar"), ("b2", "B", "C", "bar"),
                                                 ("b3", "C", "D", "bar"), ("b4", "D", "A", "bar")],
                                                [("A", "roller"), ("B", "roller")]),
    "two panels": lambda: build({"A": (0, 0), "B": (3, 0), "C": (6, 0), "D": (0, 3), "E": (3, 3), "F": (6, 3)},
                                [("b1", "A", "B", "bar"), ("b2", "B", "C", "bar"), ("b3", "D", "E", "bar"),
                                 ("b4", "E", "F", "bar"), ("b5", "A", "D", "bar"), ("b6", "B", "E", "bar"),
                                 ("b7", "C", "F", "bar")], [("A", "pin"), ("C", "pin")]),
}


@pytest.mark.parametrize("name", sorted(SCHEMES))
def test_modes_do_not_depend_on_numbering(name):
    scheme = SCHEMES[name]()
    _, ref = _modes(scheme)
    for seed in range(4):
        other, new = _renumbered(scheme, seed)
        _, modes = _modes(other)
        assert [md.kind for md in modes] == [md.kind for md in ref]
        for a, b in zip(ref, modes):
            for nid, v in a.node_velocities.items():
                assert b.node_velocities[new[nid]] == pytest.approx(v, abs=1e-9)


@pytest.mark.parametrize("name", sorted(SCHEMES))
def test_modes_are_orthonormal_null_vectors_with_rigid_ones_first(name):
    scheme = SCHEMES[name]()
    model, modes = _modes(scheme)
    nul = null_space(model)
    assert len(modes) == nul.m
    V = model.velocity_matrix(model.q0)
    Y = np.column_stack([V @ md.q for md in modes])
    assert Y.T @ Y == pytest.approx(np.eye(len(modes)), abs=1e-10)
    J = model.jac(model.q0)
    for md in modes:
        assert np.abs(J @ md.q).max() < 1e-12
    kinds = [md.kind for md in modes]
    assert kinds == sorted(kinds, key=lambda k: k != "rigid-body")
    # the rigid-body count is the P&C 1986 split: 3 - rank(A_reac^T T)
    assert kinds.count("rigid-body") == classify(scheme).rigid_body_mechanisms


def test_rigid_body_modes_follow_x_then_y_then_rotation():
    # free triangle (T10): 3 rigid-body motions: x translation, y translation, rotation about the centroid
    _, modes = _modes(classic("T10"))
    assert [md.kind for md in modes] == ["rigid-body"] * 3
    vx = np.array(list(modes[0].node_velocities.values()))
    vy = np.array(list(modes[1].node_velocities.values()))
    assert vx == pytest.approx(np.tile([1.0, 0.0], (3, 1)), abs=1e-12)
    assert vy == pytest.approx(np.tile([0.0, 1.0], (3, 1)), abs=1e-12)
    rot = modes[2].node_velocities
    c = np.mean([(0, 0), (4, 0), (2, 3)], axis=0)
    for nid, (x, y) in {"A": (0, 0), "B": (4, 0), "C": (2, 3)}.items():
        r = np.array([x, y]) - c
        v = np.array(rot[nid])
        assert abs(v @ r) < 1e-12        # perpendicular to the radius: a rotation about the centroid


def test_modes_span_the_engines_mechanisms():
    # node velocities of the canonical modes and the node-DOF part of the engine's mechanism
    # basis span the same space (two formulations of one kinematics)
    for scheme in (SCHEMES["five-bar"](), SCHEMES["two panels"](), SCHEMES["unbraced square on rollers"]()):
        c = classify(scheme, bases=True)
        sysm = c.system
        rows = [i for nid in sysm.active_nodes for i in sysm.node_dof[nid][:2]]
        E = c.mechanism_basis[rows]
        _, modes = _modes(scheme)
        M = np.column_stack([np.ravel([md.node_velocities[n] for n in sysm.active_nodes]) for md in modes])
        qe, _ = np.linalg.qr(E)
        qm, _ = np.linalg.qr(M)
        assert np.linalg.svd(qe.T @ qm, compute_uv=False) == pytest.approx(np.ones(len(modes)), abs=1e-9)


def test_sway_mode_sign_is_fixed_by_the_first_node_in_position_order():
    # the leftmost-lowest moving node's leading velocity component is positive (deterministic sign)
    _, modes = _modes(load(DATA / "kin_portal_four_hinges.json"))
    assert modes[0].node_velocities["B"][0] == pytest.approx(1.0, abs=1e-12)
    assert modes[0].node_velocities["C"][0] == pytest.approx(1.0, abs=1e-12)


def test_two_independent_panels_get_one_mode_each():
    # two unbraced panels side by side: the canonical basis separates the panels' shears
    _, modes = _modes(SCHEMES["two panels"]())
    assert len(modes) == 2
    assert all(md.kind == "internal" for md in modes)
    moving = [{n for n, v in md.node_velocities.items() if np.hypot(*v) > 1e-9} for md in modes]
    assert moving[0] != moving[1]


def test_a_combination_of_modes_is_traced():
    s = load(DATA / "kin_five_bar.json")
    p1 = trace(s, mode=1, steps=5)
    p2 = trace(s, weights=[1.0, 0.0], steps=5)
    assert p2.mode is None
    for f, g in zip(p1.frames, p2.frames):
        for nid in f:
            assert f[nid] == pytest.approx(g[nid], abs=1e-12)
    p3 = trace(s, weights=[1.0, 1.0], steps=5)
    assert p3.frames[p3.start] == p1.frames[p1.start]
    assert p3.frames[-1] != p1.frames[-1]
    with pytest.raises(ValueError, match="mode 3 does not exist"):
        trace(s, mode=3)

"""Tracing behaviour: members passing through each other, branches kept through bifurcations,
step budget, residuals along the path."""
from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest

from catalogue import build, strip_truss
from kinestat.core.constraints import ConstraintModel
from kinestat.core.io import load
from kinestat.core.motion import trace

DATA = Path(__file__).parent / "data"


def test_a_stop_thinner_than_one_step_is_still_hit():
    # an arm pinned at O swings; a stop 0.01 long lies across its path at 100 deg, radius 2:
    # contact where the arm meets the stop's ends, 100 +- atan(0.005 / 2) deg (elementary geometry)
    s = load(DATA / "kin_pendulum_stop.json")
    p = trace(s)
    assert p.ended == {"forward": "clash", "backward": "clash"}
    ends = sorted(math.degrees(math.atan2(f["P"][1], f["P"][0])) for f in (p.frames[0], p.frames[-1]))
    half = math.degrees(math.atan2(0.005, 2.0))
    assert ends == pytest.approx([100 - half, 100 + half], abs=1e-6)
    # without clash detection the arm turns fully (a single pinned bar)
    assert trace(s, clash=False).ended["forward"] == "full cycle"


def test_parallelogram_passes_its_change_point_on_the_same_branch():
    # Grashof change point (ground 2, cranks 1, coupler 2): through the flat position the
    # linkage can switch to the anti-parallelogram; tracing must stay a parallelogram
    # (coupler parallel to the ground in every frame) and report the bifurcation passed
    # (Allgower & Georg 1990: det[J; t] changes sign at a simple bifurcation)
    th = math.radians(20.0)
    s = build({"A": (0, 0), "B": (math.cos(th), math.sin(th)), "C": (2 + math.cos(th), math.sin(th)), "D": (2, 0)},
              [("ab", "A", "B", "bar"), ("bc", "B", "C", "bar"), ("cd", "D", "C", "bar")],
              [("A", "pin"), ("D", "pin")])
    p = trace(s, clash=False)
    assert p.ended["forward"] == "full cycle"
    for f in p.frames:
        assert f["C"][1] == pytest.approx(f["B"][1], abs=1e-9)
        assert f["C"][0] - f["B"][0] == pytest.approx(2.0, abs=1e-9)
    kinds = [e["kind"] for e in p.events]
    assert kinds.count("bifurcation") == 2       # the two flat positions of one turn


def test_step_budget_ends_with_limit():
    s = load(DATA / "kin_crank_rocker.json")
    p = trace(s, steps=10)
    assert p.ended == {"forward": "limit", "backward": "limit"}
    assert len(p.frames) == 21 and p.start == 10


@pytest.mark.parametrize("file", ["kin_six_bar.json", "kin_watt_six_bar.json", "kin_five_bar.json",
                                  "kin_four_bar_beams.json", "kin_portal_four_hinges.json"])
def test_residual_stays_below_1e_9_of_the_model_size(file):
    # the accuracy target, checked on the geometry itself: every member keeps its
    # chord length and every fixed point stays put in every frame
    s = load(DATA / file)
    p = trace(s)
    assert p.residual < 1e-9
    size = s.size()
    for f in p.frames:
        for m in s.members.values():
            assert abs(math.dist(f[m.start], f[m.end]) - math.dist(s.node_xy(m.start), s.node_xy(m.end))) < 1e-9 * size
        for nid, sup in s.supports.items():
            if sup.kind in ("pin", "fixed"):
                assert math.dist(f[nid], s.node_xy(nid)) < 1e-9 * size


def test_long_strip_with_one_panel_unbraced_traces_on_the_sparse_path():
    # 60 panels (~240 bars): above the dense size, the corrector runs on sparse factors
    s = strip_truss(60, missing=(30,))
    model = ConstraintModel(s)
    assert model.n > 150
    p = trace(s, steps=15, model=model)
    assert p.motion == "finite" and p.residual < 1e-9
    moved = max(math.dist(p.frames[-1][k], p.frames[p.start][k]) for k in s.nodes)
    assert moved > 0.05
    for f in (p.frames[0], p.frames[-1]):
        for m in s.members.values():
            assert abs(math.dist(f[m.start], f[m.end]) - math.dist(s.node_xy(m.start), s.node_xy(m.end))) < 1e-9 * s.size()


def test_traced_motion_starts_along_the_chosen_mode():
    # the first step leaves the drawn position along the canonical mode (predictor tangent)
    s = load(DATA / "kin_five_bar.json")
    for k in (1, 2):
        p = trace(s, mode=k, steps=1)
        v = p.modes[k - 1].node_velocities
        f0, f1 = p.frames[p.start], p.frames[p.start + 1]
        dx = np.array([np.subtract(f1[n], f0[n]) for n in s.nodes]).ravel()
        ref = np.array([v[n] for n in s.nodes]).ravel()
        cosang = dx @ ref / (np.linalg.norm(dx) * np.linalg.norm(ref))
        assert cosang > 0.99

"""Redundancy distribution, canonical states of self-stress and critical items.

Sources: M. von Scheven, E. Ramm & M. Bischoff (2021), "Quantification of the redundancy
distribution in truss and beam structures", IJSS 213 (R = F S (S^T F S)^-1 S^T and its
stiffness form R = I - A^T K^-1 A C, R idempotent, trace R = s, 0 <= R_ii <= 1, R_ii = 0
exactly for members whose removal makes a mechanism); exact arithmetic with sympy, built
here from the geometry independently of the engine; the carry-over factor 1/2 of a
prismatic member (moment distribution, H. Cross 1930, handbook fact); matroid circuits
(minimal dependent sets, J. Oxley, Matroid Theory, from memory).
"""
from __future__ import annotations

import json
import math
import random
from dataclasses import replace

import numpy as np
import pytest
import sympy as sy
from hypothesis import given, settings
from hypothesis import strategies as st

from catalogue import bars, build, classic, random_scheme, rigid_frame, strip_truss
from kinestat.core.classify import classify
from kinestat.core.model import Member, Node, Support
from kinestat.core.redundancy import (
    flexibility,
    redundancy,
    removal_checks,
    support_with_fixes,
    without_restraint,
)
from kinestat.core.report_data import check_json

SQRT2 = sy.sqrt(2)


# ----------------------------------------------------------------------------- exact reference
def exact_truss_diag(nodes, pairs, free, ea=None):
    """Diagonal of R for a pin-jointed truss, exactly (sympy), from its own assembly.

    ``free``: the free degrees of freedom as (node, "u"/"v"); supported ones are omitted
    (rigid supports).  R = F S (S^T F S)^-1 S^T with F = diag(L / EA).
    """
    ea = ea or [1] * len(pairs)
    rows = {dof: k for k, dof in enumerate(free)}
    A = sy.zeros(len(free), len(pairs))
    F = sy.zeros(len(pairs), len(pairs))
    for j, (a, b) in enumerate(pairs):
        (x0, y0), (x1, y1) = nodes[a], nodes[b]
        dx, dy = sy.Rational(x1) - x0, sy.Rational(y1) - y0
        L = sy.sqrt(dx ** 2 + dy ** 2)
        for node, sgn in ((a, -1), (b, 1)):
            if (node, "u") in rows:
                A[rows[(node, "u")], j] += sgn * dx / L
            if (node, "v") in rows:
                A[rows[(node, "v")], j] += sgn * dy / L
        F[j, j] = L / ea[j]
    S = sy.Matrix.hstack(*A.nullspace())
    R = F * S * (S.T * F * S).inv() * S.T
    return [sy.nsimplify(sy.simplify(R[k, k])) for k in range(len(pairs))], R


FAN_NODES = {"O": (0, 0), "P": (-1, 1), "Q": (0, 1), "S": (1, 1)}
FAN_PAIRS = [("O", "P"), ("O", "Q"), ("O", "S")]


def fan(mid_ea=1.0):
    sch = build(FAN_NODES, bars(FAN_PAIRS), [("P", "pin"), ("Q", "pin"), ("S", "pin")])
    return sch.with_member(replace(sch.members["b1"], axial_stiffness=mid_ea))


def test_fan_exact_r1():
    # R1: von Scheven et al. 2021 definition; exact values by sympy here
    diag, R = exact_truss_diag(FAN_NODES, FAN_PAIRS, [("O", "u"), ("O", "v")])
    expected = [1 - SQRT2 / 2, SQRT2 - 1, 1 - SQRT2 / 2]
    assert all(sy.simplify(d - e) == 0 for d, e in zip(diag, expected))
    assert sy.simplify(R * R - R) == sy.zeros(3, 3)          # idempotent
    red = redundancy(fan())
    for k, e in enumerate(expected):
        assert red.members[f"b{k}"] == pytest.approx(float(e), abs=1e-12)
    assert red.total == pytest.approx(1.0, abs=1e-12)        # trace = s = 1


def test_fan_middle_bar_twice_as_stiff_r1b():
    # R1b: exact sympy; a stiffer middle bar takes less of the redundancy
    diag, _ = exact_truss_diag(FAN_NODES, FAN_PAIRS, [("O", "u"), ("O", "v")], ea=[1, 2, 1])
    expected = [(4 - SQRT2) / 7, (2 * SQRT2 - 1) / 7, (4 - SQRT2) / 7]
    assert all(sy.simplify(d - e) == 0 for d, e in zip(diag, expected))
    red = redundancy(fan(2.0))
    assert [red.members[f"b{k}"] for k in range(3)] == pytest.approx([float(e) for e in expected], abs=1e-12)


SQ_NODES = {"0": (0, 0), "1": (4, 0), "2": (4, 3), "3": (0, 3)}
SQ_PAIRS = [("0", "1"), ("1", "2"), ("2", "3"), ("3", "0"), ("0", "2"), ("1", "3")]


def test_braced_square_r2_and_appendage_r3():
    # R2: one state t = (1, .75, 1, .75, -1.25, -1.25): R_kk = L t_k^2 / sum L t^2 (hand check)
    free = [("1", "u"), ("2", "u"), ("2", "v"), ("3", "u"), ("3", "v")]
    diag, _ = exact_truss_diag(SQ_NODES, SQ_PAIRS, free)
    expected = [sy.Rational(4, 27), sy.Rational(1, 16), sy.Rational(4, 27), sy.Rational(1, 16),
                sy.Rational(125, 432), sy.Rational(125, 432)]
    assert diag == expected
    sq = build(SQ_NODES, bars(SQ_PAIRS), [("0", "pin"), ("1", "roller")])
    red = redundancy(sq)
    assert [red.members[f"b{k}"] for k in range(6)] == pytest.approx([float(e) for e in expected], abs=1e-12)
    # R3: a determinate appendage (node (6, 1.5) on bars to 1 and 2) takes nothing, the rest is unchanged
    app = sq.with_node(Node("X", 6.0, 1.5))
    app = app.with_member(Member("a1", "1", "X", "bar")).with_member(Member("a2", "2", "X", "bar"))
    red3 = redundancy(app)
    assert red3.members["a1"] == pytest.approx(0, abs=1e-12) and red3.members["a2"] == pytest.approx(0, abs=1e-12)
    assert [red3.members[f"b{k}"] for k in range(6)] == pytest.approx([float(e) for e in expected], abs=1e-12)
    # ... and they are the critical members (R_ii = 0: removal makes a mechanism)
    crit = removal_checks(app, red3, confirm=False)
    assert {"a1", "a2"} <= set(crit.critical_members())
    assert not set(f"b{k}" for k in range(6)) & set(crit.critical_members())


def test_bar_between_two_pins_is_fully_constrained_r4():
    # R4: a bar between two pins has R_ii = 1 (it is a state of self-stress on its own); trace 2
    sch = fan()
    sch = sch.with_node(Node("U", 3.0, 0.0)).with_node(Node("W", 5.0, 0.0))
    sch = sch.with_member(Member("x", "U", "W", "bar")).with_support(Support("U", "pin")).with_support(Support("W", "pin"))
    red = redundancy(sch)
    assert red.members["x"] == pytest.approx(1.0, abs=1e-12)
    assert red.total == pytest.approx(2.0, abs=1e-12)
    assert red.members["b1"] == pytest.approx(math.sqrt(2) - 1, abs=1e-12)


@pytest.mark.parametrize("L,ea,k", [(5.0, 1.0, None), (3.0, 4.0, 0.2), (7.5, 0.3, 1e-4)])
def test_propped_cantilever_r5(L, ea, k):
    # R5: R = [[0,0,0],[0,1,0],[0,-1/2,0]] for any EA, EI, L; -1/2 is the carry-over factor of a
    # prismatic member (moment distribution, Cross 1930)
    sch = build({"A": (0, 0), "B": (L, 0)}, [("c", "A", "B", "beam")], [("A", "fixed"), ("B", "roller")])
    sch = sch.with_member(replace(sch.members["c"], axial_stiffness=ea, bending_stiffness=k))
    red = redundancy(sch)
    assert red.member_block("c") == pytest.approx(np.array([[0, 0, 0], [0, 1, 0], [0, -0.5, 0]]), abs=1e-10)
    assert red.members_detail["c"] == pytest.approx({"N": 0.0, "Mi": 1.0, "Mj": 0.0}, abs=1e-10)


def test_two_span_beam_r6():
    # R6: equal spans, constant EI: the one redundant (the moment over the middle support) is
    # shared equally by the two spans' end moments there (symmetry); derived values
    red = redundancy(classic("F7"))
    got = [red.members_detail[m][f] for m in ("c0", "c1") for f in ("N", "Mi", "Mj")]
    assert got == pytest.approx([0, 0, 0.5, 0, 0.5, 0], abs=1e-10)


def _random_schemes(seed: int, n: int = 3):
    rng = random.Random(seed)
    return [random_scheme(rng) for _ in range(n)]


@settings(max_examples=40, deadline=None)
@given(st.integers(0, 10 ** 6))
def test_random_schemes_trace_range_idempotent(seed):
    # von Scheven et al. 2021: trace R = s, R^2 = R, 0 <= R_ii <= 1 in a basis where F is
    # diagonal (bars; a beam's natural modes); determinate schemes hold no redundancy
    for sch in _random_schemes(seed):
        c = classify(sch)
        red = redundancy(sch, c)
        assert red.total == pytest.approx(c.self_stress, abs=1e-8)
        R = red.matrix()
        assert np.abs(R @ R - R).max() < 1e-7
        for mid, modes in red.members_modes.items():
            assert all(-1e-9 <= v <= 1 + 1e-9 for v in modes.values()), (mid, modes)
            assert sum(modes.values()) == pytest.approx(red.members[mid], abs=1e-9)
            assert -1e-9 <= red.members[mid] <= len(red.system.member_cols[mid]) + 1e-9
        if c.self_stress == 0:
            assert np.abs(red.diagonal).max() == 0.0


@settings(max_examples=30, deadline=None)
@given(st.integers(0, 10 ** 6))
def test_self_stress_form_equals_stiffness_form(seed):
    # von Scheven et al. 2021: for m = 0, R = I - A^T K^-1 A C with K = A C A^T, C = F^-1; the
    # supports are given a flexibility so that C exists
    for sch in _random_schemes(seed, 4):
        c = classify(sch)
        if c.mechanisms or not c.self_stress:
            continue
        red = redundancy(sch, c, support_flexibility=0.5)
        A = c.system.A.toarray()
        C = np.linalg.inv(flexibility(sch, c.system, 0.5).toarray())
        K = A @ C @ A.T
        R_k = np.eye(A.shape[1]) - A.T @ np.linalg.solve(K, A @ C)
        assert red.matrix() == pytest.approx(R_k, abs=1e-7)


def test_units_do_not_matter():
    # the redundancy depends on relative stiffness only (von Scheven et al. 2021)
    base = rigid_frame(2, 2)
    mm = base.moved({n.id: (n.x * 1000.0, n.y * 1000.0) for n in base.nodes.values()})
    mm = replace(mm, units="mm")
    a, b = redundancy(base), redundancy(mm)
    assert b.members == pytest.approx(a.members, abs=1e-9)
    for k in a.members_detail:
        assert b.members_detail[k] == pytest.approx(a.members_detail[k], abs=1e-9)


def test_states_are_local_circuits():
    # a square panel with both diagonals holds one state on its own six bars (Maxwell:
    # 6 bars on 4 joints, one more than 2 x 4 - 3); a rigid frame holds 3 states per closed
    # loop (closed-loop rule); each state should be a circuit (minimal dependent set)
    sch = strip_truss(6)
    for i in range(6):
        sch = sch.with_member(Member(f"x{i}", f"t{i}", f"b{i + 1}", "bar"))
    red = redundancy(sch)
    assert red.self_stress == 6
    assert sorted(len(st.members) for st in red.states) == [6] * 6
    frame = rigid_frame(3, 3)
    redf = redundancy(frame)
    assert redf.self_stress == 27
    assert max(len(st.members) for st in redf.states) <= 4
    for r in (red, redf):
        A = r.system.A.toarray()
        assert np.linalg.matrix_rank(r.basis, tol=1e-9) == r.self_stress
        for j in range(r.basis.shape[1]):
            nz = np.nonzero(r.basis[:, j])[0]
            assert np.linalg.norm(A @ r.basis[:, j]) < 1e-9
            assert nz.size - np.linalg.matrix_rank(A[:, nz], tol=1e-9) == 1      # a circuit


def test_state_signs():
    # braced square: the diagonals pull, the sides push (or the reverse) in its one state
    sq = build(SQ_NODES, bars(SQ_PAIRS), [("0", "pin"), ("1", "roller")])
    st_ = redundancy(sq).states[0]
    signs = {k: st_.axial_sign(k) for k in st_.members}
    assert signs["b4"] == signs["b5"] and all(signs[f"b{k}"] != signs["b4"] for k in range(4))
    assert max(abs(v["N"]) for v in st_.forces.values()) == pytest.approx(1.0)
    # ratios of the hand solution t = (1, .75, 1, .75, -1.25, -1.25)
    assert st_.forces["b1"]["N"] / st_.forces["b4"]["N"] == pytest.approx(-0.75 / 1.25)


@settings(max_examples=12, deadline=None)
@given(st.integers(0, 10 ** 6))
def test_critical_claims_hold_on_reanalysis(seed):
    # every critical member / restraint adds a mechanism when removed, every other one does
    # not: the rank update is checked against an independent classify() of the edited scheme
    for sch in _random_schemes(seed):
        c = classify(sch)
        crit = removal_checks(sch, classification=c, confirm=False)
        for chk in list(crit.members.values()) + list(crit.restraints.values()):
            after = classify(chk.scheme)
            assert after.mechanisms == chk.mechanisms_after, chk.item
            assert after.self_stress == chk.self_stress_after, chk.item
            assert (after.mechanisms > c.mechanisms) == chk.critical


def test_bars_critical_iff_no_redundancy():
    # von Scheven et al. 2021: in a stable truss a bar is essential (removal -> mechanism)
    # exactly when R_ii = 0
    for sch in (classic("T12"), classic("T3"), strip_truss(5), fan()):
        c = classify(sch)
        red = redundancy(sch, c)
        crit = removal_checks(sch, red, classification=c, confirm=True)
        for mid, chk in crit.members.items():
            if not chk.detached:
                assert chk.critical == (red.members[mid] < 1e-8), mid
            assert chk.confirmed_by == "classify"


def test_critical_removal_reports_the_mechanism():
    # two-span beam: removing the pin's horizontal restraint lets the beam slide (rigid body)
    sch = classic("F7")
    crit = removal_checks(sch, confirm=True)
    chk = crit.restraints["A:across"]
    assert chk.critical and chk.mechanism is not None and chk.mechanism.kind == "rigid-body"
    u = [chk.mechanism.displacements[n][0] for n in ("A", "B", "C")]
    v = [chk.mechanism.displacements[n][1] for n in ("A", "B", "C")]
    assert np.allclose(np.abs(u), 1.0) and np.allclose(v, 0.0, atol=1e-9)
    # the vertical restraints each carry the state of self-stress: removable
    assert all(not crit.restraints[k].critical for k in ("A:along", "B:along", "C:along"))


def test_support_edits_keep_the_remaining_reaction_lines():
    # common practice: a pin less one restraint is a roller; a fixed support less its rotation
    # restraint is a pin
    sch = classic("F3")
    pinned = without_restraint(sch, "A", "rotation")
    assert pinned.supports["A"].kind == "pin"
    roller = without_restraint(sch, "A", {"rotation", "along"})
    s = roller.supports["A"]
    assert s.kind == "roller"
    # the remaining reaction is the old "across" line (horizontal for angle 90)
    (dx, dy), = s.directions()
    assert abs(dy) < 1e-12 and abs(abs(dx) - 1) < 1e-12
    assert support_with_fixes("A", 30.0, {"along", "rotation"}).kind == "guided"
    assert without_restraint(roller, "A", "along").supports.get("A") is None


def test_check_json_keys_and_skip(monkeypatch):
    out = check_json(classic("F3"))
    for key in ("redundancy", "critical", "critical_supports"):
        assert key in out
    red = out["redundancy"]
    assert set(red["members"]) == {"c1", "c2", "c3"}
    assert sum(red["members"].values()) == pytest.approx(3.0)       # trace = s (F3: s = 3)
    assert red["members_detail"]["c1"].keys() == {"N", "Mi", "Mj"}
    assert set(red["supports"]) == {"A", "D"}
    json.dumps(out)
    # a determinate truss: every bar is critical (T12, P&C 1986 / Maxwell: m = s = 0)
    out12 = check_json(classic("T12"))
    assert sorted(out12["critical"]) == sorted(classic("T12").members)
    import kinestat.core.redundancy as R
    monkeypatch.setattr(R, "MAX_MEMBERS", 2)
    big = check_json(classic("F3"))
    assert big["redundancy"] is None and "skipped" in big["redundancy_note"]


def test_cli_check_json_carries_redundancy(tmp_path, capsys):
    from kinestat.app.cli import main
    from kinestat.core.io import save

    path = tmp_path / "fan.json"
    save(fan(), path)
    assert main(["check", str(path), "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert out["redundancy"]["members"]["b1"] == pytest.approx(math.sqrt(2) - 1, abs=1e-9)
    # no bar is critical; the middle bar is vertical, so only the horizontal restraint at Q
    # holds Q sideways: that restraint is critical
    assert out["critical"] == [] and out["critical_supports"] == ["Q:across"]

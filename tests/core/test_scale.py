"""Scale and conditioning: the slender-truss trap, a large rigid frame, near-singular geometry.

A long strip truss is sound although its smallest singular value falls like 1 / panels^2
(N2 in the methods reference: 2.2e-6 relative at 1,000 panels), so a fixed tolerance or an
eigen-count on K = A A^T invents mechanisms; removing k diagonals must give exactly k.
"""
from __future__ import annotations

import pytest

from catalogue import build, beams, bars, rigid_frame, strip_truss
from kinestat.core.classify import classify
from kinestat.core.model import Support

PANELS = 1250          # 2 x 1,251 joints, 5,001 bars


def test_slender_strip_truss_is_sound():
    # Maxwell 1864: b + r - 2j = 5001 + 3 - 2*2502 = 0, and every panel is braced (common
    # practice: a triangulated strip on pin + roller is determinate), so m = s = 0 exactly
    scheme = strip_truss(PANELS)
    assert len(scheme.members) == 4 * PANELS + 1
    r = classify(scheme)
    assert (r.mechanisms, r.self_stress, r.verdict) == (0, 0, "determinate")
    assert r.count.value == 0
    assert r.system.shape == (2 * 2 * (PANELS + 1), 4 * PANELS + 1 + 3)


def test_slender_strip_truss_has_no_false_collinear_warning():
    # common practice: the corner joints of the strip meet at right angles; nothing there is close
    # to collinear, so no near-singular warning may name them
    r = classify(strip_truss(PANELS))
    assert not [w.text for w in r.warnings if "off the line" in w.text]


@pytest.mark.parametrize("missing", [(625,), (10, 600, 1200), (1, 2, 3, 400, 800, 1100, 1249)])
def test_strip_truss_with_k_diagonals_removed_has_exactly_k_mechanisms(missing):
    # common practice: each panel without its diagonal shears independently; Maxwell 1864: the
    # count drops by one per removed bar, and nothing else changes, so m = k and s = 0
    k = len(missing)
    r = classify(strip_truss(PANELS, missing=missing))
    assert (r.mechanisms, r.self_stress) == (k, 0)
    assert r.count.value == -k
    assert r.rigid_body_mechanisms == 0 and r.internal_mechanisms == k


def test_very_long_strip_truss_with_two_diagonals_removed():
    # same rule at 12,500 panels (50,000 bars), where the sound strip's smallest singular value
    # is near 2e-8 of the largest (1 / panels^2 scaling, methods N2)
    r = classify(strip_truss(12_500, missing=(3, 9000)))
    assert (r.mechanisms, r.self_stress) == (2, 0)


@pytest.mark.parametrize("panels", [10, 40, 200])
def test_strip_truss_small_and_medium(panels):
    # same rule on the dense and the sparse routes (Maxwell 1864 + common practice)
    assert (classify(strip_truss(panels)).mechanisms, classify(strip_truss(panels)).self_stress) == (0, 0)
    r = classify(strip_truss(panels, missing=(panels // 2,)))
    assert (r.mechanisms, r.self_stress) == (1, 0)


def _loops_with_ground(scheme) -> int:
    """Independent closed loops C = E - V + 1 of members + one ground link per support."""
    joints = {n for m in scheme.members.values() for n in (m.start, m.end)}
    return len(scheme.members) + len(scheme.supports) - (len(joints) + 1) + 1


def test_rigid_frame_of_about_500_members_obeys_the_closed_loop_rule():
    # from memory (closed-loop rule): a rigid frame on fixed feet is 3C times indeterminate
    scheme = rigid_frame(10, 24)
    assert len(scheme.members) == 504
    C = _loops_with_ground(scheme)
    assert C == 10 * 24          # one loop per panel, the ground closing the bottom row
    r = classify(scheme)
    assert (r.mechanisms, r.self_stress) == (0, 3 * C)
    assert r.verdict == "indeterminate"
    assert r.count.closed_loop is not None and r.count.closed_loop["value"] == 3 * C


def test_rigid_frame_with_pinned_feet():
    # from memory (closed-loop rule): each pinned foot releases one: 3C - (bays + 1)
    scheme = rigid_frame(10, 24)
    for nid in list(scheme.supports):
        scheme = scheme.with_support(Support(nid, "pin"))
    r = classify(scheme)
    assert (r.mechanisms, r.self_stress) == (0, 3 * _loops_with_ground(scheme) - 11)


# ---------------------------------------------------------------- near-singular geometry
def _flat_arch(offset: float):
    # 30 m span, pins at both ends, a hinge at mid-span `offset` above the line of the pins
    return build({"A": (0.0, 0.0), "C": (15.0, offset), "B": (30.0, 0.0)},
                 beams([("A", "C"), ("C", "B")]), [("A", "pin"), ("B", "pin")], hinges=("C",))


def test_hinge_a_millimetre_off_the_support_line_keeps_its_verdict_and_warns():
    # common practice: three hinges not in one line -> stable and determinate, however flat;
    # the exact verdict is kept and the warning names the joint and the margin (1 mm)
    r = classify(_flat_arch(0.001))
    assert (r.mechanisms, r.self_stress, r.verdict) == (0, 0, "determinate")
    near = [w for w in r.warnings if "near-singular" in w.text]
    assert near, r.warnings
    assert any("C" in w.items for w in near)
    assert any("0.001" in w.text for w in near)
    assert any("C" in w.text for w in near)


def test_hinge_on_the_support_line_is_unstable():
    # common practice: three hinges in one line: infinitesimal mechanism + one self-stress
    r = classify(_flat_arch(0.0))
    assert (r.mechanisms, r.self_stress, r.verdict) == (1, 1, "unstable")


def test_near_singular_warning_scales_with_the_drawing():
    # the same arch drawn in millimetres: same verdict and a warning naming the same joint
    # (common practice: units never change a verdict)
    scheme = build({"A": (0.0, 0.0), "C": (15000.0, 1.0), "B": (30000.0, 0.0)},
                   beams([("A", "C"), ("C", "B")]), [("A", "pin"), ("B", "pin")], hinges=("C",))
    r = classify(scheme)
    assert r.verdict == "determinate"
    assert any("C" in w.items for w in r.warnings)


def test_no_near_singular_warning_on_a_well_conditioned_three_hinged_portal():
    # common practice: a three-hinged portal is unstable only when the three hinges A, C, E are in
    # line; a crown hinge 1 mm off the beam line B-D is irrelevant (the beam halves are rigidly
    # joined to the columns), so no near-singular warning is due
    scheme = build({"A": (0, 0), "B": (0, 10), "C": (15, 10.001), "D": (30, 10), "E": (30, 0)},
                   beams([("A", "B"), ("B", "C"), ("C", "D"), ("D", "E")]),
                   [("A", "pin"), ("E", "pin")], hinges=("C",))
    r = classify(scheme)
    assert (r.mechanisms, r.self_stress) == (0, 0)
    assert not [w.text for w in r.warnings if "near-singular" in w.text]


def test_near_collinear_bars_warn_but_stay_stable():
    # Pellegrino & Calladine 1986 (N1 of the methods reference): bars A(0,0)-B(15, eps)-C(30,0) pinned
    # at A and C are a stable determinate pair for eps > 0 and a mechanism at eps = 0
    for eps, verdict in ((0.001, "determinate"), (0.0, "unstable")):
        scheme = build({"A": (0, 0), "B": (15, eps), "C": (30, 0)}, bars([("A", "B"), ("B", "C")]),
                       [("A", "pin"), ("C", "pin")])
        r = classify(scheme)
        assert r.verdict == verdict
        if eps:
            assert any("B" in w.items for w in r.warnings)

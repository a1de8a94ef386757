"""Exact cross-check of the engine's rank decisions against exact arithmetic with sympy.

For a few hundred small random schemes (bars and beams, hinged nodes, moment / shear / axial
end releases, every support kind including custom ones and inclined angles, curved members,
and deliberately degenerate collinear, parallel and concurrent layouts on small-integer
coordinates) the test builds the equilibrium matrix itself, in its own parametrisation, with
exact rationals (and exact surds for 30/45/60-degree supports), and compares

    m = rows - rank,  s = cols - rank                   (Pellegrino & Calladine 1986)

and the internal / rigid-body split with the engine.  Source of every expected value here:
exact arithmetic with sympy.

The reference parametrisation is deliberately different from the engine's:
* a bar carries one force density q = N / L (its column holds the chord vector, so it is
  exact even when the direction cosines are irrational);
* a beam carries the force (Fx, Fy) and moment Mi it exerts on its start node, in global
  axes; the end node gets -F and Mj = (r_j - r_i) x F - Mi (member equilibrium);
* a moment release is the condition "end moment = 0", an axial / shear release the
  condition "force along / across the end tangent = 0" (end tangent of the arc: the chord
  turned by +-2 atan(2 rise / chord));
* a node has a rotation equation iff a beam end is rigidly attached or a rotational
  restraint acts on it (the rule of the file format).
"""
from __future__ import annotations

import math
import random
from fractions import Fraction

import pytest
import sympy as sp
from sympy.polys.domains import QQ
from sympy.polys.matrices import DomainMatrix

from catalogue import CLASSICS, classic, random_scheme
from kinestat.core.classify import classify
from kinestat.core.model import Scheme

N_CASES = 320
_FIELD = QQ.algebraic_field(sp.sqrt(2), sp.sqrt(3))


def _exact_dir(angle_deg: float) -> tuple[sp.Expr, sp.Expr]:
    """Exact (cos, sin) of a support angle, up to a positive factor."""
    if float(angle_deg).is_integer() and int(angle_deg) % 15 == 0:
        r = sp.pi * sp.Integer(int(angle_deg)) / 180          # exact: rationals and sqrt(2), sqrt(3)
        return sp.nsimplify(sp.cos(r)), sp.nsimplify(sp.sin(r))
    # a direction along a small integer vector (3-4-5 triangles, lines through two grid points)
    for p in range(-12, 13):
        for r_ in range(-12, 13):
            if (p, r_) != (0, 0) and abs(math.degrees(math.atan2(r_, p)) - angle_deg) % 360 < 1e-9:
                return sp.Integer(p), sp.Integer(r_)
    raise AssertionError(f"no exact direction for support angle {angle_deg}")


def _rational(v: float) -> sp.Rational:
    f = Fraction(v).limit_denominator(10_000)
    assert abs(float(f) - v) < 1e-12, v
    return sp.Rational(f.numerator, f.denominator)


def exact_matrix(scheme: Scheme, with_supports: bool = True):
    """(A, number of member columns, rigid-body fields T, orphan rotation-restraint columns)
    of the reference parametrisation, as sympy matrices."""
    used = {m.start for m in scheme.members.values()} | {m.end for m in scheme.members.values()}
    active = [nid for nid in scheme.nodes if nid in used]
    xy = {nid: (_rational(scheme.nodes[nid].x), _rational(scheme.nodes[nid].y)) for nid in active}

    def rigid_end(m, nid):
        return m.kind == "beam" and not scheme.nodes[nid].hinge and "moment" not in m.releases_at(nid)

    has_theta = {nid: any(rigid_end(m, nid) for m in scheme.members.values() if nid in (m.start, m.end))
                 for nid in active}
    rigid_theta = dict(has_theta)
    if with_supports:
        for sup in scheme.supports.values():
            if sup.node in has_theta and sup.fixes_rotation:
                has_theta[sup.node] = True
    row = {}
    for nid in active:
        row[(nid, "x")] = len(row)
        row[(nid, "y")] = len(row)
        if has_theta[nid]:
            row[(nid, "t")] = len(row)
    cols: list[dict[int, sp.Expr]] = []
    conditions: list[dict[int, sp.Expr]] = []
    for m in scheme.members.values():
        (xi, yi), (xj, yj) = xy[m.start], xy[m.end]
        dx, dy = xj - xi, yj - yi
        if m.kind == "bar":
            cols.append({row[(m.start, "x")]: dx, row[(m.start, "y")]: dy,
                         row[(m.end, "x")]: -dx, row[(m.end, "y")]: -dy})
            continue
        cx, cy, cm = len(cols), len(cols) + 1, len(cols) + 2
        fx = {row[(m.start, "x")]: 1, row[(m.end, "x")]: -1}
        fy = {row[(m.start, "y")]: 1, row[(m.end, "y")]: -1}
        mi: dict[int, sp.Expr] = {}
        # moments on the nodes: Mi at the start, Mj = dx*Fy - dy*Fx - Mi at the end
        if rigid_end(m, m.start):
            mi[row[(m.start, "t")]] = 1
        if rigid_end(m, m.end):
            tj = row[(m.end, "t")]
            fx[tj] = -dy
            fy[tj] = dx
            mi[tj] = mi.get(tj, 0) - 1
        cols += [fx, fy, mi]
        # release conditions on (Fx, Fy, Mi)
        rel_i, rel_j = m.releases_at(m.start), m.releases_at(m.end)
        if "moment" in rel_i or scheme.nodes[m.start].hinge:
            conditions.append({cm: 1})
        if "moment" in rel_j or scheme.nodes[m.end].hinge:
            conditions.append({cx: -dy, cy: dx, cm: -1})
        if m.rise:
            L = sp.sqrt(dx * dx + dy * dy)
            assert L.is_rational, "curved members are generated with rational chords"
            t = 2 * _rational(m.rise) / L
            ca, sa = (1 - t * t) / (1 + t * t), 2 * t / (1 + t * t)
        else:
            ca, sa = sp.Integer(1), sp.Integer(0)
        for rel, sgn in ((rel_i, 1), (rel_j, -1)):
            # end tangent: chord (dx, dy) turned by sgn * alpha; end normal: tangent turned by 90 degrees
            tx, ty = ca * dx - sgn * sa * dy, sgn * sa * dx + ca * dy
            if "axial" in rel:
                conditions.append({cx: tx, cy: ty})
            if "shear" in rel:
                conditions.append({cx: -ty, cy: tx})
    n_member = len(cols)
    orphan: list[int] = []          # rotation restraints acting on nothing (no rigid beam end)
    if with_supports:
        for sup in scheme.supports.values():
            if (sup.node, "x") not in row:
                continue
            c, s = _exact_dir(sup.angle)
            fixes = sup.fixes
            if "along" in fixes:
                cols.append({row[(sup.node, "x")]: c, row[(sup.node, "y")]: s})
            if "across" in fixes:
                cols.append({row[(sup.node, "x")]: -s, row[(sup.node, "y")]: c})
            if "rotation" in fixes:
                cols.append({row[(sup.node, "t")]: 1})
                if not rigid_theta[sup.node]:
                    orphan.append(len(cols) - 1)
    n_rows = len(row) + len(conditions)
    A = sp.zeros(n_rows, len(cols))
    for k, col in enumerate(cols):
        for r, v in col.items():
            A[r, k] += v
    for q, cond in enumerate(conditions):
        for k, v in cond.items():
            A[len(row) + q, k] += v
    T = sp.zeros(n_rows, 3)                       # rigid-body velocity fields
    for (nid, what), r in row.items():
        x, y = xy[nid]
        T[r, :] = sp.Matrix([[1, 0, -y]]) if what == "x" else (
            sp.Matrix([[0, 1, x]]) if what == "y" else sp.Matrix([[0, 0, 1]]))
    return A, n_member, T, orphan


_FIELD_CACHE: dict = {}


def _to_field(v: sp.Expr):
    if v.is_Rational:
        return _FIELD.convert(QQ(int(v.p), int(v.q)))
    if v not in _FIELD_CACHE:                       # few distinct surds: convert each once
        _FIELD_CACHE[v] = _FIELD.from_sympy(v)
    return _FIELD_CACHE[v]


def exact_rank(M: sp.Matrix) -> int:
    """Rank over the rationals, or over Q(sqrt 2, sqrt 3) when a surd appears (exact)."""
    if M.rows == 0 or M.cols == 0:
        return 0
    entries = [[M[i, j] for j in range(M.cols)] for i in range(M.rows)]
    if all(v.is_Rational for row in entries for v in row):
        rows = [[QQ(int(v.p), int(v.q)) for v in row] for row in entries]
        return DomainMatrix(rows, M.shape, QQ).rank()
    rows = [[_to_field(sp.expand(v)) for v in row] for row in entries]
    return DomainMatrix(rows, M.shape, _FIELD).rank()


def _pieces(scheme: Scheme) -> int:
    parent = {n: n for m in scheme.members.values() for n in (m.start, m.end)}

    def find(a):
        while parent[a] != a:
            a = parent[a]
        return a

    for m in scheme.members.values():
        parent[find(m.start)] = find(m.end)
    return len({find(n) for n in parent})


def exact_classification(scheme: Scheme) -> dict:
    A, n_member, T, orphan = exact_matrix(scheme)
    rank = exact_rank(A)
    m, s = A.rows - rank, A.cols - rank
    Af, _, _, _ = exact_matrix(scheme, with_supports=False)
    rank_free = exact_rank(Af)
    out = {"m": m, "s": s, "internal_s": n_member - exact_rank(A[:, :n_member]),
           "internal_m": max(0, Af.rows - rank_free - 3 * _pieces(scheme))}
    # rigid-body motions the supports leave free: 3 - rank(A_reactions^T T) (Pellegrino & Calladine 1986)
    # (a rotation restraint at a node that no beam end holds rigidly restrains nothing)
    reactions = [k for k in range(n_member, A.cols) if k not in orphan]
    rigid = 3 - exact_rank(A[:, reactions].T * T)
    out["rigid"] = rigid if _pieces(scheme) == 1 else min(rigid, m)
    return out


CASES = [random_scheme(random.Random(seed)) for seed in range(N_CASES)]


def test_generator_covers_the_degenerate_and_special_cases():
    # the random families must really contain what this module claims to check (common practice)
    kinds = {sup.kind for sc in CASES for sup in sc.supports.values()}
    words = {w for sc in CASES for m in sc.members.values() for w in m.releases_start | m.releases_end}
    assert kinds == {"pin", "roller", "fixed", "guided", "custom"}
    assert words == {"moment", "shear", "axial"}
    assert any(m.rise for sc in CASES for m in sc.members.values())
    assert any(n.hinge for sc in CASES for n in sc.nodes.values())
    assert any(sup.angle % 90 for sc in CASES for sup in sc.supports.values())
    assert sum(sc.title == "random line" for sc in CASES) >= 20
    assert sum(sc.title == "random parallel" for sc in CASES) >= 20
    results = [classify(sc) for sc in CASES]
    assert sum(r.verdict == "unstable" for r in results) >= 50
    assert sum(r.verdict == "indeterminate" for r in results) >= 30
    assert sum(r.verdict == "determinate" for r in results) >= 10
    # count >= 0 with m > 0: the cases a count alone gets wrong
    assert sum(r.mechanisms > 0 and r.count.value >= 0 for r in results) >= 15


@pytest.mark.parametrize("seed", range(N_CASES))
def test_rank_matches_exact_arithmetic(seed):
    scheme = CASES[seed]
    ref = exact_classification(scheme)          # exact arithmetic with sympy
    got = classify(scheme)
    assert (got.mechanisms, got.self_stress) == (ref["m"], ref["s"]), scheme
    assert got.internal_self_stress == ref["internal_s"]
    assert got.internal_mechanisms == ref["internal_m"]
    assert got.rigid_body_mechanisms == ref["rigid"]
    # verdict rule of the file format / CLI contract
    expected_verdict = "unstable" if ref["m"] else ("determinate" if ref["s"] == 0 else "indeterminate")
    assert got.verdict == expected_verdict
    # count identity: the hand count is s - m exactly (Calladine 1978)
    assert got.count.value == ref["s"] - ref["m"]


@pytest.mark.parametrize("name", sorted(CLASSICS))
def test_worked_classics_match_exact_arithmetic(name):
    # the hand-worked classics of test_classics.py, re-derived here in exact arithmetic with sympy
    scheme = classic(name)
    ref = exact_classification(scheme)
    got = classify(scheme)
    assert (got.mechanisms, got.self_stress) == (ref["m"], ref["s"])
    assert got.internal_self_stress == ref["internal_s"]
    assert got.internal_mechanisms == ref["internal_m"]
    assert got.rigid_body_mechanisms == ref["rigid"]

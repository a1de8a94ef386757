"""Remedies for an unstable scheme: single changes that remove mechanisms, and a smallest set.

Candidate changes:

* a bar between two existing nodes (a diagonal in an unbraced panel), skipping bars that
  cross a member, run along one or pass through another node (shapely);
* a restraint added to an existing support, or a new support (roller, pin, fixed) at a node;
* a hinge made rigid: a member-end release removed, a full hinge at a node made rigid, or a
  pinned joint of bars made rigid (the bars become beams continuous through that node and
  stay pinned at their far ends);
* a node moved off the line of two pin-connected members that meet in line (the geometry
  that makes a joint singular).

Scoring (Pellegrino & Calladine 1986 four subspaces): with D an orthonormal basis of the
mechanisms (rows x m), a change that adds forces without changing the degrees of freedom
adds columns V to A, and it removes exactly rank(D^T V) mechanisms; the score of one column
a is |D^T a| / |a|, the part of a outside the range of A.  A made-rigid joint is the
constraint that the rotations it joins become equal (differences of release-gap rows or of
chord rotations); node moves change the geometry and are scored by re-analysis.  Every
remedy returned is re-analysed with :func:`.classify.classify`, and reports the mechanisms
it removes (the count and which of the original modes can no longer move).

Ranking: more mechanisms removed first, then the smaller change (:data:`COSTS`, plus a bar's
length over the mean member length), then the larger score.

Smallest set: greedy on the constraint vectors.  Each step takes the change that removes
the most of the mechanisms still left (ties: cheaper, then higher score) and restricts D to
the motions that change leaves.  When every candidate adds one constraint the candidates
form a linear matroid on the mechanism space, every minimal completion has exactly m
members, and taking the cheapest independent candidate first gives a cheapest completion
(the greedy theorem of R. Rado (1957) and J. Edmonds (1971)); with changes that add several
constraints at once the greedy count is not promised to be the least (a lower bound is
reported).  The set is applied and re-analysed (m = 0) before it is returned.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field, replace
from typing import Callable

import numpy as np
import scipy.linalg as la

from .classify import Classification, classify
from .model import Member, Scheme, Support, arc_points
from .redundancy import direction_words, support_with_fixes

#: base size of each kind of change (a bar adds half its length over the mean member length,
#: a node move its distance over the mean member length)
COSTS = {
    "restraint": 1.0,
    "release removed": 1.0,
    "hinge made rigid": 1.2,
    "bar": 1.0,
    "rigid joint": 1.5,
    "node moved": 1.5,
    "roller": 2.0,
    "pin": 2.5,
    "fixed": 3.0,
}
#: a change whose score is below this barely stops the motion (near-singular); not suggested
SCORE_MIN = 1e-3
#: bars longer than this multiple of the longest member are not tried
BAR_REACH = 1.5
#: a node is moved off a line by this fraction of the shorter member
MOVE_FRACTION = 0.1


@dataclass
class Candidate:
    kind: str
    description: str
    apply: Callable[[Scheme], Scheme]
    cost: float
    #: constraint vectors on the rows of A (rows x k, kept as (row indices, unit columns));
    #: None = scored by re-analysis
    V: np.ndarray | tuple | None
    change: dict = field(default_factory=dict)
    gain: int = 0
    score: float = 0.0

    def __post_init__(self):
        # keep only the rows a change touches, with unit columns: (row indices, values)
        if self.V is not None and not isinstance(self.V, tuple):
            V = np.asarray(self.V, float)
            nz = np.nonzero(np.abs(V).sum(axis=1))[0]
            Vc = V[nz]
            norms = np.linalg.norm(Vc, axis=0)
            self.V = (nz, Vc / np.where(norms > 0, norms, 1.0))


@dataclass
class Remedy:
    """A verified change: the edited scheme and what it does."""

    kind: str
    description: str
    scheme: Scheme
    cost: float
    score: float
    mechanisms_before: int
    mechanisms_after: int
    self_stress_after: int
    #: indices of the original mechanism modes (classify order) the change stops
    modes_stopped: list[int]
    change: dict = field(default_factory=dict)

    @property
    def mechanisms_removed(self) -> int:
        return self.mechanisms_before - self.mechanisms_after

    def to_json(self) -> dict:
        return {"kind": self.kind, "description": self.description,
                "mechanisms_removed": self.mechanisms_removed, "mechanisms_after": self.mechanisms_after,
                "self_stress_after": self.self_stress_after, "modes_stopped": self.modes_stopped,
                "cost": round(self.cost, 6), "score": round(self.score, 6), "change": self.change,
                "verified_by": "classify"}


@dataclass
class SmallestSet:
    changes: list[Candidate]
    scheme: Scheme
    mechanisms_after: int
    self_stress_after: int
    lower_bound: int

    def to_json(self) -> dict:
        return {"size": len(self.changes), "lower_bound": self.lower_bound,
                "changes": [{"kind": c.kind, "description": c.description, "change": c.change,
                             "mechanisms_removed": c.gain} for c in self.changes],
                "mechanisms_after": self.mechanisms_after, "self_stress_after": self.self_stress_after,
                "verified_by": "classify"}


@dataclass
class RemedyResult:
    mechanisms: int
    remedies: list[Remedy]
    smallest_set: SmallestSet | None
    note: str = ""

    def to_json(self) -> dict:
        return {"mechanisms": self.mechanisms, "remedies": [r.to_json() for r in self.remedies],
                "smallest_set": self.smallest_set.to_json() if self.smallest_set else None, "note": self.note}


# --------------------------------------------------------------------------- candidates
def _unit(n: int, k: int) -> np.ndarray:
    v = np.zeros(n)
    v[k] = 1.0
    return v


def _lines(scheme: Scheme):
    from shapely import LineString

    out = []
    for m in scheme.members.values():
        pts = arc_points(scheme.node_xy(m.start), scheme.node_xy(m.end), m.rise)
        out.append(LineString(pts))
    return out


def bar_candidates(scheme: Scheme, c: Classification) -> list[Candidate]:
    """Bars between existing nodes not yet joined, within reach, crossing nothing."""
    from scipy.spatial import cKDTree
    from shapely import LineString, Point, STRtree

    system = c.system
    nodes = system.active_nodes
    if len(nodes) < 2:
        return []
    P = np.array([scheme.node_xy(n) for n in nodes])
    lengths = [math.dist(scheme.node_xy(m.start), scheme.node_xy(m.end)) for m in scheme.members.values()]
    reach = BAR_REACH * max(lengths)
    joined = {frozenset((m.start, m.end)) for m in scheme.members.values()}
    pairs = sorted(cKDTree(P).query_pairs(reach * (1 + 1e-9)))
    pairs = [(i, j) for i, j in pairs if frozenset((nodes[i], nodes[j])) not in joined]
    if not pairs:
        return []
    cand_lines = [LineString([P[i], P[j]]) for i, j in pairs]
    bad = np.zeros(len(pairs), bool)
    tree = STRtree(_lines(scheme))
    for pred in ("crosses", "overlaps", "contains", "within"):
        hit = tree.query(cand_lines, predicate=pred)
        bad[hit[0]] = True
    tol = 1e-9 * scheme.size()
    pts_tree = STRtree([Point(p) for p in P])
    hit = pts_tree.query(cand_lines, predicate="dwithin", distance=tol)
    for ci, ni in zip(hit[0].tolist(), hit[1].tolist()):
        if ni not in pairs[ci]:
            bad[ci] = True
    out = []
    nrows = system.shape[0]
    for (i, j), b in zip(pairs, bad.tolist()):
        if b:
            continue
        a, bnode = nodes[i], nodes[j]
        d = P[j] - P[i]
        L = float(np.hypot(*d))
        cs, sn = d / L
        v = np.zeros(nrows)
        iu, iv, _ = system.node_dof[a]
        ju, jv, _ = system.node_dof[bnode]
        v[iu], v[iv], v[ju], v[jv] = -cs, -sn, cs, sn

        def apply(s: Scheme, a=a, bnode=bnode) -> Scheme:
            return s.with_member(Member(s.new_id("B"), a, bnode, "bar"))

        out.append(Candidate("bar", f"add a bar between {a} and {bnode}", apply,
                             COSTS["bar"] + 0.5 * L / system.lref, v[:, None],
                             {"add_bar": [a, bnode]}))
    return out


def with_restraint(scheme: Scheme, node: str, angle: float | None) -> Scheme:
    """``scheme`` with a restraint added at ``node``: a reaction along ``angle`` (degrees) or,
    for ``angle`` None, a rotation restraint.  A node without a support gets a roller (or a
    custom rotation-only support).  Works on whatever support the node has by then, so such
    changes compose."""
    cur = scheme.supports.get(node)
    if cur is None:
        if angle is None:
            return scheme.with_support(Support(node, "custom", 90.0, ("rotation",)))
        return scheme.with_support(Support(node, "roller", angle % 360.0))
    if angle is None:
        word = "rotation"
    else:
        diff = (angle - cur.angle) % 180.0
        if min(diff, 180.0 - diff) < 1e-9:
            word = "along"
        elif abs(diff - 90.0) < 1e-9:
            word = "across"
        else:
            raise ValueError(f"support at node {node}: a restraint at {angle:g} degrees does not fit its frame")
    return scheme.with_support(support_with_fixes(node, cur.angle, set(cur.fixes) | {word}))


def _restraint_words(angle: float | None) -> str:
    if angle is None:
        return "a rotation restraint"
    dw = direction_words(angle)
    return f"a {dw} restraint" if dw in ("vertical", "horizontal") else f"a restraint {dw}"


def support_candidates(scheme: Scheme, c: Classification) -> list[Candidate]:
    """A restraint added to each existing support; new rollers, pins and fixed supports."""
    system = c.system
    nrows = system.shape[0]
    out = []

    def column(nid: str, angle: float | None) -> np.ndarray:
        iu, iv, it = system.node_dof[nid]
        v = np.zeros(nrows)
        if angle is None:
            v[it] = 1.0
        else:
            a = math.radians(angle)
            v[iu], v[iv] = math.cos(a), math.sin(a)
        return v

    def make(nid: str, angles: tuple) -> Callable[[Scheme], Scheme]:
        def apply(s: Scheme) -> Scheme:
            for ang in angles:
                s = with_restraint(s, nid, ang)
            return s
        return apply

    for nid in system.active_nodes:
        it = system.node_dof[nid][2]
        sup = scheme.supports.get(nid)
        if sup is not None:
            for word in ("along", "across", "rotation"):
                if word in sup.fixes or (word == "rotation" and it is None):
                    continue
                ang = None if word == "rotation" else sup.angle + (90.0 if word == "across" else 0.0)
                new = support_with_fixes(nid, sup.angle, set(sup.fixes) | {word})
                out.append(Candidate("restraint", f"add {_restraint_words(ang)} to the support at {nid} (making it "
                                     f"{_support_words(new, article=True)})", make(nid, (ang,)), COSTS["restraint"],
                                     column(nid, ang)[:, None], {"support": _support_json(new)}))
            continue
        options = [("roller", (90.0,)), ("roller", (0.0,)), ("pin", (90.0, 180.0))]
        if it is not None:
            options.append(("fixed", (90.0, 180.0, None)))
        for kind, angles in options:
            apply = make(nid, angles)
            new = apply(scheme).supports[nid]
            out.append(Candidate("support", f"add {_support_words(new, article=True)} at {nid}", apply, COSTS[kind],
                                 np.array([column(nid, a) for a in angles]).T, {"support": _support_json(new)}))
    return out


def _support_words(sup: Support, article: bool = False) -> str:
    if sup.kind == "roller":
        w = f"roller with a {direction_words(sup.angle)} reaction"
    elif sup.kind == "custom":
        w = "support fixing " + ", ".join(sup.fixes)
    else:
        w = f"{sup.kind} support"
    return ("a " + w) if article else w


def _support_json(sup: Support) -> dict:
    d = {"node": sup.node, "kind": sup.kind, "angle": sup.angle}
    if sup.kind == "custom":
        d["fix"] = list(sup.fix)
    return d


def rigid_candidates(scheme: Scheme, c: Classification) -> list[Candidate]:
    """Hinges made rigid: member-end releases removed, full hinges made rigid, pinned bar joints made rigid."""
    system = c.system
    nrows = system.shape[0]
    row_of = {(kind, item, detail): r for r, (kind, item, detail) in enumerate(system.rows)}
    out = []
    # member-end releases
    for m in scheme.members.values():
        if m.kind != "beam":
            continue
        for end, nid, rel in (("start", m.start, m.releases_start), ("end", m.end, m.releases_end)):
            for word in sorted(rel):
                r = row_of.get(("release", m.id, f"{end}:{word}"))
                if r is None or (word == "moment" and scheme.nodes[nid].hinge):
                    continue  # a full hinge keeps the end released: see "hinge made rigid"
                it = system.node_dof[nid][2]
                sup = scheme.supports.get(nid)
                if word == "moment" and it is None and not (sup is not None and sup.fixes_rotation):
                    continue  # a single rigid end at an otherwise pinned joint changes nothing
                field_name = "releases_start" if end == "start" else "releases_end"

                def apply(s: Scheme, mid=m.id, field_name=field_name, word=word) -> Scheme:
                    mm = s.members[mid]
                    return s.with_member(replace(mm, **{field_name: getattr(mm, field_name) - {word}}))

                what = {"moment": "hinge", "shear": "shear release", "axial": "axial release"}[word]
                out.append(Candidate("release removed", f"make the {end} of member {m.id} rigid (remove its "
                                     f"{what} at node {nid})", apply, COSTS["release removed"],
                                     _unit(nrows, r)[:, None], {"member": m.id, "end": end, "release": word}))
    # full hinges at nodes
    for nid, node in scheme.nodes.items():
        if not node.hinge or nid not in system.node_dof:
            continue
        # beam ends that become rigid: those without a moment release of their own
        rows = [row_of[("release", m.id, f"{'start' if m.start == nid else 'end'}:moment")]
                for m in scheme.members_at(nid)
                if m.kind == "beam" and "moment" not in m.releases_at(nid)
                and ("release", m.id, f"{'start' if m.start == nid else 'end'}:moment") in row_of]
        sup = scheme.supports.get(nid)
        fixed_rot = sup is not None and sup.fixes_rotation
        if len(rows) < (1 if fixed_rot else 2):
            continue
        vecs = [_unit(nrows, r) for r in rows] if fixed_rot else \
            [_unit(nrows, rows[0]) - _unit(nrows, r) for r in rows[1:]]

        def apply(s: Scheme, nid=nid) -> Scheme:
            return s.with_node(replace(s.nodes[nid], hinge=False))

        out.append(Candidate("hinge made rigid", f"make the hinge at node {nid} rigid", apply,
                             COSTS["hinge made rigid"] + 0.1 * (len(rows) - 2), np.array(vecs).T,
                             {"node": nid, "hinge": False}))
    # pinned joints of bars: make them rigid (chord rotations equal)
    for nid in system.active_nodes:
        if scheme.nodes[nid].hinge or system.node_dof[nid][2] is not None:
            continue
        ms = [m for m in scheme.members_at(nid) if m.kind == "bar"]
        if len(ms) < 2:
            continue
        psi = []
        for m in ms:
            (x0, y0), (x1, y1) = scheme.node_xy(m.start), scheme.node_xy(m.end)
            L = math.hypot(x1 - x0, y1 - y0)
            cs, sn = (x1 - x0) / L, (y1 - y0) / L
            v = np.zeros(nrows)
            iu, iv, _ = system.node_dof[m.start]
            ju, jv, _ = system.node_dof[m.end]
            # chord rotation (-s du + c dv) / L, times Lref
            k = system.lref / L
            v[iu], v[iv], v[ju], v[jv] = sn * k, -cs * k, -sn * k, cs * k
            psi.append(v)
        vecs = [psi[0] - p for p in psi[1:]]
        ids = [m.id for m in ms]

        def apply(s: Scheme, nid=nid, ids=tuple(ids)) -> Scheme:
            for mid in ids:
                mm = s.members[mid]
                near, far = ("releases_start", "releases_end") if mm.start == nid else ("releases_end", "releases_start")
                if mm.kind == "bar":
                    mm = replace(mm, kind="beam", **{near: frozenset(), far: frozenset({"moment"})})
                else:  # already made a beam by another joint: make this end rigid too
                    mm = replace(mm, **{near: getattr(mm, near) - {"moment"}})
                s = s.with_member(mm)
            return s

        out.append(Candidate("rigid joint", f"make the joint at node {nid} rigid (bars {', '.join(ids)} become "
                             "beams continuous through it, still pinned at their far ends)", apply,
                             COSTS["rigid joint"], np.array(vecs).T, {"node": nid, "members": ids}))
    return out


def move_candidates(scheme: Scheme, c: Classification) -> list[Candidate]:
    """Move a pinned node off the line of two members that meet in line there."""
    system = c.system
    out = []
    size = scheme.size()
    for nid in system.active_nodes:
        if system.node_dof[nid][2] is not None:
            continue
        ms = [m for m in scheme.members_at(nid) if m.rise == 0]
        p = np.array(scheme.node_xy(nid))
        done = False
        for a in range(len(ms)):
            for b in range(a + 1, len(ms)):
                pa = np.array(scheme.node_xy(ms[a].other_end(nid)))
                pb = np.array(scheme.node_xy(ms[b].other_end(nid)))
                d = pb - pa
                L = float(np.hypot(*d))
                if L == 0:
                    continue
                off = abs(float(d[0] * (p - pa)[1] - d[1] * (p - pa)[0])) / L
                t = float((p - pa) @ d) / (L * L)
                if off > 1e-9 * size or not 0 < t < 1:
                    continue
                n = np.array([-d[1], d[0]]) / L
                if n[1] < 0 or (n[1] == 0 and n[0] < 0):
                    n = -n
                delta = MOVE_FRACTION * min(float(np.hypot(*(p - pa))), float(np.hypot(*(pb - p))))
                q = p + delta * n

                def apply(s: Scheme, nid=nid, q=(float(q[0]), float(q[1]))) -> Scheme:
                    return s.moved({nid: q})

                out.append(Candidate("node moved", f"move node {nid} by {delta:.4g} {scheme.units} off the line "
                                     f"{ms[a].other_end(nid)}-{ms[b].other_end(nid)} (members {ms[a].id}, "
                                     f"{ms[b].id} meet in line there)", apply,
                                     COSTS["node moved"] + delta / system.lref, None,
                                     {"node": nid, "from": [float(p[0]), float(p[1])],
                                      "to": [float(q[0]), float(q[1])]}))
                done = True
                break
            if done:
                break
    return out


def candidates(scheme: Scheme, c: Classification) -> list[Candidate]:
    return (support_candidates(scheme, c) + rigid_candidates(scheme, c) + bar_candidates(scheme, c)
            + move_candidates(scheme, c))


# --------------------------------------------------------------------------- scoring
def _gain(D: np.ndarray, V) -> tuple[int, float]:
    """Mechanisms removed by the constraints V (rows, unit columns) from the motions D; and the score."""
    if V is None or D.shape[1] == 0 or V[1].shape[1] == 0:
        return 0, 0.0
    rows, Vc = V
    sv = np.linalg.svd(Vc.T @ D[rows], compute_uv=False)
    return int(np.count_nonzero(sv > SCORE_MIN)), float(sv.max()) if sv.size else 0.0


def _restrict(D: np.ndarray, V) -> np.ndarray:
    """Orthonormal basis of the motions in span(D) that the constraints V leave free."""
    rows, Vc = V
    W = Vc.T @ D[rows]
    if W.size == 0:
        return D
    _, sv, Vt = np.linalg.svd(W, full_matrices=True)
    r = int(np.count_nonzero(sv > SCORE_MIN))
    return D @ Vt[r:].T


def _mode_rows(system) -> list[int]:
    return [k for k, (kind, _, _) in enumerate(system.rows) if kind in ("u", "v", "theta")]


def modes_stopped(before: Classification, after: Classification) -> list[int]:
    """Original modes (classify order) that are not motions of the edited scheme.

    Compared on the node rows the two systems share: mode k survives when it lies in the span
    of the new mechanisms there.
    """
    B = before.mechanism_basis
    if B is None or B.shape[1] == 0:
        return []
    if after.mechanisms == 0:
        return list(range(B.shape[1]))
    N = after.mechanism_basis
    if N is None or N.shape[1] == 0:
        return list(range(B.shape[1]))
    old = {before.system.rows[k]: k for k in _mode_rows(before.system)}
    new = {after.system.rows[k]: k for k in _mode_rows(after.system)}
    common = [lab for lab in old if lab in new and lab[0] in ("u", "v")]
    if not common:
        return []
    Bo = B[[old[lab] for lab in common], :]
    Nn = N[[new[lab] for lab in common], :]
    Qn = la.orth(Nn) if Nn.size else np.zeros((len(common), 0))
    out = []
    for k in range(B.shape[1]):
        v = Bo[:, k]
        nv = float(np.linalg.norm(v))
        if nv < 1e-12:
            continue
        if float(np.linalg.norm(v - Qn @ (Qn.T @ v))) / nv > 1e-6:
            out.append(k)
    return out


# --------------------------------------------------------------------------- remedies
def remedies(scheme: Scheme, classification: Classification | None = None, *, max_remedies: int = 20,
             per_kind: int = 8, smallest: bool = True, max_mechanisms: int = 200) -> RemedyResult:
    """Verified single changes that remove mechanisms, ranked, and a smallest set removing all."""
    c = classification if classification is not None else classify(scheme)
    m = c.mechanisms
    if m == 0:
        return RemedyResult(0, [], None, "the scheme is stable: nothing to fix")
    D = c.mechanism_basis
    if D is None or D.shape[1] != m:
        if m > max_mechanisms:
            return RemedyResult(m, [], None, f"skipped: {m} mechanisms (more than {max_mechanisms})")
        D = classify(scheme, bases=True).mechanism_basis
    cands = candidates(scheme, c)
    for cd in cands:
        if cd.V is not None:
            cd.gain, cd.score = _gain(D, cd.V)
    # changes of geometry or of the degrees of freedom: by re-analysis below
    scored = [cd for cd in cands if cd.V is None or cd.gain > 0]
    by_kind: dict[str, list[Candidate]] = {}
    for cd in sorted(scored, key=lambda x: (-x.gain, x.cost, -x.score, x.description)):
        by_kind.setdefault(cd.kind, []).append(cd)
    shortlist = [cd for lst in by_kind.values() for cd in lst[:per_kind]]
    verified: list[Remedy] = []
    for cd in shortlist:
        try:
            edited = cd.apply(scheme)
        except (KeyError, ValueError):
            continue
        after = classify(edited)
        if after.mechanisms >= m:
            continue
        if cd.V is None:
            cd.gain = m - after.mechanisms
            cd.score = 1.0
        verified.append(Remedy(cd.kind, cd.description, edited, cd.cost, cd.score, m, after.mechanisms,
                               after.self_stress, modes_stopped(c, after), cd.change))
    verified.sort(key=lambda r: (-r.mechanisms_removed, r.cost, -r.score, r.description))
    small = smallest_set(scheme, c, D, [cd for cd in cands if cd.V is not None and cd.gain > 0]) if smallest else None
    note = (f"{len(verified)} verified change{'s' if len(verified) != 1 else ''} of {len(cands)} tried"
            + ("" if small is None else f"; a set of {len(small.changes)} removes all {m}"))
    return RemedyResult(m, verified[:max_remedies], small, note)


def smallest_set(scheme: Scheme, c: Classification, D: np.ndarray, cands: list[Candidate]) -> SmallestSet | None:
    """Greedy completion (see module docstring), applied and verified by re-analysis."""
    m = D.shape[1]
    if not cands:
        return None
    best_gain = max(cd.gain for cd in cands)
    lower = math.ceil(m / best_gain) if best_gain else m
    for pool in (cands, [cd for cd in cands if cd.kind in ("bar", "restraint", "support")]):
        Dc = D.copy()
        chosen: list[Candidate] = []
        left = list(pool)
        while Dc.shape[1] > 0 and left:
            best = None
            for cd in left:
                g, sc = _gain(Dc, cd.V)
                if g and (best is None or (-g, cd.cost, -sc) < (-best[0], best[1].cost, -best[2])):
                    best = (g, cd, sc)
            if best is None:
                break
            g, cd, sc = best
            chosen.append(replace(cd, gain=g, score=sc))
            left.remove(cd)
            Dc = _restrict(Dc, cd.V)
        if Dc.shape[1] > 0:
            continue
        edited = scheme
        try:
            for cd in chosen:
                edited = cd.apply(edited)
        except (KeyError, ValueError):
            continue
        after = classify(edited)
        if after.mechanisms == 0:
            return SmallestSet(chosen, edited, 0, after.self_stress, lower)
    return None

"""The equilibrium matrix A of a scheme (A t = f), assembled sparse.

Rows are the nodal equilibrium equations (force along x, force along y and, where the node
has a rotation degree of freedom, moment) followed by one row per release condition.
Columns are the independent internal forces of the members (a bar: N; a beam: N, M_i, M_j)
followed by one column per support reaction component.  With this layout

    m = rows - rank A      (independent mechanisms, rigid-body ones included)
    s = cols - rank A      (independent states of self-stress)

and ``cols - rows = s - m`` is the extended Maxwell rule (Calladine 1978) exactly.
Reference: S. Pellegrino & C. R. Calladine (1986), "Matrix analysis of statically and
kinematically indeterminate frameworks", Int. J. Solids Struct. 22(4), 409-428.

Member columns are the transposed compatibility rows (elongation e, end rotations
phi_i = theta_i - psi, phi_j = theta_j - psi, psi the chord rotation).  To keep the matrix
scale-invariant, rotations are carried as theta * Lref and moments as M / Lref, with Lref
the mean chord length, so the entries are direction cosines, Lref / L and 1.

Node rotation DOF: a node has one iff a beam end is rigidly attached to it.  A full hinge
joining n beam ends therefore releases all n ends and has no rotation, which gives the
n - 1 releases of the hand count; a rotational restraint at a node with no rigid beam end
acts on nothing and is dropped with a warning.

Release conditions (one row each): a moment release M_end = 0; an axial or shear release
sets the component of the member's internal force resultant along (axial) or across
(shear) the end tangent to zero.  For a curved member (``rise``) the end tangent is the
arc's; mechanics otherwise use the chord.  The resultant is constant along an unloaded
member, F = N t - V n with V = (M_i + M_j) / L.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
import scipy.sparse as sp

from .model import Scheme, arc_end_angle


@dataclass(frozen=True)
class Finding:
    """A warning or remark about a scheme, with the ids of the items it concerns."""

    text: str
    items: tuple[str, ...] = ()
    kind: str = "warning"


@dataclass
class System:
    """The assembled equilibrium matrix with its row and column labels."""

    A: sp.csc_matrix
    #: (kind, item, detail): kind "u"/"v"/"theta" (item = node id) or "release"
    #: (item = member id, detail = "start:moment" ...)
    rows: list[tuple[str, str, str]]
    #: (kind, item, detail): kind "N"/"Mi"/"Mj" (item = member id) or "reaction"
    #: (item = node id, detail = "along"/"across"/"rotation")
    cols: list[tuple[str, str, str]]
    #: node id -> (row of u, row of v, row of theta or None); active nodes only
    node_dof: dict[str, tuple[int, int, int | None]]
    #: active member ids in order, with their first column
    member_cols: dict[str, list[int]]
    reaction_cols: dict[str, list[int]]
    release_rows: dict[str, list[int]]
    lref: float
    active_nodes: list[str]
    #: node ids per connected piece (members joining nodes)
    pieces: list[list[str]]
    findings: list[Finding] = field(default_factory=list)
    #: reaction columns that count in the hand count (effective restraints)
    n_reactions: int = 0

    @property
    def shape(self) -> tuple[int, int]:
        return self.A.shape


def _pieces(scheme: Scheme, active: list[str]) -> list[list[str]]:
    parent = {n: n for n in active}

    def find(a: str) -> str:
        while parent[a] != a:
            parent[a] = parent[parent[a]]
            a = parent[a]
        return a

    for m in scheme.members.values():
        ra, rb = find(m.start), find(m.end)
        if ra != rb:
            parent[ra] = rb
    groups: dict[str, list[str]] = {}
    for n in active:
        groups.setdefault(find(n), []).append(n)
    return list(groups.values())


def rigid_beam_ends(scheme: Scheme) -> dict[str, int]:
    """Number of beam ends rigidly (moment-continuously) attached at each node."""
    out: dict[str, int] = {}
    for m in scheme.members.values():
        if m.kind != "beam":
            continue
        for nid, rel in ((m.start, m.releases_start), (m.end, m.releases_end)):
            if "moment" in rel or scheme.nodes[nid].hinge:
                continue
            out[nid] = out.get(nid, 0) + 1
    return out


def end_released(scheme: Scheme, member_id: str, node_id: str) -> bool:
    """Whether the moment at this member end is released (end release or full hinge)."""
    m = scheme.members[member_id]
    return m.kind == "bar" or "moment" in m.releases_at(node_id) or scheme.nodes[node_id].hinge


def assemble(scheme: Scheme) -> System:
    """Assemble the sparse equilibrium matrix of ``scheme`` (see module docstring)."""
    findings: list[Finding] = []
    active = scheme.connected_node_ids()
    active_set = set(active)
    for nid in scheme.nodes:
        if nid not in active_set:
            findings.append(Finding(f'node "{nid}" is not reached by any member and is left out of the analysis',
                                    (nid,)))
    rigid = rigid_beam_ends(scheme)

    rows: list[tuple[str, str, str]] = []
    node_dof: dict[str, tuple[int, int, int | None]] = {}
    for nid in active:
        iu = len(rows); rows.append(("u", nid, ""))
        iv = len(rows); rows.append(("v", nid, ""))
        it = None
        if rigid.get(nid, 0) > 0:
            it = len(rows); rows.append(("theta", nid, ""))
        node_dof[nid] = (iu, iv, it)

    lengths = []
    for m in scheme.members.values():
        (x0, y0), (x1, y1) = scheme.node_xy(m.start), scheme.node_xy(m.end)
        lengths.append(math.hypot(x1 - x0, y1 - y0))
    lref = float(np.mean(lengths)) if lengths else 1.0

    I: list[int] = []
    J: list[int] = []
    V: list[float] = []
    cols: list[tuple[str, str, str]] = []
    member_cols: dict[str, list[int]] = {}
    release_specs: list[tuple[str, str, list[tuple[int, float]]]] = []

    def put(r: int | None, c: int, v: float) -> None:
        if r is not None and v != 0.0:
            I.append(r); J.append(c); V.append(v)

    for m, L in zip(scheme.members.values(), lengths):
        (x0, y0), (x1, y1) = scheme.node_xy(m.start), scheme.node_xy(m.end)
        c, s = (x1 - x0) / L, (y1 - y0) / L
        iu, iv, it = node_dof[m.start]
        ju, jv, jt = node_dof[m.end]
        cN = len(cols); cols.append(("N", m.id, ""))
        put(iu, cN, -c); put(iv, cN, -s); put(ju, cN, c); put(jv, cN, s)
        member_cols[m.id] = [cN]
        if m.kind == "bar":
            continue
        rho = lref / L
        cI = len(cols); cols.append(("Mi", m.id, ""))
        cJ = len(cols); cols.append(("Mj", m.id, ""))
        for cc, th in ((cI, it), (cJ, jt)):
            put(iu, cc, -rho * s); put(iv, cc, rho * c)
            put(ju, cc, rho * s); put(jv, cc, -rho * c)
            put(th, cc, 1.0)
        member_cols[m.id] += [cI, cJ]
        # release conditions
        alpha = arc_end_angle(L, m.rise)
        t = np.array([c, s]); n = np.array([-s, c])
        for end, nid, cM, turn in (("start", m.start, cI, alpha), ("end", m.end, cJ, -alpha)):
            rel = m.releases_at(nid)
            if "moment" in rel or scheme.nodes[nid].hinge:
                release_specs.append((m.id, f"{end}:moment", [(cM, 1.0)]))
            ca, sa = math.cos(turn), math.sin(turn)
            tau = ca * t + sa * n          # end tangent
            nu = -sa * t + ca * n          # end normal
            for word, vec in (("axial", tau), ("shear", nu)):
                if word in rel:
                    a_n = float(vec @ t)
                    a_m = -rho * float(vec @ n)
                    entries = [(cN, a_n), (cI, a_m), (cJ, a_m)]
                    norm = math.sqrt(sum(e * e for _, e in entries))
                    release_specs.append((m.id, f"{end}:{word}", [(k, e / norm) for k, e in entries]))

    reaction_cols: dict[str, list[int]] = {}
    n_reactions = 0
    for sup in scheme.supports.values():
        nid = sup.node
        if nid not in active_set:
            findings.append(Finding(f'support at node "{nid}" acts on a node that no member reaches; it is left out',
                                    (nid,)))
            continue
        iu, iv, it = node_dof[nid]
        fixes = sup.fixes
        dirs = sup.directions()
        k = 0
        reaction_cols[nid] = []
        for word in ("along", "across"):
            if word in fixes:
                dx, dy = dirs[k]; k += 1
                cc = len(cols); cols.append(("reaction", nid, word))
                put(iu, cc, _clean(dx)); put(iv, cc, _clean(dy))
                reaction_cols[nid].append(cc); n_reactions += 1
        if "rotation" in fixes:
            if it is None:
                findings.append(Finding(
                    f'support at node "{nid}": its rotation restraint acts on nothing (no beam end is rigidly '
                    "attached there), so it works as a pin; the restraint is not counted", (nid,), "remark"))
            else:
                cc = len(cols); cols.append(("reaction", nid, "rotation"))
                put(it, cc, 1.0)
                reaction_cols[nid].append(cc); n_reactions += 1

    release_rows: dict[str, list[int]] = {}
    for mid, detail, entries in release_specs:
        r = len(rows); rows.append(("release", mid, detail))
        release_rows.setdefault(mid, []).append(r)
        for cc, v in entries:
            put(r, cc, v)

    A = sp.csc_matrix((np.asarray(V, float), (np.asarray(I, int), np.asarray(J, int))),
                      shape=(len(rows), len(cols)))
    A.sum_duplicates()
    return System(A, rows, cols, node_dof, member_cols, reaction_cols, release_rows, lref, active,
                  _pieces(scheme, active), findings, n_reactions)


def _clean(v: float) -> float:
    """Drop rounding noise of cos/sin of multiples of 90 degrees."""
    return 0.0 if abs(v) < 1e-15 else v

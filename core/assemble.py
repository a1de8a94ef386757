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
    #: all node ids in model order, and per member the indices of its end nodes in it
    node_ids: list[str] = field(default_factory=list)
    member_ends: np.ndarray | None = None

    @property
    def shape(self) -> tuple[int, int]:
        return self.A.shape


def _pieces(node_ids: list[str], used: np.ndarray, si: np.ndarray, ei: np.ndarray) -> list[list[str]]:
    """Node ids of each connected piece (members join their end nodes); unused nodes skipped."""
    from scipy.sparse.csgraph import connected_components

    n = len(node_ids)
    if n == 0 or si.size == 0:
        return []
    G = sp.coo_matrix((np.ones(si.size), (si, ei)), shape=(n, n))
    _, labels = connected_components(G, directed=False)
    groups: dict[int, list[str]] = {}
    for nid, lab, u in zip(node_ids, labels.tolist(), used.tolist()):
        if u:
            groups.setdefault(lab, []).append(nid)
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
    node_ids = list(scheme.nodes)
    index = {nid: k for k, nid in enumerate(node_ids)}
    mlist = list(scheme.members.values())
    nm = len(mlist)
    nn = len(node_ids)
    # one pass over the members: end indices, beam flag, moment release at each end
    packed = np.array([(index[m.start], index[m.end], m.kind == "beam",
                        "moment" in m.releases_start, "moment" in m.releases_end) for m in mlist],
                      dtype=int).reshape(nm, 5)
    si, ei = packed[:, 0].copy(), packed[:, 1].copy()
    is_beam, rel_s, rel_e = (packed[:, 2] != 0), (packed[:, 3] != 0), (packed[:, 4] != 0)
    hinge = np.fromiter((n.hinge for n in scheme.nodes.values()), bool, nn)
    used = np.zeros(nn, bool)
    used[si] = True
    used[ei] = True
    active = [nid for nid, u in zip(node_ids, used.tolist()) if u]
    for nid, u in zip(node_ids, used.tolist()):
        if not u:
            findings.append(Finding(f'node "{nid}" is not reached by any member and is left out of the analysis',
                                    (nid,)))
    rigid_cnt = np.zeros(nn, int)
    np.add.at(rigid_cnt, si[is_beam & ~rel_s & ~hinge[si]], 1)
    np.add.at(rigid_cnt, ei[is_beam & ~rel_e & ~hinge[ei]], 1)
    has_theta = used & (rigid_cnt > 0)
    ndof_node = np.where(used, 2 + has_theta.astype(int), 0)
    base = np.concatenate([[0], np.cumsum(ndof_node)[:-1]]).astype(int) if nn else np.zeros(0, int)
    th_row = np.where(has_theta, base + 2, -1)
    rows: list[tuple[str, str, str]] = []
    node_dof: dict[str, tuple[int, int, int | None]] = {}
    for nid, b0, ht, nd in zip(node_ids, base.tolist(), has_theta.tolist(), ndof_node.tolist()):
        if not nd:
            continue
        if ht:
            rows += (("u", nid, ""), ("v", nid, ""), ("theta", nid, ""))
            node_dof[nid] = (b0, b0 + 1, b0 + 2)
        else:
            rows += (("u", nid, ""), ("v", nid, ""))
            node_dof[nid] = (b0, b0 + 1, None)
    active_set = set(active)

    X = np.fromiter((n.x for n in scheme.nodes.values()), float, nn)
    Y = np.fromiter((n.y for n in scheme.nodes.values()), float, nn)
    D = np.stack([X[ei] - X[si], Y[ei] - Y[si]], axis=1) if nm else np.zeros((0, 2))
    Ls = np.hypot(D[:, 0], D[:, 1])
    lengths = Ls.tolist()
    lref = float(Ls.mean()) if nm else 1.0
    cs = D[:, 0] / np.where(Ls > 0, Ls, 1.0)
    sn = D[:, 1] / np.where(Ls > 0, Ls, 1.0)
    rho = lref / np.where(Ls > 0, Ls, 1.0)
    ncol_m = np.where(is_beam, 3, 1)
    first = np.concatenate([[0], np.cumsum(ncol_m)[:-1]]).astype(int) if nm else np.zeros(0, int)
    iu, iv, ju, jv = base[si], base[si] + 1, base[ei], base[ei] + 1
    it, jt = th_row[si], th_row[ei]

    cols: list[tuple[str, str, str]] = []
    member_cols: dict[str, list[int]] = {}
    for mid, f, beam in zip(scheme.members, first.tolist(), is_beam.tolist()):
        if beam:
            cols += (("N", mid, ""), ("Mi", mid, ""), ("Mj", mid, ""))
            member_cols[mid] = [f, f + 1, f + 2]
        else:
            cols.append(("N", mid, ""))
            member_cols[mid] = [f]
    # axial columns (every member)
    I_parts = [iu, iv, ju, jv]
    J_parts = [first] * 4
    V_parts = [-cs, -sn, cs, sn]
    # moment columns (beams)
    b = np.nonzero(is_beam)[0]
    for off, th in ((1, it), (2, jt)):
        cb = first[b] + off
        I_parts += [iu[b], iv[b], ju[b], jv[b]]
        J_parts += [cb] * 4
        V_parts += [-rho[b] * sn[b], rho[b] * cs[b], rho[b] * sn[b], -rho[b] * cs[b]]
        has = th[b] >= 0
        I_parts.append(th[b][has]); J_parts.append(cb[has]); V_parts.append(np.ones(int(has.sum())))
    I: list[int] = []
    J: list[int] = []
    V: list[float] = []

    def put(r: int | None, c: int, v: float) -> None:
        if r is not None and v != 0.0:
            I.append(r); J.append(c); V.append(v)

    release_specs: list[tuple[str, str, list[tuple[int, float]]]] = []
    for k in b.tolist():
        m = mlist[k]
        hinged_s = scheme.nodes[m.start].hinge
        hinged_e = scheme.nodes[m.end].hinge
        if not (m.releases_start or m.releases_end or hinged_s or hinged_e):
            continue
        L = lengths[k]
        c, s, r_ = float(cs[k]), float(sn[k]), float(rho[k])
        cN, cI, cJ = member_cols[m.id]
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
                    a_m = -r_ * float(vec @ n)
                    entries = [(cN, a_n), (cI, a_m), (cJ, a_m)]
                    norm = math.sqrt(sum(e * e for _, e in entries))
                    release_specs.append((m.id, f"{end}:{word}", [(kk, e / norm) for kk, e in entries]))

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

    Iall = np.concatenate(I_parts + [np.asarray(I, int)]) if nm else np.asarray(I, int)
    Jall = np.concatenate(J_parts + [np.asarray(J, int)]) if nm else np.asarray(J, int)
    Vall = np.concatenate(V_parts + [np.asarray(V, float)]) if nm else np.asarray(V, float)
    keep = Vall != 0.0
    A = sp.csc_matrix((Vall[keep], (Iall[keep], Jall[keep])), shape=(len(rows), len(cols)))
    A.sum_duplicates()
    return System(A, rows, cols, node_dof, member_cols, reaction_cols, release_rows, lref, active,
                  _pieces(node_ids, used, si, ei), findings, n_reactions, node_ids,
                  np.stack([si, ei], axis=1) if nm else np.zeros((0, 2), int))


def _clean(v: float) -> float:
    """Drop rounding noise of cos/sin of multiples of 90 degrees."""
    return 0.0 if abs(v) < 1e-15 else v

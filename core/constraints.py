"""Exact nonlinear constraints of a scheme in the rigid-body (multibody) formulation.

Every rigid piece is a *body* with pose ``(x, y, theta)``: the members rigidly joined to one
another (beam ends without any release) together with the nodes they meet at.  A node at
which no member end is rotationally attached is a *point* with ``(x, y)`` only.  A member
pinned at both ends (a bar, or a beam with both ends moment-released) carries no pose of its
own and becomes a distance constraint between its two end points.  A body point with local
offset ``s`` is ``P = r + R(theta) s``; the drawn position is ``theta = 0``.

Rows of ``Phi(q) = 0`` (all lengths divided by ``lref``, the mean chord length, so every
row is O(1) and scale-free):

* ``link``      (|P_a - P_b|^2 - l^2) / (2 l)           distance kept by a pin-ended member
* ``pin``       (P_a - P_b)_x, (P_a - P_b)_y               member end on its node
* ``slide``     e(theta_o) . (P_a - P_b)                   end with an axial or a shear release:
  only the locked component (along the end tangent, or across it) is kept; ``e`` turns with
  the member that carries the release
* ``angle``     theta_a - theta_b                          rotation kept across an axial or
  shear release whose moment is not released; rotation restraint of a support
* ``ground``    d . (P_a - P_a0)                           each restrained translation of a
  support (pin: two directions, roller: one, fixed and guided as their words say)

A full hinge joining n members needs no special care: the node is a point and each member
end is pinned to it, which gives the n - 1 conditions automatically.  With this model
``m = 3 N_bodies + 2 N_points - rank Phi_q`` and ``s = rows - rank Phi_q`` equal the node
model's (m, s) (P. E. Nikravesh (1988), *Computer-Aided Analysis of Mechanical Systems*;
E. J. Haug (1989), *Computer-Aided Kinematics and Dynamics of Mechanical Systems*): the
left null vectors of Phi_q are the self-equilibrated joint forces.

:meth:`ConstraintModel.second` gives the exact second directional derivative
``Phi''(q)[d, d]``, which the second-order test needs as ``omega^T Phi_qq(d, d)``
(Connelly & Whiteley 1996), and :meth:`ConstraintModel.project` is the Gauss-Newton
projection onto ``Phi = 0`` used by tracing (pseudo-arclength corrector; H. B. Keller
(1977); E. Allgower & K. Georg (1990), *Numerical Continuation Methods*).
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla

from .model import Scheme, arc_end_angle

#: models with at most this many unknowns use dense linear algebra
DENSE_MAX_VARS = 150
#: rank decisions on Phi_q with at most this many entries use a dense SVD
DENSE_MAX_ENTRIES = 250_000
#: beyond the sparse route's basis size, a dense mechanism basis is computed up to this many entries
DENSE_BASIS_MAX_ENTRIES = 4_000_000


def effective_releases(scheme: Scheme, member_id: str, node_id: str) -> frozenset[str]:
    """Releases acting at one member end: the end's own, plus moment for a bar or a full hinge."""
    m = scheme.members[member_id]
    rel = set(m.releases_at(node_id))
    if m.kind == "bar" or scheme.nodes[node_id].hinge:
        rel.add("moment")
    return frozenset(rel)


def end_frame(scheme: Scheme, member_id: str, node_id: str) -> tuple[np.ndarray, np.ndarray]:
    """Unit tangent (pointing from start to end) and normal of a member at one end, drawn position."""
    m = scheme.members[member_id]
    (x0, y0), (x1, y1) = scheme.node_xy(m.start), scheme.node_xy(m.end)
    L = math.hypot(x1 - x0, y1 - y0)
    t = np.array([(x1 - x0) / L, (y1 - y0) / L])
    n = np.array([-t[1], t[0]])
    alpha = arc_end_angle(L, m.rise)
    turn = alpha if node_id == m.start else -alpha
    ca, sa = math.cos(turn), math.sin(turn)
    tau = ca * t + sa * n
    nu = -sa * t + ca * n
    return tau, nu


@dataclass(frozen=True)
class Entity:
    """A body (``theta`` is ``q[offset + 2]``) or a point (``q[offset:offset + 2]`` only)."""

    kind: str  # "body" or "point"
    offset: int
    members: tuple[str, ...]
    nodes: tuple[str, ...]

    @property
    def size(self) -> int:
        return 3 if self.kind == "body" else 2


class ConstraintModel:
    """The constraint equations of a scheme (see module docstring)."""

    def __init__(self, scheme: Scheme):
        self.scheme = scheme
        lengths = []
        for m in scheme.members.values():
            (x0, y0), (x1, y1) = scheme.node_xy(m.start), scheme.node_xy(m.end)
            lengths.append(math.hypot(x1 - x0, y1 - y0))
        self.lref = float(np.mean(lengths)) if lengths else 1.0
        self.size = scheme.size()
        self.active_nodes = scheme.connected_node_ids()
        active = set(self.active_nodes)
        rel = {(m.id, nid): effective_releases(scheme, m.id, nid)
               for m in scheme.members.values() for nid in (m.start, m.end)}
        rotational = {nid for (mid, nid), r in rel.items() if "moment" not in r}
        self.links = [m.id for m in scheme.members.values()
                      if rel[(m.id, m.start)] == {"moment"} and rel[(m.id, m.end)] == {"moment"}]
        link_set = set(self.links)

        # rigid pieces: union of non-link members and rotational nodes through unreleased ends
        parent: dict[tuple[str, str], tuple[str, str]] = {}

        def find(a):
            parent.setdefault(a, a)
            while parent[a] != a:
                parent[a] = parent[parent[a]]
                a = parent[a]
            return a

        for m in scheme.members.values():
            if m.id in link_set:
                continue
            find(("m", m.id))
            for nid in (m.start, m.end):
                if not rel[(m.id, nid)]:
                    ra, rb = find(("m", m.id)), find(("n", nid))
                    if ra != rb:
                        parent[ra] = rb
        for nid in self.active_nodes:
            if nid in rotational:
                find(("n", nid))
        groups: dict[tuple[str, str], list[tuple[str, str]]] = {}
        for item in list(parent):
            groups.setdefault(find(item), []).append(item)

        nodes_xy = {nid: np.array(scheme.node_xy(nid)) / self.lref for nid in scheme.nodes}
        self.entities: list[Entity] = []
        self.node_entity: dict[str, int] = {}
        self.member_entity: dict[str, int | None] = {mid: None for mid in link_set}
        q0: list[float] = []
        refs: list[np.ndarray] = []
        # deterministic entity order: model order of the first member/node in the group
        order = {("m", mid): k for k, mid in enumerate(scheme.members)}
        order.update({("n", nid): len(order) + k for k, nid in enumerate(scheme.nodes)})
        for items in sorted(groups.values(), key=lambda g: min(order[i] for i in g)):
            items = sorted(items, key=order.get)
            mems = tuple(i[1] for i in items if i[0] == "m")
            nds = {i[1] for i in items if i[0] == "n"}
            nds_t = tuple(n for n in scheme.nodes if n in nds)
            pts = [nodes_xy[n] for n in nds_t] or [nodes_xy[scheme.members[mid].start] for mid in mems]
            for mid in mems:
                mm = scheme.members[mid]
                pts += [nodes_xy[mm.start], nodes_xy[mm.end]]
            ref = np.mean(pts, axis=0)
            e = Entity("body", len(q0), mems, nds_t)
            k = len(self.entities)
            self.entities.append(e)
            refs.append(ref)
            q0 += [ref[0], ref[1], 0.0]
            for nid in nds_t:
                self.node_entity[nid] = k
            for mid in mems:
                self.member_entity[mid] = k
        for nid in self.active_nodes:
            if nid in self.node_entity:
                continue
            k = len(self.entities)
            self.entities.append(Entity("point", len(q0), (), (nid,)))
            refs.append(nodes_xy[nid])
            q0 += [nodes_xy[nid][0], nodes_xy[nid][1]]
            self.node_entity[nid] = k
        self.q0 = np.array(q0, float)
        self.n = self.q0.size
        self._refs = refs

        # attachments: (entity, local offset)
        att_key: dict[tuple[int, str], int] = {}
        att_ent: list[int] = []
        att_s: list[np.ndarray] = []

        def attach(k: int, nid: str) -> int:
            key = (k, nid)
            if key not in att_key:
                att_key[key] = len(att_ent)
                att_ent.append(k)
                e = self.entities[k]
                att_s.append(nodes_xy[nid] - refs[k] if e.kind == "body" else np.zeros(2))
            return att_key[key]

        self.node_att = {nid: attach(self.node_entity[nid], nid) for nid in self.active_nodes}
        self.member_att: dict[str, tuple[int, int]] = {}
        for m in scheme.members.values():
            k = self.member_entity[m.id]
            if k is None:
                self.member_att[m.id] = (self.node_att[m.start], self.node_att[m.end])
            else:
                self.member_att[m.id] = (attach(k, m.start), attach(k, m.end))
        #: member ids in scheme order, with the attachment of each end (arrays for vector work)
        self.member_ids = list(scheme.members)
        self.member_a = np.array([self.member_att[mid][0] for mid in self.member_ids], int)
        self.member_b = np.array([self.member_att[mid][1] for mid in self.member_ids], int)
        self._att_ent = np.array(att_ent, int)
        self._att_off = np.array([self.entities[k].offset for k in att_ent], int)
        self._att_body = np.array([self.entities[k].kind == "body" for k in att_ent], bool)
        self._att_th = np.where(self._att_body, self._att_off + 2, 0)
        self._att_s = np.array(att_s, float).reshape(-1, 2)
        self.n_att = len(att_ent)

        # rows
        labels: list[tuple[str, str, str]] = []
        #: pin-ended members with both ends on one body (no row; each one state of self-stress)
        self.rigid_links: list[str] = []
        link_a, link_b, link_l, link_r = [], [], [], []
        pin_a, pin_b, pin_k, pin_r = [], [], [], []
        sl_a, sl_b, sl_o, sl_e, sl_r = [], [], [], [], []
        an_a, an_b, an_r = [], [], []
        gr_a, gr_d, gr_p, gr_r = [], [], [], []

        def row(label):
            labels.append(label)
            return len(labels) - 1

        for m in scheme.members.values():
            if m.id in link_set:
                a, b = self.member_att[m.id]
                if self.node_entity[m.start] == self.node_entity[m.end] and \
                        self.entities[self.node_entity[m.start]].kind == "body":
                    # both ends on one rigid body: satisfied identically, one self-stress state
                    self.rigid_links.append(m.id)
                    continue
                link_a.append(a); link_b.append(b)
                pa, pb = nodes_xy[m.start], nodes_xy[m.end]
                link_l.append(float(np.hypot(*(pb - pa))))
                link_r.append(row(("link", m.id, "")))
                continue
            k = self.member_entity[m.id]
            for end, nid, a in (("start", m.start, self.member_att[m.id][0]), ("end", m.end, self.member_att[m.id][1])):
                r_ = rel[(m.id, nid)]
                if not r_:
                    continue
                b = self.node_att[nid]
                if "axial" not in r_ and "shear" not in r_:
                    for comp in (0, 1):
                        pin_a.append(a); pin_b.append(b); pin_k.append(comp)
                        pin_r.append(row(("pin", m.id, f"{end}:{'xy'[comp]}")))
                else:
                    tau, nu = end_frame(scheme, m.id, nid)
                    for word, vec in (("axial", tau), ("shear", nu)):
                        if word not in r_:
                            sl_a.append(a); sl_b.append(b); sl_o.append(self.entities[k].offset + 2)
                            sl_e.append(vec); sl_r.append(row(("slide", m.id, f"{end}:{word}")))
                if "moment" not in r_:
                    kn = self.node_entity[nid]
                    an_a.append(self.entities[k].offset + 2)
                    an_b.append(self.entities[kn].offset + 2)
                    an_r.append(row(("angle", m.id, end)))
        for sup in scheme.supports.values():
            nid = sup.node
            if nid not in active:
                continue
            a = self.node_att[nid]
            fixes = sup.fixes
            dirs = sup.directions()
            j = 0
            for word in ("along", "across"):
                if word in fixes:
                    d = np.array(dirs[j]); j += 1
                    d[np.abs(d) < 1e-15] = 0.0
                    gr_a.append(a); gr_d.append(d); gr_p.append(nodes_xy[nid].copy())
                    gr_r.append(row(("ground", nid, word)))
            if "rotation" in fixes and self.entities[self.node_entity[nid]].kind == "body":
                an_a.append(self.entities[self.node_entity[nid]].offset + 2)
                an_b.append(-1)
                an_r.append(row(("ground", nid, "rotation")))

        ia = lambda v: np.array(v, int)  # noqa: E731
        self.rows = labels
        self.r = len(labels)
        self._link = (ia(link_a), ia(link_b), np.array(link_l, float), ia(link_r))
        self._pin = (ia(pin_a), ia(pin_b), ia(pin_k), ia(pin_r))
        self._slide = (ia(sl_a), ia(sl_b), ia(sl_o), np.array(sl_e, float).reshape(-1, 2), ia(sl_r))
        self._angle = (ia(an_a), ia(an_b), ia(an_r))
        self._ground = (ia(gr_a), np.array(gr_d, float).reshape(-1, 2), np.array(gr_p, float).reshape(-1, 2),
                        ia(gr_r))
        #: drawn node coordinates (nondimensional), every node of the scheme
        self._nodes_xy = nodes_xy

    # ------------------------------------------------------------------ attachments
    def _att(self, q: np.ndarray):
        """Positions P, rotated offsets R s and dP/dtheta of every attachment."""
        off = self._att_off
        th = np.where(self._att_body, q[self._att_th], 0.0)
        c, s = np.cos(th), np.sin(th)
        S = self._att_s
        Rs = np.column_stack([c * S[:, 0] - s * S[:, 1], s * S[:, 0] + c * S[:, 1]])
        P = np.column_stack([q[off], q[off + 1]]) + Rs
        Pth = np.column_stack([-Rs[:, 1], Rs[:, 0]])
        return P, Rs, Pth

    def _att_dir(self, q: np.ndarray, d: np.ndarray, Rs=None, Pth=None):
        """First and second directional derivatives of every attachment along ``d``."""
        if Rs is None:
            _, Rs, Pth = self._att(q)
        off = self._att_off
        dth = np.where(self._att_body, d[self._att_th], 0.0)
        dP = np.column_stack([d[off], d[off + 1]]) + Pth * dth[:, None]
        d2P = -Rs * (dth ** 2)[:, None]
        return dP, d2P, dth

    def attachment_positions(self, q: np.ndarray) -> np.ndarray:
        return self._att(q)[0]

    def attachment_velocities(self, q: np.ndarray, d: np.ndarray) -> np.ndarray:
        return self._att_dir(q, d)[0]

    def velocity_matrix(self, q: np.ndarray) -> sp.csr_matrix:
        """Sparse (2 n_att x n) map from dq to the attachment velocities (x rows then y rows interleaved)."""
        _, Rs, Pth = self._att(q)
        K = self.n_att
        off = self._att_off
        I = [2 * np.arange(K), 2 * np.arange(K) + 1]
        J = [off, off + 1]
        V = [np.ones(K), np.ones(K)]
        b = np.nonzero(self._att_body)[0]
        I += [2 * b, 2 * b + 1]
        J += [off[b] + 2, off[b] + 2]
        V += [Pth[b, 0], Pth[b, 1]]
        return sp.csr_matrix((np.concatenate(V), (np.concatenate(I), np.concatenate(J))), shape=(2 * K, self.n))

    # ------------------------------------------------------------------ constraints
    def phi(self, q: np.ndarray) -> np.ndarray:
        P, Rs, Pth = self._att(q)
        out = np.zeros(self.r)
        a, b, ell, rr = self._link
        if rr.size:
            g = P[a] - P[b]
            out[rr] = (np.einsum("ij,ij->i", g, g) - ell ** 2) / (2 * ell)
        a, b, k, rr = self._pin
        if rr.size:
            out[rr] = (P[a] - P[b])[np.arange(rr.size), k]
        a, b, o, e0, rr = self._slide
        if rr.size:
            e = _rot(e0, q[o])
            out[rr] = np.einsum("ij,ij->i", e, P[a] - P[b])
        a, b, rr = self._angle
        if rr.size:
            out[rr] = q[a] - np.where(b >= 0, q[np.maximum(b, 0)], 0.0)
        a, dvec, p0, rr = self._ground
        if rr.size:
            out[rr] = np.einsum("ij,ij->i", dvec, P[a] - p0)
        return out

    def jac(self, q: np.ndarray) -> sp.csr_matrix:
        """Phi_q as a sparse (rows x n) matrix."""
        I, J, V = self._jac_triplets(q)
        if I.size == 0:
            return sp.csr_matrix((self.r, self.n))
        Jm = sp.csr_matrix((V, (I, J)), shape=(self.r, self.n))
        Jm.sum_duplicates()
        return Jm

    def jac_dense(self, q: np.ndarray) -> np.ndarray:
        """Phi_q as a dense array (for small models, where sparse bookkeeping costs more than it saves)."""
        I, J, V = self._jac_triplets(q)
        M = np.zeros((self.r, self.n))
        np.add.at(M, (I, J), V)
        return M

    def jacobian(self, q: np.ndarray):
        """Phi_q, dense for models of at most DENSE_MAX_VARS unknowns, else sparse."""
        return self.jac_dense(q) if self.n <= DENSE_MAX_VARS else self.jac(q)

    def _jac_triplets(self, q: np.ndarray):
        P, Rs, Pth = self._att(q)
        I: list[np.ndarray] = []
        J: list[np.ndarray] = []
        V: list[np.ndarray] = []

        def put_att(rows, att, w):
            off = self._att_off[att]
            I.extend([rows, rows]); J.extend([off, off + 1]); V.extend([w[:, 0], w[:, 1]])
            body = self._att_body[att]
            if body.any():
                I.append(rows[body]); J.append(off[body] + 2)
                V.append(np.einsum("ij,ij->i", w[body], Pth[att[body]]))

        a, b, ell, rr = self._link
        if rr.size:
            w = (P[a] - P[b]) / ell[:, None]
            put_att(rr, a, w); put_att(rr, b, -w)
        a, b, k, rr = self._pin
        if rr.size:
            w = np.zeros((rr.size, 2)); w[np.arange(rr.size), k] = 1.0
            put_att(rr, a, w); put_att(rr, b, -w)
        a, b, o, e0, rr = self._slide
        if rr.size:
            e = _rot(e0, q[o])
            put_att(rr, a, e); put_att(rr, b, -e)
            ke = np.column_stack([-e[:, 1], e[:, 0]])
            I.append(rr); J.append(o); V.append(np.einsum("ij,ij->i", ke, P[a] - P[b]))
        a, b, rr = self._angle
        if rr.size:
            I.append(rr); J.append(a); V.append(np.ones(rr.size))
            g = b >= 0
            I.append(rr[g]); J.append(b[g]); V.append(-np.ones(int(g.sum())))
        a, dvec, p0, rr = self._ground
        if rr.size:
            put_att(rr, a, dvec)
        if not I:
            return np.zeros(0, int), np.zeros(0, int), np.zeros(0)
        return np.concatenate(I), np.concatenate(J), np.concatenate(V)

    def second(self, q: np.ndarray, d: np.ndarray) -> np.ndarray:
        """Exact second directional derivative ``Phi''(q)[d, d]`` (one value per row)."""
        P, Rs, Pth = self._att(q)
        dP, d2P, _ = self._att_dir(q, d, Rs, Pth)
        out = np.zeros(self.r)
        a, b, ell, rr = self._link
        if rr.size:
            g = P[a] - P[b]
            dg = dP[a] - dP[b]
            d2g = d2P[a] - d2P[b]
            out[rr] = (np.einsum("ij,ij->i", dg, dg) + np.einsum("ij,ij->i", g, d2g)) / ell
        a, b, k, rr = self._pin
        if rr.size:
            out[rr] = (d2P[a] - d2P[b])[np.arange(rr.size), k]
        a, b, o, e0, rr = self._slide
        if rr.size:
            e = _rot(e0, q[o])
            ke = np.column_stack([-e[:, 1], e[:, 0]])
            w = d[o]
            g = P[a] - P[b]
            dg = dP[a] - dP[b]
            d2g = d2P[a] - d2P[b]
            out[rr] = (-np.einsum("ij,ij->i", e, g) * w ** 2 + 2 * w * np.einsum("ij,ij->i", ke, dg)
                       + np.einsum("ij,ij->i", e, d2g))
        a, dvec, p0, rr = self._ground
        if rr.size:
            out[rr] = np.einsum("ij,ij->i", dvec, d2P[a])
        return out

    def bilinear(self, q: np.ndarray, d1: np.ndarray, d2: np.ndarray) -> np.ndarray:
        """``Phi''(q)[d1, d2]`` by polarisation of the quadratic form (exact)."""
        return (self.second(q, d1 + d2) - self.second(q, d1 - d2)) / 4.0

    # ------------------------------------------------------------------ geometry
    def node_positions(self, q: np.ndarray) -> dict[str, tuple[float, float]]:
        """Physical coordinates of every node of the scheme (nodes no member reaches stay put)."""
        return self.nodes_from_points(self.attachment_positions(q) * self.lref)

    def nodes_from_points(self, P: np.ndarray) -> dict[str, tuple[float, float]]:
        """Node coordinates from physical attachment positions ``P`` (n_att x 2)."""
        out = {}
        for nid, n in self.scheme.nodes.items():
            if nid in self.node_att:
                x, y = P[self.node_att[nid]]
                out[nid] = (float(x), float(y))
            else:
                out[nid] = (n.x, n.y)
        return out

    def member_ends(self, q: np.ndarray) -> dict[str, tuple[np.ndarray, np.ndarray]]:
        """Physical end points of every member (on the member itself; differs from the node at a slide)."""
        P = self.attachment_positions(q) * self.lref
        return {mid: (P[a], P[b]) for mid, (a, b) in self.member_att.items()}

    def residual(self, q: np.ndarray) -> float:
        """Largest constraint violation as a fraction of the model size."""
        if self.r == 0:
            return 0.0
        return float(np.max(np.abs(self.phi(q)))) * self.lref / self.size

    def rigid_fields(self, q: np.ndarray | None = None) -> np.ndarray:
        """The three rigid-body motions of the whole scheme in q-space (n x 3): x, y, rotation about the centroid."""
        q = self.q0 if q is None else q
        P = self.attachment_positions(q)
        c = P[[self.node_att[n] for n in self.active_nodes]].mean(axis=0) if self.active_nodes else np.zeros(2)
        T = np.zeros((self.n, 3))
        for e in self.entities:
            o = e.offset
            x, y = q[o] - c[0], q[o + 1] - c[1]
            T[o] = (1.0, 0.0, -y)
            T[o + 1] = (0.0, 1.0, x)
            if e.kind == "body":
                T[o + 2] = (0.0, 0.0, 1.0)
        return T

    def internal_self_stress(self) -> int:
        """Self-stress states inside bodies that no row carries: 3 per closed rigid loop, 1 per pin-ended
        member with both ends on one body."""
        return 3 * self.rigid_loops() + len(self.rigid_links)

    def rigid_loops(self) -> int:
        """Independent closed loops of rigidly joined members inside the bodies (cycle rank)."""
        loops = 0
        for e in self.entities:
            if e.kind != "body":
                continue
            vertices = len(e.members) + len(e.nodes)
            edges = sum(1 for mid in e.members
                        for nid in (self.scheme.members[mid].start, self.scheme.members[mid].end)
                        if nid in e.nodes and not effective_releases(self.scheme, mid, nid))
            loops += edges - vertices + 1
        return loops

    # ------------------------------------------------------------------ Newton projection
    def project(self, y: np.ndarray, extra: tuple[np.ndarray, float] | None = None, *,
                max_iter: int = 12, tol: float = 1e-14) -> tuple[np.ndarray, bool, int, float]:
        """Gauss-Newton projection of ``y`` onto ``Phi = 0`` (minimum-norm steps).

        ``extra = (t, c)`` adds the linear condition ``t . y = c`` (the pseudo-arclength
        equation of the corrector).  Returns ``(y, converged, iterations, max |Phi|)``;
        converged means ``max |Phi| <= tol * size / lref`` with a last step below the same.
        """
        scale = self.size / self.lref
        y = np.array(y, float)
        res = math.inf
        prev = math.inf
        for it in range(1, max_iter + 1):
            F = self.phi(y)
            Jm = self.jacobian(y)
            if extra is not None:
                t, c = extra
                F = np.append(F, t @ y - c)
                Jm = np.vstack([Jm, t[None, :]]) if isinstance(Jm, np.ndarray) else \
                    sp.vstack([Jm, sp.csr_matrix(t[None, :])]).tocsr()
            res = float(np.max(np.abs(F))) if F.size else 0.0
            if res <= tol * scale:
                return y, True, it - 1, res
            if res > 10 * prev and it > 3:
                break
            prev = res
            dy = lsq_step(Jm, F)
            y = y - dy
            if float(np.max(np.abs(dy))) <= tol * scale:
                F = self.phi(y)
                r2 = float(np.max(np.abs(F))) if F.size else 0.0
                if extra is not None:
                    r2 = max(r2, abs(extra[0] @ y - extra[1]))
                return y, r2 <= 1e3 * tol * scale, it, r2
        F = self.phi(y)
        res = float(np.max(np.abs(F))) if F.size else 0.0
        if extra is not None:
            res = max(res, abs(extra[0] @ y - extra[1]))
        return y, res <= tol * scale, max_iter, res


def _rot(v: np.ndarray, th: np.ndarray) -> np.ndarray:
    c, s = np.cos(th), np.sin(th)
    return np.column_stack([c * v[:, 0] - s * v[:, 1], s * v[:, 0] + c * v[:, 1]])


def lsq_step(Jm: sp.spmatrix, F: np.ndarray) -> np.ndarray:
    """Minimum-norm least-squares solution of ``Jm dy = F``.

    Dense SVD-based ``lstsq`` for small systems; for large ones a sparse LU of the square
    system when it is square and regular, else the regularised row-space normal equations
    ``dy = J^T (J J^T + mu I)^-1 F``.
    """
    rows, n = Jm.shape
    if isinstance(Jm, np.ndarray) or n <= DENSE_MAX_VARS:
        M = Jm if isinstance(Jm, np.ndarray) else Jm.toarray()
        dy, *_ = np.linalg.lstsq(M, F, rcond=1e-12)
        return dy
    if rows == n:
        try:
            lu = spla.splu(sp.csc_matrix(Jm))
            dy = lu.solve(F)
            if np.all(np.isfinite(dy)) and np.linalg.norm(Jm @ dy - F) <= 1e-8 * (1 + np.linalg.norm(F)):
                return dy
        except RuntimeError:
            pass
    K = (Jm @ Jm.T).tocsc()
    mu = 1e-13 * max(1.0, float(K.diagonal().max()) if K.shape[0] else 1.0)
    lu = spla.splu((K + mu * sp.identity(K.shape[0], format="csc")).tocsc())
    return Jm.T @ lu.solve(F)


class Nullity:
    """Rank decision on Phi_q: mechanisms and states of self-stress of the body model.

    ``mech_basis``: orthonormal null vectors of Phi_q (n x m), the first-order mechanisms in
    q-space (None only when a large model has more mechanisms than the sparse route returns).
    ``stress_basis``: orthonormal left null vectors of Phi_q (rows x s_rows), the joint-force
    self-stresses, computed when first asked for.  ``s`` counts all states, ``s_rows`` those
    carried by rows (the ones that can act on a motion), ``internal_self_stress`` the others
    (closed rigid loops, pin-ended members within a body).
    """

    def __init__(self, m: int, s: int, s_rows: int, mech_basis, stress_basis, internal_self_stress: int,
                 A=None):
        self.m, self.s, self.s_rows = m, s, s_rows
        self.mech_basis = mech_basis
        self._stress_basis = stress_basis
        self.internal_self_stress = internal_self_stress
        self._A = A

    @property
    def stress_basis(self) -> np.ndarray:
        if self._stress_basis is None:
            from .rank import null_space_basis

            self._stress_basis = null_space_basis(self._A, self.s_rows)
        return self._stress_basis


def null_space(model: ConstraintModel, q: np.ndarray | None = None) -> Nullity:
    """Rank decision on Phi_q at ``q`` by the engine's tolerance policy (:mod:`.rank`).

    The engine's routines get ``A = Phi_q^T`` (rows = unknowns, columns = constraints), so
    their mechanism basis is the null space of Phi_q and their self-stress basis its left
    null space.  A closed loop of rigidly joined members is one body here and carries its 3
    states of self-stress without any row, and a pin-ended member with both ends on one body
    carries one; they are added from :meth:`ConstraintModel.internal_self_stress`.
    """
    from .rank import decide_rank, decide_zero_count, dense_rank

    q = model.q0 if q is None else q
    loops = model.internal_self_stress()
    if model.n == 0 or model.r == 0:
        return Nullity(model.n, model.r + loops, model.r, np.eye(model.n), np.eye(model.r), loops)
    Jm = model.jac(q)
    if model.n * model.r <= DENSE_MAX_ENTRIES:
        U, sig, Vt = np.linalg.svd(Jm.toarray(), full_matrices=True)
        smax = float(sig[0]) if sig.size else 0.0
        if smax == 0.0:
            rank = 0
        else:
            # exact zeros are floored at rounding level so that they count with the rounded ones
            nz, _ = decide_zero_count(np.maximum(sig, 1e-16 * smax), smax)
            rank = sig.size - nz
        return Nullity(model.n - rank, model.r - rank + loops, model.r - rank, Vt[rank:].T.copy(),
                       U[:, rank:].copy(), loops)
    A = sp.csc_matrix(Jm.T)
    rr = decide_rank(A, want_mech=True, want_stress=False)
    D = rr.mech_basis
    if (D is None or D.shape[1] != rr.m) and model.n * model.r <= DENSE_BASIS_MAX_ENTRIES:
        D = dense_rank(A, want_stress=False).mech_basis
    elif D is not None and D.shape[1] != rr.m:
        D = None
    return Nullity(rr.m, rr.s + loops, rr.s, D, None, loops, A)

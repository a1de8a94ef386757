"""Mechanism modes, the rigid pieces that move in them, and their instant centres.

* :func:`canonical_modes` turns the null space of the constraint Jacobian into a basis
  that does not depend on how the scheme was numbered: the rigid-body motions the supports
  allow come first (P&C 1986 split: S. Pellegrino & C. R. Calladine (1986), "Matrix
  analysis of statically and kinematically indeterminate frameworks", IJSS 22(4)), then the
  internal ones; each part is orthonormal in the velocities of all joint points, built by a
  pivoted Gram-Schmidt over the points sorted by position, and sign-fixed.
* :func:`rigid_pieces` groups the members that share a node and move with the same planar
  velocity field ``v(p) = v_c + omega k x (p - c)``, and gives each group its instant
  centre ``c + (k x v_c) / omega`` (a point) or, when ``omega`` vanishes, the direction of
  its translation.
* :func:`relative_centre` gives the relative instant centre of two pieces; any three
  pieces' relative centres are collinear (Aronhold-Kennedy theorem: A. B. W. Kennedy (1886),
  *The Mechanics of Machinery*; S. Aronhold (1872)).
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .constraints import ConstraintModel

#: relative tolerance for "the same velocity field" and "not moving"
FIELD_RTOL = 1e-7
#: relative tolerance for ties in the pivot choice of the canonical basis
TIE_RTOL = 1e-6


@dataclass(frozen=True)
class Mode:
    """One mechanism mode (a first-order motion) of a scheme."""

    #: 1-based position in the canonical basis
    index: int
    #: "rigid-body" (the whole scheme moving rigidly, allowed by the supports) or "internal"
    kind: str
    #: the motion in the unknowns of the constraint model (unit in the point-velocity norm)
    q: np.ndarray
    #: node velocities, scaled so that the fastest node moves at 1
    node_velocities: dict[str, tuple[float, float]]


@dataclass(frozen=True)
class Field:
    """A planar rigid velocity field: angular velocity and the velocity at a reference point."""

    omega: float
    point: tuple[float, float]
    velocity: tuple[float, float]

    def at(self, p) -> np.ndarray:
        c = np.asarray(self.point)
        v = np.asarray(self.velocity)
        d = np.asarray(p, float) - c
        return v + self.omega * np.array([-d[1], d[0]])


@dataclass(frozen=True)
class Piece:
    """Members moving as one rigid piece in a mode, with their instant centre."""

    members: tuple[str, ...]
    field: Field
    #: instant centre (physical coordinates), or None for a translation
    centre: tuple[float, float] | None
    #: unit direction of the translation when ``centre`` is None
    direction: tuple[float, float] | None

    def to_json(self) -> dict:
        out: dict = {"members": list(self.members),
                     "centre": None if self.centre is None else [self.centre[0], self.centre[1]]}
        if self.centre is None:
            out["direction"] = [self.direction[0], self.direction[1]]
        out["omega"] = self.field.omega
        return out


# ---------------------------------------------------------------------- canonical basis
def _point_order(model: ConstraintModel) -> np.ndarray:
    """Attachment points sorted by drawn position (node points first at a position), independent of ids."""
    P = model.attachment_positions(model.q0) * model.lref
    keys = []
    node_atts = set(model.node_att.values())
    for k in range(model.n_att):
        ent = model.entities[model._att_ent[k]]
        others = sorted((round(float(x), 9), round(float(y), 9)) for x, y in
                        (model.scheme.node_xy(n) for n in ent.nodes)) if ent.kind == "body" else []
        keys.append((round(float(P[k, 0]), 9), round(float(P[k, 1]), 9), 0 if k in node_atts else 1,
                     tuple(others), k))
    return np.array([k[-1] for k in sorted(keys)], int)


def canonical_modes(model: ConstraintModel, D: np.ndarray, q: np.ndarray | None = None) -> list[Mode]:
    """The canonical mechanism basis from any basis ``D`` (n x m) of null(Phi_q).

    Rigid-body motions first: the projections of the x translation, the y translation and
    the rotation about the centroid onto the rigid motions the supports allow (in that
    order, Gram-Schmidt, sign along the generating motion).  Then the internal modes: the
    rest of the null space, orthogonal to the rigid-body ones, by :func:`_canonical_columns`.
    Orthonormal in the velocities of all joint points; signs fixed deterministically.
    """
    q = model.q0 if q is None else q
    m = D.shape[1]
    if m == 0:
        return []
    V = model.velocity_matrix(q)
    Y = V @ D
    Qy, Ry = np.linalg.qr(Y)
    # rigid-body part: common directions of span(Y) and span(V T)
    T = V @ model.rigid_fields(q)
    Ut, st, _ = np.linalg.svd(T, full_matrices=False)
    Qt = Ut[:, st > 1e-9 * max(1.0, st.max() if st.size else 1.0)]
    rigid: list[np.ndarray] = []
    if Qt.shape[1]:
        U, sig, _ = np.linalg.svd(Qy.T @ Qt, full_matrices=False)
        k = int(np.count_nonzero(sig > 1 - 1e-8))
        if k:
            R = Qy @ U[:, :k]
            for col in range(T.shape[1]):
                v = R @ (R.T @ T[:, col])
                for w in rigid:
                    v -= w * (w @ v)
                nv = np.linalg.norm(v)
                if nv > 1e-8 * max(1.0, np.linalg.norm(T[:, col])) and len(rigid) < k:
                    rigid.append(v / nv)
    # internal part
    if rigid:
        Rg = np.column_stack(rigid)
        rest = Qy - Rg @ (Rg.T @ Qy)
        u, s, _ = np.linalg.svd(rest, full_matrices=False)
        Qi = u[:, s > 1e-8][:, : m - len(rigid)]
    else:
        Qi = Qy
    order = _point_order(model)
    row_order = np.column_stack([2 * order, 2 * order + 1]).ravel()
    internal = _canonical_columns(Qi, row_order)
    modes = []
    Yp = np.linalg.pinv(Y)
    for k, (y, kind) in enumerate([(v, "rigid-body") for v in rigid] + [(v, "internal") for v in internal.T]):
        dq = D @ (Yp @ y)
        modes.append(Mode(k + 1, kind, dq, _node_velocities(model, q, dq)))
    return modes


def _canonical_columns(Q: np.ndarray, row_order: np.ndarray) -> np.ndarray:
    """Canonical orthonormal basis of span(Q) (Q with orthonormal columns).

    Pivoted Gram-Schmidt on the projector P = Q Q^T: take the coordinate row with the
    largest |P e_i| (the first in ``row_order`` among near-ties), use P e_i normalised as
    the next vector (so it is positive at row i), deflate, repeat.  The result depends only
    on the subspace and the row order, not on the basis Q came in.
    """
    k = Q.shape[1]
    nrow = Q.shape[0]
    rank_of = np.empty(nrow, int)
    rank_of[row_order] = np.arange(nrow)
    out: list[np.ndarray] = []
    B = Q.copy()  # orthonormal basis of what is left
    for _ in range(k):
        norms = np.linalg.norm(B, axis=1)  # |P e_i|
        top = norms.max()
        if top <= 1e-12:
            break
        cands = np.nonzero(norms >= top * (1 - TIE_RTOL))[0]
        i = int(cands[np.argmin(rank_of[cands])])
        v = B @ B[i]  # P e_i, positive at row i
        v /= np.linalg.norm(v)
        out.append(v)
        B = B - np.outer(v, v @ B)
        u, s, _ = np.linalg.svd(B, full_matrices=False)
        B = u[:, s > 1e-9]
    return np.column_stack(out) if out else np.zeros((nrow, 0))


def _node_velocities(model: ConstraintModel, q: np.ndarray, dq: np.ndarray) -> dict[str, tuple[float, float]]:
    v = model.attachment_velocities(q, dq)
    speeds = [float(np.hypot(*v[model.node_att[n]])) for n in model.active_nodes]
    top = max(speeds) if speeds and max(speeds) > 0 else 1.0
    out = {}
    for nid in model.scheme.nodes:
        if nid in model.node_att:
            vx, vy = v[model.node_att[nid]] / top
            out[nid] = (float(vx), float(vy))
        else:
            out[nid] = (0.0, 0.0)
    return out


def combine(modes: list[Mode], weights) -> np.ndarray:
    """A combination of modes in q-space: ``sum w_k mode_k`` (weights in mode order)."""
    w = np.asarray(weights, float)
    if w.size != len(modes):
        raise ValueError(f"{len(modes)} mode weight(s) expected, got {w.size}")
    return sum(wk * md.q for wk, md in zip(w, modes))


# ---------------------------------------------------------------------- rigid pieces
def member_fields(model: ConstraintModel, q: np.ndarray, dq: np.ndarray) -> dict[str, Field]:
    """Velocity field of every member (physical units) from its two end points."""
    P = model.attachment_positions(q) * model.lref
    v = model.attachment_velocities(q, dq) * model.lref
    c = _centroid(model, q)
    out = {}
    for mid, (a, b) in model.member_att.items():
        g = P[b] - P[a]
        dv = v[b] - v[a]
        omega = float((g[0] * dv[1] - g[1] * dv[0]) / (g @ g))
        d = c - P[a]
        vc = v[a] + omega * np.array([-d[1], d[0]])
        out[mid] = Field(omega, (float(c[0]), float(c[1])), (float(vc[0]), float(vc[1])))
    return out


def _centroid(model: ConstraintModel, q: np.ndarray) -> np.ndarray:
    P = model.attachment_positions(q) * model.lref
    idx = [model.node_att[n] for n in model.active_nodes]
    return P[idx].mean(axis=0) if idx else np.zeros(2)


def _field_vec(f: Field, L: float) -> np.ndarray:
    return np.array([f.omega * L, f.velocity[0], f.velocity[1]])


def rigid_pieces(model: ConstraintModel, q: np.ndarray, dq: np.ndarray) -> tuple[list[Piece], list[str]]:
    """Moving rigid pieces in the motion ``dq`` and the ids of the members that stay still.

    Members that share a node and have the same velocity field form one piece (union-find);
    pieces are ordered by position (lowest-left member midpoint first).
    """
    fields = member_fields(model, q, dq)
    if not fields:
        return [], []
    L = model.size
    vec = {mid: _field_vec(f, L) for mid, f in fields.items()}
    scale = max(float(np.abs(model.attachment_velocities(q, dq)).max()) * model.lref, 1e-300)
    tol = FIELD_RTOL * scale
    still = [mid for mid in model.scheme.members if np.linalg.norm(vec[mid]) <= tol]
    still_set = set(still)
    parent = {mid: mid for mid in fields}

    def find(a):
        while parent[a] != a:
            parent[a] = parent[parent[a]]
            a = parent[a]
        return a

    at_node: dict[str, list[str]] = {}
    for m in model.scheme.members.values():
        for nid in (m.start, m.end):
            at_node.setdefault(nid, []).append(m.id)
    for nid, mids in at_node.items():
        mids = [x for x in mids if x not in still_set]
        for i, a in enumerate(mids):
            for b in mids[i + 1:]:
                if np.linalg.norm(vec[a] - vec[b]) <= tol:
                    ra, rb = find(a), find(b)
                    if ra != rb:
                        parent[ra] = rb
    groups: dict[str, list[str]] = {}
    for mid in model.scheme.members:
        if mid not in still_set:
            groups.setdefault(find(mid), []).append(mid)
    pieces = []
    for mids in groups.values():
        f = fields[mids[0]]
        centre, direction = instant_centre(f, L, tol)
        pieces.append(Piece(tuple(mids), f, centre, direction))
    pieces.sort(key=lambda p: min(_midkey(model, mid) for mid in p.members))
    return pieces, still


def _midkey(model: ConstraintModel, mid: str) -> tuple[float, float]:
    m = model.scheme.members[mid]
    (x0, y0), (x1, y1) = model.scheme.node_xy(m.start), model.scheme.node_xy(m.end)
    return (round((x0 + x1) / 2, 9), round((y0 + y1) / 2, 9))


def instant_centre(f: Field, L: float, tol: float) -> tuple[tuple[float, float] | None, tuple[float, float] | None]:
    """Instant centre ``c + (k x v_c)/omega`` of a field, or (None, translation direction)."""
    v = np.asarray(f.velocity)
    if abs(f.omega) * L <= tol or abs(f.omega) * L <= FIELD_RTOL * np.linalg.norm(v):
        n = np.linalg.norm(v)
        d = v / n if n > 0 else np.array([1.0, 0.0])
        return None, (float(d[0]), float(d[1]))
    c = np.asarray(f.point) + np.array([-v[1], v[0]]) / f.omega
    return (float(c[0]), float(c[1])), None


def relative_centre(fi: Field | None, fj: Field | None, L: float = 1.0):
    """Relative instant centre of two pieces (``None`` = the ground): (point or None, direction or None)."""
    zero = Field(0.0, (0.0, 0.0), (0.0, 0.0))
    fi = fi or zero
    fj = fj or zero
    p = np.asarray(fi.point if fi is not zero else fj.point)
    dv = fi.at(p) - fj.at(p)
    d = Field(fi.omega - fj.omega, (float(p[0]), float(p[1])), (float(dv[0]), float(dv[1])))
    scale = max(np.linalg.norm(dv), abs(d.omega) * L, 1e-300)
    return instant_centre(d, L, FIELD_RTOL * scale)


def collinearity(points: list[tuple[tuple[float, float] | None, tuple[float, float] | None]]) -> float:
    """How far three instant centres are from one line (0 = collinear; Aronhold-Kennedy).

    Each entry is ``(point, direction)`` as returned by :func:`relative_centre`; a centre at
    infinity is the direction of its translation turned by 90 degrees (the line through the
    finite centres must be parallel to it).  Returns the sine of the angle mismatch.
    """
    finite = [np.asarray(p) for p, _ in points if p is not None]
    dirs = [np.array([-d[1], d[0]]) for p, d in points if p is None]
    if len(finite) == 3:
        a, b, c = finite
        u, w = b - a, c - a
        den = max(np.linalg.norm(u) * np.linalg.norm(w), 1e-300)
        return float(abs(u[0] * w[1] - u[1] * w[0]) / den)
    if len(finite) == 2:
        u = finite[1] - finite[0]
        d = dirs[0]
        den = max(np.linalg.norm(u), 1e-300)
        return float(abs(u[0] * d[1] - u[1] * d[0]) / den)
    if len(dirs) >= 2:
        a, b = dirs[0], dirs[1]
        return float(abs(a[0] * b[1] - a[1] * b[0]))
    return 0.0

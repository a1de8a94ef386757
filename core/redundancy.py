"""Where the indeterminacy lives: local states of self-stress, the redundancy matrix, critical items.

States of self-stress (null space of the equilibrium matrix A, Pellegrino & Calladine 1986)
are given in a local canonical form: the columns of A (member forces and reactions) are
scanned in a sweep across the drawing and each column is kept when it is independent of the
kept ones before it (the greedy basis of the column matroid, found by blocked Gram-Schmidt
with reorthogonalisation).  Each skipped column c defines one state: c together with the
kept columns it depends on (its fundamental circuit), so every state is a minimal
dependent set of forces; because the sweep is local, the circuits are local too (one
panel of a double-braced truss, one loop of a frame).  States are scaled so the largest
force is 1, the largest force positive, ordered along the sweep.

The redundancy matrix of M. von Scheven, E. Ramm & M. Bischoff (2021), "Quantification of
the redundancy distribution in truss and beam structures", Int. J. Solids Struct. 213,
41-49, is evaluated in its self-stress form

    R = F S (S^T F S)^-1 S^T,

valid whether or not the scheme has mechanisms; S is any basis of the self-stress,
F the member flexibility.  R is a projector (R^2 = R) with trace s.  Flexibility, in the
scaled variables of :mod:`.assemble` (moments M / Lref, rotations theta * Lref):

* axial: L / EA (EA the member's relative ``axial_stiffness``);
* bending, Euler-Bernoulli, end rotations against end moments:
  (L / 6EI) [[2, -1], [-1, 2]] becomes (L / (6 k EA)) [[2, -1], [-1, 2]] with
  k = EI / (EA Lref^2) the member's ``bending_stiffness`` (default :data:`DEFAULT_BENDING`);
* released components carry no force in any state, so they take no share;
* support reactions are rigid (zero flexibility), so a restraint's own value is 0 and the
  whole s is shared by the members; ``support_flexibility`` > 0 gives each restraint the
  flexibility of that many unit-EA bars of length Lref.

Every flexibility is proportional to a length, so R does not depend on the drawing units.
A member's value is the sum of the diagonal over its internal forces (a beam can hold up to 3).
For a bar the value lies in [0, 1].  A beam's end-moment entries are coupled by the
off-diagonal flexibility, so each of R's own Mi, Mj entries can fall slightly outside [0, 1]
while their sum cannot; the split over the member's natural modes (axial, single-curvature,
double-curvature bending: the eigenvectors of its flexibility block, the natural modes of
J. H. Argyris) is given beside it and each of those lies in [0, 1].

Critical items: removing a member or a support restraint adds a mechanism exactly when the
rank of A drops by more than the rows that disappear with it.  With an orthonormal
self-stress basis Q, deleting the set C of columns leaves rank = |cols kept| - s + rank(Q_C)
(the self-stress that survives is the part with no force in C), so the new mechanism count is
found without a new factorisation; the rows and columns that disappear with the member are
those :func:`.assemble.assemble` drops (its release rows, nodes only it reaches, a rotation
it alone gave a node).  Each claim is confirmed by re-analysing the edited scheme with
:func:`.classify.classify` when the scheme is small enough (see ``confirm_limit``); the
mechanism the removal creates is reported from that re-analysis.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
import scipy.linalg as la
import scipy.sparse as sp

from .assemble import System
from .classify import Classification, Mode, classify
from .model import FIX_WORDS, Member, Scheme, Support

#: default relative bending stiffness EI / (EA Lref^2): a member whose radius of gyration is
#: about Lref / 32 (a stocky steel or concrete frame member)
DEFAULT_BENDING = 1e-3
#: a column is dependent on the kept ones before it when its residual is below this fraction
#: of its own norm
DEPENDENT_RTOL = 1e-9
#: entries of a state below this fraction of its largest entry are exact zeros
CLEAN_RTOL = 1e-11
#: a redundancy value (or a singular value of the basis rows) below this is zero
ZERO_VALUE = 1e-8
#: a local search for a state stops when its ball holds more forces than this (or a quarter
#: of all); the state found by the sweep itself is used then
LOCAL_BALL_MAX = 240
#: above these sizes the dense route is not attempted (``check --json`` notes the skip)
MAX_MEMBERS = 3000
MAX_DENSE_ENTRIES = 6_000_000
#: re-analyse every removal with classify() when members + restraints are at most this
CONFIRM_LIMIT = 150

FORCE_NAMES = ("N", "Mi", "Mj")
MODE_NAMES = ("axial", "single_curvature", "double_curvature")


# --------------------------------------------------------------------------- support edits
def support_with_fixes(node: str, angle: float, fixes) -> Support | None:
    """The support at ``node`` that fixes exactly ``fixes`` (words in the frame of ``angle``).

    Named kinds where one fits (pin, roller, fixed, guided; a lone "across" becomes a roller
    turned by 90 degrees), else a custom support; None when nothing is fixed.
    """
    f = set(fixes)
    if not f:
        return None
    turned = (angle + 90.0) % 180.0
    table = {
        frozenset({"along", "across"}): Support(node, "pin", angle),
        frozenset({"along", "across", "rotation"}): Support(node, "fixed", angle),
        frozenset({"along"}): Support(node, "roller", angle),
        frozenset({"across"}): Support(node, "roller", turned),
        frozenset({"along", "rotation"}): Support(node, "guided", angle),
        frozenset({"across", "rotation"}): Support(node, "guided", turned),
    }
    named = table.get(frozenset(f))
    if named is not None:
        return named
    return Support(node, "custom", angle, tuple(w for w in FIX_WORDS if w in f))


def without_restraint(scheme: Scheme, node: str, word) -> Scheme:
    """``scheme`` with restraints of the support at ``node`` removed.

    ``word`` is one of ``along``, ``across``, ``rotation`` (in the support's own frame) or a
    collection of them; remove several of one support in one call, because the words of a
    support turned by the edit (a pin losing ``along`` becomes a roller) refer to its new frame.
    """
    words = {word} if isinstance(word, str) else set(word)
    sup = scheme.supports[node]
    missing = words - set(sup.fixes)
    if missing:
        raise KeyError(f'support at node "{node}" has no "{sorted(missing)[0]}" restraint')
    new = support_with_fixes(node, sup.angle, set(sup.fixes) - words)
    return scheme.without_support(node) if new is None else scheme.with_support(new)


def direction_words(angle: float) -> str:
    """'vertical', 'horizontal' or 'at 30°' for a reaction direction given in degrees."""
    a = angle % 180.0
    if abs(a - 90.0) < 1e-9:
        return "vertical"
    if a < 1e-9 or abs(a - 180.0) < 1e-9:
        return "horizontal"
    return f"at {angle % 360.0:g}°"


def restraint_angle(sup: Support, word: str) -> float | None:
    """Direction (degrees) of a translational restraint; None for the rotation restraint."""
    if word == "along":
        return sup.angle
    if word == "across":
        return sup.angle + 90.0
    return None


def restraint_text(scheme: Scheme, node: str, word: str) -> str:
    sup = scheme.supports[node]
    ang = restraint_angle(sup, word)
    if ang is None:
        return f"the rotation restraint at {node}"
    return f"the {direction_words(ang)} restraint at {node}"


# --------------------------------------------------------------------------- column geometry
def column_positions(scheme: Scheme, system: System) -> np.ndarray:
    """A point for each column of A: the member's chord midpoint or the support's node."""
    P = np.zeros((len(system.cols), 2))
    for c, (kind, item, _) in enumerate(system.cols):
        if kind == "reaction":
            P[c] = scheme.node_xy(item)
        else:
            m = scheme.members[item]
            (x0, y0), (x1, y1) = scheme.node_xy(m.start), scheme.node_xy(m.end)
            P[c] = ((x0 + x1) / 2, (y0 + y1) / 2)
    return P


def sweep_order(scheme: Scheme, system: System) -> np.ndarray:
    """Columns in a sweep along the longer side of the drawing (deterministic).

    Key: coordinate along the sweep (rounded to 1e-9 of the size), then across it, then
    reactions before member forces at the same place, then column order.
    """
    n = len(system.cols)
    if n == 0:
        return np.zeros(0, int)
    P = column_positions(scheme, system)
    span = P.max(axis=0) - P.min(axis=0)
    major, minor = (0, 1) if span[0] >= span[1] else (1, 0)
    q = max(scheme.size(), 1e-300) * 1e-9
    kind_rank = np.array([0 if k == "reaction" else 1 for k, _, _ in system.cols])
    keys = (np.arange(n), kind_rank, np.round(P[:, minor] / q), np.round(P[:, major] / q))
    return np.lexsort(keys)


# --------------------------------------------------------------------------- greedy basis
@dataclass
class GreedyBasis:
    """Greedy column basis of A in a given order, with the data for the fundamental states."""

    kept: list[int]
    redundant: list[int]
    #: orthonormal basis of the span of the kept columns (rows x rank)
    Q: np.ndarray
    #: A[:, kept] = Q R (upper triangular)
    R: np.ndarray
    #: coefficients of each redundant column on Q (rank x len(redundant))
    H: np.ndarray

    def states(self, n_cols: int) -> np.ndarray:
        """Fundamental states (n_cols x len(redundant)): redundant c = 1, kept forces below."""
        s = len(self.redundant)
        S = np.zeros((n_cols, s))
        if s == 0:
            return S
        if self.kept:
            X = la.solve_triangular(self.R, self.H, lower=False)
            S[np.asarray(self.kept), :] = -X
        S[np.asarray(self.redundant), np.arange(s)] = 1.0
        return S


def greedy_basis(A, order, rtol: float = DEPENDENT_RTOL, block: int = 48) -> GreedyBasis:
    """Scan the columns of ``A`` in ``order``; keep each one independent of those kept before it.

    The greedy algorithm of a linear matroid (Rado 1957, Edmonds 1971): the kept set is the
    basis that comes first in the scan order, and every skipped column depends only on kept
    columns scanned before it.  Blocked classical Gram-Schmidt with every projection applied
    twice ("twice is enough": L. Giraud, J. Langou, M. Rozloznik (2005), Comput. Math. Appl.
    50, 1069-1075).
    """
    M = A.toarray() if sp.issparse(A) else np.asarray(A, float)
    rows = M.shape[0]
    order = [int(c) for c in order]
    cap = min(rows, len(order))
    Q = np.zeros((rows, cap))
    k = 0
    coef: dict[int, np.ndarray] = {}
    kept: list[int] = []
    redundant: list[int] = []
    for b0 in range(0, len(order), block):
        idx = order[b0:b0 + block]
        C = M[:, idx].copy()
        norms = np.linalg.norm(C, axis=0)
        H = np.zeros((cap, len(idx)))
        if k:
            Qk = Q[:, :k]
            h1 = Qk.T @ C
            C -= Qk @ h1
            h2 = Qk.T @ C
            C -= Qk @ h2
            H[:k] = h1 + h2
        k_block = k
        for j, c in enumerate(idx):
            v = C[:, j]
            h = H[:, j]
            if k > k_block:
                Qb = Q[:, k_block:k]
                g1 = Qb.T @ v
                v = v - Qb @ g1
                g2 = Qb.T @ v
                v = v - Qb @ g2
                h[k_block:k] += g1 + g2
            r = float(np.linalg.norm(v))
            if norms[j] > 0 and r > rtol * norms[j] and k < cap:
                Q[:, k] = v / r
                h[k] = r
                k += 1
                kept.append(c)
            else:
                redundant.append(c)
            coef[c] = h
    R = np.zeros((k, k))
    for j, c in enumerate(kept):
        R[:, j] = coef[c][:k]
    Hr = np.zeros((k, len(redundant)))
    for j, c in enumerate(redundant):
        Hr[:, j] = coef[c][:k]
    return GreedyBasis(kept, redundant, Q[:, :k].copy(), R, Hr)


def basis_from_columns(A, kept, redundant) -> GreedyBasis:
    """The same data for a given split of the columns (``kept`` must be independent)."""
    M = A.toarray() if sp.issparse(A) else np.asarray(A, float)
    kept = [int(c) for c in kept]
    redundant = [int(c) for c in redundant]
    if kept:
        Q, R = la.qr(M[:, kept], mode="economic")
    else:
        Q, R = np.zeros((M.shape[0], 0)), np.zeros((0, 0))
    H = Q.T @ M[:, redundant] if redundant else np.zeros((len(kept), 0))
    return GreedyBasis(kept, redundant, Q, R, H)


# --------------------------------------------------------------------------- states
@dataclass(frozen=True)
class SelfStressState:
    """One state of self-stress: the forces of the members and reactions it involves.

    Member forces are N and, for beams, the end moments as M / Lref (unit-free; the state is
    defined up to a factor, scaled here so the largest entry is 1).  N > 0 is tension.
    """

    index: int
    #: the column the sweep found dependent: (kind, item, detail)
    key: tuple[str, str, str]
    forces: dict[str, dict[str, float]]
    reactions: dict[str, dict[str, float]]

    @property
    def members(self) -> tuple[str, ...]:
        return tuple(self.forces)

    @property
    def supports(self) -> tuple[str, ...]:
        return tuple(self.reactions)

    def axial_sign(self, member_id: str) -> str:
        n = self.forces.get(member_id, {}).get("N", 0.0)
        return "tension" if n > 0 else ("compression" if n < 0 else "none")

    def to_json(self) -> dict:
        kind, item, detail = self.key
        return {
            "members": list(self.forces),
            "supports": list(self.reactions),
            "forces": {k: {f: _r(v) for f, v in d.items()} for k, d in self.forces.items()},
            "reactions": {k: {f: _r(v) for f, v in d.items()} for k, d in self.reactions.items()},
            "tension": [k for k in self.forces if self.axial_sign(k) == "tension"],
            "compression": [k for k in self.forces if self.axial_sign(k) == "compression"],
            "key": f"{item}:{detail or kind}",
        }


def _r(v: float) -> float:
    v = float(v)
    return 0.0 if abs(v) < 1e-12 else round(v, 12)


def normalise_states(S: np.ndarray) -> np.ndarray:
    """Scale each state so its largest entry is +1 (first such entry in column order); clean zeros."""
    S = S.copy()
    for j in range(S.shape[1]):
        col = S[:, j]
        mx = float(np.abs(col).max()) if col.size else 0.0
        if mx == 0:
            continue
        col /= mx
        col[np.abs(col) < CLEAN_RTOL] = 0.0
        first = int(np.nonzero(np.abs(col) >= 1.0 - 1e-9)[0][0])
        if col[first] < 0:
            col *= -1.0
        S[:, j] = col
    return S


def order_states(S: np.ndarray, order: np.ndarray) -> tuple[np.ndarray, list[int]]:
    """States sorted along the sweep (by their first and last column in it); key = largest entry."""
    if S.shape[1] == 0:
        return S, []
    pos = np.empty(len(order), int)
    pos[order] = np.arange(len(order))
    keys = []
    sort_keys = []
    for j in range(S.shape[1]):
        nz = np.nonzero(S[:, j])[0]
        big = nz[np.abs(S[nz, j]) >= 1.0 - 1e-9]
        key = int(big[np.argmin(pos[big])]) if big.size else int(nz[0])
        keys.append(key)
        sort_keys.append((int(pos[nz].min()), int(pos[nz].max()), int(pos[key])))
    perm = sorted(range(S.shape[1]), key=lambda j: sort_keys[j])
    return S[:, perm], [keys[j] for j in perm]


def states_from_basis(system: System, S: np.ndarray, keys: list[int]) -> list[SelfStressState]:
    out = []
    for j in range(S.shape[1]):
        forces: dict[str, dict[str, float]] = {}
        reactions: dict[str, dict[str, float]] = {}
        for c in np.nonzero(S[:, j])[0].tolist():
            kind, item, detail = system.cols[c]
            if kind == "reaction":
                reactions.setdefault(item, {})[detail] = float(S[c, j])
            else:
                forces.setdefault(item, {})[kind] = float(S[c, j])
        # members in scheme order, reactions in support order
        forces = {mid: forces[mid] for mid in system.member_cols if mid in forces}
        reactions = {n: reactions[n] for n in system.reaction_cols if n in reactions}
        out.append(SelfStressState(j, system.cols[keys[j]], forces, reactions))
    return out


def _column_nodes(system: System, scheme: Scheme) -> list[tuple[str, ...]]:
    out = []
    for kind, item, _ in system.cols:
        if kind == "reaction":
            out.append((item,))
        else:
            m = scheme.members[item]
            out.append((m.start, m.end))
    return out


def localise_states(scheme: Scheme, system: System, gb: GreedyBasis, order: np.ndarray) -> np.ndarray:
    """One local state of self-stress per redundant column of ``gb`` (cols x s).

    For a redundant column c the search grows a ball of nodes around c's nodes, one member
    step at a time, and scans the columns inside the ball (nearest first, then in sweep
    order) with the greedy basis; as soon as c depends on them, its fundamental circuit in
    the ball is a minimal dependent set of forces close to c.  Only kept columns and
    redundant columns earlier in the sweep may take part, so the states form a triangular
    system on the redundant columns and are independent.  A heuristic for a sparse null
    basis (finding the sparsest one is NP-hard: T. F. Coleman & A. Pothen (1986), "The null
    space problem I. Complexity", SIAM J. Alg. Disc. Meth. 7(4), 527-537).
    """
    ncols = len(system.cols)
    if not gb.redundant:
        return np.zeros((ncols, 0))
    S_global = None
    A = system.A.tocsc()
    A.sort_indices()
    Ad = A.toarray()
    col_rows = [A.indices[A.indptr[c]:A.indptr[c + 1]] for c in range(ncols)]
    col_nodes = _column_nodes(system, scheme)
    adj: dict[str, set[str]] = {}
    for m in scheme.members.values():
        adj.setdefault(m.start, set()).add(m.end)
        adj.setdefault(m.end, set()).add(m.start)
    cols_at: dict[str, list[int]] = {}
    for c, ns in enumerate(col_nodes):
        for n in ns:
            cols_at.setdefault(n, []).append(c)
    pos = np.empty(ncols, int)
    pos[order] = np.arange(ncols)
    allowed = np.zeros(ncols, bool)
    allowed[gb.kept] = True
    big_ball = max(LOCAL_BALL_MAX, ncols // 4)
    S = np.zeros((ncols, len(gb.redundant)))
    for j, c in enumerate(gb.redundant):
        dist = {n: 0 for n in col_nodes[c]}
        frontier = list(dist)
        found = None
        r = 0
        next_try = 0          # the ball is tried at radius 0, 1, 2, 3, 4, 6, 9, ...
        while True:
            # allowed columns with every node inside the ball
            ball = {cc for n in dist for cc in cols_at.get(n, ())
                    if allowed[cc] and all(x in dist for x in col_nodes[cc])}
            if len(ball) > big_ball:
                break  # not local: the sweep's own circuit will do
            ring = list(dict.fromkeys(nb for n in frontier for nb in adj.get(n, ()) if nb not in dist))
            if ball and (r >= next_try or not ring):
                next_try = max(r + 1, int(r * 1.5))
                loc = sorted(ball, key=lambda cc: (max(dist[x] for x in col_nodes[cc]), pos[cc]))
                loc.append(c)
                rows = np.unique(np.concatenate([col_rows[cc] for cc in loc]))
                g = greedy_basis(Ad[np.ix_(rows, loc)], range(len(loc)))
                if g.redundant and g.redundant[-1] == len(loc) - 1:
                    # the fundamental circuit of c among the ball's columns
                    x = la.solve_triangular(g.R, g.H[:, -1], lower=False) if g.kept else np.zeros(0)
                    found = np.zeros(ncols)
                    found[[loc[k] for k in g.kept]] = -x
                    found[c] = 1.0
                    break
            if not ring:
                break
            r += 1
            for nb in ring:
                dist[nb] = r
            frontier = ring
        if found is None:
            if S_global is None:
                S_global = gb.states(ncols)
            found = S_global[:, j]
        S[:, j] = found
        allowed[c] = True
    return S


def local_basis(scheme: Scheme, system: System, rank: int) -> GreedyBasis:
    """Greedy basis in the sweep order, with ``rank`` kept columns (the engine's rank)."""
    order = sweep_order(scheme, system)
    gb = None
    for rtol in (DEPENDENT_RTOL, 1e-7, 1e-11, 1e-6):
        gb = greedy_basis(system.A, order, rtol)
        if len(gb.kept) == rank:
            return gb
    # the scan disagrees with the engine's rank (ill-conditioned geometry): take the columns
    # of a pivoted QR, scanned in the sweep order within each part
    M = system.A.toarray()
    _, _, perm = la.qr(M, pivoting=True, mode="r")
    pos = np.empty(len(order), int)
    pos[order] = np.arange(len(order))
    kept = sorted(perm[:rank].tolist(), key=lambda c: pos[c])
    red = sorted(perm[rank:].tolist(), key=lambda c: pos[c])
    return basis_from_columns(M, kept, red)


# --------------------------------------------------------------------------- flexibility
def member_flexibility(m: Member, L: float) -> np.ndarray:
    """Flexibility block of one member in the scaled variables (1 x 1 bar, 3 x 3 beam)."""
    ea = float(m.axial_stiffness)
    if not (ea > 0 and math.isfinite(ea)):
        raise ValueError(f'member "{m.id}": field "stiffness.axial" must be positive, got {ea}')
    if m.kind != "beam":
        return np.array([[L / ea]])
    k = DEFAULT_BENDING if m.bending_stiffness is None else float(m.bending_stiffness)
    if not (k > 0 and math.isfinite(k)):
        raise ValueError(f'member "{m.id}": field "stiffness.bending" must be positive, got {k}')
    b = L / (6.0 * k * ea)
    return np.array([[L / ea, 0.0, 0.0], [0.0, 2 * b, -b], [0.0, -b, 2 * b]])


def flexibility(scheme: Scheme, system: System, support_flexibility: float = 0.0) -> sp.csr_matrix:
    """Block-diagonal flexibility F (cols x cols) of the columns of A (see module docstring)."""
    n = len(system.cols)
    I, J, V = [], [], []
    eas = []
    for mid, cols in system.member_cols.items():
        m = scheme.members[mid]
        (x0, y0), (x1, y1) = scheme.node_xy(m.start), scheme.node_xy(m.end)
        blk = member_flexibility(m, math.hypot(x1 - x0, y1 - y0))
        eas.append(m.axial_stiffness)
        for a, ca in enumerate(cols):
            for b, cb in enumerate(cols):
                if blk[a, b] != 0.0:
                    I.append(ca); J.append(cb); V.append(blk[a, b])
    if support_flexibility:
        f = float(support_flexibility) * system.lref / (float(np.mean(eas)) if eas else 1.0)
        for cols in system.reaction_cols.values():
            for c in cols:
                I.append(c); J.append(c); V.append(f)
    return sp.csr_matrix((V, (I, J)), shape=(n, n))


# --------------------------------------------------------------------------- redundancy
@dataclass
class Redundancy:
    """The redundancy distribution of a scheme (see module docstring)."""

    mechanisms: int
    self_stress: int
    system: System
    #: canonical states (cols x s), scaled; and as objects
    basis: np.ndarray
    states: list[SelfStressState]
    #: orthonormal basis of the same space
    orthonormal: np.ndarray
    #: diagonal of R per column of A
    diagonal: np.ndarray
    members: dict[str, float]
    members_detail: dict[str, dict[str, float]]
    members_modes: dict[str, dict[str, float]]
    supports: dict[str, float]
    supports_detail: dict[str, dict[str, float]]
    support_flexibility: float = 0.0
    #: F S and S (S^T F S)^-1 for the full matrix on demand
    _FS: np.ndarray | None = field(default=None, repr=False)
    _X: np.ndarray | None = field(default=None, repr=False)

    @property
    def total(self) -> float:
        return float(self.diagonal.sum())

    def matrix(self) -> np.ndarray:
        """The full redundancy matrix R (cols x cols); R[i, j] is the elastic deformation in
        column i caused by a unit imposed deformation in column j, with the sign reversed."""
        if self._FS is None:
            return np.zeros((len(self.system.cols),) * 2)
        return self._FS @ self._X.T

    def member_block(self, member_id: str) -> np.ndarray:
        cols = self.system.member_cols[member_id]
        if self._FS is None:
            return np.zeros((len(cols), len(cols)))
        return self._FS[cols] @ self._X[cols].T

    def to_json(self) -> dict:
        return {
            "members": {k: _r(v) for k, v in self.members.items()},
            "supports": {k: _r(v) for k, v in self.supports.items()},
            "members_detail": {k: {f: _r(v) for f, v in d.items()} for k, d in self.members_detail.items()},
            "members_modes": {k: {f: _r(v) for f, v in d.items()} for k, d in self.members_modes.items()},
            "supports_detail": {k: {f: _r(v) for f, v in d.items()} for k, d in self.supports_detail.items()},
            "total": _r(self.total),
            "self_stress": self.self_stress,
            "reactions": "rigid" if not self.support_flexibility else
                         f"elastic ({self.support_flexibility:g} x a unit-EA bar of length Lref)",
            "bending_default": DEFAULT_BENDING,
        }


def _natural_modes(blk: np.ndarray) -> dict[str, float]:
    """Diagonal of a beam's 3 x 3 block of R in its natural modes (axial, single, double curvature)."""
    h = 1.0 / math.sqrt(2.0)
    Qm = np.array([[1.0, 0.0, 0.0], [0.0, h, h], [0.0, -h, h]])  # columns: axial, Mi=-Mj, Mi=Mj
    d = np.einsum("ij,ik,kj->j", Qm, blk, Qm)
    return dict(zip(MODE_NAMES, map(float, d)))


def redundancy(scheme: Scheme, classification: Classification | None = None, *,
               support_flexibility: float = 0.0) -> Redundancy:
    """Canonical states of self-stress and the redundancy distribution of ``scheme``.

    Method: von Scheven, Ramm & Bischoff (2021), self-stress form R = F S (S^T F S)^-1 S^T.
    """
    c = classification if classification is not None else classify(scheme)
    system = c.system
    ncols = len(system.cols)
    s = c.self_stress
    if s > 0:
        gb = local_basis(scheme, system, c.rank.rank)
        order = sweep_order(scheme, system)
        S, keys = order_states(normalise_states(localise_states(scheme, system, gb, order)), order)
    else:  # statically determinate (or unstable without self-stress): nothing to share
        S, keys = np.zeros((ncols, 0)), []
    states = states_from_basis(system, S, keys)
    diag = np.zeros(ncols)
    FS = X = None
    Qs = np.zeros((ncols, 0))
    if S.shape[1]:
        Qs, _ = la.qr(S, mode="economic")
        F = flexibility(scheme, system, support_flexibility)
        FS = np.asarray(F @ Qs)
        G = Qs.T @ FS
        G = (G + G.T) / 2
        try:
            cf = la.cho_factor(G)
            X = la.cho_solve(cf, Qs.T).T
        except la.LinAlgError:
            X = (np.linalg.pinv(G) @ Qs.T).T
        diag = np.einsum("ij,ij->i", FS, X)
    members, detail, modes = {}, {}, {}
    for mid, cols in system.member_cols.items():
        vals = diag[cols]
        members[mid] = float(vals.sum())
        detail[mid] = {FORCE_NAMES[k]: float(v) for k, v in enumerate(vals)}
        if len(cols) == 3:
            blk = FS[cols] @ X[cols].T if FS is not None else np.zeros((3, 3))
            modes[mid] = _natural_modes(blk)
        else:
            modes[mid] = {"axial": float(vals[0])}
    supports, sdetail = {}, {}
    for nid, cols in system.reaction_cols.items():
        supports[nid] = float(diag[cols].sum()) if cols else 0.0
        sdetail[nid] = {system.cols[cc][2]: float(diag[cc]) for cc in cols}
    return Redundancy(c.mechanisms, s, system, S, states, Qs, diag, members, detail, modes, supports, sdetail,
                      float(support_flexibility), FS, X)


# --------------------------------------------------------------------------- critical items
@dataclass
class RemovalCheck:
    """What removing one member or one support restraint does."""

    kind: str                    # "member" or "restraint"
    item: str                    # member id, or "node:word" for a restraint
    #: "critical" (the removal adds a mechanism), "removable" (it does not: the item carries
    #: self-stress) or "non-redundant" (it carries none, yet the removal adds no mechanism
    #: because the nodes only it reaches drop out with it)
    status: str
    value: float                 # its redundancy (sum over its forces)
    mechanisms_before: int
    mechanisms_after: int
    self_stress_after: int
    confirmed_by: str            # "classify" or "rank update"
    scheme: Scheme               # the scheme without the item
    description: str
    detached: tuple[str, ...] = ()
    #: the mechanism the removal creates (from the re-analysis), when confirmed by classify
    mechanism: Mode | None = None

    @property
    def critical(self) -> bool:
        return self.status == "critical"

    def moving_nodes(self, tol: float = 1e-6) -> list[str]:
        if self.mechanism is None:
            return []
        return [n for n, (u, v) in self.mechanism.displacements.items() if math.hypot(u, v) > tol]

    def to_json(self) -> dict:
        out = {"status": self.status, "redundancy": _r(self.value),
               "mechanisms_after": self.mechanisms_after, "self_stress_after": self.self_stress_after,
               "confirmed_by": self.confirmed_by, "description": self.description}
        if self.detached:
            out["detached_nodes"] = list(self.detached)
        if self.mechanism is not None:
            out["moving_nodes"] = self.moving_nodes()
            out["mechanism_kind"] = self.mechanism.kind
        return out


@dataclass
class Criticality:
    members: dict[str, RemovalCheck]
    restraints: dict[str, RemovalCheck]

    def critical_members(self) -> list[str]:
        return [k for k, v in self.members.items() if v.critical]

    def critical_restraints(self) -> list[str]:
        return [k for k, v in self.restraints.items() if v.critical]


def _rank_rows(Qs: np.ndarray, cols: list[int]) -> int:
    if not cols or Qs.shape[1] == 0:
        return 0
    sv = np.linalg.svd(Qs[cols, :], compute_uv=False)
    return int(np.count_nonzero(sv > ZERO_VALUE))


def _member_removal_effect(scheme: Scheme, system: System, mid: str,
                           at: dict[str, list[Member]]) -> tuple[int, list[int], tuple[str, ...]]:
    """Rows and columns of A that disappear with member ``mid``, as :func:`assemble` drops them.

    Returns (number of rows dropped, columns dropped, nodes dropped); ``at`` maps each node
    to the members that reach it.
    """
    m = scheme.members[mid]
    rows_dropped = len(system.release_rows.get(mid, []))
    cols = list(system.member_cols[mid])
    detached = []
    for nid, rel in ((m.start, m.releases_start), (m.end, m.releases_end)):
        others = [x for x in at[nid] if x.id != mid]
        it = system.node_dof[nid][2]
        if not others:
            detached.append(nid)
            rows_dropped += 2 + (it is not None)
            cols += system.reaction_cols.get(nid, [])
            continue
        rigid_here = m.kind == "beam" and "moment" not in rel and not scheme.nodes[nid].hinge
        if it is not None and rigid_here:
            if not any(x.kind == "beam" and "moment" not in x.releases_at(nid) for x in others):
                rows_dropped += 1
                cols += [c for c in system.reaction_cols.get(nid, []) if system.cols[c][2] == "rotation"]
    return rows_dropped, cols, tuple(detached)


def _new_mode(before: Classification, after: Classification) -> Mode | None:
    """A mechanism of ``after`` that ``before`` did not have (compared on node translations)."""
    if not after.modes:
        return None
    if before.mechanisms == 0 or not before.modes:
        return after.modes[0]
    nodes = [n for n in after.modes[0].displacements if n in before.modes[0].displacements]

    def vec(mode: Mode) -> np.ndarray:
        return np.array([x for n in nodes for x in mode.displacements[n]])

    Bo = np.array([vec(md) for md in before.modes]).T
    Qo = la.orth(Bo) if Bo.size else np.zeros((2 * len(nodes), 0))
    best, score = None, -1.0
    for md in after.modes:
        v = vec(md)
        nv = float(np.linalg.norm(v))
        if nv == 0:
            continue
        res = float(np.linalg.norm(v - Qo @ (Qo.T @ v))) / nv
        if res > score:
            best, score = md, res
    return best


def removal_checks(scheme: Scheme, red: Redundancy | None = None, *, classification: Classification | None = None,
                   confirm: str | bool = "auto", confirm_limit: int = CONFIRM_LIMIT) -> Criticality:
    """Remove each member and each support restraint in turn and say whether a mechanism appears.

    The count after removal comes from the rank update in the module docstring; with
    ``confirm`` True (or "auto" and at most ``confirm_limit`` items) every removal is also
    re-analysed with :func:`classify`, whose verdict is the one kept, and the mechanism the
    removal creates is taken from it.
    """
    c = classification if classification is not None else classify(scheme)
    if red is None:
        red = redundancy(scheme, c)
    system = red.system
    Qs = red.orthonormal
    s = red.self_stress
    rows, ncols = system.shape
    m0 = c.mechanisms
    n_items = len(system.member_cols) + sum(len(v) for v in system.reaction_cols.values())
    do_confirm = confirm is True or (confirm == "auto" and n_items <= confirm_limit)

    def finish(kind, item, value, carries, dropped_rows, dropped_cols, edited, what, detached=()):
        rank_new = (ncols - len(dropped_cols)) - s + _rank_rows(Qs, dropped_cols)
        m_new = rows - dropped_rows - rank_new
        s_new = (ncols - len(dropped_cols)) - rank_new
        mode = None
        how = "rank update"
        if do_confirm:
            after = classify(edited)
            m_new, s_new, how = after.mechanisms, after.self_stress, "classify"
            if m_new > m0:
                mode = _new_mode(c, after)
        states = f"{s_new} state{'s' if s_new != 1 else ''} of self-stress"
        if m_new > m0:
            status = "critical"
            extra = m_new - m0
            desc = (f"removing {what} leaves {'a mechanism' if extra == 1 else f'{extra} mechanisms'}"
                    if m0 == 0 else f"removing {what} adds {extra} mechanism{'s' if extra != 1 else ''}")
        elif carries:
            status = "removable"
            desc = (f"{what} can be removed: the scheme stays stable with {states}" if m_new == 0 else
                    f"{what} can be removed without adding a mechanism ({states} left)")
        else:
            status = "non-redundant"
            desc = (f"{what} carries no self-stress; removing it takes node{'s' if len(detached) != 1 else ''} "
                    f"{', '.join(detached)} away with it" if detached else
                    f"{what} carries no self-stress, yet removing it adds no mechanism")
        return RemovalCheck(kind, item, status, value, m0, m_new, s_new, how, edited, desc, tuple(detached), mode)

    at: dict[str, list[Member]] = {}
    for mem in scheme.members.values():
        at.setdefault(mem.start, []).append(mem)
        at.setdefault(mem.end, []).append(mem)
    members = {}
    for mid in system.member_cols:
        dr, dc, detached = _member_removal_effect(scheme, system, mid, at)
        value = red.members.get(mid, 0.0)
        members[mid] = finish("member", mid, value, value > ZERO_VALUE, dr, dc, scheme.without_members([mid]),
                              f"member {mid}", detached)
    restraints = {}
    for nid, cols in system.reaction_cols.items():
        for cc in cols:
            word = system.cols[cc][2]
            key = f"{nid}:{word}"
            # a rigid restraint has no flexibility, so its own value is 0 whatever it carries:
            # it is removable when some state of self-stress passes through it
            restraints[key] = finish("restraint", key, float(red.diagonal[cc]), _rank_rows(Qs, [cc]) > 0, 0, [cc],
                                     without_restraint(scheme, nid, word), restraint_text(scheme, nid, word))
    return Criticality(members, restraints)


# --------------------------------------------------------------------------- check --json
#: at most this many states are written into the check JSON
MAX_STATES_JSON = 100


def too_big(system: System) -> str | None:
    """Why the dense redundancy route is not attempted for this system (None when it is)."""
    n_members = len(system.member_cols)
    rows, cols = system.shape
    if n_members > MAX_MEMBERS:
        return f"{n_members} members (more than {MAX_MEMBERS})"
    if rows * cols > MAX_DENSE_ENTRIES:
        return f"equilibrium matrix {rows} x {cols} (more than {MAX_DENSE_ENTRIES:,} entries)"
    return None


def redundancy_report(scheme: Scheme, classification: Classification | None = None,
                      confirm_limit: int = CONFIRM_LIMIT) -> dict:
    """The keys ``redundancy``, ``critical``, ``critical_supports`` (and details) of ``check --json``."""
    c = classification if classification is not None else classify(scheme)
    why = too_big(c.system)
    if why is not None:
        return {"redundancy": None, "critical": None, "critical_supports": None,
                "redundancy_note": f"redundancy and critical items skipped: {why}"}
    red = redundancy(scheme, c)
    crit = removal_checks(scheme, red, classification=c, confirm_limit=confirm_limit)
    out = {
        "redundancy": red.to_json(),
        "critical": crit.critical_members(),
        "critical_supports": crit.critical_restraints(),
        "removal": {"members": {k: v.to_json() for k, v in crit.members.items()},
                    "restraints": {k: v.to_json() for k, v in crit.restraints.items()}},
        "self_stress_states": [st.to_json() for st in red.states[:MAX_STATES_JSON]],
    }
    if len(red.states) > MAX_STATES_JSON:
        out["redundancy_note"] = f"first {MAX_STATES_JSON} of {len(red.states)} states of self-stress listed"
    return out

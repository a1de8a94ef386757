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

from .assemble import System, assemble
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
#: above these sizes the dense route is not attempted (``check --json`` notes the skip)
MAX_MEMBERS = 3000
MAX_DENSE_ENTRIES = 12_000_000
#: re-analyse every removal with classify() when members + restraints are at most this
CONFIRM_LIMIT = 400

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


def without_restraint(scheme: Scheme, node: str, word: str) -> Scheme:
    """``scheme`` with one restraint (``along``, ``across`` or ``rotation``) of a support removed."""
    sup = scheme.supports[node]
    if word not in sup.fixes:
        raise KeyError(f'support at node "{node}" has no "{word}" restraint')
    new = support_with_fixes(node, sup.angle, set(sup.fixes) - {word})
    return scheme.without_support(node) if new is None else scheme.with_support(new)


def direction_words(angle: float) -> str:
    """'vertical', 'horizontal' or 'at 30°' for a reaction direction given in degrees."""
    a = angle % 180.0
    if min(abs(a - 90.0), 0.0) == 0.0 and abs(a - 90.0) < 1e-9:
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
    """Scan the columns of ``A`` in ``order`` and keep each one independent of those kept before.

    The greedy algorithm of a linear matroid (Rado-Edmonds): the kept set is the basis that
    is lexicographically first in the scan order; every skipped column depends only on kept
    columns scanned before it.  Blocked classical Gram-Schmidt, each projection applied
    twice ("twice is enough", Giraud, Langou & Rozloznik 2005).
    """
    M = A.toarray() if sp.issparse(A) else np.asarray(A, float)
    rows = M.shape[0]
    order = [int(c) for c in order]
    Q = np.zeros((rows, min(rows, len(order))))
    k = 0
    coef: dict[int, np.ndarray] = {}
    kept: list[int] = []
    redundant: list[int] = []
    for b0 in range(0, len(order), block):
        idx = order[b0:b0 + block]
        C = M[:, idx].copy()
        norms = np.linalg.norm(C, axis=0)
        H = np.zeros((Q.shape[1], len(idx)))
        if k:
            Qk = Q[:, :k]
            h1 = Qk.T @ C
            C -= Qk @ h1
            h2 = Qk.T @ C
            C -= Qk @ h2
            H[:k] = h1 + h2
        for j, c in enumerate(idx):
            v = C[:, j]
            k0 = H.shape[0] and k
            # vectors added within this block
            start = k - sum(1 for cc in kept if cc in idx[:j]) if False else None
            new = [kk for kk in range(k) if kk >= k_block_start] if False else None
            coef[c] = H[:, j]
            del k0, start, new
        # sequential pass inside the block
        k_block = k
        for j, c in enumerate(idx):
            v = C[:, j].copy()
            h = H[:, j].copy()
            if k > k_block:
                Qb = Q[:, k_block:k]
                g1 = Qb.T @ v
                v -= Qb @ g1
                g2 = Qb.T @ v
                v -= Qb @ g2
                h[k_block:k] += g1 + g2
            r = float(np.linalg.norm(v))
            if norms[j] > 0 and r > rtol * norms[j] and k < Q.shape[1]:
                Q[:, k] = v / r
                h[k] = r
                k += 1
                kept.append(c)
            else:
                redundant.append(c)
            coef[c] = h
    Q = Q[:, :k]
    R = np.zeros((k, k))
    for j, c in enumerate(kept):
        R[:, j] = coef[c][:k]
    Hr = np.zeros((k, len(redundant)))
    for j, c in enumerate(redundant):
        Hr[:, j] = coef[c][:k]
    return GreedyBasis(kept, redundant, Q, R, Hr)

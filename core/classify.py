"""Classify a scheme: unstable / statically determinate / indeterminate, by rank.

``classify(scheme)`` assembles the equilibrium matrix (:mod:`.assemble`), decides its
rank (:mod:`.rank`), splits mechanisms and self-stress into internal and support parts
(Pellegrino & Calladine 1986), makes the hand count (:mod:`.counting`), and explains in
words any way the count would mislead.

* ``verdict`` is "unstable" iff m > 0, else "determinate" iff s == 0, else "indeterminate".
* ``internal.self_stress`` = states that need no support reaction = dim null(A_members).
* ``internal.mechanisms`` = mechanisms of the unsupported structure beyond the 3 rigid-body
  motions of each connected piece.
* ``rigid_body_mechanisms`` = 3 - rank(A^T T), T the rigid-body motions of the whole
  scheme (motions the supports fail to stop when the structure itself is rigid).
"""
from __future__ import annotations

import functools
import math
from dataclasses import dataclass, field

import numpy as np

from .assemble import Finding, System, assemble
from .counting import HandCount, hand_count
from .model import Scheme
from .rank import NEAR_GAP, NEAR_RTOL, RankResult, decide_rank, null_space_basis


class Mode:
    """One mechanism mode: node velocities (normalised so the largest is 1).

    The per-node dictionaries are built on first use (a big scheme has tens of thousands of
    nodes and the app usually draws only the first mode).
    """

    __slots__ = ("vector", "system", "kind", "_arrays", "__dict__")

    def __init__(self, vector: np.ndarray, system: System, kind: str, arrays=None):
        self.vector = vector
        self.system = system
        #: "rigid-body" or "internal"
        self.kind = kind
        self._arrays = arrays

    @functools.cached_property
    def _scaled(self):
        ids, dof, th, _ = self._arrays if self._arrays is not None else _node_arrays(self.system, None)
        vec = self.vector
        u, v = vec[dof[:, 0]], vec[dof[:, 1]]
        scale = float(np.hypot(u, v).max()) if u.size else 0.0
        if scale < 1e-12 * max(1.0, float(np.abs(vec).max()) if vec.size else 1.0):
            scale = float(np.abs(vec).max()) if vec.size else 1.0
            scale = scale or 1.0
        return ids, dof, th, vec / scale

    @functools.cached_property
    def displacements(self) -> dict[str, tuple[float, float]]:
        ids, dof, _, w = self._scaled
        return dict(zip(ids, zip(w[dof[:, 0]].tolist(), w[dof[:, 1]].tolist())))

    @functools.cached_property
    def rotations(self) -> dict[str, float]:
        ids, _, th, w = self._scaled
        return {nid: float(w[t] / self.system.lref) for nid, t in zip(ids, th.tolist()) if t >= 0}

    @functools.cached_property
    def release_gaps(self) -> dict[tuple[str, str], float]:
        w = self._scaled[3]
        gaps = {}
        for r_list in self.system.release_rows.values():
            for r in r_list:
                _, item, detail = self.system.rows[r]
                gaps[(item, detail)] = float(w[r])
        return gaps


@dataclass
class Classification:
    verdict: str
    mechanisms: int
    self_stress: int
    internal_mechanisms: int
    internal_self_stress: int
    rigid_body_mechanisms: int
    count: HandCount
    explanations: list[str]
    warnings: list[Finding]
    modes: list[Mode]
    system: System
    rank: RankResult
    mechanism_basis: np.ndarray | None = None
    self_stress_basis: np.ndarray | None = None
    remarks: list[Finding] = field(default_factory=list)
    extra: dict = field(default_factory=dict)

    def summary(self) -> str:
        if self.verdict == "unstable":
            k = self.mechanisms
            return f"Unstable — {k} mechanism{'s' if k != 1 else ''}"
        if self.verdict == "determinate":
            return "Stable — statically determinate"
        return f"Stable — indeterminate to degree {self.self_stress}"

    def split_text(self) -> str:
        ext_s = self.self_stress - self.internal_self_stress
        if self.verdict == "unstable":
            inside = self.mechanisms - self.rigid_body_mechanisms
            return (f"{inside} inside the structure, {self.rigid_body_mechanisms} rigid-body motion(s) the "
                    f"supports leave free")
        return f"{self.internal_self_stress} inside the structure, {ext_s} at the supports"

    def to_json(self) -> dict:
        out = {
            "verdict": self.verdict,
            "summary": self.summary(),
            "mechanisms": self.mechanisms,
            "self_stress": self.self_stress,
            "internal": {"mechanisms": self.internal_mechanisms, "self_stress": self.internal_self_stress},
            # rigid-body motions the supports leave free; self-stress that needs reactions
            "supports": {"mechanisms": self.rigid_body_mechanisms,
                         "self_stress": self.self_stress - self.internal_self_stress},
            "rigid_body_mechanisms": self.rigid_body_mechanisms,
            "count": self.count.to_json(),
            "explanations": list(self.explanations),
            "warnings": [w.text for w in self.warnings],
            "warning_items": [list(w.items) for w in self.warnings],
            "remarks": [r.text for r in self.remarks],
            "rank": {"rank": self.rank.rank, "rows": self.system.shape[0], "cols": self.system.shape[1],
                     "route": self.rank.route,
                     "smallest_kept_sigma_ratio": _num(self.rank.sigma_min_kept)},
        }
        out.update(self.extra)
        return out


def _num(x: float):
    return None if x is None or not math.isfinite(x) else float(x)


def _node_arrays(system: System, scheme: Scheme | None):
    cache = getattr(system, "_node_arrays_cache", None)
    if cache is not None and (scheme is None or cache[4]):
        return cache[:4]
    out = _build_node_arrays(system, scheme)
    system._node_arrays_cache = (*out, scheme is not None)
    return out


def _build_node_arrays(system: System, scheme: Scheme | None):
    ids = list(system.node_dof)
    dof = np.array([system.node_dof[n][:2] for n in ids], int).reshape(-1, 2)
    th = np.array([-1 if system.node_dof[n][2] is None else system.node_dof[n][2] for n in ids], int)
    xy = (np.array([scheme.node_xy(n) for n in ids], float).reshape(-1, 2) if scheme is not None
          else np.zeros((len(ids), 2)))
    return ids, dof, th, xy


def rigid_body_fields(system: System, scheme: Scheme) -> np.ndarray:
    """The three rigid-body motions of the whole scheme as row-space vectors (rows x 3)."""
    T = np.zeros((system.shape[0], 3))
    _, dof, th, xy = _node_arrays(system, scheme)
    T[dof[:, 0], 0] = 1.0
    T[dof[:, 0], 2] = -xy[:, 1]
    T[dof[:, 1], 1] = 1.0
    T[dof[:, 1], 2] = xy[:, 0]
    T[th[th >= 0], 2] = system.lref
    return T


def _all_rigidly_jointed(scheme: Scheme, system: System) -> bool:
    """Every member a beam, no release rows, every node with a rotation DOF."""
    if system.release_rows:
        return False
    if any(m.kind != "beam" for m in scheme.members.values()):
        return False
    return all(it is not None for (_, _, it) in system.node_dof.values())


def piece_rigid_fields(system: System, scheme: Scheme) -> np.ndarray:
    """Rigid-body motions of each connected piece separately (rows x 3 * pieces)."""
    ids, dof, th, xy = _node_arrays(system, scheme)
    piece_of = {}
    for k, piece in enumerate(system.pieces):
        for nid in piece:
            piece_of[nid] = k
    pk = np.array([piece_of[n] for n in ids], int)
    T = np.zeros((system.shape[0], 3 * len(system.pieces)))
    T[dof[:, 0], 3 * pk] = 1.0
    T[dof[:, 0], 3 * pk + 2] = -xy[:, 1]
    T[dof[:, 1], 3 * pk + 1] = 1.0
    T[dof[:, 1], 3 * pk + 2] = xy[:, 0]
    has = th >= 0
    T[th[has], 3 * pk[has] + 2] = system.lref
    return T


def reference_supported(system: System, scheme: Scheme):
    """Member columns of A plus a pin and a roller per piece (stops exactly the rigid motions)."""
    import scipy.sparse as sp

    member_cols = [c for c, (k, _, _) in enumerate(system.cols) if k != "reaction"]
    I, J, V = [], [], []
    col = 0
    for piece in system.pieces:
        a = piece[0]
        xa, ya = scheme.node_xy(a)
        b = max(piece, key=lambda n: (scheme.node_xy(n)[0] - xa) ** 2 + (scheme.node_xy(n)[1] - ya) ** 2)
        xb, yb = scheme.node_xy(b)
        L = math.hypot(xb - xa, yb - ya) or 1.0
        iu, iv, _ = system.node_dof[a]
        I += [iu, iv]; J += [col, col + 1]; V += [1.0, 1.0]
        ju, jv, _ = system.node_dof[b]
        I += [ju, jv]; J += [col + 2, col + 2]; V += [-(yb - ya) / L, (xb - xa) / L]
        col += 3
    R = sp.csc_matrix((V, (I, J)), shape=(system.shape[0], col))
    return sp.hstack([system.A[:, member_cols], R]).tocsc()


def _mode_from_vector(vec: np.ndarray, system: System, kind: str, arrays=None) -> Mode:
    return Mode(vec, system, kind, arrays)


def _canonical_sign(B: np.ndarray) -> np.ndarray:
    """Fix the sign of each column: its largest-magnitude entry positive."""
    B = B.copy()
    for k in range(B.shape[1]):
        i = int(np.argmax(np.abs(B[:, k])))
        if B[i, k] < 0:
            B[:, k] = -B[:, k]
    return B


def classify(scheme: Scheme, *, bases: bool = False, max_modes: int = 12) -> Classification:
    """Classify ``scheme``; ``bases=True`` also returns both null-space bases."""
    system = assemble(scheme)
    A = system.A
    rows, cols = A.shape
    rr = decide_rank(A, want_mech=True, want_stress=bases)
    m, s = rr.m, rr.s

    # support split (Pellegrino & Calladine 1986): analyse the structure on a reference set of
    # 3 restraints per connected piece (a pin and a roller across the line to the farthest
    # node), which stops exactly its rigid-body motions: its m is the internal mechanisms and
    # its s the self-stress that needs no reactions.
    T = rigid_body_fields(system, scheme)
    Ar = A[:, [c for c, (k, _, _) in enumerate(system.cols) if k == "reaction"]]
    # m_rigid = 3 - rank(A_reactions^T T) (Pellegrino & Calladine 1986)
    AtT = Ar.T @ T
    sv = np.linalg.svd(AtT, compute_uv=False) if AtT.size else np.zeros(0)
    tol = 1e-9 * max(1.0, float(sv.max()) if sv.size else 1.0)
    rigid_m = 3 - int(np.count_nonzero(sv > tol)) if rows else 0
    Tp = piece_rigid_fields(system, scheme)
    n_reac = Ar.shape[1]
    n_mcols = len(system.cols) - n_reac
    if n_reac == Tp.shape[1] and n_reac and np.linalg.matrix_rank((Ar.T @ Tp), tol=1e-9) == n_reac:
        internal_m, internal_s = m, s
    elif _all_rigidly_jointed(scheme, system):
        # members joined rigidly to each other form one rigid body per connected piece
        # (common practice), so the free structure has no internal mechanism and, by the
        # count identity, 3 self-stress states per independent closed loop
        internal_m, internal_s = 0, n_mcols + 3 * len(system.pieces) - rows
    else:
        A_ref = reference_supported(system, scheme)
        rr_ref = decide_rank(A_ref, want_mech=False)
        internal_m, internal_s = rr_ref.m, rr_ref.s
    if len(system.pieces) != 1:
        rigid_m = min(rigid_m, m)

    verdict = "unstable" if m > 0 else ("determinate" if s == 0 else "indeterminate")
    count = hand_count(scheme, system)

    basis = rr.mech_basis
    if m > 0 and (basis is None or basis.shape[1] != m) and rows * cols <= 4_000_000 and m <= 200:
        from .rank import dense_rank
        basis = dense_rank(A, want_stress=False).mech_basis
    modes: list[Mode] = []
    if m > 0 and basis is not None and basis.shape[1] > 0:
        basis = _order_modes(basis, T) if basis.shape[1] == m else basis
        basis = _canonical_sign(basis)
        n_rigid = rigid_m
        arrays = _node_arrays(system, None)
        for k in range(min(basis.shape[1], max_modes)):
            modes.append(_mode_from_vector(basis[:, k], system, "rigid-body" if k < n_rigid else "internal",
                                           arrays))

    stress_basis = None
    if bases:
        stress_basis = rr.stress_basis if rr.stress_basis is not None and rr.stress_basis.shape[1] == s \
            else null_space_basis(A, s)

    warnings = [f for f in system.findings if f.kind == "warning"]
    remarks = [f for f in system.findings if f.kind != "warning"]
    result = Classification(verdict, m, s, internal_m, internal_s, rigid_m, count, [], warnings, modes,
                            system, rr, basis if bases or m else None, stress_basis, remarks)
    from .explain import explain, near_singular_findings
    result.explanations = explain(scheme, result)
    result.warnings.extend(near_singular_findings(scheme, result))
    return result


def _order_modes(basis: np.ndarray, T: np.ndarray) -> np.ndarray:
    """Rotate the mechanism basis so that rigid-body motions come first."""
    m = basis.shape[1]
    if m == 0:
        return basis
    # component of each basis combination inside span(T)
    Q, _ = np.linalg.qr(T) if T.size else (np.zeros((basis.shape[0], 0)), None)
    P = Q.T @ basis  # 3 x m
    _, sig, Vt = np.linalg.svd(P, full_matrices=True)
    return basis @ Vt.T

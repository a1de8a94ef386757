"""Finite or infinitesimal: the second-order test on the exact constraints, confirmed by tracing.

A first-order mechanism ``d`` (``Phi_q d = 0``) extends to second order iff
``Phi_q q'' = -Phi''(d, d)`` is solvable, i.e. iff ``omega^T Phi''(d, d) = 0`` for every
state of self-stress ``omega`` (``Phi_q^T omega = 0``, Fredholm alternative).  With the
mechanism basis ``D`` (n x m) and the self-stresses ``omega_1..omega_s`` this gives the s
quadratic forms ``H_k = D^T (omega_k^T Phi_qq) D`` in m variables ("product forces",
C. R. Calladine & S. Pellegrino (1991), "First-order infinitesimal mechanisms", IJSS 27(4),
505-515).  The constraint model is the rigid-body one (:mod:`.constraints`), so the same
test covers frames, releases and supports, not only bars.

Verdict (:func:`assess`):

* m = 0: "none".
* s = 0: "finite": the constraints are independent, the solution set is a smooth manifold
  of dimension m near the drawn position and every first-order mechanism is tangent to a
  finite one (L. Asimow & B. Roth (1978), "The rigidity of graphs", Trans. AMS 245).
* some combination ``sum alpha_k H_k`` definite: "infinitesimal" (prestress stable:
  R. Connelly & W. Whiteley (1996), "Second-order rigidity and prestress stability for
  tensegrity frameworks", SIAM J. Discrete Math. 9(3), 453-491).
* otherwise, no nonzero ``beta`` with ``beta^T H_k beta = 0`` for all k: "infinitesimal"
  (second-order rigid, Connelly & Whiteley 1996; the case of C. R. Calladine &
  S. Pellegrino (1992), IJSS 29(17), that no prestress stiffens).
* otherwise the common null cone holds the only possible tangents of finite motions: each
  candidate is tried by the corrector of the tracer (Newton onto ``Phi = 0`` on the plane
  ``d . (q - q0) = h``): exact convergence at two step sizes means "finite"; a residual that
  stays and scales like a power of h means the motion is blocked at a higher order
  ("infinitesimal").
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
import scipy.optimize as opt

from .constraints import ConstraintModel, Nullity, null_space
from .model import Scheme

#: probe step sizes (in units of the mean member length) for the tracing confirmation
PROBE_STEPS = (0.02, 0.05)
#: a probe converges when max |Phi| falls below this (fraction of the model size)
PROBE_TOL = 1e-12
#: local searches for the common null cone of several forms
MAX_CONE_STARTS = 24
#: the confirming probe of a second-order verdict runs on models up to this many unknowns
PROBE_MAX_VARS = 300


@dataclass
class Verdict:
    """Finite or infinitesimal, with the evidence."""

    motion: str  # "none" | "finite" | "infinitesimal"
    m: int
    s: int
    #: why, in words
    reason: str
    #: the s quadratic forms H_k on the mechanism basis (m x m each)
    forms: list[np.ndarray] = field(default_factory=list)
    #: q-space unit tangents found to admit finite motion (empty for "infinitesimal")
    directions: list[np.ndarray] = field(default_factory=list)
    #: probe residuals (fraction of model size) at PROBE_STEPS along the first mode, if probed
    probe: list[float] = field(default_factory=list)
    #: estimated order at which the motion is blocked (2 = second order), None if not blocked
    blocked_order: int | None = None
    nullity: Nullity | None = None

    def to_json(self) -> dict:
        return {"motion": self.motion, "reason": self.reason, "mechanisms": self.m, "self_stress": self.s,
                "blocked_order": self.blocked_order,
                "probe_residuals": [float(r) for r in self.probe]}


def quadratic_forms(model: ConstraintModel, nul: Nullity, q: np.ndarray | None = None) -> list[np.ndarray]:
    """``H_k[i, j] = omega_k . Phi''(q)[d_i, d_j]`` for every self-stress ``omega_k`` (rows x s basis)."""
    q = model.q0 if q is None else q
    D, W = nul.mech_basis, nul.stress_basis
    m, s = D.shape[1], W.shape[1]
    if m == 0 or s == 0:
        return []
    # second derivatives along the basis and the pairwise sums (polarisation)
    second = {}
    for i in range(m):
        second[(i, i)] = model.second(q, D[:, i])
    for i in range(m):
        for j in range(i + 1, m):
            second[(i, j)] = model.bilinear(q, D[:, i], D[:, j])
    forms = []
    for k in range(s):
        w = W[:, k]
        H = np.zeros((m, m))
        for (i, j), vec in second.items():
            H[i, j] = H[j, i] = float(w @ vec)
        forms.append(H)
    return forms


def _tolerance(model: ConstraintModel) -> float:
    return 1e-8 * max(1.0, model.size / model.lref)


def _effective_forms(forms: list[np.ndarray], tol: float) -> list[np.ndarray]:
    """An orthonormal recombination of the forms with the vanishing combinations dropped."""
    if not forms:
        return []
    m = forms[0].shape[0]
    F = np.array([H.ravel() for H in forms])  # s x m^2
    u, sv, vt = np.linalg.svd(F, full_matrices=False)
    keep = sv > tol
    return [(sv[k] * vt[k]).reshape(m, m) for k in np.nonzero(keep)[0]]


def prestress_margin(forms: list[np.ndarray]) -> tuple[float, np.ndarray | None]:
    """max over unit alpha of lambda_min(sum alpha_k H_k), and the maximiser (Connelly & Whiteley 1996)."""
    if not forms:
        return 0.0, None
    s = len(forms)

    def lam(alpha):
        a = np.asarray(alpha, float)
        n = np.linalg.norm(a)
        if n == 0:
            return 0.0
        Hs = sum(ak * H for ak, H in zip(a / n, forms))
        return float(np.linalg.eigvalsh((Hs + Hs.T) / 2)[0])

    if s == 1:
        best = max((lam([1.0]), np.array([1.0])), (lam([-1.0]), np.array([-1.0])), key=lambda t: t[0])
        return best
    rng = np.random.default_rng(2024)
    starts = ([np.eye(s)[k] * sg for k in range(min(s, 6)) for sg in (1, -1)]
              + list(rng.standard_normal((6, s))))
    best = (-math.inf, None)
    for a0 in starts:
        res = opt.minimize(lambda a: -lam(a), a0, method="Nelder-Mead",
                           options={"xatol": 1e-10, "fatol": 1e-14, "maxiter": 400 * s})
        val = -float(res.fun)
        if val > best[0]:
            best = (val, res.x / np.linalg.norm(res.x))
    return best


def null_cone(forms: list[np.ndarray], tol: float, max_candidates: int = 8) -> list[np.ndarray]:
    """Unit vectors beta with beta^T H_k beta = 0 for every k (candidate tangents of finite motion).

    One form: from its eigenvectors (null ones, and pairs of opposite-sign ones mixed in the
    ratio that cancels).  Several: local minima of sum_k (beta^T H_k beta)^2 on the sphere.
    """
    if not forms:
        return []
    m = forms[0].shape[0]
    cands: list[np.ndarray] = []

    def add(b):
        b = np.asarray(b, float)
        b = b / np.linalg.norm(b)
        if max(abs(float(b @ H @ b)) for H in forms) > tol:
            return
        for c in cands:
            if abs(float(b @ c)) > 1 - 1e-6:
                return
        cands.append(b)

    if m == 1:
        if all(abs(float(H[0, 0])) <= tol for H in forms):
            add([1.0])
        return cands
    if len(forms) == 1:
        H = (forms[0] + forms[0].T) / 2
        w, U = np.linalg.eigh(H)
        for k in range(m):
            if abs(w[k]) <= tol:
                add(U[:, k])
        for i in range(m):
            for j in range(m):
                if w[i] > tol and w[j] < -tol:
                    a, b = math.sqrt(-w[j]), math.sqrt(w[i])
                    add(a * U[:, i] + b * U[:, j])
                    add(a * U[:, i] - b * U[:, j])
        return cands[:max_candidates]

    def g(beta):
        n2 = beta @ beta
        qs = [float(beta @ H @ beta) / n2 for H in forms]
        val = sum(qk * qk for qk in qs)
        grad = sum(2 * qk * 2 * (H @ beta - qk * beta) / n2 for qk, H in zip(qs, forms))
        return val, grad

    rng = np.random.default_rng(99)
    starts = list(np.eye(m))
    for H in forms:
        starts += list(np.linalg.eigh((H + H.T) / 2)[1].T)
    starts += list(rng.standard_normal((8, m)))
    if len(starts) > MAX_CONE_STARTS:
        keep = rng.choice(len(starts), MAX_CONE_STARTS, replace=False)
        starts = [starts[k] for k in sorted(keep)]
    for b0 in starts:
        res = opt.minimize(g, b0, jac=True, method="BFGS", options={"gtol": 1e-14, "maxiter": 500})
        add(res.x)
        if len(cands) >= max_candidates:
            break
    return cands


def probe(model: ConstraintModel, d: np.ndarray, steps=PROBE_STEPS) -> list[float]:
    """Residual (fraction of model size) of the best corrector point at each step along ``d``.

    The corrector of the tracer: Newton onto Phi = 0 on the plane ``d . (q - q0) = h``,
    started from ``q0 + h d``; when it does not converge, the least-squares minimum of
    |Phi| on that plane (Levenberg-Marquardt).  A finite motion with tangent ``d`` gives
    rounding-level residuals; a blocked one leaves a residual that scales like h^2 (or a
    higher power of h).
    """
    d = d / np.linalg.norm(d)
    out = []
    for h in steps:
        c = float(d @ model.q0) + h
        y, ok, _, res = model.project(model.q0 + h * d, (d, c), max_iter=40)
        if ok:
            out.append(model.residual(y))
            continue
        # minimise |Phi| over the plane: y = q0 + h d + Z z, Z an orthonormal complement of d
        Z = np.linalg.svd(np.eye(model.n) - np.outer(d, d))[0][:, : model.n - 1]
        base = model.q0 + h * d
        sol = opt.least_squares(lambda z: model.phi(base + Z @ z), np.zeros(model.n - 1),
                                jac=lambda z: model.jac(base + Z @ z) @ Z, method="lm" if model.r >= model.n - 1 else "trf",
                                xtol=1e-15, ftol=1e-15, gtol=1e-15, max_nfev=400)
        out.append(model.residual(base + Z @ sol.x))
    return out


def _probe_finite(model: ConstraintModel, d: np.ndarray) -> tuple[bool, list[float]]:
    for sign in (1.0, -1.0):
        r = probe(model, sign * d)
        if max(r) <= PROBE_TOL:
            return True, r
    return False, r


def assess(scheme_or_model: Scheme | ConstraintModel, nul: Nullity | None = None) -> Verdict:
    """The finite / infinitesimal verdict of a scheme at its drawn position (see module docstring)."""
    model = scheme_or_model if isinstance(scheme_or_model, ConstraintModel) else ConstraintModel(scheme_or_model)
    nul = null_space(model) if nul is None else nul
    m, s = nul.m, nul.s
    D = nul.mech_basis
    if m == 0:
        return Verdict("none", m, s, "no mechanism", nullity=nul)
    if nul.s_rows == 0:
        why = "no state of self-stress acts on the motion: every first-order mechanism is finite"
        dirs = [] if D is None else [D[:, k] for k in range(m)]
        return Verdict("finite", m, s, why, directions=dirs, nullity=nul)
    if D is None:
        why = (f"{m} mechanisms on a model this large: the second-order test was not run; with this many "
               "independent mechanisms the scheme is taken to move finitely")
        return Verdict("finite", m, s, why, nullity=nul)
    tol = _tolerance(model)
    forms = quadratic_forms(model, nul)
    eff = _effective_forms(forms, tol)
    if eff:
        margin, _ = prestress_margin(eff)
        if margin > tol:
            pr = probe(model, D[:, 0]) if model.n <= PROBE_MAX_VARS else []
            return Verdict("infinitesimal", m, s, "a state of self-stress stiffens every mechanism at second "
                           "order (prestress stable)", forms, [], pr, 2, nul)
        cone = null_cone(eff, tol)
        if not cone:
            pr = probe(model, D[:, 0]) if model.n <= PROBE_MAX_VARS else []
            return Verdict("infinitesimal", m, s, "no first-order mechanism extends to second order "
                           "(second-order rigid)", forms, [], pr, 2, nul)
    else:
        cone = [np.eye(m)[k] for k in range(m)]
    # the cone holds the candidate tangents: confirm by tracing
    directions, last = [], []
    for beta in cone:
        d = D @ beta
        ok, r = _probe_finite(model, d)
        last = r
        if ok:
            directions.append(d / np.linalg.norm(d))
    if directions:
        why = ("the self-stress does not touch the motion at second order and tracing follows it exactly"
               if not eff else "a first-order mechanism passes the second-order test and tracing follows it exactly")
        return Verdict("finite", m, s, why, forms, directions, last, None, nul)
    order = None
    if len(last) == 2 and min(last) > 0:
        p = math.log(last[1] / last[0]) / math.log(PROBE_STEPS[1] / PROBE_STEPS[0])
        order = max(3, int(round(p)))
    return Verdict("infinitesimal", m, s, "the mechanism passes the second-order test but tracing shows it "
                   "blocked at a higher order", forms, [], last, order, nul)


def motion_kind(scheme: Scheme, classification=None) -> str:
    """``"none"``, ``"finite"`` or ``"infinitesimal"`` for ``kinestat check --json`` (key ``motion``).

    With the engine's classification, m = 0 answers "none" without further work.
    """
    if classification is not None and classification.mechanisms == 0:
        return "none"
    verdict = assess(scheme)
    if verdict.motion == "none" and classification is not None and classification.mechanisms > 0:
        # the node model sees a mechanism the exact constraints do not: a near-singular geometry
        return "infinitesimal"
    return verdict.motion

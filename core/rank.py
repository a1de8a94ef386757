"""Rank decisions on the equilibrium matrix, with one tolerance policy.

Tolerance policy (used by every route)
--------------------------------------
All decisions are relative to sigma_max, the largest singular value of A, so they do not
depend on units, rotation or translation of the drawing (A itself is made scale-free in
:mod:`.assemble`).

* **Zero level.**  A singular value is numerically zero when
  ``sigma <= ZERO_RTOL * sigma_max`` with ``ZERO_RTOL = 1e-10``.  A backward-stable
  factorisation returns exact zeros at about ``sqrt(n) * eps * sigma_max`` (1e-14 for
  n = 1e5), while the smallest genuine singular value of a slender sound truss falls like
  1 / panels^2 (about 3e-9 relative at 25,000 panels), so the level sits in the gap.
* **Gap criterion.**  Sorting the candidate values, the zero count is placed at the
  largest ratio between consecutive values that is at least ``GAP_MIN = 1e3`` and whose
  lower side is at most ``10 * ZERO_RTOL``; when no such split exists the zero level alone
  decides.  Exact zeros spread by rounding (or by an iterative route) are thereby kept
  together, and a genuine small value separated from them by three orders of magnitude is
  not swallowed.
* **Near-singular warning.**  A non-zero singular value isolated below the bulk
  (``sigma_r <= NEAR_RTOL * sigma_max`` with ``NEAR_RTOL = 1e-4`` and a ratio of at least
  ``1e2`` to the next one up) means the geometry is close to a mechanism: the verdict is
  kept and a warning is added.

Routes
------
* *dense*: singular value decomposition of A (LAPACK gesdd), used while A is small.
* *sparse*: one symmetric (LDL^T-type) factorisation of K - tau I, K = A A^T, counts the
  eigenvalues of K below tau by Sylvester's law of inertia (an upper bound on m; tau is
  placed at (1e-7 sigma_max)^2, above the rounding floor of K).  When that bound exceeds
  the lower bound ``max(rows - cols, rows - structural rank)`` the candidate subspace is
  computed by block inverse iteration with the same factors and every candidate is checked
  on A itself (``|A^T x|``), because K squares the condition number and would invent
  mechanisms on slender trusses (Pellegrino 1993 on using A rather than A A^T).

References: G. H. Golub & C. F. Van Loan, *Matrix Computations*, 4th ed. (2013),
sections 2.4 (numerical rank) and 8.1 (Sylvester's law of inertia); I. S. Duff (1986),
"Computing the structural index", SIAM J. Alg. Disc. Meth. 7, 594-603.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import scipy.linalg as la
import scipy.sparse as sp
import scipy.sparse.linalg as spla
from scipy.sparse.csgraph import maximum_bipartite_matching

ZERO_RTOL = 1e-10
GAP_MIN = 1e3
NEAR_RTOL = 1e-4
NEAR_GAP = 1e2
#: relative threshold (on sigma) of the inertia count of K - tau I
K_RTOL = 1e-7
#: A with at most this many entries (rows * cols) goes the dense route
DENSE_MAX_ENTRIES = 60_000


@dataclass
class RankResult:
    rank: int
    m: int
    s: int
    sigma_max: float
    #: smallest retained singular value relative to sigma_max (nan if unknown)
    sigma_min_kept: float
    #: next singular value up relative to sigma_max (for the near-singular test)
    sigma_next: float
    #: orthonormal basis of the left null space (rows x m): the mechanisms
    mech_basis: np.ndarray | None
    #: orthonormal basis of the null space (cols x s), when computed
    stress_basis: np.ndarray | None
    route: str
    #: for the near-singular warning: left singular vector of sigma_min_kept (rows,)
    soft_vector: np.ndarray | None = None
    #: relative values on either side of the decided rank, for reports
    gap: float = math.inf


def decide_zero_count(values: np.ndarray, sigma_max: float) -> tuple[int, float]:
    """Number of numerically zero values among ``values`` (any order) by the policy above.

    Returns the count and the ratio across the split (``inf`` when nothing lies above it).
    """
    if values.size == 0 or sigma_max <= 0:
        return int(values.size), math.inf
    v = np.sort(np.abs(np.asarray(values, float)) / sigma_max)
    by_level = int(np.searchsorted(v, ZERO_RTOL, side="right"))
    upper = np.append(v[1:], math.inf)
    ratios = upper / np.maximum(v, 1e-300)
    # splits whose lower side is plausibly a rounded zero and whose upper side is above the
    # zero level: the gap may extend the zero set up to 10x the level, never cut inside it
    ok = np.nonzero((v <= 10 * ZERO_RTOL) & (upper > ZERO_RTOL) & (ratios >= GAP_MIN))[0]
    if ok.size:
        k = int(ok[np.argmax(ratios[ok])])
        return k + 1, float(ratios[k])
    gap = float(ratios[by_level - 1]) if by_level else math.inf
    return by_level, gap


def _structural_rank(A: sp.csc_matrix) -> int:
    if A.nnz == 0:
        return 0
    match = maximum_bipartite_matching(sp.csr_matrix(A), perm_type="column")
    return int(np.count_nonzero(match >= 0))


def dense_rank(A: sp.spmatrix | np.ndarray, want_stress: bool = True) -> RankResult:
    """Rank, both null-space bases and singular values by a dense SVD."""
    M = A.toarray() if sp.issparse(A) else np.asarray(A, float)
    rows, cols = M.shape
    if rows == 0 or cols == 0:
        mech = np.eye(rows) if rows else np.zeros((0, 0))
        stress = np.eye(cols) if cols else np.zeros((0, 0))
        return RankResult(0, rows, cols, 0.0, math.nan, math.nan, mech, stress, "dense")
    U, sig, Vt = la.svd(M, full_matrices=True, lapack_driver="gesdd")
    smax = float(sig[0]) if sig.size else 0.0
    if smax == 0.0:
        return RankResult(0, rows, cols, 0.0, math.nan, math.nan, U, Vt.T, "dense")
    kmin = min(rows, cols)
    nz, gap = decide_zero_count(sig, smax)
    r = kmin - nz
    mech = U[:, r:]
    stress = Vt[r:, :].T if want_stress else None
    smin = float(sig[r - 1] / smax) if r > 0 else math.nan
    snext = float(sig[r - 2] / smax) if r > 1 else math.nan
    soft = U[:, r - 1].copy() if r > 0 else None
    return RankResult(r, rows - r, cols - r, smax, smin, snext, mech, stress, "dense", soft, gap)


def _sigma_max(A: sp.csc_matrix, K: sp.spmatrix | None = None) -> float:
    """Largest singular value of A by 20 steps of the power method on K = A A^T.

    Deterministic start vector; the estimate is within a few per cent from below, which is
    all a relative threshold needs (it scales exactly with A, so decisions stay
    scale-invariant).
    """
    if A.nnz == 0:
        return 0.0
    if K is None:
        K = A @ A.T
    n = K.shape[0]
    x = 1.0 + 0.5 * np.sin(np.arange(n) * 0.7548776662)
    x /= np.linalg.norm(x)
    lam = 0.0
    for _ in range(20):
        y = K @ x
        lam = math.sqrt(float(np.einsum("i,i->", y, y)))
        if lam == 0.0:
            return float(math.sqrt(spla.norm(A, 1) * spla.norm(A, np.inf)))
        x = y / lam
    return math.sqrt(lam)


def _ldl_inertia(K: sp.csc_matrix, tau: float):
    """Symmetric-mode SuperLU of K - tau I: (negative pivot count, factor) or None."""
    n = K.shape[0]
    Ks = (K - tau * sp.identity(n, format="csc")).tocsc()
    lu = spla.splu(Ks, permc_spec="COLAMD", diag_pivot_thresh=0.0,
                   options={"SymmetricMode": True})
    if not np.array_equal(lu.perm_r, lu.perm_c):
        return None
    d = lu.U.diagonal()
    return int(np.count_nonzero(d < 0)), lu


def _orth(X: np.ndarray) -> np.ndarray:
    """Orthonormal basis of the columns of a tall block (Householder QR)."""
    Q, _ = la.qr(X, mode="economic", check_finite=False)
    return Q


def _ritz_null(B: sp.spmatrix, gram: sp.spmatrix, lu, k: int, smax: float,
               max_sweeps: int = 40) -> tuple[np.ndarray, np.ndarray]:
    """Block inverse iteration with the factors ``lu`` of ``gram - tau I`` (gram = B^T B).

    Returns an orthonormal block X (n x k) ordered by increasing ``|B x| / sigma_max`` and
    those residuals.  The residual is measured on B itself, not on the Gram matrix, so soft
    but non-zero directions (slender trusses) are told apart from exact null vectors.
    """
    n = gram.shape[0]
    k = min(k, n)
    rng = np.random.default_rng(12345)
    X = _orth(rng.standard_normal((n, k)))
    prev = None
    for sweep in range(max_sweeps):
        X = _orth(lu.solve(X))
        H = X.T @ (gram @ X)
        _, Q = np.linalg.eigh((H + H.T) / 2)
        X = X @ Q
        resid = np.linalg.norm(B @ X, axis=0) / smax
        nz, _ = decide_zero_count(resid, 1.0)
        if sweep >= 2 and prev is not None and nz == prev[0] and \
                np.allclose(np.sort(resid)[:nz], prev[1][:nz], rtol=0.5, atol=1e-14):
            break
        prev = (nz, np.sort(resid))
    # the SVD of B X separates exact null directions from soft ones inside the block
    _, Ry = la.qr(B @ X, mode="economic", check_finite=False)
    _, sy, Vyt = la.svd(Ry, check_finite=False)
    order = np.argsort(sy)
    Xo = X @ Vyt.T[:, order]
    return Xo, sy[order] / smax


def sparse_rank(A: sp.csc_matrix, want_mech: bool = True, max_basis: int = 64,
                max_modes: int = 12) -> RankResult:
    """Rank of a large sparse A without forming it dense (see module docstring).

    1. One symmetric factorisation of K - tau I (K = A A^T) gives by inertia an upper bound
       mK on m; ``max(0, rows - cols, rows - structural rank)`` is a lower bound.  Equal
       bounds settle m.
    2. Otherwise the ambiguous directions are checked on A itself: on the mechanism side
       when mK is small, else on the self-stress side (a factorisation of A^T A - tau I),
       because a tiny but non-zero singular value of A shows up on both sides at once
       while exact null vectors do not: s - m = cols - rows stays exact either way.
    """
    rows, cols = A.shape
    K = (A @ A.T).tocsc()
    smax = _sigma_max(A, K)
    tau = (K_RTOL * smax) ** 2
    res = _ldl_inertia(K, tau)
    if res is None:
        return dense_rank(A, want_stress=False)
    mK, lu = res
    sr = _structural_rank(A)
    lower_m = max(0, rows - cols, rows - sr)
    lower_s = max(0, cols - rows, cols - sr)
    route = "sparse-inertia"
    gap = math.inf
    kept = nxt = math.nan
    soft = None
    basis = None
    if mK == lower_m:
        m = mK
    elif mK <= max_basis:
        X, r = _ritz_null(A.T, K, lu, mK + 6, smax)
        m, gap = decide_zero_count(r, 1.0)
        m = max(m, lower_m)
        basis = X[:, :m]
        kept = float(r[m]) if m < r.size else math.nan
        nxt = float(r[m + 1]) if m + 1 < r.size else math.nan
        soft = X[:, m] if m < r.size else None
        route = "sparse-checked"
    else:
        G = (A.T @ A).tocsc()
        res2 = _ldl_inertia(G, tau)
        if res2 is None:
            return dense_rank(A, want_stress=False)
        sK, lu2 = res2
        if sK == lower_s:
            s = sK
            route = "sparse-inertia-both"
        elif sK <= max_basis:
            _, r = _ritz_null(A, G, lu2, sK + 6, smax)
            s, gap = decide_zero_count(r, 1.0)
            s = max(s, lower_s)
            route = "sparse-checked-stress"
        else:
            X, r = _ritz_null(A.T, K, lu, mK + 6, smax)
            m_, gap = decide_zero_count(r, 1.0)
            s = max(m_, lower_m) + cols - rows
            basis = X[:, :max(m_, lower_m)]
            route = "sparse-checked"
        m = s - (cols - rows)
    if m == 0 and not math.isfinite(kept):
        # the smallest singular values for the near-singular test (inverse iteration converges to
        # the eigenvalues of K nearest tau, i.e. the smallest ones when m = 0)
        X, r = _ritz_null(A.T, K, lu, 2, smax, max_sweeps=3)
        kept = float(r[0])
        nxt = float(r[1]) if r.size > 1 else math.nan
        soft = X[:, 0]
    if want_mech and m > 0 and (basis is None or basis.shape[1] < min(m, max_modes)):
        # a few mechanism modes for display, checked on A
        X, r = _ritz_null(A.T, K, lu, min(m, max_modes) + 6, smax, max_sweeps=12)
        good = int(np.count_nonzero(r <= 10 * ZERO_RTOL))
        basis = X[:, :min(good, m, max_modes)]
    if basis is not None and basis.shape[1]:
        basis = _orth(basis)
    elif m == 0:
        basis = np.zeros((rows, 0))
    return RankResult(rows - m, m, cols - rows + m, smax, kept, nxt, basis, None, route, soft, gap)


def decide_rank(A: sp.csc_matrix, want_mech: bool = True, want_stress: bool = False) -> RankResult:
    """Pick the route by size and return the rank decision."""
    rows, cols = A.shape
    small = rows * cols <= DENSE_MAX_ENTRIES or rows == 0 or cols == 0
    if small:
        return dense_rank(A, want_stress=True)  # the full SVD gives both bases at once
    return sparse_rank(A, want_mech=want_mech)


def null_space_basis(A: sp.spmatrix, dim: int) -> np.ndarray:
    """Orthonormal basis of null(A) with known dimension ``dim`` (states of self-stress).

    Small A: dense SVD.  Large A: the orthogonal projector onto null(A),
    P = I - A^T (A A^T)^+ A, applied to ``dim`` random vectors with one sparse
    factorisation of K + delta I (delta tiny; the right-hand sides lie in range(A), so the
    shift only touches the mechanisms) and one step of refinement, then orthonormalised
    (a randomised range finder: N. Halko, P.-G. Martinsson & J. A. Tropp (2011), SIAM
    Review 53(2)).
    """
    rows, cols = A.shape
    if dim == 0:
        return np.zeros((cols, 0))
    if rows * cols <= 4 * DENSE_MAX_ENTRIES or cols <= 400:
        M = A.toarray()
        _, _, Vt = la.svd(M, full_matrices=True)
        return Vt[cols - dim:, :].T
    A = sp.csc_matrix(A)
    K = (A @ A.T).tocsc()
    smax = _sigma_max(A, K)
    delta = (K_RTOL * smax) ** 2
    lu = spla.splu((K + delta * sp.identity(rows, format="csc")).tocsc(), permc_spec="COLAMD")
    rng = np.random.default_rng(7)
    X = rng.standard_normal((cols, dim))
    for _ in range(2):  # projection, then one refinement step
        X = X - A.T @ lu.solve(np.asarray(A @ X))
    # P R for a Gaussian R spans null(A) with a condition number of order sqrt(dim)
    return _orth(X)

"""Null-space bases on demand: both bases satisfy their defining equations on every route.

Sources: the four subspaces of the equilibrium matrix (Pellegrino & Calladine 1986: states of
self-stress span null(A), mechanisms span null(A^T)); the dimensions are checked against the
closed-loop rule for rigid frames (3 per closed loop, common practice) and against the count
identity s - m = cols - rows (Calladine 1978).
"""
from __future__ import annotations

import numpy as np
import pytest

from catalogue import rigid_frame, strip_truss
from kinestat.core.classify import classify


def _check_bases(c):
    A = c.system.A
    S, D = c.self_stress_basis, c.mechanism_basis
    assert S.shape == (A.shape[1], c.self_stress)
    assert np.abs(A @ S).max() < 1e-9 if S.size else True
    assert np.allclose(S.T @ S, np.eye(S.shape[1]), atol=1e-9)
    if c.mechanisms:
        assert D.shape == (A.shape[0], c.mechanisms)
        assert np.abs(A.T @ D).max() < 1e-9
        assert np.allclose(D.T @ D, np.eye(D.shape[1]), atol=1e-9)


@pytest.mark.parametrize("bays,storeys", [(2, 2), (6, 8), (12, 20)])
def test_frame_self_stress_basis(bays, storeys):
    # closed-loop rule: a rigid frame with fixed feet has 3 * bays * storeys redundants
    c = classify(rigid_frame(bays, storeys), bases=True)
    assert (c.mechanisms, c.self_stress) == (0, 3 * bays * storeys)
    _check_bases(c)


def test_strip_with_missing_diagonals_mechanism_basis():
    # Maxwell / Calladine: every diagonal left out of a simple truss adds one mechanism
    c = classify(strip_truss(150, cut_every=15), bases=True)
    assert c.mechanisms == 10 and c.self_stress == 0
    _check_bases(c)

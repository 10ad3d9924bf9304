"""The generalized inverse of a covariance with a structural null space (engine/core/inverse.py)."""
import numpy as np
import pytest

from permq.engine.core.inverse import generalized_inverse


def _connected_covariance(k=4):
    # the covariance of rank sums over a connected incomplete-block layout: rows sum to zero
    lam = np.array([[0, 2, 1, 1], [2, 0, 1, 2], [1, 1, 0, 1], [1, 2, 1, 0]], float)[:k, :k]
    return np.diag(lam.sum(axis=1)) - lam


@pytest.mark.parametrize("noise", [0.0, 1e-15, 2e-14, -2e-14])
def test_a_rounding_sized_null_eigenvalue_is_dropped(noise):
    c = _connected_covariance()
    ones = np.ones(4) / 2.0
    noisy = c + noise * np.abs(c).max() * np.outer(ones, ones)
    inv, rank = generalized_inverse(noisy)
    assert int(rank) == 3
    a = np.array([-7.9, 0.2, 4.1, 3.6])       # a contrast: sums to zero
    # with the sums fixed, dropping one coordinate leaves a full-rank system: the same form
    reduced = float(a[:3] @ np.linalg.solve(c[:3, :3], a[:3]))
    assert float(a @ inv @ a) == pytest.approx(reduced, rel=1e-12)


def test_a_stack_and_the_zero_matrix():
    c = _connected_covariance()
    inv, rank = generalized_inverse(np.stack([c, np.zeros((4, 4)), np.eye(4)]))
    assert rank.tolist() == [3, 0, 4]
    assert not inv[1].any()
    assert np.allclose(inv[2], np.eye(4))
    assert np.allclose(c @ inv[0] @ c, c)

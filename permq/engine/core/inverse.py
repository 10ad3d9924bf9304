"""The generalized inverse of a symmetric covariance whose null space is structural.

A permutation covariance of group sums (or of margin differences) is singular by construction:
the sums add to a constant. Rounding leaves that null eigenvalue at about 1e-15 of the largest,
on one side of a fixed cutoff or the other depending on the order of the sums, and a kept null
direction adds noise of order one to a quadratic form. The cutoff here is relative and far
above rounding (1e-9 of the largest eigenvalue), so the rank and the form are the same on every
machine."""
from __future__ import annotations

import numpy as np

RELATIVE_CUTOFF = 1e-9


def generalized_inverse(c: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(inverse on the kept eigenvalues, rank) of a symmetric matrix or a stack of them."""
    c = np.asarray(c, dtype=float)
    w, vecs = np.linalg.eigh((c + np.swapaxes(c, -1, -2)) / 2)
    top = np.maximum(w.max(axis=-1, initial=0.0), 1e-300)[..., None]
    keep = w > RELATIVE_CUTOFF * top
    scale = np.where(keep, 1.0 / np.where(keep, w, 1.0), 0.0)
    inv = (vecs * scale[..., None, :]) @ np.swapaxes(vecs, -1, -2)
    return inv, keep.sum(axis=-1)

"""The statistics of doses against a control, for many arrangements at once.

An arrangement gives each unit a group code (0 is the control); rows of codes come from
`engine/many/arrangements` (every assignment, or seeded joint draws). For each row and each
dose j = 1 .. k-1:

- values (`ranked` false): the Welch-type statistic
  (mean_j - mean_0) / sqrt(s_j^2 / n_j + s_0^2 / n_0), each pair studentized by its own
  two variances, so a wide control does not drown a tight dose.
  A pair without spread gives +-inf (0 when its means agree as well);
- ranked: the rank sum of dose j with the control alone, re-ranked for each pair (mid-ranks
  within the pair), as its Mann-Whitney count U_j = #{(i in dose j, l in control): y_i > y_l}
  + 1/2 #{... y_i = y_l}, centred at n_0 n_j / 2 and divided by its no-ties standard deviation
  sqrt(n_0 n_j (n_0 + n_j + 1) / 12), a scale fixed over the arrangements.

Rows are taken a chunk at a time, so memory stays bounded for any number of arrangements.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

CHUNK_CELLS = 1 << 21          # rows x units x groups held at once
ZERO_VARIANCE = 1e-10          # a group's variance below this (values scaled to sd 1) is none


@dataclass(frozen=True)
class Layout:
    """What the statistics need of the data, computed once."""

    ranked: bool               # pairwise-ranked sums (else the Welch-type t of the values)
    sizes: np.ndarray          # units per group, control first
    y: np.ndarray              # means: (D, N) values centred and scaled; ranks: (N,) values
    order: np.ndarray = None   # ranks: units in increasing order of value
    block_start: np.ndarray = None   # ranks: per sorted position, where its tie block starts
    block_end: np.ndarray = None     # ... and ends (exclusive)


def layout(values, codes, ranked: bool) -> Layout:
    """values: (N,) for one data set, or (D, N) for several sharing one design (Welch-type t;
    `ranked`: the pairwise-ranked sums, one data set)."""
    codes = np.asarray(codes)
    k = int(codes.max()) + 1
    sizes = np.bincount(codes, minlength=k)
    v = np.asarray(values, dtype=float)
    if not ranked:
        y = np.atleast_2d(v)
        centre = y.mean(axis=1, keepdims=True)
        scale = y.std(axis=1, keepdims=True)
        scale[scale == 0] = 1.0
        return Layout(False, sizes, (y - centre) / scale)
    order = np.argsort(v, kind="stable")
    sv = v[order]
    new = np.r_[True, sv[1:] != sv[:-1]]
    block = np.cumsum(new) - 1
    starts = np.flatnonzero(new)
    ends = np.r_[starts[1:], len(sv)]
    return Layout(True, sizes, v, order, starts[block], ends[block])


def statistics(rows, lay: Layout) -> np.ndarray:
    """(D, R, k-1) for the Welch-type t (D data sets), (1, R, k-1) ranked: one column per dose."""
    rows = np.asarray(rows)
    k = len(lay.sizes)
    N = rows.shape[1]
    step = max(1, CHUNK_CELLS // max(1, N * k * (1 if lay.ranked else lay.y.shape[0])))
    parts = [(_steel if lay.ranked else _welch)(rows[lo:lo + step], lay)
             for lo in range(0, rows.shape[0], step)]
    return np.concatenate(parts, axis=1) if parts else np.zeros((1, 0, k - 1))


def _welch(rows, lay: Layout) -> np.ndarray:
    r, N = rows.shape
    k = len(lay.sizes)
    D = lay.y.shape[0]
    if D == 1:                                    # one data set: sums by counting
        at = (np.arange(r)[:, None] * k + rows).ravel()
        y = np.broadcast_to(lay.y[0], (r, N)).ravel()
        s = np.bincount(at, weights=y, minlength=r * k).reshape(1, r, k)
        q = np.bincount(at, weights=y * y, minlength=r * k).reshape(1, r, k)
    else:                                         # several data sets: one matrix product
        onehot = (rows[:, :, None] == np.arange(k)).astype(float)          # (r, N, k)
        flat = onehot.transpose(1, 0, 2).reshape(N, r * k)
        s = (lay.y @ flat).reshape(D, r, k)
        q = ((lay.y ** 2) @ flat).reshape(D, r, k)
    n = lay.sizes.astype(float)
    mean = s / n
    with np.errstate(invalid="ignore", divide="ignore"):
        var = (q - s * mean) / (n - 1)
    var = np.where(var < ZERO_VARIANCE, 0.0, var)
    return welch_from_moments(mean, var, n)


def welch_from_moments(mean, var, n) -> np.ndarray:
    """(..., k) group means and variances -> (..., k-1) Welch-type t of each dose vs group 0."""
    diff = mean[..., 1:] - mean[..., :1]
    se2 = var[..., 1:] / n[1:] + var[..., :1] / n[0]
    with np.errstate(invalid="ignore", divide="ignore"):
        t = diff / np.sqrt(se2)
    t = np.where(se2 > 0, t, np.where(np.abs(diff) > 1e-12, np.copysign(np.inf, diff), 0.0))
    return t


def _steel(rows, lay: Layout) -> np.ndarray:
    r, N = rows.shape
    k = len(lay.sizes)
    cs = rows[:, lay.order]                                   # codes in increasing value
    cum = np.zeros((r, N + 1), dtype=np.int32)
    np.cumsum(cs == 0, axis=1, out=cum[:, 1:])
    # per unit: control units below its tie block, plus half those tied with it
    v = (cum[:, lay.block_start] + cum[:, lay.block_end]) * 0.5
    at = (np.arange(r)[:, None] * k + cs).ravel()
    u = np.bincount(at, weights=v.ravel(), minlength=r * k).reshape(r, k)[:, 1:]
    n0, nj = float(lay.sizes[0]), lay.sizes[1:].astype(float)
    centre = n0 * nj / 2.0
    sd = np.sqrt(n0 * nj * (n0 + nj + 1) / 12.0)
    return ((u - centre) / sd)[None, :, :]


def mann_whitney(x_dose, x_control) -> float:
    """U = #{dose above control} + 1/2 #{tied}, for one pair of samples."""
    a = np.asarray(x_dose, float)[:, None]
    b = np.asarray(x_control, float)[None, :]
    return float(np.sum(a > b) + 0.5 * np.sum(a == b))

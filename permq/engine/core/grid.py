"""The integer grid, centring and degeneracy: how every engine turns recorded numbers into exact
integers, written once.

Data recorded to d decimals are integers after scaling by 10^d. Floating point holds each such
value to within half a unit in its last place, so the grid is decided on the data centred on
one of their own values (exact in floating point for values close together: Sterbenz) and
scaled by 10^d, with one tolerance:

    |scaled - nearest integer| <= GRID_ULPS units in the last place of the largest |value|,
    measured on the scaled data (GRID_ULPS * eps * 10^d * max |x|).

The decimals tried run from 0 to MAX_DECIMALS; a number of decimals at which that tolerance
would exceed GRID_MAX_TOLERANCE (a thousandth of the grid step) is not tried, since floating
point can no longer tell the grid from data off it. A grid found is checked once more: origin
+ step * integers must give back every value within the same tolerance. Offsets (100000.001,
123456.01) therefore never change the grid, and so never the exact p-value.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Optional

import numpy as np

MAX_DECIMALS = 6
GRID_ULPS = 16
GRID_MAX_TOLERANCE = 1e-3           # in units of the grid step
_EPS = float(np.finfo(float).eps)
_INT_LIMIT = 2.0 ** 53              # integers held exactly in double precision


@dataclass(frozen=True)
class Grid:
    """Values written as origin + step * integers, step = unit / 10^decimals (exactly)."""

    integers: np.ndarray     # non-negative int64, the smallest 0
    origin: float            # the smallest value
    unit: int                # the step in units of 10^-decimals (the integers' gcd)
    decimals: int
    anchor: int = 0          # the smallest value in units of 10^-decimals (exactly)

    @property
    def step(self) -> float:
        return self.unit / 10.0 ** self.decimals

    def differences(self, k) -> np.ndarray:
        """step * k for integers k, correctly rounded (equal |k| give equal magnitudes)."""
        return (np.asarray(k, dtype=np.int64) * self.unit) / 10.0 ** self.decimals

    def means(self, z_sums, count: int) -> np.ndarray:
        """The mean of `count` values whose integers sum to z_sums, correctly rounded."""
        num = count * self.anchor + np.asarray(z_sums, dtype=np.int64) * self.unit
        return num / (count * 10.0 ** self.decimals)


def reference_value(values) -> float:
    """The middle value of the data (a data value, so centring on it is exact for close values)."""
    a = np.asarray(values, dtype=float).ravel()
    return float(np.partition(a, (a.size - 1) // 2)[(a.size - 1) // 2])


def centred(values) -> np.ndarray:
    """The values minus their middle value: no offset left to drown their differences."""
    a = np.asarray(values, dtype=float)
    if a.size == 0:
        return a.copy()
    return a - reference_value(a)


def grid_tolerance(values, decimals: int) -> float:
    """The grid tolerance on the scaled data (see the module's rule)."""
    top = float(np.max(np.abs(np.asarray(values, dtype=float)), initial=0.0))
    return GRID_ULPS * _EPS * 10.0 ** decimals * max(top, 1.0 / 10.0 ** decimals)


def integer_grid(values, max_decimals: int = MAX_DECIMALS) -> Optional[Grid]:
    """The coarsest grid the values lie on as recorded, or None when they lie on none."""
    a = np.asarray(values, dtype=float).ravel()
    if a.size == 0 or not np.all(np.isfinite(a)):
        return None
    ref = reference_value(a)
    c = a - ref
    for d in range(max_decimals + 1):
        tol = grid_tolerance(a, d)
        if tol > GRID_MAX_TOLERANCE:
            return None
        scale = 10.0 ** d
        ref_scaled = ref * scale
        if abs(np.round(ref_scaled) - ref_scaled) > tol:
            continue
        scaled = c * scale
        rounded = np.round(scaled)
        if np.max(np.abs(rounded), initial=0.0) >= _INT_LIMIT:
            return None
        if not np.all(np.abs(scaled - rounded) <= tol):
            continue
        ints = rounded.astype(np.int64)
        low = int(ints.min())
        shifted = ints - low
        unit = int(np.gcd.reduce(shifted)) or 1        # (zeros leave the gcd alone)
        anchor = int(np.round(ref_scaled)) + low          # the smallest value, in 10^-d units
        grid = Grid(shifted // unit, anchor / scale, unit, d, anchor)
        if _reproduces(grid, a, tol / scale):
            return grid
        return None
    return None


def _reproduces(grid: Grid, a: np.ndarray, tol: float) -> bool:
    """origin + step * integers gives back the data within the grid tolerance."""
    back = grid.origin + grid.differences(grid.integers)
    return bool(np.all(np.abs(back - a) <= tol + 4 * _EPS * np.abs(a)))


def common_grid(*arrays) -> Optional[Grid]:
    """One grid for several arrays together (their integers stacked in order)."""
    return integer_grid(np.concatenate([np.ravel(np.asarray(x, dtype=float)) for x in arrays]))


def exact_difference(a, b) -> np.ndarray:
    """a - b formed on the data's decimal grid as integers, then written once in floating point.

    0.3 - 0.4 and 0.5 - 0.4 come out as -0.1 and 0.1 exactly mirrored, so ties in |a - b| are
    ties; off a grid the difference is the floating-point one.
    """
    a = np.asarray(a, dtype=float)
    b = np.broadcast_to(np.asarray(b, dtype=float), a.shape)
    grid = common_grid(a, b)
    if grid is None:
        return a - b
    z = grid.integers
    return grid.differences(z[:a.size] - z[a.size:]).reshape(a.shape)


# ---------------------------------------------------------------- degeneracy

DEGENERACY_RTOL = 1e-12


def is_constant(values) -> bool:
    """Every value the same (an exact comparison: centred data are then all zero)."""
    a = np.asarray(values, dtype=float).ravel()
    return a.size == 0 or bool(np.all(a == a[0]))


def negligible(part, whole: float):
    """A sum of squares of centred data that is zero up to rounding, beside the whole it is
    a part of (DEGENERACY_RTOL of it); elementwise for an array of parts."""
    out = np.asarray(part) <= DEGENERACY_RTOL * max(float(whole), 1e-300)
    return bool(out) if out.ndim == 0 else out

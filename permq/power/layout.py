"""The design of a power statement at any number of units a group, and its errors.

- `described(layout, ...)`: a layout written before the data exist (`groups 6, 6`, `pairs 10`,
  `sample 12`) becomes an inline comparison node that the binder binds as usual, so the
  family, the alternative and the level are checked as in any analysis. Its values are evenly
  spaced and untied; only the layout matters, since every test here is unchanged by location
  and scale and the errors are simulated.
- `resized(design, sizes)`: the same design with other group sizes (two samples, pairs, one
  sample, three or more unordered groups without blocks).
- `Errors`: the simulated errors of unit j of group g come from a generator seeded by
  (seed, g, j), so a design with more units keeps the errors of the smaller one and adds
  columns: every n of a search sees the same data sets, grown (common random numbers).
"""
from __future__ import annotations

import dataclasses

import numpy as np

from ..bind import designs
from ..errors import BindError, PlanError
from ..robustness import laws as L
from ..syntax import nodes as n

MAX_UNITS = 500          # a group, in a search


def described(layout: n.Layout) -> n.Compare:
    """The inline comparison a described layout stands for."""
    span = layout.span
    if layout.shape == "groups":
        if any(s < 2 for s in layout.sizes):
            raise BindError("each group needs at least 2 units", span)
        lists = [n.ListOperand(span, tuple(_spaced(s, g))) for g, s in enumerate(layout.sizes)]
        return n.Compare(span, n.Versus(span, tuple(lists)), layout.options)
    size = layout.sizes[0]
    if size < 2:
        raise BindError(f"{layout.shape} needs at least 2 units", span)
    values = tuple(_spaced(size, 0))
    if layout.shape == "pairs":
        second = tuple(v * 0.5 for v in values[::-1])
        return n.Compare(span, n.Versus(span, (n.ListOperand(span, values),
                                               n.ListOperand(span, second))),
                         layout.options + (n.Option(span, "paired"),))
    return n.Compare(span, n.Versus(span, (n.ListOperand(span, values),
                                           n.ValueOperand(span, 0.0))), layout.options)


def _spaced(size: int, g: int) -> list:
    return [round(0.1 * (g + 1) + i + 0.37 * g, 2) for i in range(size)]


def sizes_of(design) -> tuple:
    if isinstance(design, designs.TwoSampleDesign):
        return (len(design.x), len(design.y))
    if isinstance(design, designs.OneSampleDesign):
        return (len(design.d),)
    if isinstance(design, designs.GroupsDesign):
        return tuple(int(c) for c in np.bincount(design.groups))
    if isinstance(design, designs.AssociationDesign):
        return (len(design.y),)
    return ()


def can_resize(design) -> str:
    """"" when the design can take other sizes, else why not."""
    if isinstance(design, (designs.TwoSampleDesign, designs.OneSampleDesign)):
        return ""
    if isinstance(design, designs.GroupsDesign) and design.kind == "k-sample":
        return ""
    return (f"other sizes are not available for {design.kind} designs here; "
            "power at the pilot's own sizes needs no 'n'")


def resized(design, sizes: tuple):
    """The design with `sizes` units a group (one number: every group)."""
    why = can_resize(design)
    if why:
        raise PlanError(why)
    k = len(sizes_of(design))
    if len(sizes) == 1:
        sizes = sizes * k
    if len(sizes) != k:
        raise BindError(f"'n' gives {len(sizes)} sizes for {k} groups; give one (every "
                        f"group) or {k}")
    if min(sizes) < 2:
        raise BindError("each group needs at least 2 units")
    if isinstance(design, designs.TwoSampleDesign):
        return dataclasses.replace(design, x=_stretch(design.x, sizes[0]),
                                   y=_stretch(design.y, sizes[1]))
    if isinstance(design, designs.OneSampleDesign):
        return dataclasses.replace(design, d=_stretch(design.d, sizes[0]))
    values = np.concatenate([_stretch(design.values[design.groups == g], s)
                             for g, s in enumerate(sizes)])
    groups = np.repeat(np.arange(k), sizes)
    return dataclasses.replace(design, values=values, groups=groups)


def allocation(sizes) -> tuple:
    """Each group's size over the first's (a search keeps it): () when they are equal or
    there is one group."""
    sizes = tuple(int(s) for s in sizes or ())
    if len(sizes) < 2 or len(set(sizes)) == 1:
        return ()
    return tuple(s / sizes[0] for s in sizes)


def allocated(k: int, ratio: tuple) -> tuple:
    """The sizes with k in the first group and the others in `ratio` (at least 2 a group)."""
    if not ratio:
        return (k,)
    return tuple(max(2, int(round(k * r))) for r in ratio)


def _stretch(v: np.ndarray, size: int) -> np.ndarray:
    """`size` values spread like v's (its quantiles), so the layout's spread is kept."""
    v = np.sort(np.asarray(v, dtype=float))
    if len(v) == size:
        return v.copy()
    return np.quantile(v, (np.arange(size) + 0.5) / size)


def group_pattern(problem, pattern: np.ndarray) -> np.ndarray:
    """The pattern's value for each group (constant within groups in these layouts)."""
    sizes = np.bincount(problem.codes)
    return np.bincount(problem.codes, weights=pattern) / sizes


class Errors:
    """Errors of every data set, unit by unit, for one law (or the pilot's residuals)."""

    def __init__(self, law, kind: str, centre: str, datasets: int, seed: int,
                 residuals=None):
        self.law, self.kind, self.centre = law, kind, centre
        self.datasets, self.seed = datasets, seed
        self.residuals = residuals          # pilot: standardised residuals to resample
        self._columns: dict = {}

    def column(self, g: int, j: int) -> np.ndarray:
        key = (g, j)
        if key not in self._columns:
            rng = np.random.default_rng([self.seed, g, j])
            self._columns[key] = self._draw(rng)
        return self._columns[key]

    def _draw(self, rng) -> np.ndarray:
        m = self.datasets
        if self.residuals is not None:
            e = rng.choice(self.residuals, size=m)
            if self.kind in ("paired", "one-sample"):      # symmetric about zero, as flips need
                e = e * (rng.integers(0, 2, m) * 2.0 - 1.0)
            return e
        one = np.ones(1)
        if self.kind == "paired":
            return ((self.law.errors(rng, m, one) - self.law.errors(rng, m, one))
                    / np.sqrt(2.0))[:, 0]
        e = self.law.errors(rng, m, one)[:, 0]
        if self.kind == "one-sample":
            e = e - L.centre(self.law.key, self.centre)
        return e

    def matrix(self, codes: np.ndarray) -> np.ndarray:
        """(datasets, N) errors for units with these group codes (in order)."""
        seen: dict = {}
        cols = []
        for g in codes:
            j = seen.get(int(g), 0)
            seen[int(g)] = j + 1
            cols.append(self.column(int(g), j))
        return np.column_stack(cols)

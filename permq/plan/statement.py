"""What a statement costs beyond its test's algorithm: the estimate and its interval, the
normal-theory counterpart, the diagnostics, the picture and reading the data in.

`parts(design, chosen, picture)` prices each as a `Part` (operations and peak bytes, like a
`Candidate`), from the design alone, before anything runs; the plan adds them to the chosen
algorithm, so `explain` and the result's `estimated_seconds` speak for the whole statement.
Each part's operations are scaled by its own measured factor (calibration.json, key
"statement/<part>", written by bench/calibrate.py).
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..bind import designs as d
from .cost import OPS_PER_SECOND, calibration
from .sizes import big

# pictures of Monte Carlo results draw this many arrangements afresh (robustness/pictures.py)
PICTURE_DRAWS = 20_000


@dataclass(frozen=True)
class Part:
    key: str            # "hodges-lehmann", "diagnostics", ... (calibration key)
    what: str           # in words, as explain prints it
    ops: float
    memory: float = 0.0

    @property
    def seconds(self) -> float:
        return self.ops * calibration().get(("statement", self.key), 1.0) / OPS_PER_SECOND


def parts(design, chosen, picture: bool = False) -> tuple:
    """Every part of the statement's work besides the chosen algorithm."""
    n = units(design)
    out = [Part("setup", "reading the data, scores and summaries", 60.0 * n + 2e4, 48.0 * n)]
    out += _estimate_and_normal(design)
    out.append(_diagnostics(design, n))
    if picture:
        out.append(_picture(design, chosen, n))
    return tuple(p for p in out if p is not None)


def units(design) -> int:
    if isinstance(design, d.TwoSampleDesign):
        return len(design.x) + len(design.y)
    if isinstance(design, d.OneSampleDesign):
        return len(design.d)
    if isinstance(design, (d.GroupsDesign, d.ManyDesign)):
        return len(design.values)
    if isinstance(design, d.AssociationDesign):
        return len(design.y)
    if isinstance(design, d.TableDesign):
        return int(np.asarray(design.table).size)
    return 0


def _estimate_and_normal(design) -> list:
    fam = design.settings.family
    if isinstance(design, d.TwoSampleDesign):
        n1, n2 = len(design.x), len(design.y)
        normal = Part("normal", "normal theory", 40.0 * (n1 + n2))
        if fam == "normal-scores":     # its shift is the median of the pairwise differences
            pairs = float(n1) * n2
            return [normal, Part("pairs", "Hodges-Lehmann shift (pairwise differences)",
                                 pairs * 2, pairs * 8 * 3)]
        if fam != "ranks":
            return [normal]
        from ..engine.rankintervals import EXACT_LAW_OPS, mann_whitney_ops

        pairs = float(n1) * n2
        law = mann_whitney_ops(n1, n2)
        law = law if law <= EXACT_LAW_OPS else 0.0
        return [Part("pairs", "Hodges-Lehmann shift and interval (pairwise differences)",
                     pairs * 2, pairs * 8 * 3),
                Part("rank-law", "the no-ties Mann-Whitney law for the interval", law,
                     8.0 * (pairs + 1) * 3 if law else 0.0),
                Part("pairs", "normal theory (its interval from the pairwise differences)",
                     pairs * 2, pairs * 8 * 3)]
    if isinstance(design, d.OneSampleDesign):
        n = len(design.d)
        if fam != "ranks":
            return [Part("normal", "normal theory and the estimate", 40.0 * n)]
        walsh = n * (n + 1) / 2.0
        law = n * walsh / 1.5 if n <= 400 else 0.0        # counts of subset sums of 1..n
        return [Part("pairs", "Hodges-Lehmann pseudo-median and interval (Walsh averages)",
                     walsh * 4, walsh * 8 * 5),
                Part("rank-law", "the no-ties signed-rank law for the interval", law,
                     8.0 * (walsh + 1) * 3 if law else 0.0),
                Part("pairs", "normal theory (its interval from the Walsh averages)",
                     walsh * 4, walsh * 8 * 5)]
    if isinstance(design, d.GroupsDesign):
        n = len(design.values)
        out = [Part("normal", "normal theory", 60.0 * n)]
        if design.blocks is not None and fam == "means":
            # means within blocks: least squares on block and treatment dummies
            # (normal/blocks.py additive_f, stratified_mean_t), two fits; LAPACK's n p^2
            # runs at about 0.1-0.3 ns each on two cores (numpy.linalg.lstsq measured at
            # n p^2 from 2e3 to 9e8), each call costs about 40 us; the dummies and the full
            # model's copy of them are held; LAPACK's work is not in numpy's
            p = float(len(np.unique(design.blocks)) + design.groups.max() + 1)
            out.append(Part("least-squares", "normal theory's least squares on block and "
                                             "treatment dummies",
                            0.05 * n * p * p + 8.0 * n * p + 1.6e4, 2.0 * 8.0 * n * p))
        if design.ordered and design.blocks is None:
            from ..engine.core.counting import multinomial
            from ..engine.core.limits import limits_for
            from ..engine.ksample.sums import ROWS
            from ..engine.ordered import _SLOPE_OPS_PER_ITEM

            sizes = np.bincount(design.groups)
            listed = big(multinomial(sizes))
            # listed when it fits the statement's limits (engine/ordered.py, slope_estimate)
            if limits_for(design.settings).fits(listed * n * _SLOPE_OPS_PER_ITEM, listed * 8.0 * 3):
                # the ratios held three times (their chunks, joined, sorted) and the listing's
                # chunks of up to ROWS assignments, their remaining units and sums
                chunk = min(listed, float(ROWS)) * n * 8.0 * 3
                out.append(Part("listing", "the exact trend-slope interval (every assignment)",
                                listed * n, listed * 8.0 * 3 + chunk))
        return out
    if isinstance(design, d.AssociationDesign):
        n = len(design.y)
        per = 30.0 * math.log2(max(n, 2)) if fam == "kendall" else 40.0
        return [Part("normal", "normal theory", per * n)]
    if isinstance(design, d.TableDesign):
        t = np.asarray(design.table)
        support = float(min(t.sum(axis=1).min(), t.sum(axis=0).min()) + 1)
        est = support * 3000.0 if t.shape == (2, 2) and design.form == "table" else 0.0
        return [Part("normal", "normal theory and the estimate", 200.0 * t.size + est)]
    return []


def _diagnostics(design, n: int):
    if isinstance(design, (d.TableDesign, d.ManyDesign)):
        return None
    k = int(design.groups.max()) + 1 if isinstance(design, d.GroupsDesign) else 2
    return Part("diagnostics", "diagnostics (residuals, skewness, spread)",
                n * (20.0 + 4.0 * k * k), n * (k + 4) * 8.0 * 3)


def _picture(design, chosen, n: int) -> Part:
    if chosen.exact:
        return Part("picture", "the null picture (from the exact law)", 1e5, 1e6)
    return Part("picture", f"the null picture ({PICTURE_DRAWS:,} fresh arrangements)",
                PICTURE_DRAWS * n * 6.0, PICTURE_DRAWS * n * 8.0 * 3)

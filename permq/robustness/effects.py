"""The observed effect of a design, in the data's units, with its name in words: what a
family's robustness check simulates at (`shift` none). Each takes the bound design and returns
(effect, words); a family's `Check` names one, or the layout's own effect is used (the slope,
the range of the group means, the treatment effects adjusted for blocks).
"""
from __future__ import annotations

import numpy as np


def mean_difference(d):
    return float(d.x.mean() - d.y.mean()), f"difference in means {d.effect}"


def hodges_lehmann_shift(d):
    return float(np.median(np.subtract.outer(d.x, d.y))), f"Hodges-Lehmann shift {d.effect}"


def median_difference(d):
    return float(np.median(d.x) - np.median(d.y)), f"difference in medians {d.effect}"


def mean(d):
    return float(d.d.mean()), f"mean of {d.effect}"


def pseudo_median(d):
    v = d.d
    i, j = np.triu_indices(len(v))
    return float(np.median((v[i] + v[j]) / 2)), f"Hodges-Lehmann pseudo-median of {d.effect}"


def median(d):
    return float(np.median(d.d)), f"median of {d.effect}"

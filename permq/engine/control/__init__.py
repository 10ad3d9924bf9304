"""Doses against a control.

    statistics.py   per-arrangement statistics: Welch-type t per dose, pairwise-ranked sums
    manytoone.py    every dose against the control, all units permuted together; max-T
    intervals.py    simultaneous intervals from the single-step critical value
    trend.py        the exact law of a linear trend statistic (dynamic programming)
    stepdown.py     the step-down trend for the lowest effective dose
"""

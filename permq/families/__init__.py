"""Test families: each declares itself once in `registry` (its keyword, kinds, plan, execute,
counterpart, estimate, robustness form, help), in a module of this package of its own.

    registry.py     the declarations' shape, the list of declaring modules, lookups
    two_sample.py   two groups          one_sample.py  paired data, one sample
    k_sample.py     three or more       ordered.py     ordered groups
    blocked.py      within blocks       association.py relate
    tables.py       count               many.py        several tests at once
    two_proportions.py  two proportions strata.py      within strata (count)
    rates.py        event rates         dose_response.py  a binary response (relate)
    results.py      the further tests and estimates the count families add
    scale.py        two-sample scale tests
"""

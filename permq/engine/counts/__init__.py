"""Exact tests for binary outcomes and events.

    conditional.py    one-parameter exponential families on a discrete support: exact
                      p-values, conditional MLE, median unbiased estimate, exact interval
    logdp.py          counting in logarithms: convolutions, hypergeometric weights, the law of
                      a score sum of chosen units
    strata.py         stratified 2 x 2 tables: the common odds ratio (test and estimate)
    homogeneity.py    Zelen's exact test of homogeneous odds ratios (network over strata)
    trend.py          trend in binary outcomes (strata, doses): the conditional logistic test
                      and slope
    unconditional.py  two binomials: Barnard's and Boschloo's exact unconditional tests
    nuisance.py       the supremum over a nuisance proportion
    riskintervals.py  exact unconditional intervals for the risk difference and ratio
    rates.py          Poisson counts over exposures: one rate, two rates
"""

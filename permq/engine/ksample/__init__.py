"""Exact and Monte Carlo engines for three or more unordered groups.

Every statistic here is a quadratic one: it is an increasing function of the between-group
sum of squares of some scores a_i,

    SSB = sum_g S_g^2 / n_g - (sum_i a_i)^2 / N,     S_g = sum of the scores in group g,

so that every exact p-value is P(SSB >= ssb_obs) under random assignment of the N items to
groups of the observed sizes (each of the N! / (n_1! ... n_k!) assignments equally likely):

- "means": the values themselves; one-way F = (SSB/(k-1)) / ((SST-SSB)/(N-k)).
- "ranks": mid-ranks; Kruskal-Wallis H = (N-1) SSB / SST, which is the usual H divided by the
  tie correction 1 - sum(t^3 - t) / (N^3 - N) (common practice).
- "normal-scores": van der Waerden scores Phi^-1(r / (N+1)) of the mid-ranks r;
  statistic (N-1) SSB / SST.
- "medians": 1 above the pooled median, 0 otherwise (values equal to the median count as
  not above); statistic N SSB / SST, the Pearson chi-square of the 2 x k table of counts.

The statistic is already two-sided: any alternative is read as its upper tail.

Algorithms (keys as in `Candidate.algorithm`):
- "enumeration": list every assignment (`enumerate_group_sums`).
- "dp-sums": scores on an integer grid (doubled mid-ranks always are; values recorded to a few
  decimals are) are counted, not listed: tie blocks are added one at a time and the state is
  the vector of (count, score sum) per group; groups of equal size are interchangeable for a
  quadratic statistic, so states that differ only by permuting them are merged.
- "dp-hypergeometric": the median test's tables of counts above the median, probabilities
  from the multivariate hypergeometric law, one group at a time.
- "monte-carlo": random assignments in seeded blocks (`sample_group_sums`).

Modules: `sums` (design arrays; group sums listed or sampled), `counting` (the dynamic
programmes and their costs), `dense` (three groups on dense tables of score sums),
`quadratic` (the families and their engine call).
"""
from .counting import count_sum_squares
from .quadratic import (FAMILIES, MEANS, MEDIANS, NORMAL_SCORES, RANKS, QuadraticFamily,
                        enumeration_candidate, monte_carlo_candidate)
from .sums import design, enumerate_group_sums, sample_group_sums

__all__ = ["FAMILIES", "MEANS", "MEDIANS", "NORMAL_SCORES", "RANKS", "QuadraticFamily",
           "count_sum_squares", "design", "enumerate_group_sums", "enumeration_candidate",
           "monte_carlo_candidate", "sample_group_sums"]

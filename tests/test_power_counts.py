"""`power count ...`: exact power of the count forms, summed over every binomial outcome.

Checks:
- exact binomial power by summation, written here on its own: each outcome's p-value from
  scipy.stats.binomtest (one proportion) and scipy.stats.fisher_exact (two proportions, Fisher's
  test), the binomial probabilities of the outcomes where p <= level summed;
- Boschloo's test: each outcome's p written here by brute force (its region: the outcomes whose
  one-sided Fisher p is no larger; the supremum over a fine grid of the common proportion);
- the arcsine formula against statsmodels NormalIndPower (Cohen's h; ratio 0 for one sample);
- the normal-theory test's summed power against the same formula at large n (it is the
  formula's asymptote; within 0.02 at 150 a group, common practice);
- the smallest n against the published sample-size formulas for two proportions: the pooled z
  test's (Fleiss, Statistical Methods for Rates and Proportions, 2nd ed., 1981, eq. 3.14; the
  equation number from memory) and its continuity-corrected form, which approximates Fisher's
  exact test (Casagrande, Pike & Smith 1978, "An improved approximate formula for calculating
  sample sizes for comparing two binomial distributions", Biometrics 34:483-486).
"""
from __future__ import annotations

import jsonschema
import numpy as np
import pytest

import permq
from permq.contract import schema
from permq.power.result import PowerResult


def _power(text):
    out = permq.run(text)[-1]
    assert isinstance(out, PowerResult), out
    return out


def _binomial_sum(n, p, p0, alpha, alternative):
    from scipy import stats

    alt = {"two-sided": "two-sided", "higher": "greater", "lower": "less"}[alternative]
    return sum(stats.binom.pmf(k, n, p) for k in range(n + 1)
               if stats.binomtest(k, n, p0, alternative=alt).pvalue <= alpha)


@pytest.mark.parametrize("n, p, p0, alternative", [(20, 0.7, 0.5, "two-sided"),
                                                   (17, 0.3, 0.6, "lower"),
                                                   (33, 0.7, 0.5, "higher")])
def test_one_proportion_power_is_the_exact_binomial_sum(n, p, p0, alternative):
    r = _power(f"power count proportion {p} vs {p0} n {n} alternative {alternative}")
    row = r.rows[0]
    assert row.permutation.value == pytest.approx(_binomial_sum(n, p, p0, 0.05, alternative),
                                                  abs=1e-12)
    assert row.permutation.se == 0 and row.arrangements == n + 1


def _fisher_sum(n1, n2, p1, p2, alpha):
    from scipy import stats

    total = 0.0
    for a in range(n1 + 1):
        for b in range(n2 + 1):
            if stats.fisher_exact([[a, n1 - a], [b, n2 - b]]).pvalue <= alpha:
                total += stats.binom.pmf(a, n1, p1) * stats.binom.pmf(b, n2, p2)
    return total


@pytest.mark.parametrize("n1, n2, p1, p2", [(10, 20, 0.2, 0.6), (12, 12, 0.5, 0.1)])
def test_fisher_power_is_the_exact_sum_over_both_binomials(n1, n2, p1, p2):
    r = _power(f"power count proportions {p1} vs {p2} n {n1}, {n2} using fisher")
    assert r.rows[0].sizes == (n1, n2)
    assert r.rows[0].permutation.value == pytest.approx(_fisher_sum(n1, n2, p1, p2, 0.05),
                                                        abs=1e-12)


def _boschloo_p(n1, n2, grid=4001):
    """Every outcome's one-sided (higher) Boschloo p by brute force."""
    from scipy import stats

    out = np.empty((n1 + 1, n2 + 1))
    fisher = np.array([[stats.hypergeom.sf(a - 1, n1 + n2, a + b, n1)
                        for b in range(n2 + 1)] for a in range(n1 + 1)])
    pis = np.linspace(0, 1, grid)
    la = np.array([stats.binom.pmf(a, n1, pis) for a in range(n1 + 1)])
    lb = np.array([stats.binom.pmf(b, n2, pis) for b in range(n2 + 1)])
    for a in range(n1 + 1):
        for b in range(n2 + 1):
            region = fisher <= fisher[a, b] * (1 + 1e-7)
            probs = np.einsum("ag,bg,ab->g", la, lb, region)
            out[a, b] = probs.max()
    return out


def test_boschloo_power_matches_a_brute_force_of_its_p_values():
    from scipy import stats

    n1, n2, p1, p2 = 7, 6, 0.7, 0.2
    p = _boschloo_p(n1, n2)
    weights = np.outer(stats.binom.pmf(np.arange(n1 + 1), n1, p1),
                       stats.binom.pmf(np.arange(n2 + 1), n2, p2))
    margin = np.abs(p - 0.05).min()
    assert margin > 1e-4                 # no outcome so near the level that a grid decides it
    expected = float(weights[p <= 0.05].sum())
    r = _power(f"power count proportions {p1} vs {p2} n {n1}, {n2} alternative higher")
    assert r.rows[0].permutation.value == pytest.approx(expected, abs=1e-12)
    assert 0.3 < expected < 0.9


@pytest.mark.parametrize("text, es, n1, ratio, alternative", [
    ("power count proportions 0.2 vs 0.6 n 15", None, 15, 1.0, "two-sided"),
    ("power count proportions 0.2 vs 0.6 n 10, 25", None, 10, 2.5, "two-sided"),
    ("power count proportions 0.6 vs 0.35 n 30 alternative higher", None, 30, 1.0, "larger"),
    ("power count proportion 0.7 vs 0.5 n 40", None, 40, 0.0, "two-sided"),
])
def test_formula_is_statsmodels_normal_power_of_cohens_h(text, es, n1, ratio, alternative):
    from statsmodels.stats.power import NormalIndPower
    from statsmodels.stats.proportion import proportion_effectsize

    r = _power(text)
    p, q = (0.7, 0.5) if "proportion " in text else \
        tuple(float(w) for w in text.split("proportions ")[1].split(" n ")[0].split(" vs "))
    h = proportion_effectsize(p, q)
    closed = NormalIndPower().power(h, n1, 0.05, ratio=ratio, alternative=alternative)
    assert r.rows[0].formula == pytest.approx(closed, abs=1e-9)


def test_normal_theory_power_approaches_the_formula_at_large_n():
    from statsmodels.stats.power import NormalIndPower
    from statsmodels.stats.proportion import proportion_effectsize

    r = _power("power count proportions 0.3 vs 0.45 n 150 using fisher")
    closed = NormalIndPower().power(proportion_effectsize(0.3, 0.45), 150, 0.05)   # 0.68
    row = r.rows[0]
    assert abs(row.normal.value - closed) < 0.02
    # the exact conditional test is the more conservative, by a little at this n
    assert closed - 0.06 < row.permutation.value <= row.normal.value + 1e-12


def test_scan_gives_the_first_n_reaching_the_target():
    r = _power("power count proportion 0.7 vs 0.5 for power 80% alternative higher")
    k = r.needed["permutation"]
    assert k == min(n for n in range(2, 60) if _binomial_sum(n, 0.7, 0.5, 0.05, "higher") >= 0.8)
    assert any("dips below" in w for w in r.warnings)      # 38 falls short again (saw-tooth)


def test_scan_keeps_the_allocation_ratio():
    r = _power("power count proportions 0.2 vs 0.6 n 10, 20 for power 80% using fisher")
    for row in r.rows:
        assert row.sizes[1] == 2 * row.sizes[0]
    k = r.needed["permutation"]
    assert _fisher_sum(k, 2 * k, 0.2, 0.6, 0.05) >= 0.8 > _fisher_sum(k - 1, 2 * k - 2, 0.2, 0.6,
                                                                      0.05)


def test_pilot_counts_give_the_proportions():
    r = _power("power count 3 of 10 vs 7 of 10 n 12 using fisher")
    assert r.source == "pilot" and r.rows[0].sizes == (12, 12)
    assert r.rows[0].permutation.value == pytest.approx(_fisher_sum(12, 12, 0.3, 0.7, 0.05),
                                                        abs=1e-12)


def test_a_design_that_cannot_reach_the_level_is_told():
    r = _power("power count proportions 0.1 vs 0.9 n 2")
    assert r.rows[0].permutation.value == 0
    assert any("no outcome of this design can be significant" in w for w in r.warnings)


def test_json_text_and_sentence():
    r = _power("power count proportions 0.2 vs 0.6 n 15")
    d = r.to_dict()
    jsonschema.validate([d], schema())
    assert d["method"] == "summation" and d["rows"][0]["power_se"] == 0
    assert "exact test" in str(r) and "formula" in str(r)
    assert "Exact power, summed over every binomial outcome" in r.sentence()


@pytest.mark.parametrize("text, words", [
    ("power count proportions 1.2 vs 0.6 n 10", "is not a proportion"),
    ("power count proportions 0.2 vs 0.6 shift 1 sd n 10", "does not apply to counts"),
    ("power count proportions 0.2 vs 0.6 law t3 n 10", "does not apply to counts"),
    ("power count proportions 0.2 vs 0.6", "needs its size or a target"),
    ("power count proportion 0.2 vs 0.6 n 10, 12", "'n' gives 2 sizes for 1 sample"),
])
def test_bad_count_power_statements_get_clear_messages(text, words):
    out = permq.run(text)[-1]
    assert words in out.message, out.message


def _fleiss_n(p1, p2, alpha=0.05, power=0.8):
    """(uncorrected, continuity-corrected) n a group: Fleiss (1981) and Casagrande, Pike &
    Smith (1978)."""
    import math

    from scipy import stats

    za, zb = stats.norm.isf(alpha / 2), stats.norm.isf(1 - power)
    pbar, d = (p1 + p2) / 2, abs(p1 - p2)
    n = (za * math.sqrt(2 * pbar * (1 - pbar))
         + zb * math.sqrt(p1 * (1 - p1) + p2 * (1 - p2))) ** 2 / d ** 2
    return n, n / 4 * (1 + math.sqrt(1 + 4 / (n * d))) ** 2


@pytest.mark.parametrize("p1, p2", [(0.2, 0.6), (0.1, 0.5), (0.3, 0.7), (0.35, 0.65)])
def test_smallest_n_is_near_the_published_sample_size_formulas(p1, p2):
    import math

    plain, corrected = _fleiss_n(p1, p2)
    r = _power(f"power count proportions {p1} vs {p2} for power 80% using fisher")
    # exact power saw-tooths, so the formulas are met within a trial or two (common practice)
    assert abs(r.needed["normal"] - math.ceil(plain)) <= 2
    assert abs(r.needed["permutation"] - math.ceil(corrected)) <= 2
    assert r.needed["permutation"] > r.needed["normal"]     # the exact test pays for exactness

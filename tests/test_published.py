"""Published worked examples, run through the language, with the source named beside each.

Values marked "read" were read in the named source (or in the page named as quoting it);
values marked "from memory" were recalled, not read. Data are copied from the sources, never
made up.
"""
from fractions import Fraction

import pandas as pd
import pytest

import brute
from conftest import assert_exact, result_of

# ---------------------------------------------------------------- Darwin's Zea mays, Fisher

# Data: C. Darwin (1876), The Effects of Cross and Self Fertilisation in the Vegetable Kingdom,
# Table 6/97 (Zea mays, heights in inches, to eighths), 15 pairs of crossed and self-fertilised
# plants in 4 pots; read on the public-domain transcription at charles-darwin.classic-
# literature.co.uk (ebook page 118), and identical to the arrays in the SciPy Cookbook notebook
# "resampling_tutorial_2b" (scipy/scipy-cookbook, ipython/ResamplingAndMonteCarloMethods).
ZEA_MAYS = pd.DataFrame({
    "pot": [1, 1, 1, 2, 2, 2, 3, 3, 3, 3, 3, 4, 4, 4, 4],
    "crossed": [23.5, 12, 21, 22, 19.125, 21.5, 22.125, 20.375, 18.25, 21.625, 23.25, 21,
                22.125, 23, 12],
    "selfed": [17.375, 20.375, 20, 20, 18.375, 18.625, 18.625, 15.25, 16.5, 18, 16.25, 18,
               12.75, 15.5, 18],
})


def test_fisher_zea_mays_sign_flip_count():
    # R. A. Fisher (1935), The Design of Experiments, section 21: "In just 863 cases out of
    # 32,768 the total deviation will have a positive value as great as or greater than that
    # observed" (read, as quoted in the SciPy Cookbook notebook named above).
    r = result_of("compare crossed vs selfed paired alternative higher", {"maize": ZEA_MAYS})
    assert r.outcome.method == "exact"
    assert r.outcome.arrangements == 32768
    assert_exact(r.outcome.p_value, Fraction(863, 32768))


def test_fisher_zea_mays_two_sided():
    # The sign-flip null is symmetric, so the two-sided count is 2 x 863 = 1726 of 32,768;
    # Fisher's doubled figure (5.27 per cent) is from memory, the doubling is common practice.
    r = result_of("compare crossed vs selfed paired", {"maize": ZEA_MAYS})
    assert_exact(r.outcome.p_value, Fraction(1726, 32768))
    assert r.outcome.p_value == pytest.approx(0.0527, abs=5e-5)


def test_fisher_zea_mays_paired_t():
    # Fisher's t = 2.148 for these data (from memory); scipy's ttest_rel gives
    # statistic=2.1479874613311205, pvalue=0.024851472010900447 for alternative 'greater'
    # (read, the output cells of the SciPy Cookbook notebook named above).
    r = result_of("compare crossed vs selfed paired alternative higher", {"maize": ZEA_MAYS})
    assert r.normal.statistic == pytest.approx(2.1479874613311205, rel=1e-12)
    assert r.normal.p_value == pytest.approx(0.024851472010900447, rel=1e-10)
    assert round(r.normal.statistic, 3) == 2.148


# ---------------------------------------------------------------- Hollander, Wolfe & Chicken

# M. Hollander, D. A. Wolfe and E. Chicken (2014), Nonparametric Statistical Methods, 3rd ed.,
# Example 3.1 and Table 3.1: Hamilton depression scale factor IV for 9 patients before (X) and
# after (Y) tranquilizer T (data of Salsburg, 1970). The values were read as reprinted in public
# R documentation examples of the textbook's data; the example's large-sample level .0192 was
# read on a public question page quoting Example 3.1 (quesba.com).
HAMILTON = pd.DataFrame({
    "pre": [1.83, 0.50, 1.62, 2.48, 1.68, 1.88, 1.55, 3.06, 1.30],
    "post": [0.878, 0.647, 0.598, 2.05, 1.06, 1.29, 1.06, 3.14, 1.29],
})


def test_hollander_wolfe_signed_rank_example():
    # Improvement is a fall in factor IV, so the test is of post - pre below zero.
    r = result_of("compare post vs pre paired using ranks alternative lower", {"h": HAMILTON})
    assert r.outcome.statistic == 5   # T+ = 5 (from memory; it gives the z = -2.07 read above)
    d = list(HAMILTON["post"] - HAMILTON["pre"])
    assert_exact(r.outcome.p_value, brute.one_sample_p("ranks", d, "lower"))
    assert_exact(r.outcome.p_value, Fraction(10, 512))   # P0(T+ <= 5) = .020 (from memory)
    assert round(r.outcome.p_value, 3) == 0.020


def test_hollander_wolfe_large_sample_approximation():
    # The example reports .0192 (read); that is Phi(-2.07), z taken to two decimals, while the
    # unrounded z is -2.0732 (p = 0.01908), so agreement is asked to the text's rounding.
    r = result_of("compare post vs pre paired using ranks alternative lower", {"h": HAMILTON})
    assert round(r.normal.statistic, 2) == -2.07
    assert r.normal.p_value == pytest.approx(0.0192, abs=2e-4)


# ---------------------------------------------------------------- a randomization test by hand

def test_two_by_two_randomization_example():
    # D. Nettleton, Stat 401 course notes, Iowa State University, "randomizationtest.txt"
    # (public.iastate.edu/~dnett/S401, n.d.): treatment A scores 7 and 5, B scores 3 and 1;
    # difference in means 4; "2-sided p-value is 2/6" over the 6 assignments (read).
    r = result_of("compare [7, 5] vs [3, 1]")
    assert r.outcome.statistic == 4
    assert r.outcome.arrangements == 6
    assert_exact(r.outcome.p_value, Fraction(2, 6))


# ---------------------------------------------------------------- rank sum with a tie

def test_rank_sum_and_shift_estimate_example():
    # Minitab support, "Calculating Mann-Whitney statistics" (web page, n.d.): samples
    # 22, 24, 25, 29, 30 and 16, 21, 22, 23 give W = 33.5 (mid-ranks for the tied 22s) and the
    # point estimate 6, the median of the 20 pairwise differences (read). Its p-value uses a
    # continuity correction, which permq does not, so only W and the estimate are compared.
    r = result_of("compare [22, 24, 25, 29, 30] vs [16, 21, 22, 23] using ranks")
    assert r.outcome.statistic == 33.5
    assert r.estimate.value == 6
    x, y = [22, 24, 25, 29, 30], [16, 21, 22, 23]
    assert_exact(r.outcome.p_value, brute.two_sample_p("ranks", x, y, "two-sided"))


# ---------------------------------------------------------------- signed ranks with ties

def test_signed_ranks_with_tied_differences_example():
    # Wizedu, "There were ten patients who had depression ..." (question and worked answer,
    # web page, n.d.): drug 5 6 30 8 9 7 6 17 3 10, control 16 15 20 15 16 13 14 19 18 18;
    # signed ranks -9 -7 +8 -3.5 -3.5 -2 -5.5 -1 -10 -5.5, so the positive rank sum is 8 (read).
    drug = [5, 6, 30, 8, 9, 7, 6, 17, 3, 10]
    control = [16, 15, 20, 15, 16, 13, 14, 19, 18, 18]
    r = result_of(f"compare {drug} vs {control} paired using ranks")
    assert r.outcome.statistic == 8
    d = [a - b for a, b in zip(drug, control)]
    assert_exact(r.outcome.p_value, brute.one_sample_p("ranks", d, "two-sided"))

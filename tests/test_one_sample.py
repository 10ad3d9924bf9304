"""Paired data and one sample: the sign-flip engine against scipy.stats and brute force.

Zero differences follow the documented rules: for signed ranks they are ranked with the others
(Pratt) and then left out of the flips; the sign test and the mean drop them from the flips.
"""
import numpy as np
import pytest
from scipy import stats

import brute
from conftest import ALTERNATIVES, assert_exact, inline, result_of
from permq.engine import onesample
from permq.normal import theory

SCIPY_ALT = {"two-sided": "two-sided", "higher": "greater", "lower": "less"}
FAMILIES = ("means", "ranks", "signs")
ALGORITHMS = ("dp-integer", "enumeration")

# Differences with zeros and ties (made up for the checks; references from brute force).
WITH_ZEROS = [
    [0.5, -0.3, 0.0, 1.2, 0.5, -0.5, 0.8, 0.0, 2.1],
    [1.0, -1.0, 2.0, 0.0, 3.0, -2.0, 2.0],
    [0.25, 0.25, -0.25, 0.0],
    [-1.5, -0.5, 0.0, 0.0, 0.0, 2.5, -3.0, 1.5, 1.5, -0.5],
    [3.0],
]
NO_TIES = [
    [1.83, -0.64, 0.57, 2.91, 1.12, -0.28, 0.95],
    [0.4, -0.1, 0.9, 0.3, 0.6, 0.2, -0.7, 1.3],
    [-2.6, -1.1, 0.7, -3.8, -0.2, -1.9, 2.4, -4.5, -0.9, -1.4],
]


def engine(family, d, alternative, algorithm, **kw):
    out, _ = onesample.run(family, d, alternative, algorithm, 0.95, **kw)
    return out


# ---------------------------------------------------------------- brute force

@pytest.mark.parametrize("d", WITH_ZEROS)
@pytest.mark.parametrize("family", FAMILIES)
@pytest.mark.parametrize("alternative", ALTERNATIVES)
@pytest.mark.parametrize("algorithm", ALGORITHMS)
def test_sign_flips_match_brute_force(d, family, alternative, algorithm):
    out = engine(family, d, alternative, algorithm)
    nonzero = sum(1 for v in d if v != 0)
    assert out.method == "exact"
    assert out.arrangements == 2 ** nonzero
    assert_exact(out.p_value, brute.one_sample_p(family, d, alternative))
    _, t = brute.one_sample_null(family, d)
    assert out.statistic == pytest.approx(float(t))


def test_only_zero_differences_give_p_one():
    for family in FAMILIES:
        for algorithm in ALGORITHMS:
            out = engine(family, [0.0, 0.0, 0.0], "two-sided", algorithm)
            assert out.p_value == 1.0 and out.arrangements == 1


@pytest.mark.parametrize("d", WITH_ZEROS[:3])
def test_zeros_keep_their_ranks(d):
    """Pratt: dropping the zeros before ranking would change the signed-rank p here."""
    out = engine("ranks", d, "higher", "dp-integer")
    nonzero = [v for v in d if v != 0]
    assert_exact(out.p_value, brute.one_sample_p("ranks", d, "higher"))
    if len(nonzero) < len(d):
        _, with_zeros = brute.one_sample_null("ranks", d)
        _, without = brute.one_sample_null("ranks", nonzero)
        assert with_zeros != without   # the zeros' ranks shift the others' ranks


def test_the_language_gives_the_brute_force_p(trays):
    frame = trays["trays"]
    keep = frame["after"].notna() & frame["before"].notna()
    d = list((frame["after"] - frame["before"])[keep])
    for family in FAMILIES:
        for alternative in ALTERNATIVES:
            r = result_of(f"compare after vs before paired using {family} "
                          f"alternative {alternative}", trays)
            assert r.family == "paired"
            assert_exact(r.outcome.p_value, brute.one_sample_p(family, d, alternative))
    assert any("dropped 1 row" in w for w in r.warnings)
    assert any("zero difference" in w for w in r.warnings)


def test_one_sample_against_a_value_uses_the_differences():
    x = [12.4, 13.1, 11.8, 12.0, 12.9, 13.5, 12.0]
    d = [v - 12.0 for v in x]
    for family in FAMILIES:
        r = result_of(f"compare {inline(x)} vs 12 using {family} alternative higher")
        assert r.family == "one-sample"
        assert_exact(r.outcome.p_value, brute.one_sample_p(family, d, "higher"))


# ---------------------------------------------------------------- Monte Carlo

def test_monte_carlo_lands_in_its_99_percent_interval():
    """18 checks, at most 2 misses (P(3 or more) < 0.001 at 99% coverage each)."""
    misses, checks = 0, 0
    for k, d in enumerate(WITH_ZEROS[:2]):
        for family in FAMILIES:
            for alternative in ALTERNATIVES:
                out = engine(family, d, alternative, "monte-carlo", draws=3000, seed=11 + k)
                assert out.method == "monte-carlo"
                assert out.p_value * 3001 == pytest.approx(round(out.p_value * 3001), abs=1e-6)
                lo, hi = out.p_interval
                misses += not (lo <= float(brute.one_sample_p(family, d, alternative)) <= hi)
                checks += 1
    assert checks == 18 and misses <= 2


# ---------------------------------------------------------------- scipy: exact references

@pytest.mark.parametrize("d", NO_TIES)
@pytest.mark.parametrize("alternative", ALTERNATIVES)
@pytest.mark.parametrize("algorithm", ALGORITHMS)
def test_signed_rank_matches_scipy_exact_wilcoxon(d, alternative, algorithm):
    out = engine("ranks", d, alternative, algorithm)
    ref = stats.wilcoxon(d, alternative=SCIPY_ALT[alternative], method="exact")
    if alternative != "two-sided":
        assert out.statistic == pytest.approx(ref.statistic)
    # the no-ties signed-rank null is symmetric: doubling equals the |T - E0 T| rule
    assert out.p_value == pytest.approx(ref.pvalue, rel=1e-12)


@pytest.mark.parametrize("d", WITH_ZEROS[:4] + NO_TIES)
@pytest.mark.parametrize("alternative", ALTERNATIVES)
def test_sign_test_matches_scipy_binomtest(d, alternative):
    nonzero = [v for v in d if v != 0]
    k = sum(1 for v in nonzero if v > 0)
    ref = stats.binomtest(k, len(nonzero), 0.5, alternative=SCIPY_ALT[alternative])
    for algorithm in ALGORITHMS:
        assert engine("signs", d, alternative, algorithm).p_value == \
            pytest.approx(ref.pvalue, rel=1e-12)


def _two_sided_from_null(null, observed):
    null = np.asarray(null, float)
    center = null.mean()
    tol = 1e-9 * max(abs(observed - center), np.abs(null - center).max())
    return np.mean(np.abs(null - center) >= abs(observed - center) - tol)


@pytest.mark.parametrize("d", WITH_ZEROS[:4] + NO_TIES[:2])
def test_mean_difference_matches_scipy_permutation_test(d):
    for alternative in ("higher", "lower"):
        ref = stats.permutation_test((np.asarray(d),), np.mean, permutation_type="samples",
                                     vectorized=True, n_resamples=np.inf,
                                     alternative=SCIPY_ALT[alternative])
        for algorithm in ALGORITHMS:
            assert engine("means", d, alternative, algorithm).p_value == \
                pytest.approx(ref.pvalue, rel=1e-12)
    two = _two_sided_from_null(ref.null_distribution, ref.statistic)
    for algorithm in ALGORITHMS:
        assert engine("means", d, "two-sided", algorithm).p_value == pytest.approx(two, rel=1e-12)


def test_paired_samples_permutation_matches_sign_flips():
    """scipy's 'samples' permutation of (after, before) pairs is the sign flip of d."""
    after = np.array([5.1, 4.9, 6.0, 5.5, 5.0, 4.4, 6.1])
    before = np.array([4.6, 4.9, 5.2, 5.1, 5.3, 4.0, 5.5])

    def mean_diff(a, b, axis=-1):
        return np.mean(a - b, axis=axis)

    ref = stats.permutation_test((after, before), mean_diff, permutation_type="samples",
                                 vectorized=True, n_resamples=np.inf, alternative="greater")
    r = result_of(f"compare {inline(after)} vs {inline(before)} paired alternative higher")
    assert r.outcome.p_value == pytest.approx(ref.pvalue, rel=1e-12)


@pytest.mark.parametrize("d", WITH_ZEROS[:4])
def test_pratt_signed_rank_with_ties_matches_scipy_permutation_test(d):
    def w_plus(v, axis=-1):
        v = np.asarray(v)
        r = stats.rankdata(np.abs(v), axis=-1)
        return np.sum(np.where(v > 0, r, 0.0), axis=-1)

    for alternative in ("higher", "lower"):
        ref = stats.permutation_test((np.asarray(d),), w_plus, permutation_type="samples",
                                     vectorized=True, n_resamples=np.inf,
                                     alternative=SCIPY_ALT[alternative])
        assert engine("ranks", d, alternative, "dp-integer").p_value == \
            pytest.approx(ref.pvalue, rel=1e-12)
    two = _two_sided_from_null(ref.null_distribution, ref.statistic)
    assert engine("ranks", d, "two-sided", "dp-integer").p_value == pytest.approx(two, rel=1e-12)


# ---------------------------------------------------------------- scipy: normal theory

@pytest.mark.parametrize("d", WITH_ZEROS[:4] + NO_TIES)
@pytest.mark.parametrize("alternative", ALTERNATIVES)
def test_t_on_differences_matches_scipy_ttest_1samp(d, alternative):
    nt = theory.one_sample_t(d, 0.9, alternative)
    ref = stats.ttest_1samp(d, 0.0, alternative=SCIPY_ALT[alternative])
    assert nt.statistic == pytest.approx(ref.statistic, rel=1e-10)
    assert nt.df == len(d) - 1
    assert nt.p_value == pytest.approx(ref.pvalue, rel=1e-10)
    ci = ref.confidence_interval(0.9)
    assert nt.interval == pytest.approx((ci.low, ci.high), rel=1e-10)


def test_paired_t_reaches_the_result_as_scipy_ttest_rel():
    after = [5.1, 4.9, 6.0, 5.5, 5.0, 4.4, 6.1]
    before = [4.6, 4.9, 5.2, 5.1, 5.3, 4.0, 5.5]
    for alternative in ALTERNATIVES:
        r = result_of(f"compare {inline(after)} vs {inline(before)} paired "
                      f"alternative {alternative}")
        ref = stats.ttest_rel(after, before, alternative=SCIPY_ALT[alternative])
        assert r.normal.statistic == pytest.approx(ref.statistic, rel=1e-9)
        assert r.normal.p_value == pytest.approx(ref.pvalue, rel=1e-9)
        ci = ref.confidence_interval(0.95)
        assert r.normal.interval == pytest.approx((ci.low, ci.high), rel=1e-9)


@pytest.mark.parametrize("d", WITH_ZEROS[:4] + NO_TIES)
@pytest.mark.parametrize("alternative", ALTERNATIVES)
def test_signed_rank_normal_approximation_matches_scipy_pratt(d, alternative):
    nt = theory.signed_rank_z(d, 0.95, alternative)
    ref = stats.wilcoxon(d, zero_method="pratt", correction=False, method="approx",
                         alternative=SCIPY_ALT[alternative])
    assert nt.p_value == pytest.approx(ref.pvalue, rel=1e-9)


@pytest.mark.parametrize("d", WITH_ZEROS[:4])
def test_sign_count_approximation(d):
    """z = (K - m/2) / sqrt(m/4) over the m non-zero differences (common practice)."""
    nonzero = [v for v in d if v != 0]
    m, k = len(nonzero), sum(1 for v in nonzero if v > 0)
    z = (k - m / 2) / np.sqrt(m / 4)
    nt = theory.sign_z(d, 0.95, "two-sided")
    assert nt.statistic == pytest.approx(z)
    assert nt.p_value == pytest.approx(2 * stats.norm.sf(abs(z)))

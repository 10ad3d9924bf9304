"""The robustness check of count designs: tables, paired binary outcomes, one proportion.

The simulated tests are checked against reference oracles on every table of small designs
(scipy's Fisher test and binomial test, statsmodels' exact McNemar test, the product's own
r x c engine and normal-theory functions), the fixed-margins sampler against the exact
probabilities of every table it can draw, the simulated rates against what theory and the
literature say they must be, and the statement end to end. Every simulation is seeded.
"""
from __future__ import annotations

import itertools
import json
import math

import numpy as np
import pandas as pd
import pytest
from scipy import stats
from scipy.special import gammaln

import permq
from permq.bind.binder import bind
from permq.bind.common import Defaults
from permq.engine.tables import rxc as rxc_engine
from permq.normal import tables as normal_tables
from permq.render import render
from permq.robustness.tables import check as T
from permq.robustness.tables import schemes as TL
from permq.robustness.result import RobustnessResult
from permq.robustness.tables.batch import CountTests
from permq.syntax.parser import parse_script

ALPHA = 0.05


def _design(text, tables=None):
    session = permq.Session(tables=tables)
    return bind(parse_script(text)[0].node, session.catalog, Defaults())


def _inline(t) -> str:
    return "[" + ", ".join("[" + ", ".join(str(int(v)) for v in row) + "]" for row in t) + "]"


def _compositions(total, parts):
    """Every way of writing total as an ordered sum of `parts` counts >= 0."""
    for cuts in itertools.combinations(range(total + parts - 1), parts - 1):
        edges = (-1,) + cuts + (total + parts - 1,)
        yield [edges[i + 1] - edges[i] - 1 for i in range(parts)]


def _tables_with_rows(rows, cols):
    return np.array([list(combo) for combo in itertools.product(
        *[list(_compositions(r, cols)) for r in rows])], dtype=np.int64)


def _within(rate, level, datasets, z=3.0):
    return max(rate.se, math.sqrt(level * (1 - level) / datasets)) * z


# ---------------------------------------------------------------- the exact side, table by table

@pytest.mark.parametrize("alternative, scipy_alt", [("two-sided", "two-sided"),
                                                    ("higher", "greater"), ("lower", "less")])
def test_fisher_p_of_every_2x2_table_with_rows_6_and_7_equals_scipy(alternative, scipy_alt):
    tests = CountTests(_design(f"count [[3, 3], [4, 3]] alternative {alternative}"))
    every = _tables_with_rows((6, 7), 2)
    assert len(every) == 7 * 8
    got = tests.exact_p(every)
    want = [stats.fisher_exact(t, alternative=scipy_alt).pvalue for t in every]
    np.testing.assert_allclose(got, want, rtol=1e-9, atol=1e-15)


STATISTICS = [("fisher", "two-sided"), ("chi-square", "two-sided"),
              ("likelihood-ratio", "two-sided"), ("trend", "two-sided"), ("trend", "higher"),
              ("trend", "lower")]


@pytest.mark.parametrize("family, alternative", STATISTICS)
def test_rxc_p_of_every_2x3_table_with_rows_4_and_3_equals_the_engine(family, alternative):
    order = " ordered" if family == "trend" else ""
    tests = CountTests(_design(f"count [[1, 2, 1], [1, 1, 1]]{order} using {family} "
                               f"alternative {alternative}"))
    assert tests.exact
    every = _tables_with_rows((4, 3), 3)
    assert len(every) == 15 * 10          # empty columns included: the engine drops them
    got = tests.exact_p(every)
    want = [rxc_engine.run(t, family, alternative).p_value for t in every]
    np.testing.assert_allclose(got, want, rtol=1e-9, atol=1e-14)


def test_rxc_p_of_every_3x3_table_with_rows_2_2_2_equals_the_engine():
    every = _tables_with_rows((2, 2, 2), 3)
    for family in ("fisher", "chi-square"):
        tests = CountTests(_design(f"count [[1, 1, 0], [0, 1, 1], [1, 0, 1]] using {family}"))
        got = tests.exact_p(every)
        want = [rxc_engine.run(t, family).p_value for t in every]
        np.testing.assert_allclose(got, want, rtol=1e-9, atol=1e-14)


def test_monte_carlo_reference_agrees_with_the_exact_p_within_its_error():
    tests = CountTests(_design("count [[3, 1, 4], [2, 5, 1], [1, 2, 4]]"))
    tables = np.array([[[3, 1, 4], [2, 5, 1], [1, 2, 4]], [[6, 0, 1], [0, 5, 2], [1, 1, 4]],
                       [[2, 2, 2], [2, 2, 2], [2, 2, 3]]])
    exact = tests.exact_p(tables)
    tests.exact = False
    sampled = tests.exact_p(tables, np.random.default_rng(8))
    se = np.sqrt(exact * (1 - exact) / tests.draws)
    assert np.all(np.abs(sampled - exact) <= 4 * se + 2.0 / tests.draws), (sampled, exact)


def test_mcnemar_p_of_every_split_equals_statsmodels_and_scipy():
    from statsmodels.stats.contingency_tables import mcnemar

    pairs = [(b, c) for b in range(15) for c in range(15) if 0 < b + c <= 14]
    tables = np.array([[[3, b], [c, 2]] for b, c in pairs])
    two = CountTests(_paired_design("two-sided"))
    np.testing.assert_allclose(two.exact_p(tables),
                               [mcnemar(t, exact=True).pvalue for t in tables], rtol=1e-12)
    for alt, scipy_alt in (("higher", "greater"), ("lower", "less")):
        one = CountTests(_paired_design(alt))
        np.testing.assert_allclose(
            one.exact_p(tables),
            [stats.binomtest(b, b + c, 0.5, alternative=scipy_alt).pvalue for b, c in pairs],
            rtol=1e-9)
    assert two.exact_p(np.array([[[4, 0], [0, 6]]]))[0] == 1.0


def _paired_frame():
    first = ["yes"] * 9 + ["no"] * 7
    second = ["yes"] * 5 + ["no"] * 4 + ["yes"] * 2 + ["no"] * 5
    return {"t": pd.DataFrame({"first": first, "second": second})}


def _paired_design(alternative="two-sided"):
    return _design(f"count first vs second paired in t alternative {alternative}",
                   _paired_frame())


@pytest.mark.parametrize("alternative, scipy_alt", [("two-sided", "two-sided"),
                                                    ("higher", "greater"), ("lower", "less")])
def test_binomial_p_of_every_count_equals_scipy(alternative, scipy_alt):
    tests = CountTests(_design(f"count 4 of 15 vs 0.3 alternative {alternative}"))
    tables = np.array([[[k, 15 - k]] for k in range(16)])
    want = [stats.binomtest(k, 15, 0.3, alternative=scipy_alt).pvalue for k in range(16)]
    np.testing.assert_allclose(tests.exact_p(tables), want, rtol=1e-9)


# ---------------------------------------------------------------- the normal side

RNG = np.random.default_rng(20261203)


def _some_tables(shape, count=25):
    t = RNG.poisson(3.0, (count,) + shape)
    t[0, 0] = 0                    # an empty row
    t[1, :, 0] = 0                 # an empty column
    return t


@pytest.mark.parametrize("text, shape", [
    ("count [[3, 1, 2], [2, 4, 1]]", (2, 3)),
    ("count [[3, 1, 2], [2, 4, 1]] using likelihood-ratio", (2, 3)),
    ("count [[3, 1, 2], [2, 4, 1], [1, 1, 5]] ordered", (3, 3)),
    ("count [[3, 1, 2], [2, 4, 1], [1, 1, 5]] ordered alternative higher", (3, 3)),
    ("count [[3, 1, 2], [2, 4, 1], [1, 1, 5]] ordered alternative lower", (3, 3)),
    ("count [[9, 1], [3, 7]]", (2, 2)),
    ("count [[9, 1], [3, 7]] alternative higher", (2, 2)),
])
def test_vectorised_normal_theory_equals_the_product_functions(text, shape):
    d = _design(text)
    tables = _some_tables(shape)
    s = d.settings
    if shape == (2, 2) and s.family == "fisher":
        want = [normal_tables.log_odds_ratio(t, alternative=s.alternative).p_value for t in tables]
    elif s.family == "trend":
        want = [normal_tables.trend(t, alternative=s.alternative).p_value for t in tables]
    elif s.family == "likelihood-ratio":
        want = [normal_tables.likelihood_ratio(t).p_value for t in tables]
    else:
        want = [normal_tables.pearson_chi_square(t).p_value for t in tables]
    np.testing.assert_allclose(CountTests(d).normal_p(tables), want, rtol=1e-9, atol=1e-300)


def test_vectorised_mcnemar_and_one_proportion_equal_the_product_functions():
    tables = RNG.integers(0, 9, (30, 2, 2))
    tables[0] = [[4, 0], [0, 3]]
    for alt in ("two-sided", "higher", "lower"):
        got = CountTests(_paired_design(alt)).normal_p(tables)
        want = [normal_tables.mcnemar(t, alternative=alt).p_value for t in tables]
        np.testing.assert_allclose(got, want, rtol=1e-9)
        props = np.array([[[k, 20 - k]] for k in range(21)])
        got = CountTests(_design(f"count 4 of 20 vs 0.35 alternative {alt}")).normal_p(props)
        want = [normal_tables.one_proportion(k, 20, 0.35, alternative=alt).p_value
                for k in range(21)]
        np.testing.assert_allclose(got, want, rtol=1e-9)


# ---------------------------------------------------------------- the sampling schemes

@pytest.mark.parametrize("theta", [np.ones((2, 3)), np.array([[2.0, 0.5, 1.0], [0.3, 1.0, 0.0]])])
def test_fixed_margins_sampler_draws_every_table_with_its_exact_probability(theta):
    """P(table) proportional to prod theta^n / prod n! over the tables with rows (3, 4) and
    columns (2, 2, 3): the frequencies of 40,000 draws are within 4.5 standard errors."""
    rows, cols = (3, 4), (2, 2, 3)
    every = [t for t in _tables_with_rows(rows, 3) if tuple(t.sum(axis=0)) == cols]
    with np.errstate(divide="ignore", invalid="ignore"):
        logw = np.array([(t * np.log(theta)).sum(where=t > 0) - gammaln(t + 1.0).sum()
                         for t in every])
    probs = np.exp(logw - logw.max())
    probs /= probs.sum()
    draws = TL.FixedMargins(rows, cols, theta).draw(np.random.default_rng(3), 40_000)
    assert np.all(draws.sum(axis=2) == rows) and np.all(draws.sum(axis=1) == cols)
    index = {t.tobytes(): i for i, t in enumerate(every)}
    freq = np.bincount([index[t.tobytes()] for t in draws], minlength=len(every)) / 40_000
    se = np.sqrt(probs * (1 - probs) / 40_000)
    assert np.all(np.abs(freq - probs) <= 4.5 * se + 1e-12), np.abs(freq - probs) / se
    if theta[1, 2] == 0:
        assert np.all(draws[:, 1, 2] == 0)


def test_odds_ratio_rows_keep_the_pooled_proportion():
    p = TL.odds_ratio_rows((10, 14), 0.4, 3.0)
    odds = p[:, 0] / p[:, 1]
    assert odds[0] / odds[1] == pytest.approx(3.0, rel=1e-9)
    assert (10 * p[0, 0] + 14 * p[1, 0]) / 24 == pytest.approx(0.4, rel=1e-9)


def test_unequal_trials_average_the_null_value():
    for n in (9, 10):
        chances = TL.unequal_chances(n, 0.3)
        assert chances.mean() == pytest.approx(0.3) and chances.min() == pytest.approx(0.15)


def _rates(text, datasets, seed, keys=None, panel=None, tables=None):
    d = _design(text, tables)
    tests = CountTests(d)
    if panel is None:
        panel = T.effect_for(d, None).panel
    if keys is not None:
        panel = [s for s in panel if s is not None and s.key in keys]
    sim = T.simulate_counts(panel, tests, datasets, ALPHA, seed)
    return {r.law.key: r for r in sim.rates}


@pytest.mark.parametrize("text", [
    "count [[7, 3], [2, 8]]",
    "count [[3, 2, 3, 2], [2, 3, 2, 3]] using chi-square",
    "count [[4, 2, 1], [1, 2, 5], [2, 2, 2]] ordered",
])
def test_exact_test_keeps_its_level_under_every_exact_scheme(text):
    rates = _rates(text, 1500, 11)
    assert len(rates) == 5
    for key, r in rates.items():
        if r.not_exact:
            continue
        assert r.permutation_null.value <= ALPHA + _within(r.permutation_null, ALPHA, 1500), key


def test_paired_and_proportion_exact_tests_keep_their_level():
    for rates in (_rates("count first vs second paired in t", 2000, 12, tables=_paired_frame()),
                  _rates("count 9 of 30 vs 0.3", 2000, 12)):
        for key, r in rates.items():
            if not r.not_exact:
                assert r.permutation_null.value <= ALPHA + _within(r.permutation_null, ALPHA,
                                                                   2000), key


def test_fisher_is_conservative_for_two_binomial_groups_at_small_n():
    """Rows of 10 and 10, each row binomial with the pooled chance: Fisher's exact test rejects
    far less often than 5%. D'Agostino, Chase and Belanger, "The appropriateness of some common
    procedures for testing the equality of two independent binomial populations", The
    American Statistician 42(3), 1988, 198-202: Fisher's test is very conservative at small
    samples (from memory). Read: the abstract of "Testing the Equality of Two Independent
    Binomial Proportions" (a reply to that article) says it "argues that the Fisher exact test
    ... [is] much too conservative in small samples" under product-binomial sampling."""
    r = _rates("count [[5, 5], [5, 5]]", 4000, 21, keys=("rows-fixed",))["rows-fixed"]
    assert r.permutation_null.value < ALPHA - _within(r.permutation_null, ALPHA, 4000)


def test_likelihood_ratio_is_liberal_at_small_expected_counts_and_pearson_is_not():
    """A 2 x 4 table of 20 (expected counts 2.5): the chi-square reference of G^2 rejects too
    often, Pearson's X^2 does not. Larntz, "Small-sample comparisons of exact levels for
    chi-squared goodness-of-fit statistics", JASA 73, 1978, 253-263 (from memory): with small
    expected frequencies G^2 is liberal against its chi-square reference and X^2 stays close
    to the nominal level."""
    table = "[[3, 2, 3, 2], [2, 3, 2, 3]]"
    keys = ("margins-fixed", "rows-fixed")
    g2 = _rates(f"count {table} using likelihood-ratio", 4000, 22, keys=keys)
    x2 = _rates(f"count {table} using chi-square", 4000, 22, keys=keys)
    for key in keys:
        rate = g2[key].normal_null
        assert rate.value > ALPHA + _within(rate, ALPHA, 4000), (key, rate)
        rate = x2[key].normal_null
        assert rate.value <= ALPHA + _within(rate, ALPHA, 4000), (key, rate)


def test_strong_clustering_breaks_the_exact_test():
    """Clusters of 6 units with intraclass correlation 0.5 (design effect 1 + 5 x 0.5 = 3.5):
    given its margins the table is far more spread than hypergeometric, so the exact test
    rejects too often (the variance inflation of clustered counts: common practice)."""
    t = np.array([[15, 15], [15, 15]])
    props = np.full((2, 2), 0.5)
    panel = [s for s in TL.table_panel(t, props, props, props, m=6, icc=0.5)
             if s is not None and s.key == "clustered"]
    d = _design(f"count {_inline(t)}")
    rates = T.simulate_counts(panel, CountTests(d), 2000, ALPHA, 31).rates
    r = rates[0]
    assert r.not_exact
    assert r.permutation_null.value > ALPHA + _within(r.permutation_null, ALPHA, 2000), r


def test_clustered_trials_are_liberal_and_unequal_trials_conservative():
    """Beta-binomial counts are more spread than binomial, counts of trials with unequal
    chances less spread (common practice), so the exact binomial test errs both ways; the
    report says it is not exact under either."""
    rates = _rates("count 20 of 60 vs 0.3", 3000, 32)
    clustered, unequal = rates["clustered-trials"], rates["unequal-trials"]
    assert clustered.not_exact and unequal.not_exact and not rates["independent-trials"].not_exact
    assert clustered.permutation_null.value > ALPHA + _within(clustered.permutation_null, ALPHA,
                                                              3000)
    assert unequal.permutation_null.value < ALPHA - _within(unequal.permutation_null, ALPHA,
                                                            3000)


def test_the_numbers_do_not_depend_on_the_number_of_workers():
    d = _design("count [[3, 2, 3], [2, 4, 1]]")
    panel = T.effect_for(d, None).panel
    one = T.simulate_counts(panel, CountTests(d), 200, ALPHA, 5, workers=1)
    two = T.simulate_counts(panel, CountTests(d), 200, ALPHA, 5, workers=2)
    assert one == two


# ---------------------------------------------------------------- the statement

def test_robustness_of_a_2x2_table_end_to_end():
    text = "robustness count [[9, 1], [3, 7]] datasets 300 seed 4"
    first, second = permq.run(text)[0], permq.run(text)[0]
    assert isinstance(first, RobustnessResult), first
    d = first.to_dict()
    assert json.loads(json.dumps(d, allow_nan=False)) == d
    assert d == second.to_dict()
    assert [law["law"] for law in d["laws"]] == ["margins-fixed", "rows-fixed", "total-fixed",
                                                 "rarer-outcome", "clustered"]
    clustered = d["laws"][-1]["permutation"]
    assert clustered["exact_under_this_law"] is False and "cluster" in clustered["why_not_exact"]
    assert all(law["permutation"]["exact_under_this_law"] for law in d["laws"][:-1])
    assert d["analysis"]["normal_test"] == "Wald z for the log odds ratio"
    assert d["simulated_permutation_test"]["method"] == "exact"
    assert d["shift"]["value"] == pytest.approx(21.0) and d["shift"]["sd"] is None
    plain = permq.run("count [[9, 1], [3, 7]]")[0]
    assert d["observed"]["p_value"] == pytest.approx(plain.outcome.p_value)
    assert any("not exact" in s and "clustered units" in s for s in first.summary)
    block = render([first], "text")
    for words in ("scheme", "exact test", "both margins fixed", "power at the effect"):
        assert words in block
    assert "| clustered units |" in render([first], "markdown")
    assert json.loads(render([first], "json"))[0]["laws"][0]["law"] == "margins-fixed"


def test_robustness_of_an_rxc_table_from_columns():
    rng = np.random.default_rng(9)
    frame = pd.DataFrame({"dose": rng.choice([0, 10, 20], 36),
                          "grade": rng.choice(["low", "mid", "high"], 36)})
    # ordered: the doses by their values, the grades in the order listed
    for extra, normal in (("", "Pearson chi-square"),
                          (' ordered "low" < "mid" < "high"', "linear-by-linear"),
                          (" using likelihood-ratio", "likelihood-ratio")):
        rr = permq.run(f"robustness count dose by grade in t{extra} datasets 100 seed 3",
                       tables={"t": frame})[0]
        assert isinstance(rr, RobustnessResult), rr
        assert rr.normal_test.startswith(normal) and rr.family == "table"
        json.dumps(rr.to_dict(), allow_nan=False)
        assert len(rr.rows) == 5 and rr.shift_words.startswith("the observed association")


def test_robustness_of_a_large_table_samples_its_references_and_says_so():
    rng = np.random.default_rng(10)
    frame = pd.DataFrame({"a": rng.choice(list("xyz"), 60), "b": rng.choice(list("pqrs"), 60)})
    text = "robustness count a by b in t datasets 100 seed 6"
    rr = permq.run(text, tables={"t": frame})[0]
    assert isinstance(rr, RobustnessResult), rr
    assert not rr.exact_reference and rr.reference.startswith("Monte Carlo")
    assert rr.arrangements == 999
    assert rr.to_dict() == permq.run(text, tables={"t": frame})[0].to_dict()


def test_robustness_of_paired_outcomes_and_of_a_proportion():
    rr = permq.run("robustness count first vs second paired in t datasets 300 seed 2",
                   tables=_paired_frame())[0]
    assert isinstance(rr, RobustnessResult), rr
    assert rr.normal_test == "McNemar chi-square"
    assert [r.key for r in rr.rows] == ["independent-pairs", "discordant-fixed",
                                        "heterogeneous-pairs", "clustered-pairs"]
    assert [bool(r.not_exact) for r in rr.rows] == [False, False, False, True]
    # levels in natural order: no, yes; b = first no / second yes
    assert "b = 2 pairs 'first no' with 'second yes'" in rr.shift_words
    assert "c = 4 'first yes' with 'second no'" in rr.shift_words
    pr = permq.run("robustness count 7 of 20 vs 0.5 datasets 300 seed 2")[0]
    assert isinstance(pr, RobustnessResult), pr
    assert pr.normal_test == "normal approximation z for one proportion"
    assert pr.shift == pytest.approx(0.35)
    shifted = permq.run("robustness count 7 of 20 vs 0.5 shift 0.9 datasets 300 seed 2")[0]
    assert shifted.rows[0].permutation_power > pr.rows[0].permutation_power
    for r in (rr, pr):
        json.dumps(r.to_dict(), allow_nan=False)


def test_an_odds_ratio_shift_sets_the_power_of_a_2x2_check():
    weak = permq.run("robustness count [[9, 1], [3, 7]] shift 1.5 datasets 400 seed 3")[0]
    strong = permq.run("robustness count [[9, 1], [3, 7]] shift 30 datasets 400 seed 3")[0]
    assert weak.shift == 1.5 and "odds ratio of 1.5" in weak.shift_words
    for w, s in zip(weak.rows, strong.rows):
        assert w.permutation_power < s.permutation_power, w.key
    # the null part does not depend on the shift
    assert [r.permutation_rate for r in weak.rows] == [r.permutation_rate for r in strong.rows]


@pytest.mark.parametrize("text, words, hint", [
    ("count [[9, 1], [3, 7]] shift 2 sd", "no standard-deviation unit", "odds ratio"),
    ("count [[1, 2, 3], [3, 2, 1]] shift 2", "no meaning for a 2 x 3 table", "observed"),
    ("count [[9, 1], [3, 7]] shift 0", "must be above 0", "odds ratio"),
    ("count 3 of 10 vs 0.4 shift 1.5", "not a proportion", "true proportion"),
])
def test_a_shift_that_does_not_fit_is_refused_with_a_hint(text, words, hint):
    f = permq.run(f"robustness {text} datasets 100")[0]
    assert isinstance(f, permq.Failure), f
    assert words in f.message and hint in f.hint


def test_a_table_with_nothing_to_test_says_so():
    rr = permq.run("robustness count [[0, 0], [3, 4]] datasets 100 seed 1")[0]
    assert all(r.permutation_rate == 0 and r.normal_rate == 0 for r in rr.rows)
    assert rr.summary[0].startswith("With its empty rows or columns left out")
    f = permq.run("robustness count [[0, 0], [0, 0]] datasets 100")[0]
    assert isinstance(f, permq.Failure) and "no counts" in f.message


def test_a_cancel_stops_a_table_check():
    calls = []

    def stop():
        calls.append(1)
        return len(calls) > 3

    s = permq.Session(should_stop=stop)
    f = s.run("robustness count [[3, 2, 4, 1], [2, 3, 2, 3], [4, 2, 3, 1]] "
              "datasets 100000 seed 1")[0]
    assert isinstance(f, permq.Failure) and f.kind == "cancelled"


def test_a_shift_that_does_not_fit_a_table_is_marked_where_it_stands():
    f = permq.run("robustness count [[9, 1], [3, 7], [2, 2]] shift 2")[0]
    assert isinstance(f, permq.Failure) and "no meaning for a 3 x 2 table" in f.message
    assert (f.line, f.column) == (1, 43)
    assert f.caret.splitlines()[1] == " " * 42 + "^" * len("shift 2")

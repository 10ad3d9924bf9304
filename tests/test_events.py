"""Censored times to an event, two groups: the exact permutation log-rank test and its weighted
forms (Gehan, Tarone-Ware, Peto-Prentice), the textbook chi-square, the hazard ratio and the
Kaplan-Meier medians.

Data: the remission times in weeks of 42 children with acute leukaemia, 6-mercaptopurine
against placebo (Freireich et al. 1963, Blood 21:699), as listed by Gehan (1965, Biometrika
52:203, "A generalized Wilcoxon test for comparing arbitrarily singly-censored samples") and
by Kleinbaum & Klein (Survival Analysis: A Self-Learning Text, Springer, ch. 1-2). Brute force
(every labelling, exact Fractions; tests/brute.py) runs on parts of these data; statsmodels'
survdiff is the oracle for the chi-squares."""
import json
import math
from fractions import Fraction

import numpy as np
import pandas as pd
import pytest

import brute as B
import permq
from permq.engine import events as E
from permq.errors import PermqError
from permq.normal import events as N

# 6-MP: weeks, 1 = relapse, 0 = censored (in remission at last follow-up)
MP = [6, 6, 6, 7, 10, 13, 16, 22, 23, 6, 9, 10, 11, 17, 19, 20, 25, 32, 32, 34, 35]
MP_E = [1] * 9 + [0] * 12
PLACEBO = [1, 1, 2, 2, 3, 4, 4, 5, 5, 8, 8, 8, 8, 11, 11, 12, 12, 15, 17, 22, 23]
PLACEBO_E = [1] * 21

# parts of the data for listing every labelling: (6-MP units, placebo units) by position
PARTS = [((0, 3, 9, 10, 11, 4), (9, 10, 13, 18, 19, 20)),          # ties across groups
         ((0, 1, 2, 9, 16), (0, 9, 10, 11, 12, 13, 14)),            # tied events and censoring
         ((5, 6, 7, 8, 17, 18, 19), (3, 4, 15, 16, 17))]


def part(k):
    a, b = PARTS[k]
    return ([MP[i] for i in a], [MP_E[i] for i in a], [PLACEBO[i] for i in b],
            [PLACEBO_E[i] for i in b])


def data_of(t1, e1, t2, e2):
    return E.EventTimes(tuple(map(float, t1)), tuple(e1), tuple(map(float, t2)), tuple(e2))


def algorithms(kind, data):
    return [c.algorithm for c in E.candidates(kind, data, 1000) if c.exact and c.feasible]


@pytest.mark.parametrize("k", range(len(PARTS)))
@pytest.mark.parametrize("kind", E.WEIGHTS)
def test_exact_p_equals_the_listing_of_every_labelling(kind, k):
    t1, e1, t2, e2 = part(k)
    data = data_of(t1, e1, t2, e2)
    found = algorithms(kind, data)
    assert "enumeration" in found
    for alternative in ("two-sided", "higher", "lower"):
        want = B.logrank_p(kind, t1, e1, t2, e2, alternative)
        for algorithm in found:
            got = E.run(kind, data, alternative, algorithm, 0.95)
            assert got.method == "exact"
            assert got.p_value == pytest.approx(float(want), rel=1e-12, abs=1e-15), \
                (kind, alternative, algorithm)


@pytest.mark.parametrize("kind", ["log-rank", "gehan", "peto-prentice"])
def test_the_integer_scores_are_exact_and_counted(kind):
    """Rational weights: the scores scaled to integers, counted by dynamic programming."""
    t1, e1, t2, e2 = part(1)
    data = data_of(t1, e1, t2, e2)
    sc = E.engine_scores(kind, data)
    assert sc.integer and sc.values.sum() == 0
    assert {"dp-integer", "counting-sparse"} <= set(algorithms(kind, data))
    times = [Fraction(v) for v in t1 + t2]
    u = B.weighted_logrank_u(kind, times, e1 + e2, tuple(range(len(t1))))
    assert Fraction(int(sc.values[:len(t1)].sum()), sc.scale) == u


def test_tarone_ware_scores_are_irrational_and_listed():
    data = data_of(*part(0))
    assert not E.engine_scores("tarone-ware", data).integer
    assert not {"dp-integer", "counting-sparse"} & set(algorithms("tarone-ware", data))


def test_monte_carlo_brackets_the_exact_p():
    t1, e1, t2, e2 = part(2)
    data = data_of(t1, e1, t2, e2)
    exact = float(B.logrank_p("log-rank", t1, e1, t2, e2, "two-sided"))
    mc = E.run("log-rank", data, "two-sided", "monte-carlo", 0.95, draws=20000, seed=11)
    lo, hi = mc.p_interval
    assert lo <= exact <= hi and mc.seed == 11
    again = E.run("log-rank", data, "two-sided", "monte-carlo", 0.95, draws=20000, seed=11)
    assert again.p_value == mc.p_value


@pytest.mark.parametrize("kind, weight", [("log-rank", None), ("gehan", "gb"),
                                          ("tarone-ware", "tw")])
@pytest.mark.parametrize("k", [None, 0, 1, 2])
def test_chi_square_agrees_with_statsmodels(kind, weight, k):
    from statsmodels.duration.survfunc import survdiff

    t1, e1, t2, e2 = (MP, MP_E, PLACEBO, PLACEBO_E) if k is None else part(k)
    nt = N.chi_square(kind, t1, e1, t2, e2, "two-sided")
    time = np.array(t1 + t2, float)
    status = np.array(e1 + e2)
    group = np.array([0] * len(t1) + [1] * len(t2))
    chi2, p = survdiff(time, status, group, weight_type=weight)
    assert nt.statistic == pytest.approx(chi2, rel=1e-10)
    assert nt.p_value == pytest.approx(p, rel=1e-8)
    assert nt.df == 1


def test_one_sided_z_halves_the_chi_square_p_on_its_side():
    two = N.chi_square("log-rank", MP, MP_E, PLACEBO, PLACEBO_E, "two-sided")
    low = N.chi_square("log-rank", MP, MP_E, PLACEBO, PLACEBO_E, "lower")
    high = N.chi_square("log-rank", MP, MP_E, PLACEBO, PLACEBO_E, "higher")
    assert low.statistic < 0 and low.statistic ** 2 == pytest.approx(two.statistic)
    assert low.p_value == pytest.approx(two.p_value / 2)
    assert low.p_value + high.p_value == pytest.approx(1)


def test_published_leukaemia_example():
    """Kleinbaum & Klein, Survival Analysis: A Self-Learning Text, ch. 2 (the remission data):
    6-MP O = 9, E = 19.25; log-rank chi-square 16.79; Wilcoxon (Gehan) 13.46, Tarone-Ware
    15.12, Peto 14.08 (the chapter's table of alternative tests; the values from memory);
    Kaplan-Meier medians 23 weeks (6-MP) and 8 weeks (placebo) (ch. 1-2, from memory)."""
    u, _ = N.score_and_variance("log-rank", MP, MP_E, PLACEBO, PLACEBO_E)
    assert u == pytest.approx(9 - 19.25, abs=0.005)
    got = {k: N.chi_square(k, MP, MP_E, PLACEBO, PLACEBO_E, "two-sided").statistic
           for k in E.WEIGHTS}
    assert round(got["log-rank"], 2) == 16.79
    assert round(got["gehan"], 2) == 13.46
    assert round(got["tarone-ware"], 2) == 15.12
    assert round(got["peto-prentice"], 2) == 14.08
    assert N.km_median(MP, MP_E) == 23 and N.km_median(PLACEBO, PLACEBO_E) == 8


def test_unit_scores_sum_to_u_and_to_zero():
    t = np.array(MP + PLACEBO, float)
    d = np.array(MP_E + PLACEBO_E)
    for kind in E.WEIGHTS:
        a, _ = E.unit_scores(kind, t, d)
        u, _ = N.score_and_variance(kind, MP, MP_E, PLACEBO, PLACEBO_E)
        assert a[:21].sum() == pytest.approx(u, rel=1e-12)
        assert abs(a.sum()) < 1e-9


def test_kaplan_meier_median_rules():
    assert N.km_median([1, 2, 3, 4], [1, 1, 1, 1]) == 2.5          # flat at 0.5 from 2 to 3
    assert N.km_median([5, 6, 7], [1, 0, 0]) is None               # never reaches 0.5


def test_hazard_ratio_is_the_one_step_estimate():
    u, v = N.score_and_variance("log-rank", MP, MP_E, PLACEBO, PLACEBO_E)
    est = N.hazard_ratio(MP, MP_E, PLACEBO, PLACEBO_E, 0.95, ("6-MP", "placebo"))
    assert est.value == pytest.approx(math.exp(u / v)) and est.interval is None
    iv, _ = N.hazard_interval(MP, MP_E, PLACEBO, PLACEBO_E, 0.95, "two-sided")
    assert iv[0] == pytest.approx(math.exp(u / v - 1.959963985 / math.sqrt(v)), rel=1e-8)
    assert iv[0] < est.value < iv[1] < 1


# ---------------------------------------------------------------- the statement

def frame():
    return pd.DataFrame({"weeks": MP + PLACEBO, "drug": ["6-MP"] * 21 + ["placebo"] * 21,
                         "relapse": MP_E + PLACEBO_E,
                         "state": ["relapsed" if e else "in remission" for e in MP_E + PLACEBO_E]})


def run(statement):
    out = permq.run(statement, tables={"leuk": frame()})
    return out[-1]


def test_the_statement_end_to_end():
    r = run('compare weeks by drug event relapse using gehan')
    assert r.family == "events" and r.outcome.method == "exact"
    assert r.outcome.statistic == -271
    assert r.normal.statistic == pytest.approx(13.4578, abs=1e-4)
    assert [g["median"] for g in r.extra["survival"]] == [23, 8]
    assert [g["events"] for g in r.extra["survival"]] == [9, 21]
    text = str(r)
    assert "Kaplan-Meier median" in text and "hazard ratio 6-MP / placebo" in text
    d = json.loads(json.dumps(r.to_dict()))
    assert d["family"] == "events" and d["estimate"]["interval"] is None
    assert d["normal_interval"]["interval"][1] < 1


def test_a_text_event_column_with_the_value_that_marks_the_event():
    a = run('compare weeks by drug event state "relapsed" levels "placebo", "6-MP" '
            'using gehan')
    b = run('compare weeks by drug event relapse levels "placebo", "6-MP" using gehan')
    assert a.outcome.p_value == b.outcome.p_value and a.outcome.statistic == 271


@pytest.mark.parametrize("statement, words", [
    ("compare weeks by drug event state", "is not 1 (event) / 0 (censored)"),
    ('compare weeks by drug event state "dead"', 'no value "dead"'),
    ("compare weeks by drug event relpase", "no column 'relpase'"),
    ("compare weeks by drug event relapse within drug", "no stratum of 'drug' holds both"),
    ("compare weeks by drug event relapse using ranks", "not a test family for censored times"),
    ("compare weeks by drug event relapse pairwise", "does not apply to censored times"),
])
def test_bad_statements_get_clear_messages(statement, words):
    out = permq.run(statement, tables={"leuk": frame()})[-1]
    assert isinstance(out, permq.Failure), out
    assert words in str(out)


def test_no_events_and_negative_times_are_refused():
    f = frame()
    f.loc[:5, "drug"] = "other"
    out = permq.run("compare weeks by drug event relapse within relapse", tables={"leuk": f})
    assert isinstance(out[-1], permq.Failure) and "strata take two groups" in str(out[-1])
    f = frame()
    f["relapse"] = 0
    out = permq.run("compare weeks by drug event relapse", tables={"leuk": f})[-1]
    assert isinstance(out, permq.Failure) and "every time is censored" in str(out)
    f = frame()
    f.loc[3, "weeks"] = -1
    out = permq.run("compare weeks by drug event relapse", tables={"leuk": f})[-1]
    assert isinstance(out, permq.Failure) and "negative time (row 5" in str(out)


def test_robustness_checks_the_censoring_schemes():
    out = permq.run("robustness compare weeks by drug event relapse datasets 200 seed 2",
                    tables={"leuk": frame()})[-1]
    assert not isinstance(out, permq.Failure), out
    assert out.counts and len(out.rows) == 8 and out.rows[-1].not_exact
    assert "hazard ratio" in out.shift_words
    d = out.to_dict()
    assert d["analysis"]["family"] == "events" and len(d["laws"]) == 8


def test_help_and_completion_know_the_form():
    from permq.frontends.shell.completion import suggest
    from permq.help import help_text

    assert "log-rank" in help_text("families") and "Gehan 1965" in help_text("gehan")
    assert "censored times" in help_text("events")
    from permq.data.tables import Table

    s = permq.Session()
    s.catalog.tables["leuk"] = Table("leuk", frame())
    s.catalog.current = "leuk"
    after = dict(suggest("compare weeks by drug ", s.catalog, s.base_dir))
    assert "censored times" in after["event"]
    offered = [w for w, _ in suggest("compare weeks by drug event relapse using ", s.catalog,
                                     s.base_dir)]
    assert {"log-rank", "gehan", "tarone-ware", "peto-prentice"} <= set(offered)


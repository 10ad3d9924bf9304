"""Censored times within strata and in three or more groups: the stratified and the k-sample
weighted log-rank tests, exact by permutation, beside their textbook chi-squares.

Data: the Stanford heart transplant survival times (days), their censoring and the patients'
ages (Miller 1976, Biometrika 63:449, "Least squares regression with censored data", as
shipped in statsmodels.datasets.heart); strata and groups are age bands (under 40, 40 to 50,
50 and over), a rule on the published ages. The remission data of 42 children (Freireich et
al. 1963; Gehan 1965, Biometrika 52:203) tie both forms to the published two-group figures.
Brute force lists every arrangement with exact Fractions, recomputing each score from the
risk sets (tests/brute.py); statsmodels' survdiff is the oracle for the chi-squares."""
import itertools
import math
from fractions import Fraction

import numpy as np
import pandas as pd
import pytest

import brute as B
import permq
from permq.engine import events as E
from permq.engine import events_groups as G
from permq.engine import events_strata as S
from permq.normal import events_groups as NG
from permq.normal import events_strata as NS
from test_events import MP, MP_E, PLACEBO, PLACEBO_E


def heart():
    from statsmodels.datasets import heart as h

    d = h.load_pandas().data
    return (d.survival.to_numpy(float), d.censors.to_numpy(int),
            np.digitize(d.age.to_numpy(float), [40, 50]))


# small parts of the heart data by row, for listing every arrangement: ties in times, events
# and censoring within and across bands
PARTS = [(0, 1, 3, 5, 7, 9, 12, 16, 20, 24, 30, 33), (2, 4, 6, 8, 10, 11, 13, 14, 15, 17, 18),
         (19, 21, 22, 23, 25, 26, 27, 28, 29, 31, 32)]


def part(k):
    t, d, band = heart()
    rows = list(PARTS[k])
    return t[rows], d[rows], band[rows]


# ---------------------------------------------------------------- brute force

def brute_strata_p(kind, time, event, groups, strata, alternative):
    """Every relabelling within each stratum; U recomputed from each stratum's risk sets."""
    times = [B.frac(v) for v in time]
    per = []
    for s in sorted(set(strata)):
        idx = [i for i in range(len(time)) if strata[i] == s]
        m = sum(1 for i in idx if groups[i] == 0)
        t_s, d_s = [times[i] for i in idx], [int(event[i]) for i in idx]
        if not any(d_s):
            continue
        per.append([B.weighted_logrank_u(kind, t_s, d_s, c)
                    for c in itertools.combinations(range(len(idx)), m)])
        obs = tuple(j for j, i in enumerate(idx) if groups[i] == 0)
        per[-1] = (per[-1], B.weighted_logrank_u(kind, t_s, d_s, obs))
    values = [sum(p) for p in itertools.product(*(v for v, _ in per))]
    return B.tail_share(values, sum(o for _, o in per), alternative)


def brute_groups_p(kind, time, event, groups):
    """Every assignment to groups of the observed sizes; each group's U_g recomputed from the
    risk sets, L = (N - 1) sum U_g^2 / n_g / sum a_i^2 (a_i: a unit's own U)."""
    times = [B.frac(v) for v in time]
    ev = [int(v) for v in event]
    N = len(times)
    a = [B.weighted_logrank_u(kind, times, ev, (i,)) for i in range(N)]
    sst = sum(x * x for x in a)
    sizes = [int((np.asarray(groups) == g).sum()) for g in range(max(groups) + 1)]

    def stat(labels):
        out = 0
        for g, n in enumerate(sizes):
            u = B.weighted_logrank_u(kind, times, ev, tuple(i for i in range(N) if labels[i] == g))
            out += u * u / n
        return (N - 1) * out / sst

    observed = stat(list(groups))
    values = [stat(lab) for lab in B.assignments(list(groups))]
    return B.share_at_least(values, observed - Fraction(1, 10 ** 12)), observed


def exact_algorithms(found):
    return [c.algorithm for c in found if c.exact and c.feasible]


@pytest.mark.parametrize("k", range(len(PARTS)))
@pytest.mark.parametrize("kind", E.WEIGHTS)
def test_strata_p_equals_the_listing_of_every_arrangement(kind, k):
    t, d, band = part(k)
    groups = (np.arange(len(t)) % 2).astype(int)          # alternate rows form the groups
    strata = (band >= 1).astype(int)
    found = exact_algorithms(S.candidates(kind, t, d, groups, strata, 1000))
    assert "enumeration" in found
    if kind != "tarone-ware":
        assert "dp-integer" in found
    for alternative in ("two-sided", "higher", "lower"):
        want = float(brute_strata_p(kind, t, d, groups, strata, alternative))
        for algorithm in found:
            got = S.run(kind, t, d, groups, strata, alternative, algorithm)
            assert got.method == "exact"
            assert got.p_value == pytest.approx(want, rel=1e-12, abs=1e-15), (alternative,
                                                                              algorithm)


@pytest.mark.parametrize("k", [0, 2])
@pytest.mark.parametrize("kind", ["log-rank", "gehan", "tarone-ware"])
def test_groups_p_equals_the_listing_of_every_assignment(kind, k):
    t, d, band = part(k)
    t, d, band = t[:9], d[:9], band[:9]
    groups = (np.arange(9) % 3).astype(int)
    want, stat = brute_groups_p(kind, t, d, groups)
    found = exact_algorithms(G.candidates(kind, t, d, groups, 1000))
    assert "enumeration" in found
    for algorithm in found:
        got = G.run(kind, t, d, groups, "two-sided", algorithm)
        assert got.p_value == pytest.approx(float(want), rel=1e-12), algorithm
        assert got.statistic == pytest.approx(float(stat), rel=1e-10)


def test_monte_carlo_brackets_the_exact_p_in_both_forms():
    t, d, band = part(1)
    groups = (np.arange(len(t)) % 2).astype(int)
    strata = (band >= 1).astype(int)
    exact = S.run("log-rank", t, d, groups, strata, "two-sided", "enumeration").p_value
    mc = S.run("log-rank", t, d, groups, strata, "two-sided", "monte-carlo", draws=20000, seed=5)
    assert mc.p_interval[0] <= exact <= mc.p_interval[1] and mc.seed == 5
    g3 = (np.arange(len(t)) % 3).astype(int)
    exact = G.run("gehan", t, d, g3, "two-sided", "enumeration").p_value
    mc = G.run("gehan", t, d, g3, "two-sided", "monte-carlo", draws=20000, seed=5)
    assert mc.p_interval[0] <= exact <= mc.p_interval[1]


@pytest.mark.parametrize("kind, weight", [("log-rank", None), ("gehan", "gb"),
                                          ("tarone-ware", "tw")])
def test_chi_squares_agree_with_statsmodels(kind, weight):
    from statsmodels.duration.survfunc import survdiff

    t, d, band = heart()
    chi2, p = survdiff(t, d, band, weight_type=weight)
    nt = NG.chi_square(kind, t, d, band, 3)
    assert nt.statistic == pytest.approx(chi2, rel=1e-9) and nt.df == 2
    assert nt.p_value == pytest.approx(p, rel=1e-8)
    groups = (np.arange(len(t)) % 2).astype(int)
    chi2, p = survdiff(t, d, groups, weight_type=weight, strata=band)
    nt = NS.chi_square(kind, t, d, groups, band, "two-sided")
    assert nt.statistic == pytest.approx(chi2, rel=1e-9) and nt.df == 1
    assert nt.p_value == pytest.approx(p, rel=1e-8)


def test_both_forms_reduce_to_the_published_two_group_figures():
    """One stratum, or two groups in the k-sample form: the remission data's log-rank
    chi-square 16.79 and Gehan 13.46 (Kleinbaum & Klein, Survival Analysis: A Self-Learning
    Text, ch. 2; the values from memory, as in tests/test_events.py)."""
    t = np.array(MP + PLACEBO, float)
    d = np.array(MP_E + PLACEBO_E)
    g = np.array([0] * 21 + [1] * 21)
    one = np.zeros(42, dtype=int)
    for kind, want in (("log-rank", 16.79), ("gehan", 13.46)):
        assert round(NS.chi_square(kind, t, d, g, one, "two-sided").statistic, 2) == want
        assert round(NG.chi_square(kind, t, d, g, 2).statistic, 2) == want
    # the k-sample permutation statistic with two groups is U^2 over its permutation variance
    a = E.unit_scores("log-rank", t, d)[0]
    u = a[:21].sum()
    perm_var = 21 * 21 / (42 * 41) * (a ** 2).sum()
    got = G.run("log-rank", t, d, g, "two-sided", "monte-carlo", draws=1000, seed=1)
    assert got.statistic == pytest.approx(u * u / perm_var, rel=1e-10)


def test_stratified_scores_sum_to_zero_within_each_stratum_and_to_u():
    t, d, band = heart()
    groups = (np.arange(len(t)) % 2).astype(int)
    for kind in E.WEIGHTS:
        sc = S.stratum_scores(kind, t, d, band)
        for s in range(3):
            assert abs(sc.values[band == s].sum()) < 1e-6 * max(1, abs(sc.values).max())
        u, _ = NS.parts(kind, t, d, groups, band)
        assert sc.values[groups == 0].sum() / sc.scale == pytest.approx(u, rel=1e-10)


def test_relabelling_the_groups_mirrors_the_stratified_p():
    t, d, band = part(0)
    groups = (np.arange(len(t)) % 2).astype(int)
    strata = (band >= 1).astype(int)
    hi = S.run("gehan", t, d, groups, strata, "higher", "dp-integer")
    lo = S.run("gehan", t, d, 1 - groups, strata, "lower", "dp-integer")
    assert hi.p_value == pytest.approx(lo.p_value, rel=1e-12)
    assert hi.statistic == pytest.approx(-lo.statistic)


# ---------------------------------------------------------------- the statements

def frame():
    t, d, band = heart()
    names = np.array(["young", "middle", "older"])[band]
    return pd.DataFrame({"days": t, "dead": d, "age": names,
                         "arm": np.where(np.arange(len(t)) % 2 == 0, "A", "B")})


def run(statement):
    return permq.run(statement, tables={"heart": frame()})[-1]


def test_strata_statement_end_to_end():
    r = run("compare days by arm event dead within age")
    assert not isinstance(r, permq.Failure), r
    t, d, band = heart()
    groups = (np.arange(len(t)) % 2).astype(int)
    u, v = NS.parts("log-rank", t, d, groups, band)
    assert r.outcome.statistic == pytest.approx(u, rel=1e-9)
    assert r.estimate.value == pytest.approx(math.exp(u / v))
    d_ = r.to_dict()
    assert d_["normal_interval"]["interval"][0] < d_["estimate"]["value"]
    assert "normal-theory interval" in r.sentence() and "within strata" in r.sentence()
    assert [row["stratum"] for row in r.extra["strata"]] == ["middle", "older", "young"]


def test_groups_statement_end_to_end():
    r = run("compare days by age event dead using gehan")
    assert not isinstance(r, permq.Failure), r
    from statsmodels.duration.survfunc import survdiff

    t, d, band = heart()
    assert r.normal.statistic == pytest.approx(survdiff(t, d, band, weight_type="gb")[0])
    exp = {row["name"]: row["expected"] for row in r.extra["survival"]}
    assert sum(exp.values()) == pytest.approx(d.sum())
    assert "k-sample Gehan" in r.sentence()


@pytest.mark.parametrize("statement, words", [
    ("compare days by age event dead within arm", "strata take two groups"),
    ("compare days by arm event dead within arm", "no stratum of 'arm' holds both"),
    ("compare days by arm event dead within agee", "no column 'agee'"),
    ("compare days by arm event dead using ranks", "choose one of log-rank, gehan"),
    ("compare days by arm using log-rank", "'log-rank' is for censored times"),
])
def test_bad_statements_get_clear_messages(statement, words):
    out = run(statement)
    assert isinstance(out, permq.Failure), out
    assert words in str(out)
    if " event " in statement:           # no hint toward a test that ignores the censoring
        assert "ranks" not in str(out).split("hint:")[-1]


def test_help_and_completion_know_the_forms():
    from permq.help import help_text

    assert "within strata" in help_text("log-rank") and "k - 1 df" in help_text("gehan")

"""The robustness check of censored times: its batched scores, counterpart and permutation
p-values are the engine's and the family's on the same data sets, and the statement runs
under every scheme, reproducibly.

Data: the Stanford heart transplant times (Miller 1976, Biometrika 63:449; statsmodels'
copy) in age bands, as in tests/test_events_layouts.py, and simulated data sets of the
check's own schemes."""
import numpy as np
import pandas as pd
import pytest

import permq
from permq.engine import events as E
from permq.engine import events_groups as G
from permq.engine import events_strata as S
from permq.normal import events_groups as NG
from permq.normal import events_strata as NS
from permq.robustness.arrangements import exact_reference
from permq.robustness.batch import permutation_p
from permq.robustness.censored import check as C
from permq.robustness.censored import schemes as SC
from test_events_layouts import heart


def stack(rows=12, seed=4):
    """Data sets of the check's exponential scheme with ties (times rounded), N = 12."""
    rng = np.random.default_rng(seed)
    t = np.ceil(rng.exponential(5.0, (rows, 12)))
    c = np.ceil(rng.uniform(2, 15, (rows, 12)))
    return np.minimum(t, c), (t <= c).astype(int)


@pytest.mark.parametrize("kind", E.WEIGHTS)
@pytest.mark.parametrize("stratified", [False, True])
def test_batched_scores_are_the_engines(kind, stratified):
    t, d = stack()
    strata = (np.arange(12) % 3 == 0).astype(int) if stratified else None
    a = SC.scores(SC.risk_sets(kind, t, d, strata))
    for i in range(len(t)):
        want = (S.stratum_scores(kind, t[i], d[i], strata) if stratified
                else E.scaled(*E.unit_scores(kind, t[i], d[i])))
        assert a[i] == pytest.approx(want.values / want.scale, rel=1e-9, abs=1e-9)


@pytest.mark.parametrize("kind", ["log-rank", "gehan", "tarone-ware"])
@pytest.mark.parametrize("alternative", ["two-sided", "higher", "lower"])
def test_batched_counterpart_is_the_familys(kind, alternative):
    t, d = stack()
    groups = (np.arange(12) % 2).astype(int)
    strata = (np.arange(12) % 3 == 0).astype(int)
    rs = SC.risk_sets(kind, t, d, strata)
    got = SC.normal_p(rs, SC.scores(rs), groups, alternative)
    for i in range(len(t)):
        nt = NS.chi_square(kind, t[i], d[i], groups, strata, alternative)
        assert got[i] == pytest.approx(1.0 if nt.p_value is None else nt.p_value, rel=1e-9)
    g3 = (np.arange(12) % 3).astype(int)
    rs = SC.risk_sets(kind, t, d, None)
    got = SC.normal_p(rs, SC.scores(rs), g3, "two-sided")
    for i in range(len(t)):
        assert got[i] == pytest.approx(NG.chi_square(kind, t[i], d[i], g3, 3).p_value, rel=1e-8)


@pytest.mark.parametrize("alternative", ["two-sided", "higher", "lower"])
def test_batched_permutation_p_is_the_engines_exact_p(alternative):
    t, d = stack(rows=5)
    groups = (np.arange(12) % 2).astype(np.int64)
    strata = (np.arange(12) % 3 == 0).astype(np.int64)
    lay = C.Layout(t[0], d[0], groups, strata, "gehan", alternative, "")
    problem = C.problem_of(lay)
    ref = exact_reference(problem)
    a = SC.scores(SC.risk_sets("gehan", t, d, strata))
    got = permutation_p(problem, a, ref)
    for i in range(len(t)):
        want = S.run("gehan", t[i], d[i], groups, strata, alternative, "enumeration").p_value
        assert got[i] == pytest.approx(want, rel=1e-9)
    g3 = (np.arange(9) % 3).astype(np.int64)
    lay = C.Layout(t[0, :9], d[0, :9], g3, None, "log-rank", "two-sided", "")
    problem = C.problem_of(lay)
    a = SC.scores(SC.risk_sets("log-rank", t[:, :9], d[:, :9], None))
    got = permutation_p(problem, a, exact_reference(problem))
    for i in range(len(t)):
        want = G.run("log-rank", t[i, :9], d[i, :9], g3, "two-sided", "enumeration").p_value
        assert got[i] == pytest.approx(want, rel=1e-9)


def test_schemes_censor_the_share_they_say():
    first = np.arange(400) % 2 == 0
    for scheme in SC.panel(0.35):
        draw = SC.drawer(scheme, first, None, 7)
        _, e = draw.draw(np.random.default_rng(1), 50)
        share = 1 - e.mean(axis=0)
        if scheme.first is None:
            assert share.mean() == pytest.approx(scheme.censored, abs=0.03), scheme.key
        else:
            assert share[first].mean() == pytest.approx(scheme.first, abs=0.03)
            assert share[~first].mean() == pytest.approx(scheme.censored, abs=0.03)
        assert (scheme.not_exact is None) == (scheme.first is None)


def frame():
    t, d, band = heart()
    keep = np.arange(24)
    return pd.DataFrame({"days": t[keep], "dead": d[keep],
                         "age": np.array(["young", "middle", "older"])[band[keep]],
                         "arm": np.where(keep % 2 == 0, "A", "B")})


@pytest.mark.parametrize("statement", [
    "robustness compare days by arm event dead datasets 200 seed 9",
    "robustness compare days by arm event dead within age datasets 200 seed 9 using gehan",
    "robustness compare days by age event dead datasets 200 seed 9 shift 2",
])
def test_the_statement_runs_under_every_scheme(statement):
    out = permq.run(statement, tables={"heart": frame()})[-1]
    assert not isinstance(out, permq.Failure), out
    assert [r.key for r in out.rows] == [s.key for s in SC.panel(0.3)]
    assert [r.key for r in out.rows if r.not_exact] == ["unequal-censoring"]
    exp = out.rows[0]
    assert 0 <= exp.normal_rate <= 0.2 and 0 <= exp.permutation_rate <= 0.2
    again = permq.run(statement, tables={"heart": frame()})[-1]
    assert [r.permutation_rate for r in again.rows] == [r.permutation_rate for r in out.rows]
    assert "censoring does not depend on the group" in " ".join(out.summary)


def test_a_shift_in_sd_is_refused():
    out = permq.run("robustness compare days by arm event dead shift 1 sd",
                    tables={"heart": frame()})[-1]
    assert isinstance(out, permq.Failure) and "hazard ratio" in str(out)


def test_every_stratum_has_the_share_censored():
    first = np.arange(600) % 2 == 0
    strata = np.arange(600) % 3
    for scheme in SC.panel(0.3)[:4]:
        _, e = SC.drawer(scheme, first, strata, 3).draw(np.random.default_rng(2), 40)
        for s in range(3):
            assert 1 - e[:, strata == s].mean() == pytest.approx(0.3, abs=0.03), scheme.key


def test_explain_names_the_check_without_running_it():
    out = permq.run("explain robustness compare days by arm event dead within age",
                    tables={"heart": frame()})[-1]
    assert not isinstance(out, permq.Failure), out
    assert "scheme of event times and censoring" in str(out)

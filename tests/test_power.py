"""`power ...`: simulated power against closed forms, the search for n, and the statement.

Closed forms:
- two-sample t-test power: statsmodels TTestIndPower (noncentral t);
- rank-sum power: Noether (1987), "Sample size determination for some common nonparametric
  tests", JASA 82:645-647, N = (z_a + z_b)^2 / (12 c (1 - c) (p' - 1/2)^2) with c the first
  group's share and p' = P(X > Y) (the formula from memory), solved for z_b at N;
- the exact sign test: its power summed over the binomial law of the count of positive
  differences (scipy.stats), its rejection region from its own exact p-values.
"""
from __future__ import annotations

import math
from pathlib import Path

import jsonschema
import numpy as np
import pytest

import permq
from permq.contract import schema
from permq.engine.core.progress import Progress
from permq.power.result import PowerResult

DEMO = Path(__file__).resolve().parent.parent / "demo"


def _power(text, **kw):
    out = permq.run(text, **kw)[-1]
    assert isinstance(out, PowerResult), out
    return out


def test_t_test_power_matches_statsmodels():
    from statsmodels.stats.power import TTestIndPower

    r = _power("power groups 20, 20 shift 0.8 sd datasets 4000 seed 11")
    row = r.rows[0]
    closed = TTestIndPower().power(0.8, 20, 0.05)                 # 0.693
    # Welch's t with equal groups and spreads has the pooled t's power within 0.005 here
    assert abs(row.normal.value - closed) < 3.5 * row.normal.se + 0.005
    # the permutation test of the means has the t-test's power asymptotically
    assert abs(row.permutation.value - closed) < 4 * row.permutation.se + 0.02


def test_rank_sum_power_matches_noether():
    from scipy import stats

    r = _power("power groups 20, 20 shift 0.8 sd using ranks datasets 4000 seed 5")
    row = r.rows[0]
    p_prime = stats.norm.cdf(0.8 / math.sqrt(2))                  # P(X > Y), unit normals
    z_b = math.sqrt(12 * 0.25 * 40) * (p_prime - 0.5) - stats.norm.ppf(0.975)
    noether = stats.norm.cdf(z_b)                                  # 0.650
    # an approximation: within its own error of about 0.03 at N = 40 (common practice)
    assert abs(row.permutation.value - noether) < 4 * row.permutation.se + 0.03


@pytest.mark.parametrize("n, shift", [(12, 0.5), (9, 1.0)])
def test_exact_sign_test_power_equals_the_binomial_sum(n, shift):
    from scipy import stats

    r = _power(f"power sample {n} shift {shift} sd using signs datasets 4000 seed 3")
    row = r.rows[0]
    assert row.exact                                  # every one of the 2^n sign patterns
    q = stats.norm.cdf(shift)                         # P(d > 0)
    reject = [k for k in range(n + 1) if stats.binomtest(k, n, 0.5).pvalue <= 0.05 + 1e-12]
    exact_power = sum(stats.binom.pmf(k, n, q) for k in reject)
    assert abs(row.permutation.value - exact_power) < 3.5 * row.permutation.se


def test_level_under_the_null_is_at_most_nominal():
    r = _power("power groups 8, 8 shift 0 sd using ranks datasets 4000 seed 2")
    row = r.rows[0]
    assert row.exact
    assert row.permutation.value <= 0.05 + 3 * row.permutation.se
    assert row.permutation.value >= 0.05 - 0.02 - 3 * row.permutation.se   # discreteness


def test_search_gives_the_smallest_n_reaching_the_target():
    r = _power("power groups 5, 5 shift 1 sd using ranks for power 80% datasets 1000 seed 4")
    by_n = {row.sizes[0]: row for row in r.rows}
    k = r.needed["permutation"]
    assert by_n[k].permutation.value >= 0.8
    assert k - 1 in by_n and by_n[k - 1].permutation.value < 0.8
    assert 15 <= k <= 22          # the t-test needs 17 a group for d = 1 (TTestIndPower)
    # every n saw the same data sets, grown: a direct run at k gives the search's numbers
    again = _power(f"power groups {k}, {k} shift 1 sd using ranks datasets 1000 seed 4")
    assert again.rows[0] == by_n[k]


def test_common_errors_a_larger_design_keeps_the_smaller_one():
    from permq.power.layout import Errors
    from permq.robustness import laws as L

    e = Errors(L.NORMAL, "two-sample", "mean", 50, 9)
    small = e.matrix(np.array([0, 0, 1, 1]))
    big = Errors(L.NORMAL, "two-sample", "mean", 50, 9).matrix(np.array([0, 0, 0, 1, 1, 1]))
    assert np.array_equal(small[:, :2], big[:, :2]) and np.array_equal(small[:, 2:], big[:, 3:5])


def test_smallest_p_warns_of_a_design_that_cannot_reach_the_level():
    r = _power("power groups 3, 3 shift 2 sd")
    assert r.rows[0].smallest_p == pytest.approx(0.1)
    assert r.rows[0].permutation.value == 0.0
    assert any("no outcome of this design can be significant" in w for w in r.warnings)


def test_power_from_a_pilot_data_set():
    base = f'load "{DEMO / "trays.csv"}" as trays\n'
    r = _power(base + 'power compare mass by recipe levels "A", "B" n 10 datasets 500')
    assert r.source == "pilot" and r.rows[0].sizes == (10, 10)
    assert "the pilot's" in r.shift_words
    res = _power(base + 'power compare mass by recipe levels "A", "B" law pilot shift 1 sd '
                        'datasets 500')
    assert res.law == "pilot" and 0 < res.rows[0].permutation.value < 1
    paired = _power(f'load "{DEMO / "seedlings.csv"}" as pots\n'
                    "power compare after vs before paired using ranks shift 0.5 datasets 500")
    assert paired.rows[0].sizes == (10,) and "sd" in paired.shift_words


@pytest.mark.parametrize("text, words", [
    ("power groups 6, 6", "needs the effect to power"),
    ("power groups 6, 6 shift 1", "give it in sd"),
    ("power groups 6, 6 shift 1 sd law pilot", "resamples a pilot's residuals"),
    ("power groups 6, 6 shift 1 sd law lognorml", "did you mean 'lognormal'"),
    ("power groups 6, 6 shift 1 sd for power 2%", "target power"),
    ("power count 3 of 10 vs 0.5 shift 1 sd", "does not apply to counts"),
    ("compare [1, 2, 3] vs [4, 5, 6] n 8", "'n' goes with power"),
    ("compare [1, 2, 3] vs [4, 5, 6] law t3", "'law' goes with power"),
])
def test_bad_power_statements_get_clear_messages(text, words):
    out = permq.run(text)[0]
    assert not isinstance(out, PowerResult)
    assert words in (out.message + " " + (out.hint or "")), out


def test_json_text_and_sentence():
    out = permq.run("power groups 4, 4 shift 1 sd using ranks datasets 200 for power 60%")
    r = out[0]
    record = r.to_dict()
    validator = jsonschema.Draft202012Validator(schema())
    assert not list(validator.iter_errors([record]))
    bad = dict(record, rows=[dict(record["rows"][0], power=1.5)])
    assert list(validator.iter_errors([bad]))
    assert "n for 60%" in str(r) and "permutation test:" in str(r)
    assert "60% power needs n =" in r.sentence()


def test_a_long_search_can_be_stopped():
    calls = []

    def stop():
        calls.append(1)
        return len(calls) > 3

    s = permq.pipeline.Session(should_stop=stop)
    out = s.run("power groups 5, 5 shift 0.3 sd for power 90%")[0]
    assert not isinstance(out, PowerResult) and "cancelled" in out.message


def test_slope_power_at_the_pilots_x_matches_the_noncentral_t():
    from scipy import stats

    base = f'load "{DEMO / "trays.csv"}" as trays\n'
    r = _power(base + "power relate mass to light in trays using slope shift 0.5 sd "
                      "datasets 3000 seed 8")
    row = r.rows[0]
    n = row.sizes[0]
    # a slope of 0.5 sd of error per sd of x: t has noncentrality 0.5 sqrt(n - 1), n - 2 df
    ncp, df = 0.5 * math.sqrt(n - 1), n - 2
    crit = stats.t.ppf(0.975, df)
    closed = stats.nct.sf(crit, df, ncp) + stats.nct.cdf(-crit, df, ncp)
    assert abs(row.normal.value - closed) < 3.5 * row.normal.se

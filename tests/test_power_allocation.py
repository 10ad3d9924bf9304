"""Unequal group sizes in power statements: at given sizes, and kept in the search for n.

Closed forms:
- two-sample t-test power at unequal sizes: statsmodels TTestIndPower (`ratio` = n2 / n1),
  and its solve_power for the first group's n;
- rank-sum power: Noether (1987), "Sample size determination for some common nonparametric
  tests", JASA 82:645-647, N = (z_a + z_b)^2 / (12 c (1 - c) (p' - 1/2)^2) with c the first
  group's share of N (the formula from memory), solved for z_b at N.
"""
from __future__ import annotations

import math

import jsonschema
import pytest

import permq
from permq.contract import schema
from permq.power.result import PowerResult


def _power(text):
    out = permq.run(text)[-1]
    assert isinstance(out, PowerResult), out
    return out


def test_power_at_unequal_sizes_matches_the_t_test_closed_form():
    from statsmodels.stats.power import TTestIndPower

    r = _power("power groups 10, 20 shift 1 sd datasets 4000 seed 11")
    row = r.rows[0]
    assert row.sizes == (10, 20)
    closed = TTestIndPower().power(1.0, 10, 0.05, ratio=2.0)            # 0.703
    # Welch's t at equal spreads has nearly the pooled t's power at 10 + 20 (common practice)
    assert abs(row.normal.value - closed) < 3.5 * row.normal.se + 0.01
    assert abs(row.permutation.value - closed) < 4 * row.permutation.se + 0.02


def test_rank_sum_power_at_unequal_sizes_matches_noether():
    from scipy import stats

    r = _power("power groups 6, 6 shift 1 sd n 8, 16 using ranks datasets 4000 seed 5")
    row = r.rows[0]
    assert row.sizes == (8, 16)
    c, total = 8 / 24, 24
    p_prime = stats.norm.cdf(1 / math.sqrt(2))
    z_b = math.sqrt(12 * c * (1 - c) * total) * (p_prime - 0.5) - stats.norm.ppf(0.975)
    noether = stats.norm.cdf(z_b)                                       # 0.701
    assert abs(row.permutation.value - noether) < 4 * row.permutation.se + 0.03


@pytest.mark.parametrize("text", [
    "power groups 6, 12 shift 1 sd for power 80% datasets 2000 seed 3",       # the layout's own
    "power groups 6, 6 shift 1 sd n 5, 10 for power 80% datasets 2000 seed 3",  # n's sizes
])
def test_search_keeps_the_allocation(text):
    from statsmodels.stats.power import TTestIndPower

    r = _power(text)
    assert r.allocation == [1.0, 2.0]
    for row in r.rows:
        assert row.sizes[1] == max(2, round(2 * row.sizes[0]))
    closed = TTestIndPower().solve_power(1.0, power=0.8, alpha=0.05, ratio=2.0)   # 12.4
    assert abs(r.needed["normal"] - closed) <= 1.6
    assert abs(r.needed["permutation"] - closed) <= 1.6
    # the answer is the first n of the kept allocation that reaches the target
    by_first = {row.sizes[0]: row for row in r.rows}
    k = r.needed["permutation"]
    assert by_first[k].permutation.value >= 0.8 > by_first[k - 1].permutation.value
    assert f"n = {k} + {2 * k}" in str(r) and "2 groups of n + 2 n" in str(r)
    d = r.to_dict()
    jsonschema.validate([d], schema())
    assert d["allocation"] == [1.0, 2.0]


def test_unequal_search_needs_fewer_in_the_first_group_than_an_equal_one():
    equal = _power("power groups 6, 6 shift 1 sd for power 80% datasets 2000 seed 3")
    more = _power("power groups 6, 12 shift 1 sd for power 80% datasets 2000 seed 3")
    assert equal.allocation is None and "n each" in equal.design
    assert more.needed["normal"] < equal.needed["normal"]
    # ... and more units in all (equal allocation is the most efficient, common practice)
    assert 3 * more.needed["normal"] > 2 * equal.needed["normal"]


def test_three_groups_keep_their_allocation():
    r = _power("power groups 4, 8, 4 shift 1 sd for power 80% datasets 1000 seed 2")
    for row in r.rows:
        assert row.sizes == (row.sizes[0], max(2, round(2 * row.sizes[0])), row.sizes[0])


def test_a_pilot_search_is_equal_whatever_the_pilot_sizes():
    r = _power("power compare [4.1, 5.3, 4.8, 5.0] vs [6.0, 5.9, 7.2, 6.6, 6.1, 5.2] "
               "for power 80% datasets 500 seed 1")
    assert r.allocation is None
    assert all(row.sizes[0] == row.sizes[1] for row in r.rows)


def test_sizes_that_do_not_fit_the_groups_are_told():
    out = permq.run("power groups 6, 6 shift 1 sd n 5, 10, 5 for power 80%")[-1]
    assert not isinstance(out, PowerResult)
    assert "'n' gives 3 sizes for 2 groups" in out.message

"""The smallest attainable p of results and plans, against listings of every arrangement.

Brute force: every arrangement listed in exact fractions (ties are ties), the smallest p of
each side taken over all outcomes with the design.md rules; binomial and hypergeometric laws
summed with scipy.stats.
"""
from __future__ import annotations

import itertools
from fractions import Fraction
from math import comb

import jsonschema
import pytest

import permq
from permq.contract import schema
from permq.engine.core import attainable as at

from brute import frac


def _one(text):
    out = permq.run(text)[0]
    assert hasattr(out, "outcome"), out
    return out


def _linear_floor(stats):
    """Smallest one-sided (each side) and two-sided p of a uniform list of statistics."""
    n = len(stats)
    e = sum(stats) / n
    top, bottom = max(stats), min(stats)
    dev = max(abs(s - e) for s in stats)
    return (Fraction(sum(s == top for s in stats), n), Fraction(sum(s == bottom for s in stats), n),
            Fraction(sum(abs(s - e) == dev for s in stats), n))


def _two_sample_brute(x, y, score):
    values = [frac(v) for v in x + y]
    scores = score(values)
    n1 = len(x)
    stats = [sum(scores[i] for i in c) for c in itertools.combinations(range(len(values)), n1)]
    return _linear_floor(stats)


def _midranks(vals):
    return [Fraction(2 * sum(w < v for w in vals) + sum(w == v for w in vals) + 1, 2)
            for v in vals]


@pytest.mark.parametrize("x, y, using, score", [
    ([1.2, 3.4, 2.2], [5.1, 4.4, 6.0], "means", lambda v: v),
    ([1, 1, 2, 5], [2, 3, 3], "ranks", _midranks),           # ties raise the floor
    ([1.5, 2.5, 2.5, 4.0], [2.5, 3.0, 7.0, 7.0, 1.0], "ranks", _midranks),
    ([0.3, 1.7, 2.9, 4.1, 0.2], [5.0, 1.1, 3.3], "means", lambda v: v),
])
def test_two_sample_floor_matches_the_listing(x, y, using, score):
    r = _one(f"compare {x} vs {y} using {using} exact")
    sp = r.extra["smallest_p"]
    higher, lower, two = _two_sample_brute(x, y, score)
    assert sp["one_sided"] == pytest.approx(float(min(higher, lower)), rel=1e-12)
    assert sp["two_sided"] == pytest.approx(float(two), rel=1e-12)
    assert sp["lower_bound"] is False
    # the floor is attained: the p of the most extreme outcome is no smaller than it
    assert r.outcome.p_value >= sp["two_sided"] - 1e-12


def test_one_sided_floor_is_the_tested_side():
    r = _one("compare [1, 1, 2, 5] vs [2, 3, 3] using ranks alternative lower")
    higher, lower, _ = _two_sample_brute([1, 1, 2, 5], [2, 3, 3], _midranks)
    assert r.extra["smallest_p"]["this_test"] == pytest.approx(float(lower))
    r = _one("compare [1, 1, 2, 5] vs [2, 3, 3] using ranks alternative higher")
    assert r.extra["smallest_p"]["this_test"] == pytest.approx(float(higher))


def test_sign_flips_floor_is_two_over_two_to_the_n():
    r = _one("compare [1.2, 3.4, 2.2, 1.1, 0.7] vs 0 using ranks")
    sp = r.extra["smallest_p"]
    assert sp["one_sided"] == pytest.approx(1 / 32)
    assert sp["two_sided"] == pytest.approx(2 / 32)
    assert sp["above_level"] is True
    assert any("no outcome of this design can be significant at 0.05" in w for w in r.warnings)


def test_no_warning_when_the_floor_is_below_the_level():
    r = _one("compare [1.2, 3.4, 2.2, 0.9] vs [5.1, 4.4, 6.0, 3.9] using ranks")
    sp = r.extra["smallest_p"]
    assert sp["two_sided"] == pytest.approx(2 / 70) and sp["above_level"] is False
    assert not any("no outcome" in w for w in r.warnings)
    # a 99% interval asks for the 0.01 level: then the same design cannot reach it
    r = _one("compare [1.2, 3.4, 2.2, 0.9] vs [5.1, 4.4, 6.0, 3.9] using ranks confidence 99%")
    assert r.extra["smallest_p"]["above_level"] is True and r.extra["smallest_p"]["level"] == 0.01


def test_three_groups_of_two_floor_counts_relabelled_groups():
    # Kruskal-Wallis H is unchanged by swapping groups of equal size: 3! of the 90 partitions
    # give the largest H (brute force below), so the floor is 6 / 90, not 1 / 90
    vals = [1.0, 2.0, 3.0, 4.0, 5.0, 6.0]
    r = _one("compare [1, 2] vs [3, 4] vs [5, 6] using ranks")
    hs = []
    for a in itertools.combinations(range(6), 2):
        rest = [i for i in range(6) if i not in a]
        for b in itertools.combinations(rest, 2):
            c = [i for i in rest if i not in b]
            hs.append(sum(Fraction(int(sum(vals[i] for i in g))) ** 2 for g in (a, b, c)))
    floor = Fraction(sum(h == max(hs) for h in hs), len(hs))
    assert floor == Fraction(6, 90)
    assert r.extra["smallest_p"]["two_sided"] == pytest.approx(float(floor))


def test_one_proportion_floor_by_binomial_summation():
    from scipy import stats

    r = _one("count 3 of 6 vs 0.5")
    probs = [stats.binom.pmf(k, 6, 0.5) for k in range(7)]
    least = min(probs)
    two = sum(p for p in probs if p <= least * (1 + 1e-7))
    assert r.extra["smallest_p"]["two_sided"] == pytest.approx(two)       # 2 / 64
    assert r.extra["smallest_p"]["one_sided"] == pytest.approx(1 / 64)


def test_two_by_two_floor_by_hypergeometric_summation():
    from scipy import stats

    r = _one("count [[2, 3], [4, 1]]")
    law = stats.hypergeom(10, 6, 5)                  # margins: 10 in all, 6 in column 1, row 1 of 5
    ks = range(1, 6)
    probs = [law.pmf(k) for k in ks]
    two = sum(p for p in probs if p <= min(probs) * (1 + 1e-7))
    sp = r.extra["smallest_p"]
    assert sp["two_sided"] == pytest.approx(two)
    assert sp["one_sided"] == pytest.approx(min(law.pmf(1), law.pmf(5)))


def test_monte_carlo_floor_is_one_over_draws_plus_one():
    r = _one("compare [1.2, 3.4, 2.2, 0.9] vs [5.1, 4.4, 6.0, 3.9] sampled 999")
    assert r.extra["smallest_p"]["two_sided"] == pytest.approx(1 / 1000)
    assert r.extra["smallest_p"]["lower_bound"] is True


def test_the_plan_states_its_floor():
    note = permq.run("explain compare [1.2, 3.4, 2.2] vs [5.1, 4.4, 6.0]")[0]
    rec = note.data["smallest_p"]
    assert rec["one_sided"] == pytest.approx(1 / 20) and rec["two_sided"] == pytest.approx(2 / 20)
    assert rec["above_level"] and "smallest p: one-sided at least 0.05" in note.text
    assert "no outcome of this design can be significant" in note.text
    unequal = permq.run("explain compare [1.2, 3.4] vs [5.1, 4.4, 6.0]")[0].data["smallest_p"]
    assert unequal["two_sided"] == pytest.approx(1 / 10)        # a bound: 1 / N


def test_the_rules_of_the_two_sided_p():
    support, probs = [0, 1, 2, 3], [0.1, 0.2, 0.3, 0.4]
    assert at.from_law(support, probs, "doubling").two_sided == pytest.approx(0.2)
    assert at.from_law(support, probs, "probability").two_sided == pytest.approx(0.1)
    assert at.from_law(support, probs, "upper").two_sided == pytest.approx(0.4)
    assert at.from_law(support, probs, "linear").two_sided == pytest.approx(0.1)   # E = 2
    assert at.from_law(support, probs, "").two_sided is None


def test_text_sentence_and_schema():
    out = permq.run("compare [1.2, 3.4, 2.2] vs [5.1, 4.4, 6.0]")
    r = out[0]
    assert "smallest p     one-sided 0.0500, two-sided 0.1000" in str(r)
    assert "no outcome of this design can reach p <= 0.05" in r.sentence()
    validator = jsonschema.Draft202012Validator(schema())
    record = r.to_dict()
    assert not list(validator.iter_errors([record]))
    record["smallest_p"] = dict(record["smallest_p"], one_sided=2.0)
    assert list(validator.iter_errors([record]))          # the schema can fail
    assert comb(6, 3) == 20

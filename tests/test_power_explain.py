"""`explain power ...`: what a power statement would do and cost, with nothing simulated.

- At a given n, the reference set and the smallest p it states are the run's own (the same
  design, resized the same way); for counts, the outcomes are (n1 + 1)(n2 + 1).
- For a search, the n it predicts is the normal approximation's, near statsmodels'
  TTestIndPower.solve_power (the t-test's n; within 1.5, the z formula being a little smaller);
  the smallest n that can reach the level is the first with 2 / C(2n, n) <= alpha (rank sum,
  two-sided: the two extreme arrangements, brute force).
"""
from __future__ import annotations

import math

import pytest

import permq
from permq.power.result import PowerResult
from permq.result import Note


def _explain(text) -> Note:
    out = permq.run("explain " + text)[-1]
    assert isinstance(out, Note), out
    return out


@pytest.mark.parametrize("text", ["power groups 6, 6 shift 1 sd",
                                  "power groups 4, 7 shift 1 sd using ranks",
                                  "power pairs 9 shift 0.5 sd law t3",
                                  "power groups 12, 12 shift 1 sd datasets 500"])
def test_fixed_n_states_the_runs_reference_set_and_smallest_p(text):
    note = _explain(text)
    run = permq.run(text)[-1]
    assert isinstance(run, PowerResult)
    row = run.rows[0]
    assert note.data["method"] == "simulation"
    if row.exact:
        assert note.data["reference_size"] == row.arrangements
    assert note.data["smallest_p"] == pytest.approx(row.smallest_p)
    assert note.data["estimated_seconds"] > 0 and note.data["sizes_simulated"] == 1
    assert "time: about" in note.text and "reference set" in note.text


def test_search_predicts_n_near_the_t_tests_and_the_least_significant_n():
    from statsmodels.stats.power import TTestIndPower

    note = _explain("power groups 6, 6 shift 1 sd using ranks for power 80%")
    closed = TTestIndPower().solve_power(1.0, power=0.8, alpha=0.05)          # 16.7
    assert abs(note.data["predicted_n"] - closed) <= 1.5
    least = next(k for k in range(2, 30) if 2 / math.comb(2 * k, k) <= 0.05)  # 4
    assert note.data["least_significant_n"] == least
    assert f"below n = {least}" in note.text and note.data["sizes_simulated"] > 3


def test_search_prediction_keeps_the_allocation():
    from statsmodels.stats.power import TTestIndPower

    note = _explain("power groups 6, 12 shift 0.5 sd for power 90%")
    closed = TTestIndPower().solve_power(0.5, power=0.9, alpha=0.05, ratio=2.0)   # 63.9
    assert abs(note.data["predicted_n"] - closed) <= 1.5
    assert f"n = {note.data['predicted_n']} + {2 * note.data['predicted_n']}" in note.text


def test_a_design_with_no_power_is_told():
    note = _explain("power groups 3, 3 shift 2 sd using ranks")
    assert note.data["smallest_p"] == pytest.approx(0.1)
    assert "no power" in note.text


def test_count_power_explained():
    note = _explain("power count proportions 0.2 vs 0.6 n 10, 15")
    run = permq.run("power count proportions 0.2 vs 0.6 n 10, 15")[-1]
    assert note.data["method"] == "summation" and note.data["outcomes"] == 11 * 16
    assert note.data["smallest_p"] == pytest.approx(run.rows[0].smallest_p)
    scan = _explain("power count proportion 0.7 vs 0.5 for power 80%")
    assert scan.data["sizes_simulated"] > 10 and "arcsine formula" in scan.text


def test_nothing_is_simulated_for_a_bad_statement():
    out = permq.run("explain power groups 6, 6")[-1]
    assert not isinstance(out, Note)
    assert "needs the effect to power" in out.message

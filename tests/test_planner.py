"""The planner: exact within the budget, Monte Carlo past it, 'exact' up to a ceiling and
refused past it with the estimate, 'sampled N' honoured."""
import numpy as np
import pytest

import permq
from conftest import failure_of, result_of
from permq.bind.designs import Settings
from permq.errors import PlanError
from permq.plan import cost, planner
from permq.plan.cost import OPS_PER_SECOND, Candidate


ENGINE = "test-engine"   # no calibration factors are kept for it: the costs stand as given


def seconds(s):
    """ops for an algorithm that takes about s seconds once started"""
    return s * OPS_PER_SECOND


def fake_candidates(draws, exact_seconds=(0.5, 0.2), memory=1e6, feasible=(True, True)):
    return [
        Candidate("enumeration", "complete enumeration", True, seconds(exact_seconds[0]), memory,
                  feasible=feasible[0], arrangements=1e6),
        Candidate("dp-integer", "dynamic programming on integer scores", True,
                  seconds(exact_seconds[1]), memory, feasible=feasible[1], arrangements=1e6),
        Candidate("monte-carlo", "Monte Carlo sampling", False, draws * 10.0, 1e6,
                  note=f"{draws} draws", arrangements=1e6),
    ]


def plan_for(settings, **kw):
    asked = []

    def cands(draws):
        asked.append(draws)
        return fake_candidates(draws, **kw)

    return planner.make_plan(ENGINE, "means", settings, cands), asked


# ---------------------------------------------------------------- the rule, on given costs

def test_cheapest_exact_method_within_the_budget():
    plan, asked = plan_for(Settings("means", seed=3))
    assert plan.method == "exact" and plan.chosen.algorithm == "dp-integer"
    assert plan.reason == "the cheapest exact method within the budget"
    assert asked == [planner.DEFAULT_DRAWS] and plan.seed == 3


def test_a_method_that_cannot_apply_is_never_chosen():
    plan, _ = plan_for(Settings("means"), feasible=(True, False))
    assert plan.chosen.algorithm == "enumeration"


def test_a_method_past_the_memory_limit_is_not_chosen():
    plan, _ = plan_for(Settings("means", memory_bytes=1e5), memory=1e6)
    assert plan.method == "monte-carlo"


def test_monte_carlo_past_the_budget_says_why():
    plan, _ = plan_for(Settings("means", budget_seconds=0.1))
    assert plan.method == "monte-carlo" and plan.draws == planner.DEFAULT_DRAWS
    dp = next(c for c in plan.candidates if c.algorithm == "dp-integer")
    assert plan.reason.startswith("the cheapest exact method (dynamic programming on integer "
                                  "scores) would take ")
    assert planner._seconds(dp.seconds) in plan.reason
    assert plan.reason.endswith(f"past the budget of {planner._seconds(0.1)}")
    assert "about about" not in plan.reason


def test_exact_is_honoured_past_the_budget_up_to_the_ceiling():
    plan, _ = plan_for(Settings("means", budget_seconds=0.1, exact=True),
                       exact_seconds=(4000.0, 600.0))
    assert plan.method == "exact" and plan.chosen.algorithm == "dp-integer"


def test_exact_is_refused_past_the_ceiling_with_the_estimate():
    with pytest.raises(PlanError) as info:
        plan_for(Settings("means", exact=True), exact_seconds=(9.0e6, 20 * 86400))
    err = info.value
    assert err.message == ("'exact' refused: the cheapest exact method (dynamic programming on "
                           f"integer scores) would take about "
                           f"{planner._seconds(20 * 86400 + cost.base_seconds())} and 1 MB; "
                           "the limit is 60 min and 2 GB")
    assert "20 days" in err.message
    assert err.hint == "drop 'exact' for Monte Carlo, or use 'sampled N'"


def test_sampled_is_honoured_even_when_exact_is_cheap():
    plan, asked = plan_for(Settings("means", sampled=5000, seed=9))
    assert plan.method == "monte-carlo" and plan.draws == 5000 and plan.seed == 9
    assert asked == [5000]
    assert plan.reason == "'sampled 5000' asks for Monte Carlo"


def test_the_planner_draws_no_seed_of_its_own():
    """The pipeline decides a statement's seed once (plan/seeds.py); the plan carries it."""
    a, _ = plan_for(Settings("means", sampled=200, seed=123))
    b, _ = plan_for(Settings("means", sampled=200))
    assert a.seed == 123 and b.seed is None


def test_explain_text_lists_every_candidate_and_marks_the_choice():
    plan, _ = plan_for(Settings("means", sampled=2000, seed=4))
    text = str(plan)
    assert text.splitlines()[0] == f"plan: {ENGINE}, family 'means'"
    assert "chosen: Monte Carlo sampling (monte-carlo)" in text
    assert sum(line.lstrip().startswith("*") for line in text.splitlines()) == 1
    assert "complete enumeration" in text and "dynamic programming" in text
    assert "draws: 2,000, seed 4" in text


# ---------------------------------------------------------------- through the language

def _normal_list(seed, n):
    v = np.random.default_rng(seed).normal(size=n)
    return "[" + ", ".join(f"{x:.4f}" for x in v) + "]"


BIG = f"{_normal_list(1, 30)} vs {_normal_list(2, 30)}"   # C(60, 30) = 1.18e17 splits


def test_small_data_are_exact():
    r = result_of("compare [1.5, 2.5, 3.5, 4.5] vs [2.0, 3.0, 4.0, 5.0, 6.0]")
    assert r.outcome.method == "exact" and r.outcome.arrangements == 126


def test_large_data_go_to_monte_carlo_with_the_plan_saying_why():
    note = permq.run(f"explain compare {BIG} using normal-scores")[0]
    assert note.data["method"] == "monte-carlo"
    assert "past the budget of about 5 s" in note.text
    assert "reference set: 1.18e+17 arrangements" in note.text


def test_a_small_budget_sends_data_to_monte_carlo_when_the_draws_are_cheaper():
    ten = f"{_normal_list(3, 10)} vs {_normal_list(4, 10)} using normal-scores"  # C(20, 10)
    assert permq.run(f"explain compare {ten}")[0].data["method"] == "exact"
    out = permq.run(f"set budget 1ms\nexplain compare {ten}")
    assert out[1].data["method"] == "monte-carlo"


def test_a_small_budget_keeps_exact_when_it_is_cheaper_than_the_draws():
    out = permq.run("set budget 1ms\nexplain compare [1.5, 2.5, 3.5, 4.5, 5.5, 6.5, 7.5] vs "
                    "[2, 3, 4, 5, 6, 7, 8, 9, 10]")
    assert out[1].data["method"] == "exact"
    assert "but Monte Carlo would take longer" in out[1].text


def test_exact_past_the_budget_is_chosen_when_cheaper_than_monte_carlo():
    def cands(draws):
        return fake_candidates(draws, exact_seconds=(2.0, 0.5))[:2] + [
            Candidate("monte-carlo", "Monte Carlo sampling", False, seconds(1.0), 1e6)]
    plan = planner.make_plan(ENGINE, "means", Settings("means", budget_seconds=0.1), cands)
    assert plan.method == "exact" and plan.chosen.algorithm == "dp-integer"
    took = planner._seconds(0.5 + cost.base_seconds(ENGINE, "means"))  # plus the fixed cost
    assert plan.reason.startswith(f"the cheapest exact method would take {took}, past "
                                  "the budget of about 0.1 s, but Monte Carlo would take longer")
    plan = planner.make_plan(ENGINE, "means", Settings("means", budget_seconds=0.1,
                                                       memory_bytes=1e5), cands)
    assert plan.method == "monte-carlo"          # the exact methods do not fit the memory


def test_exact_refused_in_the_language_with_the_estimate():
    f = failure_of(f"compare {BIG} using normal-scores exact")
    assert f.kind == "plan error"
    assert f.message.startswith("'exact' refused: the cheapest exact method (complete "
                                "enumeration) would take about ")
    assert "days" in f.message and "the limit is 60 min and 2 GB" in f.message
    assert f.hint == "drop 'exact' for Monte Carlo, or use 'sampled N'"


def test_sampled_in_the_language():
    r = result_of("compare [1, 2, 3] vs [4, 5, 6] sampled 500 seed 3")
    assert r.outcome.method == "monte-carlo"
    assert (r.outcome.draws, r.outcome.seed) == (500, 3)
    assert r.outcome.p_value * 501 == pytest.approx(round(r.outcome.p_value * 501))


def test_normal_scores_use_enumeration_for_small_data():
    r = result_of("compare [1.1, 2.3, 0.7, 1.9] vs [2.8, 3.1, 2.2, 4.0, 1.5] using normal-scores")
    assert r.outcome.method == "exact" and r.outcome.algorithm == "complete enumeration"

"""Robustness checks, diagnostics and pictures.

The simulated tests are checked against the engines they stand for (same p-values on the same
data), the simulated rates against what theory says they must be (the level of a test that is
exact under normal errors; the permutation test under exchangeable errors), against the
published direction of the t test's error under skew, and the pictures against the exact null
distributions they draw. Every simulation has a fixed seed, so the numbers do not move.
"""
from __future__ import annotations

import csv
import io
import itertools
import json
import math
import sys

import numpy as np
import pandas as pd
import pytest
from scipy import stats

import permq
from permq.bind.binder import bind
from permq.bind.common import Defaults
from permq.render import render
from permq.render.pictures import picture_lines
from permq.robustness import laws as L
from permq.robustness.arrangements import distinct_arrangements, exact_reference
from permq.robustness.batch import normal_p, observed_statistic, permutation_p, scores
from permq.robustness.pictures import reported
from permq.robustness.problem import data_row, pattern_for, problem_for
from permq.robustness.result import RobustnessResult
from permq.robustness.simulate import simulate
from permq.syntax.parser import parse_script

from conftest import inline

RNG = np.random.default_rng(20261202)
A5, B5, C4 = RNG.normal(0, 1, 5), RNG.normal(0.8, 1, 5), RNG.normal(1.2, 1.5, 4)
D10 = RNG.normal(0.5, 1, 10)
E10 = D10 * 0.5 + RNG.normal(0, 0.3, 10)
XS = np.arange(1.0, 8.0)
# blocks: 4 blocks x 3 treatments (complete), and 2 groups in blocks of unequal sizes
BLK = pd.DataFrame({"y": np.round(RNG.normal(0, 1, 12) + np.repeat([0.0, 2.0, -1.0, 0.5], 3)
                                  + np.tile([0.0, 0.4, 0.9], 4), 3),
                    "g": np.tile(["lo", "mid", "hi"], 4), "b": np.repeat([1, 2, 3, 4], 3)})
STR = pd.DataFrame({"y": np.round(RNG.normal(0, 1, 11), 3),
                    "g": ["a", "b", "a", "b", "b", "a", "a", "b", "a", "b", "b"],
                    "b": [1, 1, 1, 2, 2, 2, 2, 3, 3, 3, 3]})
TABLES = {"t": pd.DataFrame({"y": 0.3 * XS + RNG.normal(0, 1, 7), "x": XS,
                             "z": RNG.normal(0, 1, 7)}),
          "blk": BLK, "str": STR,
          "tied": pd.DataFrame({"y": np.round(RNG.normal(0, 1, 8), 3),
                                "x": [1.0, 1.0, 2.0, 2.0, 3.0, 3.0, 4.0, 4.0]})}


def _statements():
    out = []
    for fam in ("means", "ranks", "normal-scores", "medians"):
        out += [f"compare {inline(A5)} vs {inline(B5)} using {fam} alternative {alt}"
                for alt in ("two-sided", "higher", "lower")]
        out.append(f"compare {inline(A5)} vs {inline(B5)} vs {inline(C4)} using {fam}")
    for fam in ("means", "ranks", "signs"):
        for alt in ("two-sided", "higher", "lower"):
            out.append(f"compare {inline(D10)} vs 0.2 using {fam} alternative {alt}")
            out.append(f"compare {inline(D10)} vs {inline(E10)} paired using {fam} "
                       f"alternative {alt}")
    for alt in ("two-sided", "higher", "lower"):
        out.append(f"compare {inline(A5)} vs {inline(B5)} vs {inline(C4)} ordered "
                   f"alternative {alt}")
        out += [f"relate y to x in t using {fam} alternative {alt}"
                for fam in ("slope", "pearson", "spearman", "kendall")]
        out.append(f"compare {inline(A5)} vs {inline(B5)} vs {inline(C4)} ordered using ranks "
                   f"alternative {alt}")
        out.append(f"relate y to x in tied using kendall alternative {alt}")   # ties in x
        out.append(f"compare [1, 2, 2, 3] vs [2, 3, 3, 4] vs [3, 4, 5, 5] ordered using ranks "
                   f"alternative {alt}")                                      # ties in y
        out.append(f'compare y by g ordered "lo" < "mid" < "hi" within b using ranks in blk '
                   f'alternative {alt}')
        out += [f'compare y by g levels "a", "b" within b using {fam} in str alternative {alt}'
                for fam in ("means", "ranks")]
    out += [f"compare y by g within b using {fam} in blk" for fam in ("means", "ranks")]
    return out


def _design_and_result(text):
    session = permq.Session(tables=TABLES)
    design = bind(parse_script(text)[0].node, session.catalog, Defaults())
    return design, session.run(text)[0]


# ---------------------------------------------------------------- the simulated tests

@pytest.mark.parametrize("text", _statements())
def test_vectorised_tests_give_the_engines_p_values(text):
    """One data set through the vectorised tests gives the exact p-value, the normal-theory
    p-value and the statistic that the pipeline reports for it."""
    design, result = _design_and_result(text)
    pb = problem_for(design)
    y = data_row(design)[None, :]
    a = scores(pb, y)
    ref = exact_reference(pb, limit=10 ** 7)
    assert result.outcome.method == "exact"
    assert permutation_p(pb, a, ref)[0] == pytest.approx(result.outcome.p_value, rel=1e-9)
    assert normal_p(pb, y, a)[0] == pytest.approx(result.normal.p_value, rel=1e-9)
    t = reported(pb, a[0], observed_statistic(pb, a))[0]
    assert t == pytest.approx(result.outcome.statistic, rel=1e-9, abs=1e-12)


def test_distinct_arrangements_list_every_arrangement_once():
    codes = np.array([0, 0, 1, 1, 2])
    rows = distinct_arrangements(codes)
    brute = set(itertools.permutations(codes.tolist()))
    assert len(rows) == len(brute) == math.factorial(5) // (2 * 2)
    assert {tuple(r) for r in rows} == brute


def test_laws_are_standardised_and_centred():
    rng = np.random.default_rng(5)
    for law in L.SHAPES:
        e = law.draw(rng, 400_000)
        assert abs(e.mean()) < 0.02 and abs(e.var() - 1) < (0.2 if law is L.T3 else 0.03), law.key
    exp = L.EXPONENTIAL.draw(rng, 400_000)
    m = L.centre("exponential", "median")
    assert m == pytest.approx(math.log(2) - 1, abs=1e-9)
    # pseudo-median of the centred exponential: (e1 + e2) / 2 has the median of Gamma(2, 1/2)
    assert L.centre("exponential", "pseudo-median") == pytest.approx(stats.gamma.median(2) / 2 - 1,
                                                             abs=1e-7)
    assert np.mean(exp - m < 0) == pytest.approx(0.5, abs=0.003)


def _problem(text, tables=None):
    session = permq.Session(tables=tables or TABLES)
    return problem_for(bind(parse_script(text)[0].node, session.catalog, Defaults()))


def _sim(text, datasets, seed, panel=None, alpha=0.05):
    pb = _problem(text)
    pattern, _, _ = pattern_for(pb, (1.0, True))
    return {r.law.key: r for r in simulate(pb, pattern, datasets, alpha, seed, panel=panel).rates}


def _within(rate, alpha, z=3.0):
    se = max(rate.se, math.sqrt(alpha * (1 - alpha) / 4000))
    return abs(rate.value - alpha) <= z * se


X8 = [10.1, 9.4, 11.0, 10.6, 9.9, 10.3, 9.1, 10.8]
Y8 = [11.2, 10.7, 11.9, 10.4, 11.5, 12.0, 10.9, 11.3]


def test_normal_theory_holds_its_level_under_normal_errors():
    """The paired t, the one-way F and the slope t are exact under normal errors, Welch's t
    nearly so: their simulated rates are the level within Monte Carlo error."""
    for text in (f"compare {inline(D10)} vs {inline(E10)} paired",
                 f"compare {inline(A5)} vs {inline(B5)} vs {inline(C4)}",
                 "relate y to x in t using slope",
                 f"compare {inline(X8)} vs {inline(Y8)}",
                 "compare y by g within b using means in blk",          # additive F
                 'compare y by g levels "a", "b" within b in str',      # t with blocks
                 "relate y to x in t using slope adjusting for z"):     # least-squares t
        rates = _sim(text, 4000, 17, panel=(L.NORMAL,))
        assert _within(rates["normal"].normal_null, 0.05), (text, rates["normal"].normal_null)


def test_permutation_test_never_exceeds_the_level_under_exchangeable_laws():
    cases = [(f"compare {inline(X8)} vs {inline(Y8)}", True),            # exact, 12,870
             (f"compare {inline(X8)} vs {inline(Y8)} using ranks", True),
             (f"compare {inline(D10)} vs {inline(E10)} paired", True),   # exact, 1,024
             (f"compare {inline(A5)} vs {inline(B5)} vs {inline(C4)}", False),   # Monte Carlo
             ("relate y to x in t using slope", True),                   # exact, 5,040
             ("relate y to x in t using kendall", True),                 # exact, 5,040
             (f"compare {inline(A5)} vs {inline(B5)} vs {inline(C4)} ordered using ranks",
              False),                                                    # Jonckheere-Terpstra
             ("compare y by g within b in blk using ranks", True),                   # Friedman, 6^4
             ('compare y by g levels "a", "b" within b using ranks in str', True)]
    checked = 0
    for text, exact in cases:
        pb = _problem(text)
        assert (exact_reference(pb) is not None) == exact
        pattern, _, _ = pattern_for(pb, (1.0, True))
        sim = simulate(pb, pattern, 1500, 0.05, 23)
        for r in sim.rates:
            if r.not_exact:
                continue
            rate = r.permutation_null
            se = max(rate.se, math.sqrt(0.05 * 0.95 / 1500))
            assert rate.value <= 0.05 + 3 * se, (text, r.law.key, rate)
            checked += 1
    assert checked == 8 * 5 + 6        # paired: every law keeps the pairs exchangeable


def test_adjusted_slope_check_is_the_residual_permutation_test_by_brute_force():
    """Freedman-Lane on 7 units: the vectorised test over all 5,040 arrangements gives the p
    of permuting the reduced model's residuals one arrangement at a time (engine's t), and
    its normal-theory p is the least-squares t test of the adjusted slope."""
    from permq.engine.association.adjusted import adjusted_t, reduced_model
    from permq.normal.association import adjusted_slope

    t = TABLES["t"]
    design, result = _design_and_result("relate y to x in t using slope adjusting for z")
    pb = problem_for(design)
    y = data_row(design)[None, :]
    a = scores(pb, y)
    rm = reduced_model(t.y.to_numpy(), t.x.to_numpy(), t[["z"]].to_numpy())
    t_obs = float(adjusted_t(rm, rm.resid)[0])
    assert observed_statistic(pb, a)[0] == pytest.approx(t_obs, rel=1e-9)
    assert result.outcome.statistic == pytest.approx(t_obs, rel=1e-9)
    perms = np.array(list(itertools.permutations(range(7))))
    brute = adjusted_t(rm, rm.resid[perms])
    for alt, hits in (("two-sided", np.abs(brute) >= abs(t_obs) * (1 - 1e-9)),
                      ("higher", brute >= t_obs - 1e-9 * abs(t_obs)),
                      ("lower", brute <= t_obs + 1e-9 * abs(t_obs))):
        pb_alt = problem_for(bind(parse_script(
            f"relate y to x in t using slope adjusting for z alternative {alt}")[0].node,
            permq.Session(tables=TABLES).catalog, Defaults()))
        ref = exact_reference(pb_alt)
        assert ref is not None and ref.count == 5040
        assert permutation_p(pb_alt, a, ref)[0] == pytest.approx(hits.mean(), rel=1e-12)
        ols = adjusted_slope(t.y, t.x, t[["z"]], alt)[0]
        assert normal_p(pb_alt, y, a)[0] == pytest.approx(ols.p_value, rel=1e-9)


def test_t_test_under_strong_skew_at_tiny_n_errs_in_the_published_direction():
    """Right-skewed errors, one sample of 6, t test of the mean. Reineke, Baggett and Elfessi,
    "A Note on the Effect of Skewness, Kurtosis, and Shifting on One-Sample t and Sign Tests",
    Journal of Statistics Education 11(3), 2003, Introduction (reporting Chaffin and Rhiel,
    1993): the level of the one-sample t test is above the nominal level when the
    population's skewness is opposite to the tail of the rejection region (and, as the same
    studies imply, below it in the same tail). Cressie, "Relaxing assumptions in the one
    sample t-test", Australian Journal of Statistics 22, 1980, summary: positively skewed data
    give a negatively skewed t. So: liberal for 'lower', conservative for 'higher'."""
    data = [1.1, 2.3, 0.4, 3.5, 1.9, 0.7]
    panel = (L.EXPONENTIAL, L.LOGNORMAL)
    lower = _sim(f"compare {inline(data)} vs 0 alternative lower", 4000, 31, panel)
    higher = _sim(f"compare {inline(data)} vs 0 alternative higher", 4000, 31, panel)
    for key in ("exponential", "lognormal"):
        lo, hi = lower[key].normal_null, higher[key].normal_null
        assert lo.value > 0.05 + 3 * lo.se, (key, lo)
        assert hi.value < 0.05 - 3 * max(hi.se, 0.0034), (key, hi)
        assert lower[key].not_exact        # sign flips need symmetry; the report says so


def test_friedman_chi_square_at_few_blocks_errs_in_the_published_direction():
    """Five blocks of four treatments, normal errors: the chi-square approximation to
    Friedman's statistic rejects less often than the level. Iman and Davenport,
    "Approximations of the critical region of the Friedman statistic", Communications in
    Statistics A9(6), 1980 (from memory): the chi-square approximation is conservative,
    markedly so with few blocks. Read: "An improved nonparametric test and sample size
    procedures for the randomized complete block designs", arXiv:2503.17179 (2025), abstract:
    "the chi-square approximation is generally conservative". The exact test keeps its level
    (within Monte Carlo error)."""
    rng = np.random.default_rng(41)       # the design only; the responses are simulated
    frame = pd.DataFrame({"y": rng.normal(0, 1, 20), "g": np.tile(["a", "b", "c", "d"], 5),
                          "b": np.repeat(np.arange(5), 4)})
    pb = _problem("compare y by g within b in f using ranks", tables={"f": frame})
    assert pb.family == "friedman"
    sim = simulate(pb, np.zeros(pb.n), 4000, 0.05, 43, panel=(L.NORMAL,))
    normal, perm = sim.rates[0].normal_null, sim.rates[0].permutation_null
    assert normal.value < 0.05 - 3 * max(normal.se, math.sqrt(0.05 * 0.95 / 4000)), normal
    assert perm.value <= 0.05 + 3 * max(perm.se, math.sqrt(0.05 * 0.95 / 4000)), perm


def test_unequal_spread_breaks_the_permutation_test_and_the_report_says_so():
    """4 against 12, the small group three times as wide: the permutation test of the mean
    difference (like the pooled t) rejects too often, Welch's t does not (common practice)."""
    small, large = [5.1, 4.2, 6.3, 5.7], [5.0, 5.5, 4.9, 5.2, 4.4, 6.1, 5.3, 4.7, 5.8, 5.1, 4.6, 5.4]
    out = permq.run(f"robustness compare {inline(small)} vs {inline(large)} datasets 2000 seed 5")
    rr = out[0]
    assert isinstance(rr, RobustnessResult), out
    row = next(r for r in rr.rows if r.key == "unequal-spread")
    assert row.not_exact and row.permutation_rate > 0.05 + 3 * row.permutation_se
    assert row.normal_verdict == "holds its level"
    assert any("loses its exactness" in s and "unequal spread" in s for s in rr.summary)
    assert "permutation not exact (too liberal)" in row.verdict


# ---------------------------------------------------------------- the statement

def test_robustness_statement_end_to_end_and_reproducible():
    text = f"robustness compare {inline(X8)} vs {inline(Y8)} using ranks datasets 300 seed 9"
    first, second = permq.run(text)[0], permq.run(text)[0]
    assert isinstance(first, RobustnessResult)
    assert [r.to_dict() for r in first.rows] == [r.to_dict() for r in second.rows]
    d = json.loads(json.dumps(first.to_dict()))
    assert d["family"] == "robustness" and len(d["laws"]) == 6
    assert d["simulated_permutation_test"] == {
        "method": "exact", "arrangements": 12870,
        "description": "exact: all 12,870 arrangements, for every data set"}
    plain = permq.run(f"compare {inline(X8)} vs {inline(Y8)} using ranks")[0]
    assert d["observed"]["p_value"] == pytest.approx(plain.outcome.p_value)
    block = render([first], "text")
    for word in ("rejection rate under the null", "verdict", "unequal spread", "▲"):
        assert word in block
    assert "| unequal spread |" in render([first], "markdown")
    row = next(csv.DictReader(io.StringIO(render([first], "csv"))))
    assert (row["family"], row["method"], row["seed"]) == ("robustness", "exact", "9")


def test_session_history_pins_the_seed():
    s = permq.Session()
    s.run(f"robustness compare {inline(X8)} vs {inline(Y8)} datasets 200")
    seed = int(s.history[-1].rsplit("seed ", 1)[1])
    again = permq.run(s.history[-1])[0]
    assert again.seed == seed


def test_shift_in_sd_and_in_data_units_agree():
    pb = _problem(f"compare {inline(X8)} vs {inline(Y8)}")
    p1, value, in_sd = pattern_for(pb, (0.8, True))
    p2, value2, in_sd2 = pattern_for(pb, (value, False))
    assert np.allclose(p1, p2) and in_sd2 == pytest.approx(0.8) and value2 == value
    observed, effect, _ = pattern_for(pb, None)
    assert effect == pytest.approx(np.mean(X8) - np.mean(Y8))


@pytest.mark.parametrize("suffix, message", [
    ("datasets 50", "100 to 1,000,000"),
    ("significance 70%", "between 0% and 50%"),
    ("significance 5", "is not a level"),
    ('picture "x.jpg"', ".png or .svg"),
])
def test_robustness_options_are_checked(suffix, message):
    f = permq.run(f"robustness compare {inline(X8)} vs {inline(Y8)} {suffix}")[0]
    assert isinstance(f, permq.Failure) and message in f.message


def test_check_options_outside_a_check_are_refused_with_a_hint():
    f = permq.run(f"compare {inline(X8)} vs {inline(Y8)} datasets 500")[0]
    assert isinstance(f, permq.Failure) and "robustness" in f.hint


def test_significance_sets_the_level():
    rr = permq.run(f"robustness compare {inline(D10)} vs 0 significance 1% datasets 200 seed 2")[0]
    assert rr.significance == 0.01
    assert "at 1%" in rr.summary[0] or "its 1% level" in rr.summary[0]


@pytest.mark.parametrize("text, statistic, normal", [
    ("relate y to x in t using kendall", "Kendall", "Kendall's S"),
    ("relate y to x in t using slope adjusting for z", "adjusted", "adjusted for covariates"),
    (f"compare {inline(A5)} vs {inline(B5)} vs {inline(C4)} ordered using ranks",
     "Jonckheere", "Jonckheere-Terpstra"),
    ("compare y by g within b in blk using ranks", "Friedman", "Friedman"),
    ("compare y by g within b using means in blk", "F for treatments", "F for treatments"),
    ('compare y by g ordered "lo" < "mid" < "hi" within b using ranks in blk', "Page", "Page"),
    ('compare y by g levels "a", "b" within b in str', "stratified", "additive model"),
])
def test_every_design_kind_has_a_check(text, statistic, normal):
    """Blocked designs, Jonckheere-Terpstra, Kendall and the adjusted slope run end to end,
    with their own statistic and normal-theory counterpart, six laws and valid JSON."""
    rr = permq.run(f"robustness {text} datasets 200 seed 3", tables=TABLES)[0]
    assert isinstance(rr, RobustnessResult), rr
    assert statistic in rr.statistic and normal in rr.normal_test
    d = json.loads(json.dumps(rr.to_dict(), allow_nan=False))
    assert len(d["laws"]) == 6
    for law in d["laws"]:
        for side in ("normal_theory", "permutation"):
            assert 0 <= law[side]["rejection_rate"] <= 1 and 0 <= law[side]["power"] <= 1
    for row in rr.rows:        # which laws break exactness, and that the report says so
        spread = row.key in ("unequal-spread", "spread-with-x")
        assert bool(row.not_exact) == (spread or "adjusting" in text), (row.key, row.not_exact)
    again = permq.run(f"robustness {text} datasets 200 seed 3", tables=TABLES)[0]
    assert again.to_dict()["laws"] == d["laws"]


def test_a_cancel_stops_the_simulation():
    calls = []

    def stop():
        calls.append(1)
        return len(calls) > 3

    s = permq.Session(should_stop=stop)
    f = s.run(f"robustness compare {inline(X8)} vs {inline(Y8)} datasets 100000 seed 1")[0]
    assert isinstance(f, permq.Failure) and f.kind == "cancelled"


# ---------------------------------------------------------------- diagnostics

def test_a_design_too_small_for_the_level_is_said_to_be_so():
    rr = permq.run("robustness compare [1.2, 3.4, 2.2] vs [2.2, 0.3, 1.1] datasets 200 seed 8")[0]
    assert all(r.permutation_rate == 0 for r in rr.rows)      # 20 arrangements: p >= 0.1
    assert any("never rejected" in s and "20 arrangements" in s for s in rr.summary)
    assert rr.normal_test == "Welch t"


def test_diagnostics_on_every_result():
    x, y = [4.1, 5.3, 4.8, 5.0, 7.9], [6.0, 5.9, 7.2, 6.6, 6.1, 6.3]
    r = permq.run(f"compare {inline(x)} vs {inline(y)}")[0]
    d = r.extra["diagnostics"]
    resid = np.r_[np.subtract(x, np.mean(x)), np.subtract(y, np.mean(y))]
    sd = math.sqrt((resid ** 2).sum() / (len(resid) - 2))
    assert d["skewness"] == pytest.approx(stats.skew(resid, bias=False))
    assert d["largest_residual_sd"] == pytest.approx(np.abs(resid).max() / sd)
    assert d["spread_ratio"] == pytest.approx(np.std(x, ddof=1) / np.std(y, ddof=1))
    assert d["disagree"] is False
    assert "diagnostics" in render([r], "text")
    assert json.loads(render([r], "json"))[0]["diagnostics"]["level"] == 0.05


def test_diagnostics_flag_p_values_on_opposite_sides():
    """3 against 3: the smallest two-sided permutation p-value is 2/20 = 0.1, while Welch's t
    finds a clear shift significant."""
    r = permq.run("compare [1.0, 1.1, 1.2] vs [2.0, 2.1, 2.2]")[0]
    assert r.outcome.p_value == pytest.approx(0.1) and r.normal.p_value < 0.05
    assert r.extra["diagnostics"]["disagree"] is True
    assert "opposite sides of 5%" in render([r], "text")


def test_diagnostics_for_slopes_and_tables():
    r = permq.run("relate y to x in t using slope", tables=TABLES)[0]
    d = r.extra["diagnostics"]
    assert d["spread_ratio_of"].startswith("residual sd above the median of x")
    t = permq.run("count [[9, 1], [3, 7]]")[0]
    assert t.extra["diagnostics"]["skewness"] is None


# ---------------------------------------------------------------- pictures

@pytest.mark.parametrize("alternative", ["higher", "lower", "two-sided"])
def test_null_picture_mass_is_one_and_the_observed_value_sits_in_its_bin(alternative, tmp_path):
    r = permq.run(f"compare {inline(X8)} vs {inline(Y8)} alternative {alternative} "
                  'picture "n.png"', base_dir=tmp_path)[0]
    pic = r.extra["null_picture"]
    masses, edges, b = np.array(pic["masses"]), pic["edges"], pic["observed_bin"]
    assert masses.sum() == pytest.approx(1.0, abs=1e-12)
    assert edges[b] <= pic["observed"] <= edges[b + 1]
    assert pic["observed"] == pytest.approx(r.outcome.statistic)
    p = r.outcome.p_value
    if alternative == "higher":      # bins wholly above the observed one hold at most p
        assert masses[b + 1:].sum() - 1e-9 <= p <= masses[b:].sum() + 1e-9
    if alternative == "lower":
        assert masses[:b].sum() - 1e-9 <= p <= masses[:b + 1].sum() + 1e-9
    lines = picture_lines(pic)
    marker = lines[-2]
    assert marker.index("▲") - 17 == b and len(marker) - 17 == len(masses)


def test_null_picture_from_monte_carlo_draws(tmp_path):
    r = permq.run('relate y to x in t using slope sampled 2000 seed 4 picture "s.svg"',
                  tables=TABLES, base_dir=tmp_path)[0]
    pic = r.extra["null_picture"]
    assert pic["source"].startswith("Monte Carlo, 20,000 random arrangements")
    assert sum(pic["masses"]) == pytest.approx(1.0)
    assert pic["edges"][pic["observed_bin"]] <= pic["observed"] <= pic["edges"][pic["observed_bin"] + 1]
    # the null of the slope is symmetric about 0: half the mass on each side (Monte Carlo)
    centres = (np.array(pic["edges"][:-1]) + np.array(pic["edges"][1:])) / 2
    assert np.sum(np.array(pic["masses"])[centres > 0]) == pytest.approx(0.5, abs=0.03)


@pytest.mark.parametrize("text", [
    "relate y to x in t using slope adjusting for z sampled 20000 seed 6",
    "compare y by g within b using means in blk sampled 20000 seed 6",
    "compare y by g within b in blk using ranks sampled 20000 seed 6",
    f"compare {inline(A5)} vs {inline(B5)} vs {inline(C4)} ordered using ranks sampled 20000 "
    "seed 6",
])
def test_monte_carlo_pictures_draw_the_reported_statistic(text):
    """Where the engine keeps no null distribution, the picture's draws are of the statistic
    the result reports: the share of their mass at or beyond the observed value is the
    engine's Monte Carlo p (same kind of draws, other seeds) within Monte Carlo error."""
    from permq.robustness.pictures import sampled_statistics

    design, result = _design_and_result(text)
    pb = problem_for(design)
    draws = sampled_statistics(pb, data_row(design), 11, 20_000)
    t = result.outcome.statistic
    if pb.form == "quadratic":
        share = np.mean(draws >= t * (1 - 1e-9))
    elif pb.form == "residual":
        share = np.mean(np.abs(draws) >= abs(t) * (1 - 1e-9))
    else:                        # Jonckheere-Terpstra J: two-sided about its mean
        centre = (pb.n ** 2 - float((pb.sizes ** 2).sum())) / 4
        share = np.mean(np.abs(draws - centre) >= abs(t - centre) - 1e-9)
    p = result.outcome.p_value
    assert abs(share - p) <= 4 * math.sqrt(p * (1 - p) * (1 / 20_000 + 1 / 20_000)) + 1e-4


def test_picture_file_needs_matplotlib_and_says_how_to_get_it(monkeypatch, tmp_path):
    monkeypatch.setitem(sys.modules, "matplotlib", None)
    monkeypatch.setitem(sys.modules, "matplotlib.figure", None)
    r = permq.run(f'compare {inline(X8)} vs {inline(Y8)} picture "n.png"', base_dir=tmp_path)[0]
    assert any('pip install "permq[pictures]"' in w for w in r.warnings)
    assert not (tmp_path / "n.png").exists()
    assert "▲" in render([r], "text")          # the terminal picture is still there


def test_picture_files_are_written_with_matplotlib(tmp_path):
    pytest.importorskip("matplotlib")
    r = permq.run(f'compare {inline(X8)} vs {inline(Y8)} picture "n.png"', base_dir=tmp_path)[0]
    assert (tmp_path / "n.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n", r.warnings
    rr = permq.run(f'robustness compare {inline(X8)} vs {inline(Y8)} datasets 200 seed 3 '
                   'picture "panel.svg"', base_dir=tmp_path)[0]
    assert "<svg" in (tmp_path / "panel.svg").read_text()[:2000], rr.warnings


@pytest.mark.parametrize("text, message, hint", [
    ('compare y, z by g levels "lo", "hi" in blkz', "one response at a time",
     "robustness compare y by g"),
    ("compare y by g pairwise in blkz", "one comparison at a time", 'levels "hi", "lo"'),
])
def test_several_responses_are_checked_one_at_a_time(text, message, hint):
    frame = BLK.assign(z=BLK.y * 2)
    f = permq.run(f"robustness {text}", tables={"blkz": frame})[0]
    assert isinstance(f, permq.Failure) and message in f.message and hint in f.hint, f


def test_explain_says_what_a_check_would_do_and_runs_nothing():
    s = permq.Session(tables=TABLES)
    note = s.run(f"explain robustness compare {inline(X8)} vs {inline(Y8)} datasets 500")[0]
    assert isinstance(note, permq.Note), note
    assert "6 error laws x 500 data sets" in note.text and "12,870 arrangements (exact)" in note.text
    assert 0 < note.data["estimated_seconds"] < 30 and note.data["method"] == "exact"
    blocked = s.run("explain robustness compare y by g within b in blk using ranks")[0]
    assert "family 'friedman'" in blocked.data["plan"]
    assert "1,296 arrangements (exact)" in blocked.text
    table = s.run("explain robustness count [[9, 1], [3, 7]] shift 3")[0]
    assert isinstance(table, permq.Note) and table.data["estimated_seconds"] is None
    text = "explain robustness count [[9, 1], [3, 7], [1, 1]] shift 2"
    bad = s.run(text)[0]
    assert isinstance(bad, permq.Failure) and bad.column == text.index("shift") + 1
    assert s.history == []            # nothing ran


def test_few_data_sets_are_said_to_give_blunt_verdicts():
    few = permq.run(f"robustness compare {inline(X8)} vs {inline(Y8)} datasets 300 seed 4")[0]
    assert "With 300 data sets a law, a rate is called off the level only when it is more " \
           "than about 0.038 from it; give datasets 700 or more" in " ".join(few.summary)
    enough = permq.run(f"robustness compare {inline(X8)} vs {inline(Y8)} datasets 700 seed 4")[0]
    assert not any("sharper verdicts" in line for line in enough.summary)
    table = permq.run("robustness count [[9, 1], [3, 7]] datasets 200 seed 4")[0]
    assert any(line.startswith("With 200 data sets a scheme") for line in table.summary)

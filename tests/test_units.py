"""`units COLUMN`: the randomised unit. Brute-force enumeration of every assignment of whole
units (exact fractions), the nested analysis of variance by statsmodels for the normal side,
the messages, the output, and the type I error check on 1,000 seeded null data sets with
clustered errors: permuting rows fails it, permuting units holds it."""
from __future__ import annotations

import itertools
import json
from fractions import Fraction

import numpy as np
import pandas as pd
import pytest

import permq
from permq.bind.binder import bind
from permq.bind.common import Defaults
from permq.render import render
from permq.result import Failure
from permq.robustness import laws as L
from permq.robustness.arrangements import exact_reference
from permq.robustness.batch import normal_p, observed_statistic, permutation_p, scores
from permq.robustness.pictures import reported
from permq.robustness.problem import data_row, problem_for
from permq.robustness.simulate import simulate
from permq.syntax.parser import parse_script

# pups in litters, litters randomised to doses; litters of unequal size (invented for the test)
PUPS = pd.DataFrame({
    "litter": ["a"] * 2 + ["b"] * 3 + ["c"] * 2 + ["d"] * 3 + ["e"] * 2 + ["f"] * 2,
    "dose": ["0"] * 7 + ["10"] * 7,
    "w": [6.1, 6.3, 5.8, 6.0, 6.4, 6.6, 6.2, 5.5, 5.9, 5.6, 6.0, 5.7, 5.2, 5.6]})


def _unit_values(frame, response, unit, group):
    """(unit means as Fractions, each unit's group), units in sorted order."""
    out = []
    for u, rows in frame.groupby(unit, sort=True):
        vals = [Fraction(repr(float(v))) for v in rows[response]]
        out.append((sum(vals) / len(vals), rows[group].iloc[0]))
    return out


def _two_sided(values, obs):
    centre = sum(values) / len(values)
    return Fraction(sum(abs(v - centre) >= abs(obs - centre) for v in values), len(values))


def test_two_groups_move_whole_units_brute_force():
    units = _unit_values(PUPS, "w", "litter", "dose")
    means = [m for m, _ in units]
    first = [i for i, (_, d) in enumerate(units) if d == "0"]
    diff = lambda chosen: (sum(means[i] for i in chosen) / 3
                           - sum(means[i] for i in range(6) if i not in chosen) / 3)
    every = [diff(c) for c in itertools.combinations(range(6), 3)]
    p = _two_sided(every, diff(first))
    r = permq.run('compare w by dose levels "0", "10" units litter', tables={"p": PUPS})[0]
    assert r.outcome.method == "exact" and r.outcome.arrangements == 20
    assert r.outcome.p_value == pytest.approx(float(p), rel=1e-12)
    assert r.outcome.statistic == pytest.approx(float(diff(first)), rel=1e-12)
    assert r.extra["units"] == {"column": "litter", "units": 6, "rows": 14,
                                "rows_per_unit": {"min": 2, "max": 3},
                                "unit_value": "mean of the unit's rows (each unit weighted "
                                              "equally)"}
    # the estimate and interval are those of the units: the same as the unit means inline
    inline = permq.run("compare [" + ", ".join(str(float(means[i])) for i in first) + "] vs ["
                       + ", ".join(str(float(means[i])) for i in range(6) if i not in first)
                       + "]")[0]
    assert r.estimate.value == pytest.approx(inline.estimate.value, rel=1e-12)
    assert r.estimate.interval == pytest.approx(inline.estimate.interval, rel=1e-9)
    assert r.normal.p_value == pytest.approx(inline.normal.p_value, rel=1e-12)


def test_three_doses_by_ranks_brute_force():
    frame = PUPS.copy()
    frame["dose"] = ["0"] * 5 + ["5"] * 5 + ["10"] * 4
    units = _unit_values(frame, "w", "litter", "dose")
    labels = [d for _, d in units]
    means = [m for m, _ in units]
    order = sorted(range(6), key=lambda i: means[i])
    ranks = [0] * 6
    for r, i in enumerate(order):
        ranks[i] = Fraction(r + 1)          # no ties among these unit means

    def h(assign):
        sums = {}
        for rk, lv in zip(ranks, assign):
            sums[lv] = sums.get(lv, 0) + rk
        return sum(s * s / 2 for s in sums.values())
    every = [h(a) for a in set(itertools.permutations(labels))]
    assert len(every) == 90
    p = Fraction(sum(v >= h(labels) for v in every), len(every))
    r = permq.run("compare w by dose units litter using ranks", tables={"p": frame})[0]
    assert r.outcome.arrangements == 90
    assert r.outcome.p_value == pytest.approx(float(p), rel=1e-12)


def test_equal_units_give_the_row_statistic_arrangement_by_arrangement():
    """With equal unit sizes the difference of row means, whole units moved, is the difference
    of unit means: the same p over the unit arrangements."""
    frame = pd.DataFrame({"u": np.repeat(list("abcdef"), 3), "g": np.repeat(["x", "y"], 9),
                          "y": [3.1, 3.4, 2.9, 3.8, 3.3, 3.5, 2.7, 3.0, 3.2,
                                3.9, 4.1, 3.6, 3.3, 3.7, 3.4, 4.4, 4.0, 4.2]})
    rows = frame["y"].map(lambda v: Fraction(repr(float(v)))).tolist()
    unit_rows = [list(range(3 * i, 3 * i + 3)) for i in range(6)]

    def row_diff(chosen):
        a = [rows[j] for i in chosen for j in unit_rows[i]]
        b = [rows[j] for i in range(6) if i not in chosen for j in unit_rows[i]]
        return sum(a) / len(a) - sum(b) / len(b)
    every = [row_diff(c) for c in itertools.combinations(range(6), 3)]
    p = _two_sided(every, row_diff((0, 1, 2)))
    r = permq.run("compare y by g units u", tables={"f": frame})[0]
    assert r.outcome.p_value == pytest.approx(float(p), rel=1e-12)


def test_the_normal_side_is_the_nested_anova_f():
    """Balanced: the one-way F on unit means is the F of dose against litters within dose
    (statsmodels least squares for the two mean squares)."""
    import statsmodels.formula.api as smf

    rng = np.random.default_rng(8)
    litters = [f"L{i}" for i in range(9)]
    frame = pd.DataFrame({"litter": np.repeat(litters, 4),
                          "dose": np.repeat(["0", "5", "10"], 12)})
    frame["w"] = np.round(6 + np.repeat(rng.normal(0, 0.4, 9), 4) + rng.normal(0, 0.3, 36), 2)
    null = smf.ols("w ~ 1", frame).fit().ssr
    by_dose = smf.ols("w ~ C(dose)", frame).fit().ssr
    by_litter = smf.ols("w ~ C(litter)", frame).fit().ssr
    f = ((null - by_dose) / 2) / ((by_dose - by_litter) / 6)
    r = permq.run("compare w by dose units litter", tables={"p": frame})[0]
    assert r.normal.statistic == pytest.approx(f, rel=1e-9)
    assert r.outcome.statistic == pytest.approx(f, rel=1e-9)
    assert r.outcome.method == "exact" and r.outcome.arrangements == 1680


def test_relate_moves_whole_units_brute_force():
    frame = pd.DataFrame({"pen": np.repeat(list("pqrst"), 2),
                          "feed": np.repeat([1.0, 2.0, 3.0, 4.0, 5.0], 2),
                          "gain": [2.1, 2.5, 2.4, 2.2, 3.0, 3.4, 2.9, 3.3, 3.8, 3.5]})
    units = frame.groupby("pen").agg({"feed": "first", "gain": "mean"})
    x = [Fraction(repr(float(v))) for v in units["feed"]]
    y = [Fraction(repr(float(v))) for v in frame["gain"]]
    y = [(y[2 * i] + y[2 * i + 1]) / 2 for i in range(5)]
    xbar = sum(x) / 5
    slope = lambda xs: sum((a - xbar) * b for a, b in zip(xs, y)) / sum((a - xbar) ** 2 for a in xs)
    every = [slope(p) for p in itertools.permutations(x)]
    p = _two_sided(every, slope(x))
    r = permq.run("relate gain to feed units pen using slope", tables={"f": frame})[0]
    assert r.outcome.arrangements == 120
    assert r.outcome.p_value == pytest.approx(float(p), rel=1e-12)
    assert r.estimate.value == pytest.approx(float(slope(x)), rel=1e-12)


# ---------------------------------------------------------------- messages and output

def _fails(text, frame=PUPS):
    out = permq.run(text, tables={"p": frame})[0]
    assert isinstance(out, Failure), text
    return out


def test_a_unit_at_two_levels_is_named():
    frame = PUPS.copy()
    frame.loc[7, "dose"] = "0"           # a pup of litter 'd' put at dose 0
    f = _fails("compare w by dose units litter", frame)
    assert f.message == ("unit 'd' of 'litter' has rows with 2 values of 'dose' (\"0\", \"10\"): "
                         "arrangements move whole units, so each unit needs one value of 'dose'")
    assert f.column == 25 and "leave out 'units litter'" in f.hint
    feed = pd.DataFrame({"pen": ["p", "p", "q", "q", "r", "r"], "x": [1.0, 2, 2, 2, 3, 3],
                         "y": [1.0, 2, 3, 4, 5, 6]})
    f = _fails("relate y to x units pen", feed)
    assert "unit 'p' of 'pen' has rows with 2 values of 'x'" in f.message


def test_units_go_with_groups_and_predictors_only():
    pairs = pd.DataFrame({"a": [1.0, 2, 3], "b": [2.0, 2, 4], "u": ["x", "y", "z"]})
    f = _fails("compare a vs b paired units u", pairs)
    assert f.message == "'units' does not apply to paired data" and "units litter" in f.hint
    f = _fails("compare w, w by dose units litter")
    assert "'units' does not apply" in f.message
    f = _fails("compare w by dose units kitten")
    assert "no column 'kitten'" in f.message


def test_the_output_says_units_and_rows():
    r = permq.run('compare w by dose units litter', tables={"p": PUPS})[0]
    text = render([r], "text")
    assert "units          6 units of 'litter', 14 rows (2 to 3 a unit)" in text
    assert [g["n"] for g in r.groups] == [3, 3]
    d = json.loads(render([r], "json"))[0]
    assert d["units"]["units"] == 6 and d["units"]["rows"] == 14
    from permq.contract import schema

    jsonschema = pytest.importorskip("jsonschema")
    jsonschema.Draft202012Validator(schema()).validate([d])


def test_vectorised_tests_of_a_units_design_give_the_engines_p_values():
    text = 'compare w by dose units litter using ranks'
    session = permq.Session(tables={"p": PUPS})
    design = bind(parse_script(text)[0].node, session.catalog, Defaults())
    result = session.run(text)[0]
    pb = problem_for(design)
    y = data_row(design)[None, :]
    a = scores(pb, y)
    assert permutation_p(pb, a, exact_reference(pb))[0] == pytest.approx(
        result.outcome.p_value, rel=1e-9)
    assert normal_p(pb, y, a)[0] == pytest.approx(result.normal.p_value, rel=1e-9)
    assert reported(pb, a[0], observed_statistic(pb, a))[0] == pytest.approx(
        result.outcome.statistic, rel=1e-9)
    assert list(pb.unit_sizes) == [2, 3, 2, 3, 2, 2]
    assert L.CLUSTERED_UNITS in L.panel_for(pb)


# ---------------------------------------------------------------- clustered errors

def _litter_problem(units: bool):
    """Two arms x 4 litters x 4 pups (the layout is what matters; the data are not used)."""
    frame = pd.DataFrame({"litter": np.repeat([f"L{i}" for i in range(8)], 4),
                          "arm": np.repeat(["a", "b"], 16),
                          "w": np.arange(32, dtype=float) % 7})
    text = "compare w by arm" + (" units litter" if units else "")
    session = permq.Session(tables={"t": frame})
    return problem_for(bind(parse_script(text)[0].node, session.catalog, Defaults())), frame


def test_clustered_errors_row_permutation_fails_unit_permutation_holds():
    """1,000 seeded null data sets, errors sharing a litter effect (intraclass correlation
    0.3): permuting pups rejects far more than 5%; permuting litters holds 5%."""
    rows, frame = _litter_problem(False)
    assert list(rows.clusters) == list(pd.factorize(frame["litter"])[0])  # runs of 4 = litters
    units, _ = _litter_problem(True)
    alpha, n = 0.05, 1000
    row_rate = simulate(rows, np.zeros(rows.n), n, alpha, 11, panel=(L.CLUSTERED,)).rates[0]
    unit_rate = simulate(units, np.zeros(units.n), n, alpha, 11,
                         panel=(L.CLUSTERED_UNITS,)).rates[0]
    se = np.sqrt(alpha * (1 - alpha) / n)
    assert row_rate.permutation_null.value > alpha + 5 * se       # about 0.16
    assert row_rate.normal_null.value > alpha + 5 * se
    assert row_rate.not_exact and "units COLUMN" in row_rate.not_exact
    assert unit_rate.permutation_null.value <= alpha + 3 * se     # exact: 70 arrangements
    assert unit_rate.not_exact is None


def test_clustered_unit_errors_have_the_intraclass_correlation():
    rng = np.random.default_rng(2)
    clusters = np.repeat(np.arange(500), 4)
    e = L.clustered_errors(rng, 200, clusters, None)
    assert e.var() == pytest.approx(1.0, abs=0.02)
    within = np.mean(e[:, 0::4] * e[:, 1::4])
    assert within == pytest.approx(L.CLUSTER_ICC, abs=0.02)
    m = np.array([2, 4, 8] * 200)
    means = L.clustered_errors(rng, 400, None, m)
    assert means.var() == pytest.approx(1.0, abs=0.03)
    ratio = means[:, m == 2].var() / means[:, m == 8].var()
    rho = L.CLUSTER_ICC
    assert ratio == pytest.approx((rho + (1 - rho) / 2) / (rho + (1 - rho) / 8), rel=0.05)


# ---------------------------------------------------------------- count: events in units

def _dead(groups):
    """Eight litters of unequal size, a two-valued outcome per pup (invented for the test)."""
    sizes = [3, 4, 2, 5, 3, 4, 2, 3]
    dead = ["yes", "no", "no", "yes", "yes", "no", "yes", "no", "no", "no", "no", "no", "yes",
            "no", "yes", "yes", "yes", "yes", "no", "yes", "no", "yes", "yes", "yes", "no",
            "yes"]
    litters = [f"L{i}" for i, s in enumerate(sizes) for _ in range(s)]
    dose = [groups[i] for i, s in enumerate(sizes) for _ in range(s)]
    return pd.DataFrame({"litter": litters, "dose": dose, "dead": dead}), sizes


def _unit_proportions(frame):
    return [Fraction(int((rows["dead"] == "yes").sum()), len(rows))
            for _, rows in frame.groupby("litter", sort=True)]


def test_count_moves_whole_units_two_groups_brute_force():
    frame, _ = _dead(["0"] * 4 + ["5"] * 4)
    prop = _unit_proportions(frame)
    diff = lambda chosen: (sum(prop[i] for i in chosen) / 4
                           - sum(prop[i] for i in range(8) if i not in chosen) / 4)
    every = [diff(c) for c in itertools.combinations(range(8), 4)]
    obs = diff((0, 1, 2, 3))
    r = permq.run("count dead by dose units litter", tables={"t": frame})[0]
    assert r.outcome.arrangements == 70 and r.outcome.method == "exact"
    assert r.outcome.statistic == pytest.approx(float(obs), rel=1e-12)
    assert r.outcome.p_value == pytest.approx(float(_two_sided(every, obs)), rel=1e-12)
    assert r.extra["units"]["unit_value"] == ("proportion of its rows with dead = yes (each "
                                              "unit weighted equally)")
    assert r.extra["units"]["rows"] == 26 and "litter proportions of dead = yes" in r.effect


def test_count_moves_whole_units_ordered_doses_brute_force():
    doses = ["0", "0", "5", "5", "10", "10", "20", "20"]
    frame, _ = _dead(doses)
    prop = _unit_proportions(frame)
    score = {"0": 0, "5": 5, "10": 10, "20": 20}
    t = lambda labels: sum(score[d] * p for d, p in zip(labels, prop))
    every = [t(a) for a in set(itertools.permutations(doses))]
    assert len(every) == 2520
    p = _two_sided(every, t(doses))
    r = permq.run("count dead by dose ordered units litter scores 0, 5, 10, 20",
                  tables={"t": frame})[0]
    assert r.outcome.arrangements == 2520
    assert r.outcome.p_value == pytest.approx(float(p), rel=1e-12)


def test_count_units_messages():
    frame, _ = _dead(["0"] * 4 + ["5"] * 4)
    frame.loc[0, "dose"] = "5"
    f = _fails("count dead by dose units litter", frame)
    assert f.message.startswith("unit 'L0' of 'litter' has rows with 2 values of 'dose'")
    frame, _ = _dead(["0"] * 4 + ["5"] * 4)
    frame.loc[3, "dead"] = "maybe"
    f = _fails("count dead by dose units litter", frame)
    assert "needs exactly two values" in f.message


# ---------------------------------------------------------------- the interval over units

def test_the_shift_interval_inverts_the_test_over_unit_arrangements():
    """Each end of the exact 80% interval (equal tails, permq/engine/core/jumps.py): shifting
    the first group's unit means by a value just inside keeps both one-sided p-values over the
    20 unit arrangements above 10%, just outside one of them falls to 10% or below (at 95% no
    arrangement of 20 is rare enough: the interval is the whole line)."""
    units = _unit_values(PUPS, "w", "litter", "dose")
    means = [float(m) for m, _ in units]
    wide = permq.run('compare w by dose levels "0", "10" units litter', tables={"p": PUPS})[0]
    assert list(wide.estimate.interval) == [-np.inf, np.inf]
    r = permq.run('compare w by dose levels "0", "10" units litter confidence 80%',
                  tables={"p": PUPS})[0]
    lo, hi = r.estimate.interval

    def one_sided(delta):
        v = [m - delta if i < 3 else m for i, m in enumerate(means)]
        d = lambda c: sum(v[i] for i in c) / 3 - sum(v[i] for i in range(6) if i not in c) / 3
        every = [d(c) for c in itertools.combinations(range(6), 3)]
        obs = d((0, 1, 2))
        return (sum(x >= obs - 1e-12 for x in every) / 20, sum(x <= obs + 1e-12 for x in every) / 20)
    eps = 1e-6
    assert np.isfinite(lo) and np.isfinite(hi) and lo < r.estimate.value < hi
    for inside in (lo + eps, hi - eps):
        assert min(one_sided(inside)) > 0.1
    for outside in (lo - eps, hi + eps):
        assert min(one_sided(outside)) <= 0.1


# ---------------------------------------------------------------- against a control

def _three_doses():
    frame = PUPS.copy()
    frame["dose"] = ["0"] * 5 + ["5"] * 5 + ["10"] * 4      # litters a, b | c, d | e, f
    return frame


def test_against_a_control_moves_whole_units_brute_force():
    """Welch-type t of each dose against the control on litter means, over every assignment of
    the six litters to the three doses (90), in exact fractions (t squared)."""
    units = _unit_values(_three_doses(), "w", "litter", "dose")
    means = [m for m, _ in units]
    labels = [d for _, d in units]

    def t2(assign, level):
        a = [m for m, d in zip(means, assign) if d == level]
        c = [m for m, d in zip(means, assign) if d == "0"]
        var = lambda v: sum((x - sum(v) / 2) ** 2 for x in v)     # n = 2: s^2 = sum of squares
        return (sum(a) / 2 - sum(c) / 2) ** 2 / (var(a) / 2 + var(c) / 2)

    every = sorted(set(itertools.permutations(labels)))
    assert len(every) == 90
    r = permq.run('compare w by dose against "0" units litter adjust max-t single-step',
                  tables={"p": _three_doses()})[0]
    assert r.method == "exact" and r.arrangements == 90
    assert r.extra["units"]["units"] == 6 and r.extra["units"]["rows"] == 14
    largest = [max(t2(a, "5"), t2(a, "10")) for a in every]
    for row in r.rows:
        level = row.name.split(" - ")[0]
        obs = t2(labels, level)
        raw = Fraction(sum(t2(a, level) >= obs for a in every), 90)
        single = Fraction(sum(v >= obs for v in largest), 90)
        assert row.p_value == pytest.approx(float(raw), rel=1e-12)
        assert row.p_adjusted == pytest.approx(float(single), rel=1e-12)
        assert row.statistic ** 2 == pytest.approx(float(obs), rel=1e-9)


def test_against_a_control_with_units_says_so_and_checks_the_units():
    r = permq.run('compare w by dose ordered against "0" units litter alternative higher',
                  tables={"p": _three_doses()})[0]
    assert r.arrangements == 90 and r.extra["units"]["column"] == "litter"
    text = render([r], "text")
    assert "units          6 units of 'litter', 14 rows (2 to 3 a unit)" in text
    d = json.loads(render([r], "json"))[0]
    jsonschema = pytest.importorskip("jsonschema")
    from permq.contract import schema

    jsonschema.Draft202012Validator(schema()).validate([d])
    frame = _three_doses()
    frame.loc[5, "dose"] = "0"           # a pup of litter 'c' put with the control
    f = _fails('compare w by dose against "0" units litter', frame)
    assert "unit 'c' of 'litter' has rows with 2 values of 'dose'" in f.message
    f = _fails('compare w by dose against "0" units litter levels "0", "5"',
               _three_doses().iloc[[0, 1, 2, 3, 4, 5, 6]])
    assert f.message == ("level \"5\" of 'dose' has 1 unit; 'means' needs 2 in each level "
                         "(a spread of its own)")

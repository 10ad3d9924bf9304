"""The robustness check of the event forms: two proportions, strata, rates, a binary dose
response. The simulated tests are checked against the engines and counterparts on every table
of small designs (the same answer the analysis would give each simulated data set), the
schemes against the laws they claim, and the statements end to end. Every simulation is seeded.
"""
from __future__ import annotations

import itertools
import json
import math

import numpy as np
import pandas as pd
import pytest

import permq
from permq.bind.binder import bind
from permq.bind.common import Defaults
from permq.engine.counts import rates as R
from permq.engine.counts import strata as S
from permq.engine.counts import trend as T
from permq.engine.counts import unconditional as U
from permq.normal import counts as N
from permq.robustness.result import RobustnessResult
from permq.robustness.tables import events
from permq.syntax.parser import parse_script


def _design(text, tables=None):
    session = permq.Session(tables=tables)
    return bind(parse_script(text)[0].node, session.catalog, Defaults())


def _tests(text, tables=None):
    design = _design(text, tables)
    v = events.view(design)
    return design, v, events.tests_for(v, (0.01, 0.05, 0.10))


@pytest.mark.parametrize("word", ["boschloo", "barnard", "fisher"])
@pytest.mark.parametrize("alternative", ["two-sided", "higher", "lower"])
def test_two_proportions_every_table_as_the_engine_gives_it(word, alternative):
    design, v, tests = _tests(f"count 2 of 5 vs 4 of 6 using {word} alternative {alternative}")
    tables = np.array([[[a, 5 - a], [b, 6 - b]] for a in range(6) for b in range(7)])
    got = tests.exact_p(tables)
    normal = tests.normal_p(tables)
    for t, p, z in zip(tables, got, normal):
        data = U.Binomials(int(t[0, 0]), 5, int(t[1, 0]), 6)
        if word == "fisher":
            from permq.engine.tables import twobytwo

            want = twobytwo.run(data.table, "fisher", alternative).p_value
        else:
            want = U.run(data, word, alternative).p_value
        # the grid's value is within 1% of the supremum; near the usual levels it is refined
        assert p == pytest.approx(want, rel=1e-2, abs=1e-12)
        for level in (0.01, 0.05, 0.10):
            assert (p <= level) == (want <= level), (t.tolist(), level, p, want)
        nt = N.two_proportions(data.x1, 5, data.x2, 6, 0.95, alternative)
        assert z == pytest.approx(nt.p_value, rel=1e-9, abs=1e-15)


def test_unconditional_p_of_every_outcome_under_other_sample_sizes():
    """Only the total fixed: the samples' sizes vary from table to table."""
    design, v, tests = _tests("count 3 of 8 vs 6 of 7")
    tables = np.array([[[1, 5], [6, 1]], [[0, 9], [5, 1]], [[7, 0], [1, 7]]])
    for t, p in zip(tables, tests.exact_p(tables)):
        data = U.Binomials(int(t[0, 0]), int(t[0].sum()), int(t[1, 0]), int(t[1].sum()))
        want = U.run(data, "boschloo", "two-sided").p_value
        assert p == pytest.approx(want, rel=1e-2)
        assert (p <= 0.05) == (want <= 0.05)


def test_dose_response_every_table_as_the_engine_gives_it():
    x = [0, 0, 0, 1, 1, 1, 2.5, 2.5, 2.5]
    y = [0, 1, 0, 0, 1, 1, 1, 1, 0]
    frame = pd.DataFrame({"dose": x, "dead": y})
    design, v, tests = _tests("relate dead to dose", {"d": frame})
    assert v.table.tolist() == [[1, 2], [2, 1], [2, 1]]
    tables = np.array([[[a, 3 - a], [b, 3 - b], [c, 3 - c]]
                       for a, b, c in itertools.product(range(4), repeat=3)])
    got, normal = tests.exact_p(tables), tests.normal_p(tables)
    for t, p, z in zip(tables, got, normal):
        ys = [1] * t[0, 0] + [0] * t[0, 1] + [1] * t[1, 0] + [0] * t[1, 1] + [1] * t[2, 0] \
            + [0] * t[2, 1]
        xs = [0.0] * 3 + [1.0] * 3 + [2.5] * 3
        st = [T.stratum(xs, ys)]
        if not st[0].informative:
            assert p == 1.0
            continue
        out, _ = T.run(st, "two-sided", "dp-grid")
        assert p == pytest.approx(out.p_value, rel=1e-10)
        wald, _ = N.logistic(np.array(ys, float), np.array(xs), 0.95, "two-sided")
        want = 1.0 if wald.p_value != wald.p_value else wald.p_value
        assert z == pytest.approx(want, rel=1e-5, abs=1e-9)


def test_rates_every_count_as_the_engine_gives_it():
    for text, shape in (("count 7 events in 120.5 vs 2 events in 98", 2),
                        ("count 4 events in 30 vs 0.05", 1)):
        design, v, tests = _tests(text)
        d = design
        if shape == 2:
            tables = np.array([[[a, b]] for a in range(12) for b in range(12)])
        else:
            tables = np.array([[[a]] for a in range(20)])
        for t, p, z in zip(tables, tests.exact_p(tables), tests.normal_p(tables)):
            counts = tuple(int(c) for c in t[0])
            data = R.Rates(counts, d.exposures, d.reference)
            if shape == 2 and sum(counts) == 0:
                assert p == 1.0
                continue
            assert p == pytest.approx(R.run(data, "two-sided", "binomial" if shape == 2
                                            else "poisson").p_value, rel=1e-10)
            if shape == 2:
                nt = N.two_rates(counts[0], d.exposures[0], counts[1], d.exposures[1])
            else:
                nt = N.one_rate(counts[0], d.exposures[0], d.reference)
            assert z == pytest.approx(nt.p_value, rel=1e-9, abs=1e-15)


def _strata_frame(tables, groups):
    rows = []
    for k, t in enumerate(tables):
        for g, (e, f) in zip(groups, t):
            rows += [{"s": k, "g": g, "y": 1}] * e + [{"s": k, "g": g, "y": 0}] * f
    return pd.DataFrame(rows)


@pytest.mark.parametrize("word", ["fisher", "homogeneity"])
def test_strata_every_stack_as_the_engine_gives_it(word):
    base = [[[1, 2], [2, 1]], [[2, 1], [0, 2]]]
    frame = _strata_frame(base, ["a", "b"])
    design, v, tests = _tests(f"count y by g within s using {word}", {"d": frame})
    sizes = [[3, 3], [3, 2]]
    stacks = []
    for cells in itertools.product(range(4), range(4), range(4), range(3)):
        a, b, c, d = cells
        stacks.append([[a, 3 - a], [b, 3 - b], [c, 3 - c], [d, 2 - d]])
    stacks = np.array(stacks)
    got, normal = tests.exact_p(stacks), tests.normal_p(stacks)
    for t, p, z in zip(stacks, got, normal):
        tables = t.reshape(2, 2, 2)
        st = S.as_strata(tables)
        if word == "fisher":
            want = S.run(st).p_value if S.informative(st) else 1.0
            nt = N.mantel_haenszel(tables)
        else:
            from permq.engine.counts import homogeneity as H

            want = H.run(st).p_value if len(S.informative(st)) >= 2 else 1.0
            nt = N.breslow_day(tables)
        assert p == pytest.approx(want, rel=1e-10), tables.tolist()
        want_z = 1.0 if nt.p_value != nt.p_value else nt.p_value
        assert z == pytest.approx(want_z, rel=1e-9, abs=1e-12), tables.tolist()


def test_stratified_trend_every_stack_as_the_engine_gives_it():
    base = [[[1, 1], [1, 1], [2, 0]], [[0, 2], [1, 1], [1, 1]]]
    frame = _strata_frame(base, [0, 1, 2])
    design, v, tests = _tests("count y by g within s ordered", {"d": frame})
    stacks = np.array([[[a, 2 - a], [b, 2 - b], [c, 2 - c], [d, 2 - d], [e, 2 - e], [f, 2 - f]]
                       for a, b, c, d, e, f in itertools.product(range(3), repeat=6)])
    got, normal = tests.exact_p(stacks), tests.normal_p(stacks)
    for t, p, z in zip(stacks[::7], got[::7], normal[::7]):
        tables = t.reshape(2, 3, 2)
        st = [T.grouped(x.sum(axis=1), x[:, 0], (0.0, 1.0, 2.0)) for x in tables]
        if not any(s.informative for s in st):
            assert p == 1.0
            continue
        out, _ = T.run(st, "two-sided", "dp-grid")
        assert p == pytest.approx(out.p_value, rel=1e-10)
        mean, var = T.null_moments(st)
        want = N.stratified_trend(mean, var, out.statistic).p_value
        assert z == pytest.approx(want, rel=1e-9, abs=1e-12)


def test_schemes_draw_the_laws_they_claim():
    design, v, tests = _tests("count 7 events in 120.5 vs 2 events in 98")
    eff = events.effect_for(v, None)
    poisson, total, bursts = eff.panel
    rng = np.random.default_rng(3)
    draws = poisson.null(rng, 40_000)[:, 0, :]
    pooled = 9 / 218.5
    assert draws.mean(axis=0) == pytest.approx([pooled * 120.5, pooled * 98], rel=0.02)
    assert draws.var(axis=0) == pytest.approx(draws.mean(axis=0), rel=0.05)
    split = total.null(rng, 20_000)[:, 0, :]
    assert np.all(split.sum(axis=1) == 9)
    b = bursts.null(rng, 40_000)[:, 0, :]
    assert b.var(axis=0) == pytest.approx(2 * b.mean(axis=0), rel=0.08)
    assert bursts.not_exact and not poisson.not_exact


def test_statements_end_to_end():
    jsonschema = pytest.importorskip("jsonschema")
    from permq.contract import schema

    validator = jsonschema.Draft202012Validator(schema())
    frame = pd.read_csv(__import__("conftest").ROOT / "demo" / "sprays.csv")
    tables = {"sprays": frame}
    for text in ("robustness count 3 of 20 vs 9 of 21 datasets 100 seed 3",
                 "robustness count 7 events in 120.5 vs 2 events in 98 datasets 100 seed 3",
                 "robustness count 4 events in 30 vs 0.05 datasets 100 seed 3",
                 "robustness relate wilted to dose datasets 100 seed 3",
                 "robustness count wilted by spray within bench datasets 100 seed 3",
                 "robustness count wilted by dose within bench ordered datasets 100 seed 3"):
        [r] = permq.run(text, tables=tables)
        assert isinstance(r, RobustnessResult), getattr(r, "message", r)
        d = r.to_dict()
        json.dumps(d, allow_nan=False)
        assert not list(validator.iter_errors([json.loads(json.dumps(d))])), text
        assert d["datasets"] == 100 and len(d["laws"]) >= 3
    [again] = permq.run("robustness count 4 events in 30 vs 0.05 datasets 300 seed 8")
    [first] = permq.run("robustness count 4 events in 30 vs 0.05 datasets 300 seed 8")
    assert again.to_dict()["laws"] == first.to_dict()["laws"]
    out = permq.run("robustness relate wilted to dose shift 2", tables=tables)[0]
    assert "no one-number meaning" in out.message
    note = permq.run("explain robustness count 3 of 20 vs 9 of 21")[0]
    assert "simulated tables a sampling scheme" in note.text

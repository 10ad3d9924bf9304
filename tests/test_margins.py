"""Equivalence and non-inferiority (`margin M`): two one-sided exact tests (Schuirmann 1987,
J. Pharmacokin. Biopharm. 15:657), checked against brute-force listings of the shifted data
in exact fractions (tests/brute.py), the exact (1 - 2 alpha) interval, and statsmodels'
ttost_ind / ttost_paired for the t-based tests beside them. Data: the demo's tables."""
from __future__ import annotations

from fractions import Fraction
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

import permq

from brute import frac, one_sample_p, two_sample_p

DEMO = Path(__file__).resolve().parent.parent / "demo"


@pytest.fixture(scope="module")
def tables():
    return {"pots": pd.read_csv(DEMO / "seedlings.csv"), "trays": pd.read_csv(DEMO / "trays.csv")}


@pytest.mark.parametrize("margin", [0.25, 0.5, 1.0])
def test_paired_tost_matches_the_listing_and_statsmodels(tables, margin):
    from statsmodels.stats.weightstats import ttost_paired

    r = permq.run(f"compare after vs before in pots paired margin {margin}", tables=tables)[0]
    e = r.extra["equivalence"]
    pots = tables["pots"]
    d = [frac(a) - frac(b) for a, b in zip(pots["after"], pots["before"])]
    m = frac(margin)
    lower = one_sample_p("means", [v + m for v in d], "higher")
    upper = one_sample_p("means", [v - m for v in d], "lower")
    assert e["exact"]["p_lower_margin"] == pytest.approx(float(lower), rel=1e-9)
    assert e["exact"]["p_upper_margin"] == pytest.approx(float(upper), rel=1e-9)
    p_t = ttost_paired(pots["after"].to_numpy(), pots["before"].to_numpy(), -margin, margin)[0]
    assert e["t_based"]["p_value"] == pytest.approx(p_t, rel=1e-6)
    # equivalence at alpha exactly when the exact (1 - 2 alpha) interval lies inside the margin
    lo, hi = e["exact"]["interval"]
    assert e["exact"]["concluded"] == (-margin < lo and hi < margin)


def test_two_sample_tost_by_ranks_and_welch(tables):
    from statsmodels.stats.weightstats import ttost_ind

    t = tables["trays"].dropna()
    a = t.loc[t.recipe == "A", "mass"].to_numpy()
    b = t.loc[t.recipe == "B", "mass"].to_numpy()
    r = permq.run('compare mass by recipe levels "A", "B" in trays using ranks margin 2.5',
                  tables=tables)[0]
    e = r.extra["equivalence"]
    m = frac(2.5)
    lower = two_sample_p("ranks", [frac(v) + m for v in a], [frac(v) for v in b], "higher")
    upper = two_sample_p("ranks", [frac(v) - m for v in a], [frac(v) for v in b], "lower")
    assert e["exact"]["p_value"] == pytest.approx(float(max(lower, upper)), rel=1e-9)
    p_t = ttost_ind(a, b, -2.5, 2.5, usevar="unequal")[0]
    assert e["t_based"]["p_value"] == pytest.approx(p_t, rel=1e-6)


def test_non_inferiority_tests_the_lower_margin_only(tables):
    r = permq.run("compare after vs before in pots paired margin 0.5 alternative higher",
                  tables=tables)[0]
    e = r.extra["equivalence"]
    assert e["kind"] == "non-inferiority" and e["exact"]["p_upper_margin"] is None
    assert e["exact"]["concluded"] and "lies above -0.5" in e["verdict"]
    assert "non-inferiority shown at 0.05" in r.sentence()
    assert "non-inferiority, margin -0.5" in str(r)


@pytest.mark.parametrize("text, words", [
    ("compare mass by recipe in trays margin 1", "does not apply to three or more groups"),
    ("compare after vs before in pots paired margin -1", "positive number"),
])
def test_bad_margins(tables, text, words):
    out = permq.run(text, tables=tables)[0]
    assert words in out.message
    if "groups" in words:
        assert "'margin' goes with two samples" in out.hint


def test_margin_record_validates_and_explain_takes_it(tables):
    import jsonschema

    from permq.contract import schema

    r = permq.run("compare after vs before in pots paired margin 0.5", tables=tables)[0]
    v = jsonschema.Draft202012Validator(schema())
    record = r.to_dict()
    assert not list(v.iter_errors([record]))
    record["equivalence"]["kind"] = "similarity"
    assert list(v.iter_errors([record]))
    note = permq.run("explain compare after vs before in pots paired margin 0.5",
                     tables=tables)[0]
    assert "plan:" in note.text

"""Every statement form of the k-sample, ordered, blocked, association and table families runs
through the language (query file, API, JSON contract), with the permutation and the
normal-theory p-values side by side; designs that coincide give the same p-value."""
import json
import subprocess
import sys
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from scipy import stats

import permq
from permq.result import Failure, Result

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "demo"

FORMS = {
    "compare mass by recipe": ("k-sample", "exact"),
    "compare mass by recipe using ranks": ("k-sample", "exact"),
    "compare mass by recipe using normal-scores": ("k-sample", "exact"),
    "compare mass by recipe using medians": ("k-sample", "exact"),
    'compare mass by recipe ordered "B" < "A" < "C"': ("ordered", "exact"),
    'compare mass by recipe ordered "B" < "A" < "C" using ranks alternative higher':
        ("ordered", "exact"),
    "compare yield by dose within block using ranks in plots": ("blocked", "exact"),
    "compare yield by dose within block ordered using ranks in plots": ("blocked", "exact"),
    "compare yield by dose within block using means in plots": ("blocked", "exact"),
    'compare mass by recipe levels "A", "B" within bench': ("blocked", "exact"),
    'compare mass by recipe levels "A", "B" within bench using ranks': ("blocked", "exact"),
    "relate mass to light": ("association", "monte-carlo"),
    "relate mass to light using kendall": ("association", "exact"),
    "relate mass to light using slope sampled 5000 seed 3": ("association", "monte-carlo"),
    "relate mass to light using slope adjusting for tray sampled 2000 seed 3":
        ("association", "monte-carlo"),
    "count sprouted by dose in plots": ("table", "exact"),
    "count sprouted by dose in plots ordered": ("table", "exact"),
    "count [[9, 1], [3, 7]]": ("table", "exact"),
    "count [[3, 4, 5], [6, 1, 9]] using likelihood-ratio": ("table", "exact"),
    "count 7 of 20 vs 0.5": ("table", "exact"),
}


def session():
    return permq.Session(tables={"trays": pd.read_csv(DEMO / "trays.csv"),
                                 "plots": pd.read_csv(DEMO / "plots.csv")})


@pytest.mark.parametrize("statement", sorted(FORMS))
def test_each_form_gives_both_answers(statement):
    s = session()
    s.run("use trays")
    [r] = s.run(statement)
    assert isinstance(r, Result), getattr(r, "message", r)
    family, method = FORMS[statement]
    d = r.to_dict()
    assert d["family"] == family and d["method"] == method
    assert 0 < d["p_value"] <= 1
    assert d["normal_theory"]["p_value"] is not None and 0 <= d["normal_theory"]["p_value"] <= 1
    json.dumps(d, allow_nan=False)


def test_query_file_json_contract(tmp_path):
    text = "\n".join(['load "%s" as trays' % (DEMO / "trays.csv"),
                      'load "%s" as plots' % (DEMO / "plots.csv"), "use trays"] + sorted(FORMS))
    f = tmp_path / "forms.pq"
    f.write_text(text)
    done = subprocess.run([sys.executable, "-m", "permq", "run", str(f), "--format", "json"],
                          capture_output=True, text=True, cwd=ROOT)
    assert done.returncode == 0, done.stderr
    out = json.loads(done.stdout)
    assert [o["statement"] for o in out] == sorted(FORMS)
    for o in out:
        for key in ("statement", "family", "statistic", "alternative", "p_value", "method",
                    "algorithm", "normal_theory", "warnings"):
            assert key in o
        assert ("arrangements" in o) if o["method"] == "exact" else ("draws" in o and "p_interval" in o)


def test_within_two_levels_equals_paired_where_designs_coincide():
    # one unit of each group in every block: the within-block permutation is the sign flip
    a = [5.1, 4.8, 6.0, 5.5, 4.9, 6.3, 5.8]
    b = [4.6, 4.9, 5.2, 5.0, 4.1, 5.9, 5.5]
    long = pd.DataFrame({"y": a + b, "g": ["a"] * 7 + ["b"] * 7, "blk": list(range(7)) * 2})
    wide = pd.DataFrame({"a": a, "b": b})
    for family in ("means", "ranks"):
        within = permq.run(f'compare y by g levels "a", "b" within blk using {family}',
                           tables={"t": long})[0]
        paired_family = "means" if family == "means" else "signs"   # ranks within a pair of 2
        paired = permq.run(f"compare a vs b paired using {paired_family}", tables={"w": wide})[0]
        assert within.outcome.p_value == pytest.approx(paired.outcome.p_value, rel=1e-12)


def test_paired_binary_outcomes_against_statsmodels():
    from statsmodels.stats.contingency_tables import mcnemar

    first = ["yes"] * 12 + ["no"] * 8
    second = ["yes"] * 5 + ["no"] * 7 + ["yes"] * 2 + ["no"] * 6
    out = permq.run("count first vs second paired",
                    tables={"t": pd.DataFrame({"first": first, "second": second})})[0]
    assert isinstance(out, Result)
    # discordant pairs: first no / second yes = 2, first yes / second no = 7; the levels are in
    # natural order (no, yes), and the statistic and effect name them as they are
    assert out.outcome.statistic_name == "discordant pairs first no / second yes (b)"
    assert out.outcome.statistic == 2
    assert out.effect == ("discordant pairs: first no with second yes, against first yes with "
                          "second no")
    assert out.outcome.p_value == pytest.approx(mcnemar([[5, 7], [2, 6]], exact=True).pvalue,
                                                rel=1e-12)


def test_k_sample_through_the_language_against_scipy():
    g = [[2.1, 3.4, 2.8, 3.0], [3.9, 4.2, 3.1, 4.8], [5.0, 4.4, 5.9, 4.7]]
    r = permq.run("compare " + " vs ".join(str(v) for v in g) + " using ranks")[0]
    h = stats.kruskal(*g)
    assert r.outcome.statistic == pytest.approx(h.statistic, rel=1e-12)
    assert r.normal.p_value == pytest.approx(h.pvalue, rel=1e-12)
    # vectorised: scipy evaluates H on batches of arrangements (about a second, not a minute)
    exact = stats.permutation_test(g, lambda *s, axis: stats.kruskal(*s, axis=axis).statistic,
                                   permutation_type="independent", n_resamples=np.inf,
                                   alternative="greater", vectorized=True)
    assert r.outcome.p_value == pytest.approx(exact.pvalue, rel=1e-9)


def test_incomplete_blocks_get_a_clear_message():
    out = session().run("compare mass by recipe within bench in trays")
    assert isinstance(out[0], Failure)
    assert "needs each level exactly once" in out[0].message and out[0].hint

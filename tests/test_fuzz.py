"""Fuzzing: no statement or data file, however malformed, crashes permq or gives a p-value
outside [0, 1]. Every failure is our own message, with a position.

Bounded in time: a few hundred generated cases per property (derandomized, so CI is stable).
"""
import json
from pathlib import Path

import numpy as np
import pandas as pd
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import permq
from permq.result import Failure, Note, Result
from permq.syntax import parse_script

ROOT = Path(__file__).resolve().parents[1]
DEMO = [line for line in (ROOT / "demo" / "greenhouse.pq").read_text().splitlines()
        if line.strip() and not line.lstrip().startswith("#")]

WORDS = ["compare", "relate", "count", "by", "vs", "to", "using", "levels", "within", "ordered",
         "paired", "in", "alternative", "confidence", "exact", "sampled", "seed", "adjusting",
         "for", "explain", "load", "use", "set", "show", "describe", "help", "robustness",
         "means", "ranks", "higher", "two-sided", "mass", "recipe", "bench", "light", "[", "]",
         ",", "<", '"A"', '"B"', "12.5", "0", "-3", "1e3", "95%", "5s", "\\\n", ";", "#", "\n",
         "`x y`", "of", "every", "numeric", "except", "adjust", "max-t", "'", '"']

FAST = settings(max_examples=150, deadline=None, derandomize=True,
                suppress_health_check=[HealthCheck.too_slow])


def trays():
    return pd.read_csv(ROOT / "demo" / "trays.csv")


def _check_outputs(outputs):
    from permq.result_factorial import FactorialResult
    from permq.result_many import ManyResult
    from permq.robustness.result import RobustnessResult

    for o in outputs:
        assert isinstance(o, (Result, Failure, Note, ManyResult, RobustnessResult,
                              FactorialResult)), type(o)
        if isinstance(o, (ManyResult, RobustnessResult, FactorialResult)):
            json.dumps(o.to_dict(), allow_nan=False)
        if isinstance(o, FactorialResult):
            assert all(0.0 <= t.outcome.p_value <= 1.0 for t in o.terms)
        if isinstance(o, Failure):
            assert "internal error" not in o.message, o.message
            assert o.line is not None and o.line >= 1 and o.column is not None and o.column >= 1
        if isinstance(o, Result):
            p = o.outcome.p_value
            assert 0.0 <= p <= 1.0, p
            o.to_dict()


@FAST
@given(st.lists(st.sampled_from(WORDS), max_size=14).map(" ".join))
def test_random_token_soup_parses_or_fails_with_a_position(text):
    for s in parse_script(text):
        assert (s.node is None) != (s.error is None)
        if s.error is not None:
            assert s.error.span is not None and s.error.span.line >= 1 and s.error.span.column >= 1


@FAST
@given(st.text(max_size=60))
def test_arbitrary_text_never_escapes_the_parser(text):
    for s in parse_script(text):
        assert (s.node is None) != (s.error is None)


@settings(max_examples=120, deadline=None, derandomize=True,
          suppress_health_check=[HealthCheck.too_slow])
@given(st.sampled_from(DEMO), st.integers(0, 200), st.sampled_from(["del", "ins", "swap"]),
       st.sampled_from(list("abc[]<>,;\"'`#%.-0123456789 \n\\")))
def test_mutated_demo_statements_run_or_fail_cleanly(line, pos, how, ch):
    pos = pos % (len(line) + 1)
    if how == "del":
        text = line[:pos] + line[pos + 1:]
    elif how == "ins":
        text = line[:pos] + ch + line[pos:]
    else:
        text = line[:pos] + ch + line[pos + 1:]
    if "load" in text or "save" in text:   # no file system side effects from fuzzing
        return
    text = text.replace("sampled 20000", "sampled 2000").replace("datasets 1000", "datasets 100")
    session = permq.Session(tables={"trays": trays(), "plots": pd.read_csv(ROOT / "demo" / "plots.csv"),
                                    "pots": pd.read_csv(ROOT / "demo" / "seedlings.csv")},
                            base_dir=ROOT / "demo")
    session.defaults.budget_seconds = 0.5
    _check_outputs(session.run(text))


NASTY = {
    "nan": [1.0, np.nan, 2.5, np.nan, 3.0, 4.5],
    "inf": [1.0, np.inf, 2.0, 3.0, -np.inf, 4.0],
    "huge": [1e300, 2e300, 1.5e300, 3e300, 2.5e300, 1e300],
    "tiny_differences": [1.0, 1.0 + 1e-12, 1.0 + 2e-12, 1.0 + 3e-12, 1.0 + 4e-12, 1.0 + 5e-12],
    "all_tied": [2.0] * 6,
    "mixed_text": ["1.5", "2.0", "oops", "3.5", "4.0", "2.2"],
    "negative_zero": [-0.0, 0.0, 1.0, -1.0, 2.0, -2.0],
}
GROUPINGS = {
    "two": ["A", "A", "A", "B", "B", "B"],
    "one_level": ["A"] * 6,
    "long_names": ["x" * 300, "x" * 300, "y" * 300, "y" * 300, "x" * 300, "y" * 300],
    "with_missing": ["A", None, "A", "B", "B", None],
    "three": ["A", "B", "C", "A", "B", "C"],
}
STATEMENTS = [
    "compare v by g", "compare v by g using ranks", "compare v by g using normal-scores",
    "compare v by g using medians", "compare v vs 1", "compare v vs w paired",
    "compare v by g exact", "compare v by g sampled 500 seed 3", "relate v to w",
    "relate v to w using kendall", "relate v to w using slope", "count g by h",
    "compare v by g within h", "compare v by g ordered using ranks",
    "compare v by g and h", "compare v by g adjusting for w", "compare v by g adjusting for h",
    "relate v to w using slope adjusting for h",
]


@settings(max_examples=120, deadline=None, derandomize=True,
          suppress_health_check=[HealthCheck.too_slow])
@given(st.sampled_from(sorted(NASTY)), st.sampled_from(sorted(NASTY)),
       st.sampled_from(sorted(GROUPINGS)), st.sampled_from(STATEMENTS))
def test_nasty_data_never_crash(v_kind, w_kind, g_kind, statement):
    frame = pd.DataFrame({"v": NASTY[v_kind], "w": NASTY[w_kind], "g": GROUPINGS[g_kind],
                          "h": ["p", "q", "p", "q", "p", "q"]})
    _check_outputs(permq.run(statement, tables={"t": frame}))


def test_duplicated_column_names_are_reported():
    frame = pd.DataFrame([[1.0, 2.0, "A"], [2.0, 3.0, "B"], [3.0, 1.0, "A"], [4.0, 2.0, "B"]],
                         columns=["v", "v", "g"])
    out = permq.run("compare v by g", tables={"t": frame})
    assert isinstance(out[0], Failure)
    assert "more than one column named 'v'" in out[0].message


def test_empty_table():
    out = permq.run("compare v by g", tables={"t": pd.DataFrame({"v": [], "g": []})})
    assert isinstance(out[0], Failure) and "internal error" not in out[0].message


def test_exact_p_values_are_identical_across_runs(tmp_path):
    statements = "\n".join(l for l in DEMO if not l.startswith(("load", "describe", "robustness"))
                           and "sampled" not in l)
    tables = {"trays": trays(), "plots": pd.read_csv(ROOT / "demo" / "plots.csv"),
              "pots": pd.read_csv(ROOT / "demo" / "seedlings.csv")}
    runs = [[o.to_dict() for o in permq.run(statements, tables=tables, base_dir=tmp_path)
             if isinstance(o, Result)] for _ in range(2)]
    first, second = runs
    exact = [(a["statement"], a["p_value"]) for a in first if a["method"] == "exact"]
    assert len(exact) >= 10
    assert exact == [(b["statement"], b["p_value"]) for b in second if b["method"] == "exact"]

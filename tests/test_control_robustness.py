"""The robustness check of the families against a control and of the studentized two-sample
tests: one data set through the vectorised tests gives the analysis's own numbers (the pattern
of tests/test_robustness.py), and the check runs end to end."""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

import permq
from permq.bind.binder import bind
from permq.bind.common import Defaults
from permq.robustness.arrangements import exact_reference
from permq.robustness.batch import normal_p, observed_statistic, permutation_p, scores
from permq.robustness.pictures import reported
from permq.robustness.problem import data_row, problem_for
from permq.syntax.parser import parse_script

from conftest import inline

FRAME = pd.DataFrame({"dose": ["0"] * 4 + ["5"] * 3 + ["10"] * 3 + ["20"] * 3,
                      "w": [10.1, 11.2, 9.8, 10.5, 10.4, 12.0, 10.2, 11.9, 13.5, 12.0,
                            12.4, 14.9, 13.1]})
TABLES = {"t": FRAME}
X = [10.1, 11.2, 9.8, 10.5, 10.3]
Y = [11.9, 14.5, 8.1, 16.0, 12.2, 9.5]


def _statements():
    out = []
    for alt in ("two-sided", "higher", "lower"):
        for fam in ("means", "ranks"):
            out.append(f'compare w by dose against "0" using {fam} alternative {alt} exact')
            out.append(f'compare w by dose ordered against "0" using {fam} alternative {alt}')
        for fam in ("welch", "brunner-munzel"):
            out.append(f"compare {inline(X)} vs {inline(Y)} using {fam} alternative {alt}")
    return out


def _global(design, result):
    if hasattr(result, "outcome"):
        return result
    from permq.families.registry import family_for

    return family_for(design).extra["global_test"](design, result)


@pytest.mark.parametrize("text", _statements())
def test_vectorised_tests_give_the_analysis_numbers(text):
    session = permq.Session(tables=TABLES)
    design = bind(parse_script(text)[0].node, session.catalog, Defaults())
    result = _global(design, session.run(text)[0])
    pb = problem_for(design)
    y = data_row(design)[None, :]
    a = scores(pb, y)
    ref = exact_reference(pb, limit=10 ** 7)
    assert result.outcome.method == "exact"
    assert permutation_p(pb, a, ref)[0] == pytest.approx(result.outcome.p_value, rel=1e-9)
    q = normal_p(pb, y, a)[0]
    if "ordered" in text and "ranks" not in text:       # Williams: two simulations of its law
        assert q == pytest.approx(result.normal.p_value, abs=0.004)
    elif "against" in text and "ranks" not in text:     # Dunnett from the design's table
        assert q == pytest.approx(result.normal.p_value, rel=1e-4, abs=1e-9)
    else:
        assert q == pytest.approx(result.normal.p_value, rel=1e-9)
    t = reported(pb, a[0], observed_statistic(pb, a))[0]
    assert t == pytest.approx(result.outcome.statistic, rel=1e-9, abs=1e-12)


def test_the_checks_run_and_point_to_the_studentized_tests():
    out = permq.run(f'robustness compare w by dose against "0" datasets 100 seed 2 in t\n'
                    f"robustness compare {inline(X + [10.0, 9.9])} vs {inline(Y[:4])} "
                    "datasets 400 seed 3", tables=TABLES)
    assert [type(o).__name__ for o in out] == ["RobustnessResult", "RobustnessResult"]
    control = out[0].to_dict()
    assert control["analysis"]["normal_test"].startswith("Dunnett's many-to-one t")
    assert control["analysis"]["statistic"].startswith("largest |t| over the levels")
    assert [law["law"] for law in control["laws"]][-1] == "unequal-spread"
    assert control["laws"][-1]["permutation"]["why_not_exact"] is not None
    assert any("'using welch'" in w for w in out[1].warnings)

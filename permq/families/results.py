"""Plain-data pieces the count families add to a result beside its main test and estimate.

- `also_test`: a further exact test of the same data (Fisher's beside Boschloo's, Zelen's
  homogeneity beside the common odds ratio), for `Result.extra["tests_also"]`;
- `also_estimate`: a further estimate with its exact interval and its textbook interval (the
  risk ratio beside the risk difference), for `Result.extra["estimates_also"]`;
- `strata_rows`: one row a stratum (its counts and its own odds ratio), for
  `Result.extra["strata"]`.

They are dictionaries in the JSON contract's own shapes (numbers through `result._num`).
"""
from __future__ import annotations

import math

from ..result import _num


def also_test(words: str, outcome) -> dict:
    out = {"test": words, "statistic": {"name": outcome.statistic_name,
                                        "value": _num(outcome.statistic)},
           "p_value": _num(outcome.p_value), "method": outcome.method,
           "algorithm": outcome.algorithm}
    if outcome.method != "exact":
        out["draws"] = outcome.draws
        out["p_interval"] = [_num(v) for v in outcome.p_interval] if outcome.p_interval else None
    return out


def also_estimate(estimate, normal_interval=None, normal_method: str = "") -> dict:
    d = estimate.to_dict()
    d["normal_interval"] = (None if normal_interval is None else
                            {"interval": [_num(v) for v in normal_interval],
                             "method": normal_method})
    return d


def strata_rows(tables, stratum_labels, group_labels) -> list:
    rows = []
    for label, t in zip(stratum_labels, tables):
        groups = [{"group": str(g), "events": int(row[0]), "n": int(row.sum())}
                  for g, row in zip(group_labels, t)]
        item = {"stratum": str(label), "groups": groups}
        if t.shape[0] == 2:
            a, b, c, d = (float(v) for v in t.ravel())
            item["odds_ratio"] = _num(_odds_ratio(a, b, c, d))
        rows.append(item)
    return rows


def _odds_ratio(a, b, c, d) -> float:
    if b * c == 0:
        return math.nan if a * d == 0 else math.inf
    return a * d / (b * c)

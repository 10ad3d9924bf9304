"""Every Monte Carlo engine gives the same p-value for the same seed whatever the number of
worker threads (the random streams are fixed units of the seed, not of the workers)."""
from pathlib import Path

import pandas as pd
import pytest

import permq
from permq.engine.montecarlo import sampling

DEMO = Path(__file__).resolve().parents[1] / "demo"
STATEMENTS = [
    'compare mass by recipe levels "A", "B" sampled 20000 seed 4',
    "compare after vs before paired in pots sampled 20000 seed 4",
    "compare mass by recipe sampled 20000 seed 4",
    'compare mass by recipe ordered "B" < "A" < "C" using ranks sampled 20000 seed 4',
    'compare mass by recipe levels "A", "B" within bench sampled 20000 seed 4',
    "compare yield by dose within block using ranks in plots sampled 20000 seed 4",
    "relate mass to light sampled 20000 seed 4",
    "relate mass to light using kendall sampled 20000 seed 4",
    "compare after vs before paired in pots using ranks sampled 20000 seed 4",
    "count sprouted by dose in plots sampled 20000 seed 4",
]


def _p(statement, settings=""):
    tables = {"trays": pd.read_csv(DEMO / "trays.csv"), "plots": pd.read_csv(DEMO / "plots.csv"),
              "pots": pd.read_csv(DEMO / "seedlings.csv")}
    s = permq.Session(tables=tables)
    s.run("use trays" + settings)
    [r] = s.run(statement)
    assert r.outcome.method == "monte-carlo", statement
    return r.outcome.p_value, r.estimate.interval if r.estimate else None


@pytest.mark.parametrize("statement", STATEMENTS)
def test_same_p_for_one_and_three_workers(monkeypatch, statement):
    monkeypatch.setattr(sampling, "default_workers", lambda: 1)
    one = _p(statement)
    monkeypatch.setattr(sampling, "default_workers", lambda: 3)
    assert _p(statement) == one


@pytest.mark.parametrize("statement", STATEMENTS)
def test_set_workers_reaches_one_statements_draws(monkeypatch, statement):
    """`set workers N` runs the statement's Monte Carlo on N threads; the p-value is the same."""
    import concurrent.futures

    pools = []
    real = concurrent.futures.ThreadPoolExecutor

    def recording(max_workers=None, **kw):
        pools.append(max_workers)
        return real(max_workers=max_workers, **kw)

    monkeypatch.setattr(concurrent.futures, "ThreadPoolExecutor", recording)
    one = _p(statement, "\nset workers 1")
    assert pools == []                      # one worker: the draws run in the statement's thread
    three = _p(statement, "\nset workers 3")
    assert pools and set(pools) == {3}
    assert three == one

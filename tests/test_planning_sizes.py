"""Every engine plans at every size: from 10 to 10,000 units, `explain` gives a plan (or the
product's own message), never an internal error, and prices every candidate without
overflow. Planning only: nothing runs."""
import numpy as np
import pandas as pd
import pytest

import permq
from permq.result import Failure

SIZES = (10, 100, 1000, 10_000)


def _frame(n, seed=0, decimals=2):
    rng = np.random.default_rng(seed + n)
    x = np.round(rng.normal(size=n), decimals)          # 8 decimals: no ties
    frame = pd.DataFrame({
        "y": np.round(0.3 * x + rng.normal(size=n), decimals),
        "x": x,
        "z": np.round(rng.normal(size=n), decimals),
        "r": rng.integers(0, 5, n).astype(float),          # heavy ties
        "g2": np.where(np.arange(n) < n // 2, "a", "b"),
        "g2small": np.where(np.arange(n) < max(2, n // 20), "a", "b"),
        "g3": np.array(["a", "b", "c"])[np.arange(n) % 3],
        "g4": np.array(["a", "b", "c", "d"])[np.arange(n) % 4],
    })
    return frame


def _blocks(n, k, seed=1):
    b = max(2, n // k) // 2 * 2                           # an even number of blocks
    rng = np.random.default_rng(seed + n)
    return pd.DataFrame({"y": np.round(rng.normal(size=b * k), 2),
                         "t": np.tile(np.arange(1, k + 1), b).astype(str),
                         "b": np.repeat(np.arange(b), k),
                         "pair": np.tile(["a", "b"], b * k // 2)})


def _check(statement, note):
    assert np.isfinite(note.data["estimated_seconds"]), (statement, note.text)


STATEMENTS = [
    ("d", "compare y by g2"), ("d", "compare y by g2 using ranks"),
    ("d", "compare y by g2 using normal-scores"), ("d", "compare y by g2 using medians"),
    ("d", "compare y by g2small"), ("d", "compare r by g2small using ranks"),
    ("d", "compare y by g2 exact"),
    ("d", "compare y vs x paired"), ("d", "compare y vs x paired using ranks"),
    ("d", "compare y vs x paired using signs"), ("d", "compare r vs x paired using ranks"),
    ("d", "compare y by g3"), ("d", "compare y by g3 using ranks"),
    ("d", "compare r by g3 using ranks"), ("d", "compare y by g4 using normal-scores"),
    ("d", "compare y by g4 using medians"), ("d", "compare r by g4 using ranks exact"),
    ("d", 'compare y by g3 ordered "a" < "b" < "c" using ranks'),
    ("d", 'compare r by g4 ordered "a" < "b" < "c" < "d"'),
    ("b3", "compare y by t within b using ranks"), ("b3", "compare y by t within b"),
    ("b4", 'compare y by t within b ordered "1" < "2" < "3" < "4" using ranks'),
    ("b4", "compare y by pair within b using ranks"), ("b4", "compare y by pair within b"),
    ("d", "relate y to x"), ("d", "relate y to x using spearman"),
    ("d", "relate y to x using kendall"), ("d", "relate r to x using kendall"),
    ("d", "relate y to x using slope"), ("d", "relate y to x using slope adjusting for z"),
    ("d", "relate y to x using kendall exact"),
]


def _explain(statement, tables):
    out = permq.run("explain " + statement, tables=tables)[0]
    if isinstance(out, Failure):
        assert "internal error" not in out.message, (statement, out.message)
        assert out.kind in ("plan error", "bind error", "data error"), (statement, out.kind)
        return None
    return out


@pytest.mark.parametrize("n", SIZES)
def test_every_engine_plans_at_every_size(n):
    tables = {"d": _frame(n), "b3": _blocks(n, 3), "b4": _blocks(n, 4)}
    planned = 0
    for table, statement in STATEMENTS:
        note = _explain(f"{statement} in {table}", tables)
        if note is not None:
            planned += 1
            assert np.isfinite(note.data["estimated_seconds"]) or "exact" in statement
            assert "inf" not in note.text.replace("information", ""), (statement, note.text)
    assert planned >= len(STATEMENTS) - 3


@pytest.mark.parametrize("n", SIZES)
def test_every_table_engine_plans_at_every_size(n):
    rng = np.random.default_rng(n)
    shapes = [(2, 2), (2, 5), (3, 4), (5, 5)]
    for r, c in shapes:
        t = rng.multinomial(n, np.full(r * c, 1 / (r * c))).reshape(r, c)
        text = "count [" + ", ".join("[" + ", ".join(str(v) for v in row) + "]" for row in t) + "]"
        for options in ("", " using chi-square", " ordered" if (r, c) != (2, 2) else ""):
            _explain(text + options, None)
    pairs = pd.DataFrame({"first": rng.integers(0, 2, n), "second": rng.integers(0, 2, n)})
    _explain("count first vs second paired in p", {"p": pairs})
    _explain("count first by second in p", {"p": pairs})
    _explain(f"count {n // 3} of {n}", None)


# ---------------------------------------------------------------- answers at large sizes

def _ok(out):
    assert not isinstance(out, Failure), out.message
    assert 0 < out.outcome.p_value <= 1
    return out


@pytest.mark.parametrize("statement, table", [
    ("compare y by g2 sampled 500 seed 1", "d1200"),                 # 600 + 600
    ("compare y vs x paired using ranks sampled 500 seed 1", "d1500"),
    ("compare y by g4 sampled 500 seed 1", "d520"),                   # 4 groups of 130
    ("compare y by t within b using ranks sampled 500 seed 1", "b3"),  # 3 x 500 blocks
    ('compare y by t within b ordered "1" < "2" < "3" < "4" using ranks sampled 500 seed 1',
     "b4"),                                                           # 4 x 300 blocks
])
def test_designs_far_past_the_float_range_answer(statement, table):
    tables = {"d1200": _frame(1200), "d1500": _frame(1500), "d520": _frame(520),
              "b3": _blocks(1500, 3), "b4": _blocks(1200, 4)}
    out = _ok(permq.run(f"{statement} in {table}", tables=tables)[0])
    assert out.outcome.method == "monte-carlo"
    plain = f"{statement.split(' sampled')[0]} in {table}"
    plan = permq.run(f"explain {plain}", tables=tables)[0].data
    if plan["method"] == "exact":                  # Page's test counts 4 x 300 blocks exactly
        exact = _ok(permq.run(plain, tables=tables)[0])
        assert exact.outcome.p_value == pytest.approx(out.outcome.p_value, abs=0.1)


def test_exact_counts_past_the_float_range_match_scipy():
    from scipy import stats

    d = _frame(1500)
    signs = _ok(permq.run("compare y vs x paired using signs exact alternative higher in d",
                          tables={"d": d})[0])
    diff = (d.y - d.x).to_numpy()
    ref = stats.binomtest(int((diff > 0).sum()), int((diff != 0).sum()), 0.5, "greater")
    assert signs.outcome.arrangements == 2 ** int((diff != 0).sum())      # about 1e451
    assert signs.outcome.p_value == pytest.approx(ref.pvalue, rel=1e-9)
    two = _frame(1200)
    med = _ok(permq.run("compare y by g2 using medians exact alternative higher in d",
                        tables={"d": two})[0])
    y, g = two.y.to_numpy(), two.g2.to_numpy()
    above = y > np.median(y)
    k = int(above[g == "a"].sum())
    ref = stats.hypergeom.sf(k - 1, len(y), int(above.sum()), int((g == "a").sum()))
    assert med.outcome.p_value == pytest.approx(ref, rel=1e-9)        # C(1200, 600) ~ 1e359


def test_the_count_does_not_depend_on_which_group_is_named_first():
    rng = np.random.default_rng(3)
    big_group, small = np.round(rng.normal(size=150), 2), np.round(rng.normal(0.5, 1, 10), 2)
    text = lambda a, b: ("compare [" + ", ".join(f"{v:g}" for v in a) + "] vs ["
                         + ", ".join(f"{v:g}" for v in b) + "]")
    first = permq.run(text(big_group, small))[0]
    second = permq.run(text(small, big_group))[0]
    plans = [permq.run("explain " + text(*pair))[0].data for pair in
             ((big_group, small), (small, big_group))]
    assert plans[0]["algorithm"] == plans[1]["algorithm"]
    assert plans[0]["estimated_seconds"] == pytest.approx(plans[1]["estimated_seconds"], rel=0.05)
    assert first.outcome.method == second.outcome.method == "exact"
    assert first.outcome.p_value == pytest.approx(second.outcome.p_value, rel=1e-12)
    assert first.outcome.statistic == pytest.approx(-second.outcome.statistic)   # sign kept
    lo, hi = first.estimate.interval
    assert second.estimate.interval == pytest.approx((-hi, -lo))


def test_kendall_exact_is_chosen_when_cheaper_than_the_draws():
    d = _frame(700, decimals=8)
    note = permq.run("explain relate y to x using kendall in d", tables={"d": d})[0]
    assert note.data["method"] == "exact"

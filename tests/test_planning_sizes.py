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
    x = np.round(rng.normal(size=n), decimals)
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

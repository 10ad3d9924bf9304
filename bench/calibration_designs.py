"""Designs for bench/calibrate.py: a fixed set to fit the cost model on, and a random set,
drawn afresh from wider ranges with another seed, to check it on (benchmark inputs, not
checks; the data are generated).

Each design is (statement, tables): the statement as a user writes it, and the tables it
names (pandas frames), or None for inline data.
"""
from __future__ import annotations

import numpy as np
import pandas as pd


def lst(a) -> str:
    return "[" + ", ".join(f"{v:g}" for v in a) + "]"


def _values(rng, n, decimals, centre=0.0):
    v = rng.normal(centre, 1.0, n)
    return np.round(v, decimals) if decimals is not None else v


def _groups_table(rng, sizes, decimals, ties=None):
    n = sum(sizes)
    y = rng.integers(0, ties, n).astype(float) if ties else _values(rng, n, decimals)
    names = np.array(list("abcdefgh"))[: len(sizes)]
    return {"d": pd.DataFrame({"y": y, "g": np.repeat(names, sizes)})}


def _levels(k) -> str:
    return " < ".join(f'"{c}"' for c in "abcdefgh"[:k])


def _blocks_table(rng, b, k, decimals):
    return {"d": pd.DataFrame({"y": _values(rng, b * k, decimals),
                               "t": np.tile(list("abcdefgh"[:k]), b),
                               "b": np.repeat(np.arange(b), k)})}


def _pairs_table(rng, n, decimals, slope=0.2, ties=None):
    x = rng.integers(0, ties, n).astype(float) if ties else _values(rng, n, decimals)
    y = slope * x + _values(rng, n, decimals)
    return {"d": pd.DataFrame({"x": x, "y": np.round(y, decimals) if decimals is not None else y,
                               "z": _values(rng, n, decimals)})}


def _table_text(t) -> str:
    return "count [" + ", ".join(lst(row) for row in t) + "]"


# ---------------------------------------------------------------- the fitting set

def fitting(rng) -> list:
    out = []
    for n in (8, 12, 15, 20, 40):
        x, y = _values(rng, n, 2, 20), _values(rng, n, 2, 21)
        out.append((f"compare {lst(x)} vs {lst(y)}", None))
        out.append((f"compare {lst(x)} vs {lst(y)} using ranks", None))
        out.append((f"compare {lst(x)} vs {lst(y)} sampled 50000 seed 1", None))
        out.append((f"compare {lst(x[:4])} vs {lst(y)} using medians", None))
    for n1, n2 in ((60, 60), (150, 150), (30, 200)):
        x, y = _values(rng, n1, 2), _values(rng, n2, 2, 0.2)
        out.append((f"compare {lst(x)} vs {lst(y)} using ranks", None))
        out.append((f"compare {lst(x)} vs {lst(y)} using ranks sampled 2000 seed 1", None))
    for n in (6, 8, 10, 11):
        x, y = rng.normal(size=n), rng.normal(size=n)
        out.append((f"compare {lst(x)} vs {lst(y)} using normal-scores", None))
        out.append((f"compare {lst(x)} vs {lst(y)} exact", None))
    for n in (20, 40, 60, 200, 600):
        d = _values(rng, n, 2, 0.2)
        out.append((f"compare {lst(d)} vs 0", None))
        out.append((f"compare {lst(d)} vs 0 using ranks", None))
        out.append((f"compare {lst(d)} vs 0 using signs", None))
        out.append((f"compare {lst(d)} vs 0 sampled 200000 seed 1", None))
    for n in (14, 18, 20):
        out.append((f"compare {lst(rng.normal(size=n))} vs 0 exact", None))
    for sizes, ties in (((5, 5, 5), 9), ((8, 8, 8), 9), ((10, 12, 9), None), ((15, 15, 15), None),
                        ((4, 5, 4, 5), 9), ((6, 6, 6, 6), 6), ((40, 40, 40), None),
                        ((25, 25, 25, 25), 4), ((30, 25, 20), 5)):   # few categories: the table
        tables = _groups_table(rng, sizes, 1, ties)
        for opts in ("using ranks", "", "using medians", "using normal-scores",
                     "sampled 20000 seed 1", f"ordered {_levels(len(sizes))} using ranks",
                     f"ordered {_levels(len(sizes))}"):
            out.append((f"compare y by g {opts}", tables))
    for b, k in ((6, 3), (10, 4), (30, 3), (200, 3), (8, 5)):
        tables = _blocks_table(rng, b, k, 1)
        out.append(("compare y by t within b using ranks", tables))
        out.append(("compare y by t within b", tables))
        out.append((f"compare y by t within b ordered {_levels(k)} using ranks", tables))
    for n in (10, 20, 50, 200, 400, 700):
        tables = _pairs_table(rng, n, None)
        out.append(("relate y to x using kendall", tables))
        out.append(("relate y to x sampled 20000 seed 1", tables))
        out.append(("relate y to x using slope sampled 5000 seed 1", tables))
    for n in (7, 8, 9):
        out.append(("relate y to x", _pairs_table(rng, n, None)))
        out.append(("relate y to x using slope", _pairs_table(rng, n, None)))
    for sizes, ties in (((10, 12, 9), None), ((40, 40, 40), None), ((25, 25, 25, 25), None),
                        ((6, 20, 30, 12, 9), 7), ((60, 70, 80), 5)):  # Monte Carlo of the trend
        tables = _groups_table(rng, sizes, 1, ties)
        k = len(sizes)
        out.append((f"compare y by g ordered {_levels(k)} using ranks sampled 20000 seed 1",
                    tables))
        out.append((f"compare y by g ordered {_levels(k)} sampled 20000 seed 1", tables))
    for shape, n in (((3, 4), 60), ((2, 6), 120), ((4, 4), 50), ((3, 3), 40), ((2, 2), 300)):
        t = rng.multinomial(n, np.full(shape[0] * shape[1], 1 / (shape[0] * shape[1])))
        out.append((_table_text(t.reshape(shape)), None))
    for shape in ((2, 3), (2, 5), (3, 3), (3, 5), (4, 3), (4, 5)):   # the network's range
        cells = shape[0] * shape[1]
        for per_cell in (3, 8):
            t = rng.multinomial(per_cell * cells, np.full(cells, 1 / cells)).reshape(shape)
            out.append((_table_text(t), None))
            out.append((_table_text(t) + " using chi-square", None))
    for n in (6, 9):         # tiny one-sample statements: what each of its families costs at least
        d = _values(rng, n, 1, 0.2)
        for opts in ("", " using ranks", " using signs", " alternative higher"):
            out.append((f"compare {lst(d)} vs 0{opts}", None))
    for b, k in ((400, 5), (700, 3)):   # many blocks: the normal theory's least squares shows
        out.append(("compare y by t within b sampled 2000 seed 1", _blocks_table(rng, b, k, 1)))
    return out


# ---------------------------------------------------------------- the held-out random set

def random_design(rng):
    """One design drawn from wide ranges: family, sizes, decimals, ties, options."""
    kind = rng.choice(["two", "one", "groups", "ordered", "blocks", "relate", "table"],
                      p=[0.24, 0.16, 0.16, 0.08, 0.12, 0.14, 0.10])
    decimals = rng.choice([0, 1, 2, 3, 6])
    decimals = None if decimals == 6 else int(decimals)
    opts = rng.choice(["", "", "", " sampled 5000 seed 2", " sampled 50000 seed 2",
                       " alternative higher"])
    if kind == "two":
        fam = rng.choice(["means", "ranks", "normal-scores", "medians"])
        n1 = int(rng.choice([int(rng.integers(3, 16)), int(rng.integers(16, 60)),
                             int(rng.integers(60, 400))]))
        n2 = int(rng.integers(3, 2 * n1 + 4))
        x, y = _values(rng, n1, decimals), _values(rng, n2, decimals, 0.3)
        return f"compare {lst(x)} vs {lst(y)} using {fam}{opts}", None
    if kind == "one":
        fam = rng.choice(["means", "ranks", "signs"])
        n = int(rng.choice([int(rng.integers(5, 24)), int(rng.integers(24, 120)),
                            int(rng.integers(120, 900))]))
        return f"compare {lst(_values(rng, n, decimals, 0.2))} vs 0 using {fam}{opts}", None
    if kind in ("groups", "ordered"):
        k = int(rng.integers(3, 6))
        sizes = [int(s) for s in rng.integers(3, rng.choice([8, 14, 40]), k)]
        ties = int(rng.integers(3, 10)) if rng.random() < 0.4 else None
        tables = _groups_table(rng, sizes, decimals, ties)
        fam = rng.choice(["means", "ranks", "normal-scores", "medians"] if kind == "groups"
                         else ["means", "ranks"])
        order = f" ordered {_levels(k)}" if kind == "ordered" else ""
        return f"compare y by g{order} using {fam}{opts}", tables
    if kind == "blocks":
        k = int(rng.integers(3, 6))
        b = int(rng.choice([int(rng.integers(3, 12)), int(rng.integers(12, 60)),
                            int(rng.integers(60, 400))]))
        test = rng.choice(["using ranks", "", f"ordered {_levels(k)} using ranks"])
        opts = "" if "higher" in opts else opts
        return f"compare y by t within b {test}{opts}", _blocks_table(rng, b, k, decimals)
    if kind == "relate":
        fam = rng.choice(["pearson", "spearman", "kendall", "slope"])
        n = int(rng.choice([int(rng.integers(6, 11)), int(rng.integers(11, 120)),
                            int(rng.integers(120, 1200))]))
        ties = int(rng.integers(4, 12)) if rng.random() < 0.3 else None
        return f"relate y to x using {fam}{opts}", _pairs_table(rng, n, decimals, ties=ties)
    r, c = int(rng.integers(2, 5)), int(rng.integers(2, 6))
    n = int(rng.integers(10, 20 * r * c))
    t = rng.multinomial(n, np.full(r * c, 1 / (r * c))).reshape(r, c)
    return _table_text(t) + rng.choice(["", " using chi-square"]), None

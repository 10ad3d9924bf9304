"""The textbook counterparts of the table tests, and a plain summary of a table.

- Pearson chi-square (no continuity correction) and the likelihood-ratio G^2, each on
  (r - 1)(c - 1) df, after empty rows and columns are left out.
- Linear-by-linear association: M^2 = (N - 1) r^2 on 1 df, r the correlation of the row and
  column scores over the N observations; one-sided alternatives use z = sign(r) sqrt(M^2).
- McNemar's chi-square (b - c)^2 / (b + c) on 1 df (continuity correction only on request),
  with the Wald interval for log(b / c).
- Wald z for the log odds ratio of a 2 x 2 table, with its interval; 0.5 is added to every
  cell (Haldane) only when a cell is zero, and the interval method says so.
- One proportion: z = (p_hat - p0) / sqrt(p0 (1 - p0) / n), with the Wilson or the Wald
  interval.

`alternative` is "higher", "lower" or "two-sided"; one-sided intervals have one open end.
"""
from __future__ import annotations

import numpy as np
from ..lazy import stats
from ..lazy import xlogy

from ..result import NormalTheory
from .degenerate import undefined
from .tails import p_from_z as _p_from_z


ONE_LINE = "a single row or column of counts"


def _quantile(level, alternative) -> float:
    return float(stats.norm.ppf(1.0 - (1.0 - level) / (2.0 if alternative == "two-sided" else 1.0)))


def _ends(lo, hi, alternative, low_end=-np.inf, high_end=np.inf):
    if alternative == "higher":
        return (lo, high_end)
    if alternative == "lower":
        return (low_end, hi)
    return (lo, hi)


def _nonempty(table) -> np.ndarray:
    t = np.asarray(table, dtype=float)
    return t[t.sum(axis=1) > 0][:, t.sum(axis=0) > 0]


def _expected(t):
    return np.outer(t.sum(axis=1), t.sum(axis=0)) / t.sum()


def pearson_chi_square(table) -> NormalTheory:
    t = _nonempty(table)
    df = (t.shape[0] - 1) * (t.shape[1] - 1)
    if df == 0:
        return undefined("Pearson chi-square (no continuity correction)", ONE_LINE, 0)
    e = _expected(t)
    x2 = float(((t - e) ** 2 / e).sum())
    return NormalTheory("Pearson chi-square (no continuity correction)", x2, float(df),
                        float(stats.chi2.sf(x2, df)))


def likelihood_ratio(table) -> NormalTheory:
    t = _nonempty(table)
    df = (t.shape[0] - 1) * (t.shape[1] - 1)
    if df == 0:
        return undefined("likelihood-ratio G^2", ONE_LINE, 0)
    g2 = float(2.0 * (xlogy(t, t) - xlogy(t, _expected(t))).sum())
    g2 = max(g2, 0.0)
    return NormalTheory("likelihood-ratio G^2", g2, float(df), float(stats.chi2.sf(g2, df)))


def trend(table, row_scores=None, col_scores=None, alternative: str = "two-sided") -> NormalTheory:
    """Linear-by-linear association (scores 1..r, 1..c unless given)."""
    t = np.asarray(table, dtype=float)
    u = np.arange(1, t.shape[0] + 1.0) if row_scores is None else np.asarray(row_scores, float)
    v = np.arange(1, t.shape[1] + 1.0) if col_scores is None else np.asarray(col_scores, float)
    n = t.sum()
    rows, cols = t.sum(axis=1), t.sum(axis=0)
    du, dv = u - rows @ u / n, v - cols @ v / n
    suu, svv, suv = rows @ du ** 2, cols @ dv ** 2, du @ t @ dv
    if suu == 0 or svv == 0:
        return undefined("linear-by-linear association M^2 = (N - 1) r^2", ONE_LINE, 1)
    r = suv / np.sqrt(suu * svv)
    m2 = float((n - 1.0) * r * r)
    if alternative == "two-sided":
        return NormalTheory("linear-by-linear association M^2 = (N - 1) r^2", m2, 1.0,
                            float(stats.chi2.sf(m2, 1)))
    z = float(np.sign(r) * np.sqrt(m2))
    return NormalTheory("linear-by-linear association z = sign(r) sqrt((N - 1) r^2)", z, None,
                        _p_from_z(z, alternative))


def mcnemar(table, level: float = 0.95, alternative: str = "two-sided",
            correction: bool = False) -> NormalTheory:
    """McNemar's chi-square; the interval is Wald's for b / c (on the log scale)."""
    t = np.asarray(table, dtype=float)
    b, c = t[0, 1], t[1, 0]
    name = "McNemar chi-square" + (" (continuity corrected)" if correction else "")
    if b + c == 0:
        return undefined(name, "no discordant pairs", 1)
    d = max(abs(b - c) - 1.0, 0.0) if correction else abs(b - c)
    x2 = float(d * d / (b + c))
    if alternative == "two-sided":
        p = float(stats.chi2.sf(x2, 1))
    else:
        p = _p_from_z(float(np.sign(b - c) * np.sqrt(x2)), alternative)
    interval, how = None, ""
    if b > 0 and c > 0:
        q = _quantile(level, alternative)
        centre, se = np.log(b / c), np.sqrt(1.0 / b + 1.0 / c)
        interval = _ends(float(np.exp(centre - q * se)), float(np.exp(centre + q * se)),
                         alternative, 0.0, np.inf)
        how = "Wald on log(b / c), se = sqrt(1/b + 1/c)"
    return NormalTheory(name, x2, 1.0, p, interval, how)


def log_odds_ratio(table, level: float = 0.95, alternative: str = "two-sided") -> NormalTheory:
    """Wald z for the log odds ratio of a 2 x 2 table, interval on the odds-ratio scale."""
    t = np.asarray(table, dtype=float)
    how = "Wald on log odds ratio, se = sqrt(sum 1/n_ij)"
    if np.any(t == 0):
        t = t + 0.5
        how += "; 0.5 added to every cell (Haldane) because a cell is zero"
    log_or = float(np.log(t[0, 0] * t[1, 1] / (t[0, 1] * t[1, 0])))
    se = float(np.sqrt((1.0 / t).sum()))
    z = log_or / se
    q = _quantile(level, alternative)
    interval = _ends(float(np.exp(log_or - q * se)), float(np.exp(log_or + q * se)),
                     alternative, 0.0, np.inf)
    return NormalTheory("Wald z for the log odds ratio", z, None, _p_from_z(z, alternative),
                        interval, how)


def one_proportion(successes: int, trials: int, p0: float = 0.5, level: float = 0.95,
                   alternative: str = "two-sided", interval: str = "wilson") -> NormalTheory:
    """Normal-approximation test of one proportion, with the Wilson (or Wald) interval."""
    k, n = float(successes), float(trials)
    phat = k / n
    z = (phat - p0) / np.sqrt(p0 * (1.0 - p0) / n)
    q = _quantile(level, alternative)
    if interval == "wald":
        half = q * np.sqrt(phat * (1.0 - phat) / n)
        lo, hi, how = phat - half, phat + half, "Wald: p_hat -+ z sqrt(p_hat (1 - p_hat) / n)"
    elif interval == "wilson":
        centre = (phat + q * q / (2 * n)) / (1 + q * q / n)
        half = q / (1 + q * q / n) * np.sqrt(phat * (1 - phat) / n + q * q / (4 * n * n))
        lo, hi, how = centre - half, centre + half, "Wilson score interval"
        # the exact limits at the edges (the formula leaves 1e-17 of rounding there)
        lo, hi = (0.0 if k == 0 else lo), (1.0 if k == n else hi)
    else:
        raise ValueError(f"unknown proportion interval {interval!r}; choose wilson or wald")
    bounds = _ends(float(max(lo, 0.0)), float(min(hi, 1.0)), alternative, 0.0, 1.0)
    return NormalTheory("normal approximation z for one proportion", float(z), None,
                        _p_from_z(float(z), alternative), bounds, how)


def table_summary(table, row_labels=None, col_labels=None) -> dict:
    """The table with its margins, as plain lists."""
    t = np.asarray(table)
    rows = [str(v) for v in (row_labels if row_labels is not None else range(1, t.shape[0] + 1))]
    cols = [str(v) for v in (col_labels if col_labels is not None else range(1, t.shape[1] + 1))]
    if len(rows) != t.shape[0] or len(cols) != t.shape[1]:
        raise ValueError("one label is needed for each row and for each column")
    return {"rows": rows, "columns": cols,
            "counts": [[int(v) for v in row] for row in t],
            "row_totals": [int(v) for v in t.sum(axis=1)],
            "column_totals": [int(v) for v in t.sum(axis=0)],
            "total": int(t.sum())}

"""The textbook counterparts of the incomplete-block tests (engine/incomplete).

- means: F for treatments adjusted for blocks in the additive two-way model fitted by least
  squares to the cells that are there (normal/blocks.additive_f: RSS(blocks) against
  RSS(blocks + treatments));
- ranks: the Skillings-Mack statistic against chi-square on its rank (t - 1 for a connected
  design), as Skillings & Mack (1981) give it;
- durbin: Durbin's statistic against chi-square on t - 1 df, and the F form
  F = (T / (t - 1)) / ((b (k - 1) - T) / (b k - b - t + 1)) on t - 1 and b k - b - t + 1 df,
  which Conover (Practical Nonparametric Statistics, 3rd ed., 1999, section 5.9) recommends
  (from memory).
"""
from __future__ import annotations

from ..engine.incomplete import prepare
from ..result import NormalTheory
from .blocks import additive_f


def adjusted_f(values, groups, blocks) -> NormalTheory:
    return additive_f(values, groups, blocks)


def skillings_mack_chi_square(values, groups, blocks, n_groups) -> NormalTheory:
    from scipy import stats

    lay = prepare("skillings-mack", values, groups, blocks, n_groups)
    p = float(stats.chi2.sf(lay.t_obs, lay.df))
    return NormalTheory("chi-square approximation to the Skillings-Mack statistic "
                        "(tie-corrected)", float(lay.t_obs), float(lay.df), p)


def durbin_chi_square(values, groups, blocks, n_groups) -> NormalTheory:
    from scipy import stats

    lay = prepare("durbin", values, groups, blocks, n_groups)
    return NormalTheory("chi-square approximation to Durbin's statistic (tie-corrected)",
                        float(lay.t_obs), float(lay.df), float(stats.chi2.sf(lay.t_obs, lay.df)))


def durbin_f(values, groups, blocks, n_groups) -> NormalTheory:
    from scipy import stats

    lay = prepare("durbin", values, groups, blocks, n_groups)
    b, k, t = len(lay.blocks), len(lay.blocks[0].present), lay.t
    df2 = b * k - b - t + 1
    room = b * (k - 1) - lay.t_obs
    if df2 < 1 or room <= 0:
        return NormalTheory("F form of Durbin's statistic: not available here", float("nan"),
                            None, float("nan"))
    f = (lay.t_obs / (t - 1)) / (room / df2)
    return NormalTheory(f"F form of Durbin's statistic on {t - 1} and {df2} df", float(f),
                        float(t - 1), float(stats.f.sf(f, t - 1, df2)))


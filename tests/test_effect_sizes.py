"""Effect sizes beside each estimate, checked against scipy and against their definitions."""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from scipy import stats

import permq
from kinds import DEMO, kinds


def sizes(out) -> dict:
    return {s["key"]: s for s in out.to_dict()["effect_sizes"]}


def test_standardised_difference_and_its_interval():
    out = kinds()["two-sample means"]
    trays = pd.read_csv(DEMO / "trays.csv").dropna()
    a = trays.mass[trays.recipe == "A"].to_numpy()
    b = trays.mass[trays.recipe == "B"].to_numpy()
    sp = np.sqrt(((len(a) - 1) * a.var(ddof=1) + (len(b) - 1) * b.var(ddof=1)) / (len(a) + len(b) - 2))
    d = sizes(out)["d"]
    assert d["value"] == pytest.approx((a.mean() - b.mean()) / sp)
    lo, hi = out.estimate.interval            # the exact shift interval, in pooled-sd units
    assert d["interval"] == pytest.approx([lo / sp, hi / sp])
    assert d["level"] == 0.95 and d["source"] == "cohen-1988"
    ranks = sizes(kinds()["two-sample ranks"])
    assert ranks["d"]["interval"] is None and "no permutation interval" in ranks["d"]["method"]


def test_probability_of_superiority_is_the_rank_sum_u_over_n1_n2():
    trays = pd.read_csv(DEMO / "trays.csv").dropna()
    a = trays.mass[trays.recipe == "A"].to_numpy()
    b = trays.mass[trays.recipe == "B"].to_numpy()
    u = stats.mannwhitneyu(a, b).statistic            # scipy counts ties as one half
    ps = sizes(kinds()["two-sample ranks"])["superiority"]["value"]
    assert ps == pytest.approx(u / (len(a) * len(b)))


def test_paired_effect_sizes():
    pots = pd.read_csv(DEMO / "seedlings.csv")
    d = (pots.after - pots.before).to_numpy()
    dz = sizes(kinds()["paired means"])["dz"]
    assert dz["value"] == pytest.approx(d.mean() / d.std(ddof=1))
    lo, hi = kinds()["paired means"].estimate.interval
    assert dz["interval"] == pytest.approx([lo / d.std(ddof=1), hi / d.std(ddof=1)])
    nonzero = d[d != 0]
    pos = sizes(kinds()["paired signs"])["positive_share"]["value"]
    assert pos == pytest.approx((nonzero > 0).mean())
    # rank-biserial (W+ - W-) / (W+ + W-) on differences without zeros or ties: 2 W+ / T - 1
    x = np.array([0.4, -0.1, 0.9, 0.3, 0.6, 0.2, -0.5, 1.1])
    out = permq.compare(x, 0, using="ranks")
    w_plus = stats.wilcoxon(x, alternative="greater").statistic
    total = len(x) * (len(x) + 1) / 2
    assert sizes(out)["rank_biserial"]["value"] == pytest.approx(2 * w_plus / total - 1)


def test_k_groups_eta_and_epsilon_squared():
    trays = pd.read_csv(DEMO / "trays.csv").dropna()
    groups = [trays.mass[trays.recipe == g].to_numpy() for g in "ABC"]
    f = stats.f_oneway(*groups).statistic
    df1, df2 = 2, len(trays) - 3
    eta = sizes(kinds()["k-sample means"])["eta_squared"]["value"]
    assert eta == pytest.approx(f * df1 / (f * df1 + df2))        # the F identity
    h = stats.kruskal(*groups).statistic                           # tie-corrected H
    eps = sizes(kinds()["k-sample ranks"])["epsilon_squared"]["value"]
    assert eps == pytest.approx(h / (len(trays) - 1))


def test_blocks_kendall_w_and_partial_eta_squared():
    plots = pd.read_csv(DEMO / "plots.csv")
    wide = plots.pivot(index="block", columns="dose", values="yield")
    chi2 = stats.friedmanchisquare(*[wide[c] for c in wide.columns]).statistic
    b, k = wide.shape
    w = sizes(kinds()["blocked ranks"])["kendall_w"]["value"]
    assert w == pytest.approx(chi2 / (b * (k - 1)))
    import statsmodels.formula.api as smf
    from statsmodels.stats.anova import anova_lm

    fit = smf.ols("Q('yield') ~ C(dose) + C(block)", data=plots).fit()
    table = anova_lm(fit)
    ss_t, ss_e = table.loc["C(dose)", "sum_sq"], table.loc["Residual", "sum_sq"]
    partial = sizes(kinds()["blocked means"])["partial_eta_squared"]["value"]
    assert partial == pytest.approx(ss_t / (ss_t + ss_e))


def test_standardised_slope_and_tables():
    trays = pd.read_csv(DEMO / "trays.csv").dropna()
    out = kinds()["association slope"]
    s = sizes(out)["standardised_slope"]
    r = stats.pearsonr(trays.mass, trays.light).statistic
    assert s["value"] == pytest.approx(r)          # b sd(x) / sd(y) is Pearson's r
    lo, hi = out.estimate.interval
    scale = trays.light.std() / trays.mass.std()
    assert s["interval"] == pytest.approx([lo * scale, hi * scale])
    v = sizes(kinds()["table r x c"])["cramer_v"]["value"]
    assert v == pytest.approx(stats.contingency.association(
        np.array([[9, 1, 3], [3, 7, 2]]), method="cramer"))
    arms = kinds()["table from columns"].to_dict()["arm_proportions"]
    plots = pd.read_csv(DEMO / "plots.csv")
    for arm in arms:
        inside = plots[plots.dose.astype(str) == arm["arm"]]
        assert arm["n"] == len(inside)
        assert arm["proportions"]["no"] == pytest.approx((inside.sprouted == "no").mean())
    diff = sizes(kinds()["table from columns"])["proportion_difference"]
    assert "reference '0'" in diff["name"]
    assert diff["value"] == pytest.approx(arms[0]["proportions"]["no"] - arms[1]["proportions"]["no"])
    h = sizes(kinds()["proportion"])["cohen_h"]["value"]
    assert h == pytest.approx(2 * np.arcsin(np.sqrt(0.35)) - 2 * np.arcsin(np.sqrt(0.5)))


def test_levels_choose_the_reference_arm_and_inline_tables_take_labels():
    k = kinds()["table from columns"]
    assert k.to_dict()["table"]["columns"] == ["40", "0"]
    assert k.effect == "odds ratio of 'no' in '40' against '0'"
    flipped = permq.run('load "plots.csv"\ncount sprouted by dose levels "0", "40"',
                        base_dir=DEMO)[-1]
    assert flipped.outcome.p_value == pytest.approx(k.outcome.p_value)
    assert sizes(flipped)["proportion_difference"]["value"] == pytest.approx(
        -sizes(k)["proportion_difference"]["value"])
    labelled = kinds()["table 2x2"].to_dict()["table"]
    assert labelled["rows"] == ["treated", "control"] and labelled["columns"] == ["better", "same"]
    bad = permq.run('count [[9, 1], [3, 7]] rows "a"\ncount [[9, 1], [3, 7]] columns "x", "x"\n'
                    'load "plots.csv"\ncount sprouted by dose levels "40", "5"\ncount 3 of 9 rows "a"',
                    base_dir=DEMO)
    messages = [o.message for o in bad if isinstance(o, permq.Failure)]
    assert messages == ["the table has 2 rows; 'rows' names 1", "\"x\" names two columns",
                        "no level \"5\" in column 'dose'", "'rows' does not apply to one proportion"]

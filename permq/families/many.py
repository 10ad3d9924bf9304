"""Several responses, `for each` features, or every pair of levels: one row per test.

Joins a `ManyDesign` to the many-response engine (the same arrangements for every test, the
adjustment from their joint distribution), the per-response estimates, and the filters.
"""
from __future__ import annotations

from dataclasses import replace

import numpy as np
from ..engine.core.scores import midranks

from ..lazy import module
from ..errors import PlanError
from ..normal.theory import welch_t
from ..plan.planner import make_plan
from ..result_many import ManyResult, ManyRow
from .registry import Family

# loaded when a statement first runs
many, many_estimates = module("permq.engine.many.joint"), module("permq.engine.many.estimates")
rankintervals = module("permq.engine.rankintervals")
many_workers = module("permq.engine.many.workers")

RULES = {
    ("max-t", "step-down"): "Westfall-Young max-T, step-down, from the joint permutation "
                            "distribution (family-wise error)",
    ("max-t", "single-step"): "Westfall-Young max-T, single-step, from the joint permutation "
                              "distribution (family-wise error)",
    ("min-p", "step-down"): "Westfall-Young min-P, step-down, from the joint permutation "
                            "distribution (family-wise error)",
    ("min-p", "single-step"): "Westfall-Young min-P, single-step, from the joint permutation "
                              "distribution (family-wise error)",
    ("holm", "step-down"): "Holm step-down on the raw p-values (family-wise error)",
    ("holm", "single-step"): "Bonferroni on the raw p-values (family-wise error)",
    ("fdr", "step-up"): "Benjamini-Hochberg step-up on the raw p-values (false discovery rate)",
    ("none", ""): "no adjustment: the adjusted p is the raw p",
}


def _tests(design) -> int:
    k = len(design.labels)
    return k * (k - 1) // 2 if design.pairwise else design.values.shape[1]


def plan(design):
    s = design.settings
    tests = _tests(design)
    draws = s.sampled or many.default_draws(tests)
    sizes = np.bincount(design.groups, minlength=len(design.labels))
    the_plan = make_plan("many", s.family, s,
                         lambda _: many.candidates(sizes, tests, draws, design.adjustment,
                                                   design.pairwise))
    if the_plan.chosen.memory > s.memory_bytes:
        need = the_plan.chosen.memory / 1e9
        raise PlanError(f"{the_plan.chosen.description} would need about {need:.2g} GB of "
                        f"memory, past the limit of {s.memory_bytes / 1e9:g} GB",
                        hint="use fewer draws ('sampled N')" + (
                            ", or adjust max-t (it streams the arrangements)"
                            if design.adjustment == "min-p" else ""))
    return replace(the_plan, draws=draws)


def execute(design, the_plan, progress, statement: str = "") -> ManyResult:
    s = design.settings
    alg, draws, seed = the_plan.chosen.algorithm, the_plan.draws, the_plan.seed
    if design.pairwise:
        out = many.run_pairwise(design.values[:, 0], design.groups, s.family == "ranks",
                                design.adjustment, design.step, alg, draws, seed, progress)
        rows, names = _pair_rows(design, out), _pair_names(s.family)
        where = "this machine"
    else:
        pool = many_workers.pool_for(design.workers, design.cluster)
        out = many.run_family(design.values, design.groups, s.family == "ranks", s.alternative,
                              design.adjustment, design.step, alg, draws, seed, progress, pool)
        rows, names = _response_rows(design, out), _response_names(design)
        where = pool.where
    shown = _filtered(design, rows)
    return ManyResult(statement, _family_word(design), s.alternative, names["test"],
                      names["statistic"], _adjustment_word(design),
                      RULES[(design.adjustment, design.step)], out.method, out.algorithm,
                      out.arrangements, out.draws, out.seed, shown, design.labels,
                      names.get("effect", ""), names.get("estimate", ""),
                      names.get("interval", ""), s.level, len(rows),
                      len(design.untested), len(rows) + len(design.untested),
                      _filters(design), _overall(design, out), list(design.warnings), where)


# ---------------------------------------------------------------- words

def _family_word(design) -> str:
    if design.pairwise:
        return "pairwise"
    return "for each" if design.feature else "several responses"


def _adjustment_word(design) -> str:
    if design.adjustment == "holm" and design.step == "single-step":
        return "bonferroni"
    return f"{design.adjustment} {design.step}".strip()


def _response_names(design) -> dict:
    fam, labels = design.settings.family, design.labels
    if len(labels) > 2:
        return {"test": "permutation F" if fam == "means" else
                "Kruskal-Wallis (mid-ranks, tie-corrected)",
                "statistic": "F" if fam == "means" else "H",
                "effect": f"differences among {', '.join(labels)}"}
    a, b = labels
    if fam == "means":
        return {"test": "difference in means (permutation)",
                "statistic": "z: difference in means over its permutation standard error",
                "effect": f"difference in means {a} - {b}",
                "estimate": f"difference in means {a} - {b}",
                "interval": "Welch t interval (normal theory, unequal variances), per response, "
                            "not adjusted for multiplicity"}
    return {"test": "Wilcoxon rank-sum (mid-ranks)",
            "statistic": "z: difference in mean ranks over its permutation standard error",
            "effect": f"shift {a} - {b}",
            "estimate": f"Hodges-Lehmann shift {a} - {b}",
            "interval": "order statistics of the pairwise differences at the exact rank-sum "
                        "quantiles (no-ties law), per response, not adjusted for multiplicity"}


def _pair_names(family) -> dict:
    scores = "values" if family == "means" else "mid-ranks of all units"
    return {"test": f"pairs of levels, all units permuted together (differences of mean "
                    f"{scores})",
            "statistic": "z: difference of the pair's mean scores over its standard error "
                         "(pooled over all units)",
            "effect": "first level - second level, per pair",
            "estimate": "difference in means" if family == "means" else "Hodges-Lehmann shift",
            "interval": ("Welch t interval (normal theory), per pair, not adjusted"
                         if family == "means" else
                         "order statistics of the pair's differences at the exact rank-sum "
                         "quantiles (no-ties law), per pair, not adjusted")}


# ---------------------------------------------------------------- rows

def _group_counts(design) -> np.ndarray:
    observed = ~np.isnan(design.values)
    return np.stack([observed[design.groups == g].sum(axis=0)
                     for g in range(len(design.labels))], axis=1)


def _response_rows(design, out) -> list:
    s = design.settings
    counts = _group_counts(design)
    k = len(design.labels)
    est = lo = hi = [None] * len(design.names)
    stat = out.t_obs.copy()
    if k == 2:
        x1, x2 = design.values[design.groups == 0], design.values[design.groups == 1]
        fn = many_estimates.welch if s.family == "means" else many_estimates.hodges_lehmann
        est, lo, hi = fn(x1, x2, s.level, s.alternative)
        if s.alternative == "two-sided":
            stat = stat * _direction(design)
        elif s.alternative == "lower":
            stat = -stat
    else:
        n = counts.sum(axis=1).astype(float)
        if s.family == "means":
            with np.errstate(divide="ignore", invalid="ignore"):
                stat = (stat / (k - 1)) / ((n - 1 - stat) / (n - k))
    m = len(design.names)
    est = [None if v is None or v != v else float(v) for v in np.asarray(est, dtype=object)]
    if k == 2:
        ivs = [(a, b) if a == a and b == b else None for a, b in zip(np.asarray(lo).tolist(),
                                                                     np.asarray(hi).tolist())]
    else:
        ivs = [None] * m
    n = [tuple(c) for c in counts.astype(int).tolist()]
    return [ManyRow(name, n[j], s_j, p, q, est[j], ivs[j]) for j, (name, s_j, p, q) in
            enumerate(zip(design.names, stat.tolist(), out.p_raw.tolist(),
                          out.p_adjusted.tolist()))]


def _direction(design) -> np.ndarray:
    """+1 where the first level's mean score is the higher, else -1."""
    v = design.values
    if design.settings.family == "ranks":
        v = midranks(v, axis=0, nan_policy="omit")
    with np.errstate(invalid="ignore"):
        d = np.nanmean(v[design.groups == 0], axis=0) - np.nanmean(v[design.groups == 1], axis=0)
    return np.where(d < 0, -1.0, 1.0)


def _pair_rows(design, out) -> list:
    s = design.settings
    y = design.values[:, 0]
    scores = y if s.family == "means" else midranks(y)
    rows = []
    for i, (a, b) in enumerate(out.pairs):
        xa, xb = y[design.groups == a], y[design.groups == b]
        la, lb = design.labels[a], design.labels[b]
        higher = scores[design.groups == a].mean() >= scores[design.groups == b].mean()
        sign = 1.0 if higher else -1.0
        if s.family == "means":
            est = float(xa.mean() - xb.mean())
            iv = (welch_t(xa, xb, s.level, "two-sided").interval
                  if len(xa) > 1 and len(xb) > 1 else None)
        else:
            est, iv, _ = rankintervals.hodges_lehmann_two_sample(xa, xb, s.level, "two-sided")
        rows.append(ManyRow(f"{la} - {lb}", (len(xa), len(xb)), sign * float(out.t_obs[i]),
                            float(out.p_raw[i]), float(out.p_adjusted[i]), est,
                            None if iv is None else (float(iv[0]), float(iv[1]))))
    return rows


def _filtered(design, rows) -> list:
    order = sorted(range(len(rows)), key=lambda j: (rows[j].p_value, j))
    shown = [rows[j] for j in order]
    if design.below is not None:
        shown = [r for r in shown if r.p_adjusted < design.below]
    if design.top is not None:
        shown = shown[:design.top]
    if design.below is None and design.top is None:
        shown += [ManyRow(name, (), None, None, None, note=f"not tested: {why}")
                  for name, why in design.untested]
    return shown


def _filters(design) -> dict:
    out = {}
    if design.top is not None:
        out["top"] = design.top
    if design.below is not None:
        out["below"] = design.below
    return out


def _overall(design, out) -> dict:
    if not design.pairwise:
        return {}
    k = len(design.labels)
    n = float(len(design.groups))
    t = out.overall["statistic"]
    if design.settings.family == "means":
        return {"test": "permutation F", "statistic": (t / (k - 1)) / ((n - 1 - t) / (n - k)),
                "p_value": out.overall["p_value"]}
    return {"test": "Kruskal-Wallis (mid-ranks, tie-corrected)", "statistic": t,
            "p_value": out.overall["p_value"]}


FAMILIES = [
    Family("means", ("many",), "joint permutation tests of differences in means", "",
           plan, execute, "Welch t per response", "difference in means with its Welch interval",
           no_robustness="several tests at once: the check takes one response or pair at a time",
           default_in=("many",)),
    Family("ranks", ("many",), "joint Wilcoxon rank-sum tests", "", plan, execute,
           "normal approximation to the rank sum per response",
           "Hodges-Lehmann shift per response",
           no_robustness="several tests at once: the check takes one response or pair at a time"),
]

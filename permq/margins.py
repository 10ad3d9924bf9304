"""Equivalence and non-inferiority: `margin M` after a comparison of two samples, pairs or one
sample.

Two one-sided tests (Schuirmann 1987, J. Pharmacokin. Biopharm. 15:657), each the analysis's
own exact permutation test under the shift model:
- against the lower margin, H0: effect <= -M, the test "higher" of the data shifted by +M
  (the first group's values, or the differences);
- against the upper margin, H0: effect >= +M, the test "lower" of the data shifted by -M.
Two-sided (equivalence): p = the larger of the two, and the effect lies within (-M, M) at
level alpha exactly when the exact (1 - 2 alpha) interval does; `alternative higher` is
non-inferiority (only the lower margin), `alternative lower` non-superiority (the upper).
Beside them, the t-based two one-sided tests: Welch's t for two samples, t on the
differences for pairs and one sample.
"""
from __future__ import annotations

import dataclasses

from .bind import designs
from .errors import BindError
from .normal.tails import p_from_t


def check(design, opt) -> float:
    if not isinstance(design, (designs.TwoSampleDesign, designs.OneSampleDesign)):
        raise BindError("'margin' goes with two samples, pairs or one sample", opt.span,
                        hint="compare new vs old paired margin 0.5")
    m = float(opt.value)
    if not m > 0:
        raise BindError("a margin is a positive number, in the data's units", opt.span)
    return m


def _shifted(design, by: float, alternative: str):
    s = dataclasses.replace(design.settings, alternative=alternative)
    if isinstance(design, designs.TwoSampleDesign):
        return dataclasses.replace(design, x=design.x + by, settings=s)
    return dataclasses.replace(design, d=design.d + by, settings=s)


def attach(design, result, margin: float, handler, progress) -> None:
    alternative = design.settings.alternative
    alpha = round(1 - design.settings.level, 10)
    sides = {"two-sided": ("lower", "upper"), "higher": ("lower",), "lower": ("upper",)}
    p = {}
    for side in sides[alternative]:
        d = _shifted(design, margin if side == "lower" else -margin,
                     "higher" if side == "lower" else "lower")
        out = handler.execute(d, handler.plan(d), progress, result.statement)
        p[side] = out.outcome.p_value
    t = _t_based(design, margin, sides[alternative])
    kind = {"two-sided": "equivalence", "higher": "non-inferiority",
            "lower": "non-superiority"}[alternative]
    p_exact, p_t = max(p.values()), max(t["p"].values())
    record = {"kind": kind, "margin": margin, "level": alpha,
              "exact": {"p_lower_margin": p.get("lower"), "p_upper_margin": p.get("upper"),
                        "p_value": p_exact, "concluded": bool(p_exact <= alpha + 1e-12)},
              "t_based": {"test": t["test"], "p_lower_margin": t["p"].get("lower"),
                          "p_upper_margin": t["p"].get("upper"), "p_value": p_t,
                          "concluded": bool(p_t <= alpha + 1e-12)}}
    if alternative == "two-sided":
        narrow = dataclasses.replace(design, settings=dataclasses.replace(
            design.settings, level=1 - 2 * alpha))
        out = handler.execute(narrow, handler.plan(narrow), progress, result.statement)
        if out.estimate is not None and out.estimate.interval is not None:
            record["exact"]["interval"] = [float(v) for v in out.estimate.interval]
            record["exact"]["interval_level"] = round(1 - 2 * alpha, 10)
    record["verdict"] = verdict(record, result.effect)
    result.extra["equivalence"] = record


def verdict(rec: dict, effect: str) -> str:
    m, a = rec["margin"], rec["level"]
    what = {"equivalence": f"within ±{m:g}", "non-inferiority": f"above -{m:g}",
            "non-superiority": f"below +{m:g}"}[rec["kind"]]
    ex, tb = rec["exact"]["concluded"], rec["t_based"]["concluded"]
    head = (f"{rec['kind']} shown at {a:g}: the {effect or 'effect'} lies {what}" if ex else
            f"{rec['kind']} not shown at {a:g}: the data do not exclude an effect outside "
            f"the margin")
    if ex != tb:
        head += (f" (the t-based tests {'would' if tb else 'would not'} conclude it: "
                 "they disagree here)")
    return head


def _t_based(design, m: float, sides) -> dict:
    if isinstance(design, designs.TwoSampleDesign):
        x, y = design.x, design.y
        v1, v2 = x.var(ddof=1) / len(x), y.var(ddof=1) / len(y)
        se = (v1 + v2) ** 0.5
        df = (v1 + v2) ** 2 / (v1 ** 2 / (len(x) - 1) + v2 ** 2 / (len(y) - 1))
        est, name = float(x.mean() - y.mean()), "Welch t, two one-sided tests"
    else:
        d = design.d
        se, df = float(d.std(ddof=1)) / len(d) ** 0.5, len(d) - 1
        est, name = float(d.mean()), "t on the differences, two one-sided tests"
    p = {}
    if se > 0:
        for side in sides:
            if side == "lower":
                p[side] = p_from_t((est + m) / se, df, "higher")
            else:
                p[side] = p_from_t((est - m) / se, df, "lower")
    else:
        for side in sides:
            p[side] = float("nan")
    return {"test": name, "p": p}

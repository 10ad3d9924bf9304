"""`robustness count ...`: the table, paired and proportion designs under their sampling schemes.

The statement's own analysis has run (`observed`); here its design (row totals, pairs, trials)
is kept and tables are simulated under each scheme of `tables_laws` (scheme j of the panel
uses seeds from 1000 * seed + j with `sampling.blocks`, so one seed reproduces the whole
panel), each block of data sets twice: under the null and at the effect. Every simulated table
goes through both of the analysis's tests (`tables_tests.CountTests`), the rates and their
standard errors come from `simulate.rates_from_counts`, the schemes run on `simulate`'s worker
threads with its progress and cancel, and `tables_report` words the result.

The effect is the observed association unless `shift` names another:

- 2 x 2 tables: `shift 3` is an odds ratio of 3 (the rows keep the pooled column proportions
  as observed; with both margins fixed, the tables are weighted by 3^n11);
- paired outcomes: `shift 3` is a discordant-pair ratio b / c of 3, at the observed chance of
  disagreeing;
- one proportion: `shift 0.7` is the true proportion;
- larger tables have no one-number effect, and `shift` is refused there, as is `shift ... sd`
  for every count design (counts have no standard-deviation unit).
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ...engine.montecarlo import sampling
from ...engine.core.progress import NO_PROGRESS
from ...errors import BindError
from . import schemes as TL
from . import report as tables_report
from ..simulate import LawRates, Simulation, run_parallel, Tracker, rates_from_counts
from .batch import CountTests, margin_keys

BLOCK = 100


@dataclass(frozen=True)
class Effect:
    panel: tuple              # schemes (None where one is left out)
    value: float              # the one-number effect (odds ratio, b / c, proportion) or NaN
    words: str
    null_effect: bool         # the effect is no effect at all (power = the rate under the null)


def check_table(text, design, observed, check, seed, progress, picture, warnings, effect=None,
                tests=None):
    effect = effect if effect is not None else effect_for(design, check.shift)
    if tests is None and design.form == "paired-categories":
        from . import paired_categories

        tests = paired_categories.tests_for(design)
    tests = tests if tests is not None else CountTests(design)
    warnings = list(warnings)
    if effect.panel[0] is None and design.form == "table":
        warnings.append("both margins fixed: left out, the design has too many tables to "
                        "sample the effect with both margins fixed")
    sim = simulate_counts(effect.panel, tests, check.datasets, check.alpha, seed, progress)
    return tables_report.build(text, design, observed, sim, tests, effect, picture, warnings)


# ---------------------------------------------------------------- the effect

def effect_for(design, shift) -> Effect:
    form, t = design.form, np.asarray(design.table, np.int64)
    if t.sum() == 0:
        raise BindError("the table holds no counts, so there is nothing to simulate")
    if shift is not None and shift[1]:
        raise BindError("counts have no standard-deviation unit: a shift in sd does not apply",
                        hint=_shift_hint(design))
    if form == "proportion":
        return _proportion_effect(design, shift)
    if form == "paired":
        return _paired_effect(design, shift)
    if form == "paired-categories":
        from . import paired_categories

        return paired_categories.effect_for(design, shift)
    if shift is not None and t.shape != (2, 2):
        raise BindError(f"'shift' has no meaning for a {t.shape[0]} x {t.shape[1]} table",
                        hint=_shift_hint(design))
    return _table_effect(design, shift)


def _shift_hint(design) -> str:
    if design.form == "proportion":
        return "give the true proportion: shift 0.7"
    if design.form == "paired":
        return "give a discordant-pair ratio b / c: shift 3"
    if design.table.shape == (2, 2):
        return "give an odds ratio: shift 3"
    return ("the power is at the observed association; to try another, check the table you "
            "expect: robustness count [[...], [...]]")


def _positive(shift, what: str, design) -> float:
    v = float(shift[0])
    if not np.isfinite(v) or v <= 0:
        raise BindError(f"shift {v:g}: {what} must be above 0", hint=_shift_hint(design))
    return v


def _row_proportions(t) -> np.ndarray:
    rows = t.sum(axis=1).astype(float)
    pooled = t.sum(axis=0) / t.sum()
    return np.where(rows[:, None] > 0, t / np.where(rows > 0, rows, 1.0)[:, None], pooled)


def _table_effect(design, shift) -> Effect:
    t = np.asarray(design.table, np.int64)
    rows = t.sum(axis=1)
    j = TL.rarest_column(t)
    if shift is None:
        props = _row_proportions(t)
        panel = TL.table_panel(t, props, TL.halved(props, j), props)
        value = _sample_odds_ratio(t) if t.shape == (2, 2) else float("nan")
        null = bool(np.allclose(props, props[0]))
        return Effect(tuple(panel), value, _observed_words(design, props, value), null)
    psi = _positive(shift, "an odds ratio", design)
    pooled = t.sum(axis=0) / t.sum()
    if not 0 < pooled[0] < 1:
        raise BindError("a column of this table is empty, so no odds ratio can be set",
                        hint="drop 'shift': the power is then at the observed table")
    rarer = TL.halved(pooled, j)
    effect_rows = TL.odds_ratio_rows(rows, pooled[0], psi)
    effect_rarer = TL.odds_ratio_rows(rows, rarer[0], psi)
    theta = np.array([[psi, 1.0], [1.0, 1.0]])
    panel = TL.table_panel(t, effect_rows, effect_rarer, theta)
    words = (f"an odds ratio of {psi:.4g} (row totals as observed, the pooled column proportions "
             f"as observed: '{design.col_labels[0]}' {effect_rows[0, 0]:.3g} in "
             f"'{design.row_labels[0]}' and {effect_rows[1, 0]:.3g} in '{design.row_labels[1]}')")
    return Effect(tuple(panel), psi, words, psi == 1.0)


def _sample_odds_ratio(t) -> float:
    num, den = float(t[0, 0] * t[1, 1]), float(t[0, 1] * t[1, 0])
    if den == 0:
        return float("inf") if num > 0 else float("nan")
    return num / den


def _observed_words(design, props, odds) -> str:
    r, c = props.shape
    head = "the observed association"
    if r * c <= 16:
        parts = "; ".join(f"'{lab}' " + " / ".join(f"{v:.3g}" for v in row)
                          for lab, row in zip(design.row_labels, props))
        head += f" (each row with its observed proportions: {parts})"
    else:
        head += " (each row with its observed proportions)"
    if props.shape == (2, 2) and np.isfinite(odds):
        head += f", odds ratio {odds:.4g}"
    return head


def _paired_effect(design, shift) -> Effect:
    t = np.asarray(design.table, np.int64)
    b, c = int(t[0, 1]), int(t[1, 0])
    if shift is None:
        share = b / (b + c) if b + c else 0.5
        ratio = b / c if c else (float("inf") if b else float("nan"))
        first, second = design.row_labels, design.col_labels
        words = (f"the observed discordant split, b = {b} pairs '{first[0]}' with "
                 f"'{second[1]}' against c = {c} '{first[1]}' with '{second[0]}'"
                 + (f" (ratio b / c {ratio:.4g})" if np.isfinite(ratio) else ""))
        return Effect(tuple(TL.paired_panel(t, share)), ratio, words, b == c)
    psi = _positive(shift, "a ratio b / c", design)
    words = (f"a discordant-pair ratio b / c of {psi:.4g}, with the observed chance of "
             f"disagreeing ({(b + c) / t.sum():.3g})")
    return Effect(tuple(TL.paired_panel(t, psi / (1.0 + psi))), psi, words, psi == 1.0)


def _proportion_effect(design, shift) -> Effect:
    t = np.asarray(design.table, np.int64)
    k, n = int(t[0, 0]), int(t.sum())
    p0 = float(design.reference)
    if shift is None:
        p1 = k / n
        words = f"the observed proportion {p1:.4g} ({k} of {n}), against {p0:g}"
    else:
        p1 = float(shift[0])
        if not 0.0 <= p1 <= 1.0:
            raise BindError(f"shift {p1:g} is not a proportion", hint=_shift_hint(design))
        words = f"a true proportion of {p1:.4g}, against {p0:g}"
    return Effect(tuple(TL.proportion_panel(n, p0, p1)), p1, words, p1 == p0)


# ---------------------------------------------------------------- the simulation

def simulate_counts(panel, tests: CountTests, datasets: int, alpha: float, seed: int,
                    progress=NO_PROGRESS, workers=None) -> Simulation:
    """Rejection rates of both tests under each scheme (None entries are skipped but keep
    their seed index, so the other schemes' numbers do not change).

    Scheme j draws the null's tables from the seed 1000 * seed + j and the effect's from
    1000 * seed + EFFECT_STREAM + j (so the rates under the null do not depend on the effect);
    Monte Carlo references come from 1000 * seed + MC_STREAM + j. The first PILOT data sets of
    every scheme are drawn once beforehand, for their margins only, so that the tests can
    choose how to work from the margins they will meet."""
    todo = [(j, s) for j, s in enumerate(panel) if s is not None]
    pilot = min(datasets, PILOT)
    tracker = Tracker(len(todo) * (pilot + TEST_WEIGHT * datasets))
    workers = max(1, min(workers or WORKERS, len(todo)))

    def margins(i):
        j, scheme = todo[i]
        return [margin_keys(t) for pair in _draws(scheme, pilot, 1000 * seed + j, tracker, 1)
                for t in pair]

    keys = run_parallel(margins, len(todo), workers, tracker, progress)
    tests.choose([k for per_scheme in keys for k in per_scheme], datasets / pilot)

    def test(i):
        j, scheme = todo[i]
        return _scheme_counts(scheme, tests, datasets, alpha, 1000 * seed + j, tracker)

    counts = run_parallel(test, len(todo), workers, tracker, progress)
    out = []
    for (_, scheme), c in zip(todo, counts):
        rates = [rates_from_counts(c[:, i], c[:, 4], not tests.exact) for i in range(4)]
        out.append(LawRates(scheme, *rates, not_exact=scheme.not_exact))
    return Simulation(tuple(out), datasets, alpha, tests.exact, tests.arrangements, seed)


PILOT = 2000             # data sets a scheme whose margins decide how the tests work
# One worker thread by default: the work is many small array operations that hold the
# interpreter lock, and a second thread only slows it (measured, 3 x 4 table of 60 at 2,000
# data sets a scheme: 10.7 s on one thread, 13.4 s on two; 2 x 3 of 60: 4.2 s and 7.0 s).
WORKERS = 1
EFFECT_STREAM = 300      # offsets of the streams of the effect's tables and of the Monte
MC_STREAM = 600          # Carlo references from the null tables' stream (at most 300 schemes)
TEST_WEIGHT = 9          # progress: testing a block takes about this many times drawing it


def _draws(scheme, datasets, seed, tracker, weight):
    """(size, null tables, tables at the effect) for each block of data sets, in order."""
    for (_, size, rng), (_, _, effect_rng) in zip(
            sampling.blocks(seed, datasets, BLOCK),
            sampling.blocks(seed + EFFECT_STREAM, datasets, BLOCK)):
        tracker.check()
        yield scheme.null(rng, size), scheme.effect(effect_rng, size)
        tracker.add(weight * size)


def _scheme_counts(scheme, tests, datasets, alpha, seed, tracker) -> np.ndarray:
    """Rejections per block: normal / exact under the null, then at the effect; block size."""
    rows = []
    references = sampling.blocks(seed + MC_STREAM, datasets, BLOCK)
    for pair, (_, size, rng) in zip(_draws(scheme, datasets, seed, tracker, TEST_WEIGHT),
                                    references):
        row = []
        for tables in pair:
            row.append(int(np.count_nonzero(tests.normal_p(tables) <= alpha + 1e-12)))
            row.append(int(np.count_nonzero(tests.exact_p(tables, rng) <= alpha + 1e-12)))
        rows.append(row + [size])
    return np.array(rows)

"""One statement of every result kind, on the demo's tables (shared by the reporting tests)."""
from __future__ import annotations

from functools import lru_cache
from pathlib import Path

import pandas as pd

import permq

DEMO = Path(__file__).resolve().parents[1] / "demo"

KINDS = {
    "two-sample means": 'compare mass by recipe levels "A", "B" in trays',
    "two-sample ranks": 'compare mass by recipe levels "A", "B" in trays using ranks',
    "two-sample normal scores": 'compare mass by recipe levels "C", "A" in trays using normal-scores',
    "two-sample medians": 'compare mass by recipe levels "C", "A" in trays using medians alternative higher',
    "two-sample Monte Carlo": "compare [4.1, 5.3, 4.8, 5.0] vs [6.0, 5.9, 7.2, 6.6, 6.1] sampled 2000 seed 3",
    "paired means": "compare after vs before paired in pots",
    "paired ranks": "compare after vs before paired using ranks in pots",
    "paired signs": "compare after vs before paired using signs in pots",
    "one-sample": "compare mass vs 12 in trays using ranks",
    "k-sample means": "compare mass by recipe in trays",
    "k-sample ranks": "compare mass by recipe in trays using ranks",
    "ordered ranks": 'compare mass by recipe in trays ordered "B" < "A" < "C" using ranks alternative higher',
    "ordered means": 'compare mass by recipe in trays ordered "B" < "A" < "C"',
    "blocked ranks": "compare yield by dose within block using ranks in plots",
    "blocked page": "compare yield by dose within block ordered using ranks alternative higher in plots",
    "blocked means": "compare yield by dose within block using means in plots",
    "stratified": 'compare yield by dose levels "40", "0" within block in plots',
    "association kendall": "relate mass to light in trays using kendall",
    "association slope": "relate mass to light in trays using slope sampled 5000 seed 2",
    "association adjusted": "relate mass to light in trays using slope adjusting for tray sampled 2000 seed 2",
    "table trend": "count sprouted by dose in plots ordered",
    "table from columns": 'count sprouted by dose in plots levels "40", "0"',
    "table 2x2": 'count [[9, 1], [3, 7]] rows "treated", "control" columns "better", "same"',
    "table r x c": "count [[9, 1, 3], [3, 7, 2]] using chi-square",
    "paired counts": "count first vs second paired in pairs",
    "proportion": "count 7 of 20 vs 0.5",
    "robustness": 'robustness compare mass by recipe levels "A", "B" in trays datasets 100 seed 5',
    "robustness counts": "robustness count [[9, 1], [3, 7]] datasets 100 seed 5",
    "two proportions": "count 3 of 20 vs 9 of 21",
    "strata": "count wilted by spray within bench in sprays",
    "stratified trend": "count wilted by dose within bench ordered in sprays",
    "two rates": "count 7 events in 120.5 vs 2 events in 98",
    "one rate": "count 7 events in 120.5 vs 0.02",
    "dose response": "relate wilted to dose in sprays",
    "several responses": 'compare mass, light by recipe levels "A", "B" in trays',
    "pairwise": "compare mass by recipe in trays pairwise sampled 2000 seed 4",
    "many-to-one means": 'compare weight by dose against "0" in doses sampled 2000 seed 3',
    "many-to-one ranks": 'compare weight by dose against "0" in doses using ranks sampled 2000 seed 3',
    "lowest effective dose": 'compare weight by dose ordered against "0" in doses alternative higher seed 3',
    "two-sample welch": 'compare weight by dose levels "40", "0" in doses using welch',
    "two-sample brunner-munzel": 'compare weight by dose levels "40", "0" in doses using brunner-munzel',
    "robustness many-to-one": 'robustness compare weight by dose against "0" in doses datasets 100 seed 5',
    "two factors": "compare yield by variety and fertiliser in beans sampled 2000 seed 6",
    "adjusted": "compare yield by fertiliser adjusting for nitrate, variety in beans sampled 5000 seed 6",
    "censored times": "compare days by supplier event failed in lamps using gehan",
    "failure": "compare mass by recipy in trays",
}
LOADS = ('load "trays.csv" as trays\nload "seedlings.csv" as pots\nload "plots.csv" as plots\n'
         'load "doses.csv" as doses\n')
BEANS = 'load "beans.csv" as beans\n'      # the field trial of two factors and a covariate
SPRAYS = ('load "sprays.csv" as sprays\n'     # the count forms' demo table
          'load "lamps.csv" as lamps\n')      # and the censored times'

# paired yes/no outcomes for the `count ... paired` form (made up for this contract test)
PAIRS = pd.DataFrame({"first": ["yes", "yes", "no", "yes", "yes", "no", "yes", "yes"],
                      "second": ["yes", "no", "yes", "no", "no", "no", "no", "yes"]})


@lru_cache(maxsize=1)
def kinds() -> dict:
    """name -> output, all from one session."""
    out = permq.run(LOADS + SPRAYS + BEANS + "\n".join(KINDS.values()), tables={"pairs": PAIRS}, base_dir=DEMO)
    outputs = [o for o in out if not isinstance(o, permq.Note)]
    assert len(outputs) == len(KINDS), outputs
    return dict(zip(KINDS, outputs))


def session_results() -> permq.Results:
    return permq.run(LOADS + SPRAYS + BEANS + "\n".join(KINDS.values()), tables={"pairs": PAIRS}, base_dir=DEMO)
